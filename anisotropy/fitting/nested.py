"""The joint nested-model fit over all lag-vector bins at once.

Model: a nugget plus one to three structures sharing one ellipsoid frame
(geometric anisotropy; Journel & Huijbregts 1978, ch. II; Chilès & Delfiner
2012, sec. 2.5).  For a lag vector ``h`` and frame ``R`` (columns major,
semi-major, minor), structure ``k`` sees the scaled distance
``|diag(1/a_k) R^T h|`` and contributes ``c_k (1 - rho_k)``.

Objective: weighted least squares with the Cressie (1985) weights,
``sum_j N_j (gamma_hat_j / gamma_j(theta) - 1)^2`` (Math. Geol. 17(5),
eq. 2.7), written as residuals ``sqrt(w_j) (gamma_hat_j / gamma_j - 1)`` and
minimised by :func:`scipy.optimize.least_squares` with a robust
``soft_l1`` loss.  ``N_j`` is the bin's information weight (the pair count,
capped for drill-hole strings by the caller).

Parameters (no gimbal lock, positive by construction):

* the frame as a rotation vector (``scipy.spatial.transform.Rotation``);
* the ranges as logarithms, bounded to [0.02 x the shortest bin lag,
  50 x the longest];
* the nugget and sills: with a total sill ``T`` given, shares of ``T`` from a
  softmax (nugget share free, the first structure's logit fixed at 0);
  otherwise logarithms.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import least_squares
from scipy.spatial.transform import Rotation
from threadpoolctl import threadpool_limits

from anisotropy.errors import FitError
from anisotropy.geometry import rotation_vector_jacobian
from anisotropy.models import STRUCTURE_KINDS as KINDS, correlation, correlation_slope

__all__ = ["NestedFit", "fit_nested", "rho", "model_gamma", "KINDS", "ANALYTIC_JACOBIAN"]

#: The search uses the analytic Jacobian of the residuals
#: (:meth:`_Problem.jacobian`); False: SciPy's forward differences, as before.
ANALYTIC_JACOBIAN = True


def rho(kind: str, h):
    """Correlation of a unit-sill structure at scaled distance ``h``.

    The formulas live in one place, :func:`anisotropy.models.correlation`
    (exponential and Gaussian with the practical range, 95 % of the sill at
    ``h = 1``); this name is kept for the fitting code's callers.
    """
    return correlation(kind, np.abs(h))


def model_gamma(lags, nugget, sills, ranges, frames, kinds):
    """Variogram of a nested model at non-zero lag vectors (nugget included).

    Parameters
    ----------
    lags : ndarray (m, 3)
    nugget : float
    sills : sequence of float
    ranges : sequence of (3,) ranges along the frame's columns
    frames : (3, 3) or sequence of (3, 3)
    kinds : sequence of str
    """
    lags = np.asarray(lags, dtype=float)
    frames = np.asarray(frames, dtype=float)
    g = np.full(lags.shape[0], float(nugget))
    for k, (c, a, kind) in enumerate(zip(sills, ranges, kinds)):
        fr = frames if frames.ndim == 2 else frames[k]
        local = lags @ fr
        h = np.sqrt(np.sum((local / np.asarray(a, dtype=float)) ** 2, axis=1))
        g += c * (1.0 - rho(kind, h))
    return g


@dataclass
class NestedFit:
    """Result of :func:`fit_nested`.

    Attributes
    ----------
    model : anisotropy.models.NestedModel
        The fitted model (frame columns in the order the fit used; callers
        order and canonicalise them).
    objective : float
        Half the robust-loss sum at the optimum (``least_squares`` cost).
    residuals : ndarray (m,)
        Weighted relative residuals ``sqrt(w) (gamma_hat / gamma - 1)`` per bin.
    n_params : int
        Number of free parameters.
    wrss : float
        Weighted residual sum of squares (no robust loss), for the criterion.
    relative : ndarray (m,)
        Unweighted relative residuals ``gamma_hat / gamma - 1``.
    frame, nugget, sills, ranges, kinds
        The parameters as arrays (ranges (K, 3) along the frame's columns).
    """

    model: object
    objective: float
    residuals: np.ndarray
    n_params: int
    wrss: float = 0.0
    relative: np.ndarray = None
    frame: np.ndarray = None
    nugget: float = 0.0
    sills: np.ndarray = None
    ranges: np.ndarray = None
    kinds: tuple = ()
    success: bool = True
    nfev: int = 0
    info: dict = field(default_factory=dict)


class _Problem:
    """Parameter packing and residuals for one fit configuration."""

    def __init__(self, bins, kinds, *, fixed_frame=None, fixed_nugget=None,
                 total_sill=None, weights=None, min_range=None, max_range=None,
                 planar=False, base_frame=None, shared_ratios=False):
        self.lags = np.asarray(bins.lags, dtype=float)
        self.gamma = np.asarray(bins.gamma, dtype=float)
        w = np.asarray(bins.weight if weights is None else weights, dtype=float)
        self.sw = np.sqrt(w / np.mean(w))
        self.kinds = tuple(kinds)
        self.K = len(self.kinds)
        self.fixed_frame = None if fixed_frame is None else np.asarray(fixed_frame, float)
        self.fixed_nugget = fixed_nugget
        self.total = total_sill
        # planar data: the frame turns about the vertical only (minor axis
        # vertical), and the minor range is tied to the semi-major range
        self.planar = bool(planar) and self.fixed_frame is None
        self.base = None if base_frame is None else np.asarray(base_frame, float)
        self.nr = 2 if self.planar else 3
        # shared ratios: structure 1 has its ranges, the others one scale factor
        self.shared = bool(shared_ratios) and self.K > 1
        self.n_rp = (self.nr + self.K - 1) if self.shared else self.nr * self.K
        d = np.asarray(bins.distance, dtype=float)
        self.lo = np.log(min_range if min_range is not None else 0.02 * max(d.min(), 1e-9))
        self.hi = np.log(max_range if max_range is not None else 50.0 * d.max())
        self.scale = float(np.nanmax(self.gamma)) if total_sill is None else float(total_sill)
        self.floor = 1e-6 * self.scale
        self.gw = None  # fixed Cressie denominators (fixed-point form), or None

    # layout: [rotvec(3)?] [log ranges (3K)] [sill params]
    def n_sill_params(self):
        if self.total is not None:
            return (self.K - 1) + (0 if self.fixed_nugget is not None else 1)
        return self.K + (0 if self.fixed_nugget is not None else 1)

    def unpack(self, p):
        i = 0
        if self.planar:
            c, s_ = np.cos(p[0]), np.sin(p[0])
            frame = np.array([[c, -s_, 0.0], [s_, c, 0.0], [0.0, 0.0, 1.0]]) @ self.base
            i = 1
        elif self.fixed_frame is None:
            frame = Rotation.from_rotvec(p[:3]).as_matrix()
            i = 3
        else:
            frame = self.fixed_frame
        if self.shared:
            r0 = p[i:i + self.nr]
            sc = np.r_[0.0, p[i + self.nr:i + self.n_rp]]
            ranges = np.exp(r0[None, :] + sc[:, None])
        else:
            ranges = np.exp(p[i:i + self.nr * self.K]).reshape(self.K, self.nr)
        if self.planar:
            ranges = np.column_stack([ranges, ranges[:, 1]])
        i += self.n_rp
        s = p[i:]
        if self.total is not None:
            if self.fixed_nugget is not None:
                nug = float(self.fixed_nugget)
                rest = max(self.total - nug, 0.0)
                z = np.concatenate([[0.0], s])
                e = np.exp(z - z.max())
                sills = rest * e / e.sum()
            else:
                z = np.concatenate([[s[0], 0.0], s[1:]])
                e = np.exp(z - z.max())
                f = self.total * e / e.sum()
                nug, sills = f[0], f[1:]
        else:
            if self.fixed_nugget is not None:
                nug = float(self.fixed_nugget)
                sills = np.exp(s)
            else:
                nug = float(np.exp(s[0]))
                sills = np.exp(s[1:])
        return frame, nug, np.asarray(sills, float), ranges

    def pack(self, frame, nugget, sills, ranges):
        p = []
        if self.planar:
            self.base = np.asarray(frame, float)
            p.append(0.0)
        elif self.fixed_frame is None:
            fr = np.asarray(frame, float)
            if np.linalg.det(fr) < 0:
                fr = fr.copy()
                fr[:, 2] *= -1
            p.extend(Rotation.from_matrix(fr).as_rotvec())
        r = np.clip(np.log(np.asarray(ranges, float).reshape(self.K, 3)), self.lo + 1e-6,
                    self.hi - 1e-6)[:, :self.nr]
        if self.shared:
            p.extend(r[0])
            p.extend(np.mean(r[1:] - r[0][None, :], axis=1))
        else:
            p.extend(r.ravel())
        sills = np.maximum(np.asarray(sills, float), 1e-9 * self.scale)
        nugget = max(float(nugget), 1e-9 * self.scale)
        if self.total is not None:
            if self.fixed_nugget is None:
                p.append(np.log(nugget / sills[0]))
            p.extend(np.log(sills[1:] / sills[0]))
        else:
            if self.fixed_nugget is None:
                p.append(np.log(nugget))
            p.extend(np.log(sills))
        return np.asarray(p, float)

    def bounds(self):
        lo, hi = [], []
        if self.planar:
            lo += [-np.inf]
            hi += [np.inf]
        elif self.fixed_frame is None:
            lo += [-np.inf] * 3
            hi += [np.inf] * 3
        if self.shared:
            lo += [self.lo] * self.nr + [self.lo - self.hi] * (self.K - 1)
            hi += [self.hi] * self.nr + [self.hi - self.lo] * (self.K - 1)
        else:
            lo += [self.lo] * (self.nr * self.K)
            hi += [self.hi] * (self.nr * self.K)
        ns = self.n_sill_params()
        if self.total is not None:
            lo += [-12.0] * ns
            hi += [12.0] * ns
        else:
            ls = np.log(self.scale)
            lo += [ls - 14.0] * ns
            hi += [ls + 3.0] * ns
        return np.asarray(lo), np.asarray(hi)

    def gamma_model(self, p):
        frame, nug, sills, ranges = self.unpack(p)
        g = model_gamma(self.lags, nug, sills, ranges, frame, self.kinds)
        return np.maximum(g, self.floor)

    def residuals(self, p):
        if self.gw is not None:
            return self.sw * (self.gamma - self.gamma_model(p)) / self.gw
        return self.sw * (self.gamma / self.gamma_model(p) - 1.0)

    def jacobian(self, p):
        """Analytic Jacobian of :meth:`residuals` (chain rule through :meth:`unpack`)."""
        g, G = self.gamma_jacobian(p)
        floored = g <= self.floor                 # the floor is flat in every parameter
        G[floored] = 0.0
        g = np.maximum(g, self.floor)
        if self.gw is not None:
            return -(self.sw / self.gw)[:, None] * G
        return -(self.sw * self.gamma / (g * g))[:, None] * G

    def gamma_jacobian(self, p):
        """The model variogram at the bins (no floor) and its derivatives, (m,), (m, len(p)).

        Per structure ``k`` with local lags ``u = l F`` and scaled ones ``s = u / a_k``
        at ``h = |s|``: ``d gamma / d c_k = 1 - rho``, ``d gamma / d log a_kj =
        c_k rho'(h) s_j^2 / h`` and ``d gamma / d F_ej = -c_k rho'(h) l_e s_j /
        (a_kj h)``; then through the frame, range and sill parametrisations.
        """
        frame, nug, sills, ranges = self.unpack(p)
        u = self.lags @ frame
        g = np.full(len(u), float(nug))
        one_minus = np.empty((len(u), self.K))
        d_logr = np.empty((len(u), self.K, 3))
        d_frame = np.zeros((len(u), 3, 3))
        for k, kind in enumerate(self.kinds):
            sk = u / ranges[k]
            h = np.maximum(np.sqrt(np.sum(sk * sk, axis=1)), 1e-300)
            one_minus[:, k] = 1.0 - rho(kind, h)
            slope = sills[k] * correlation_slope(kind, h) / h
            g += sills[k] * one_minus[:, k]
            d_logr[:, k, :] = slope[:, None] * sk * sk
            d_frame -= (slope[:, None, None] * self.lags[:, :, None]
                        * (sk / ranges[k])[:, None, :])
        cols = [self._frame_columns(p, d_frame), self._range_columns(d_logr),
                self._sill_columns(p, nug, sills, one_minus)]
        return g, np.column_stack([c for c in cols if c.shape[1]])

    def _frame_columns(self, p, d_frame):
        if self.planar:
            c, s_ = np.cos(p[0]), np.sin(p[0])
            dF = np.array([[-s_, -c, 0.0], [c, -s_, 0.0], [0.0, 0.0, 0.0]]) @ self.base
            return np.einsum("mej,ej->m", d_frame, dF)[:, None]
        if self.fixed_frame is not None:
            return np.empty((len(d_frame), 0))
        return np.einsum("mej,iej->mi", d_frame, rotation_vector_jacobian(p[:3]))

    def _range_columns(self, d_logr):
        d = d_logr[:, :, :self.nr].copy()
        if self.planar:                           # the minor range is the semi-major's
            d[:, :, 1] += d_logr[:, :, 2]
        if self.shared:
            return np.column_stack([d.sum(axis=1), d[:, 1:, :].sum(axis=2)])
        return d.reshape(len(d), -1)

    def _sill_columns(self, p, nug, sills, one_minus):
        if self.total is None:
            cols = ([] if self.fixed_nugget is not None else [np.full(len(one_minus), nug)])
            return np.column_stack(cols + [sills * one_minus])
        if self.fixed_nugget is not None:         # sills = rest softmax([0, s])
            D = one_minus
            f = sills / max(sills.sum(), 1e-300)
            scale, logit_of = sills.sum(), np.arange(1, self.K)
        else:                                     # (nugget, sills) = T softmax([s0, 0, s1..])
            D = np.column_stack([np.ones(len(one_minus)), one_minus])
            f = np.r_[nug, sills] / self.total
            scale, logit_of = self.total, np.r_[0, np.arange(2, self.K + 1)]
        mean = D @ f
        return scale * f[logit_of] * (D[:, logit_of] - mean[:, None])


def _to_model(frame, nugget, sills, ranges, kinds):
    from anisotropy.models import NestedModel, Structure

    structures = [Structure(kind=k, sill=float(c), ranges=tuple(float(x) for x in a))
                  for k, c, a in zip(kinds, sills, ranges)]
    return NestedModel(nugget=float(nugget), structures=structures,
                       frame=np.asarray(frame, float))


def _from_model(model):
    """(frame, nugget, sills, ranges (K,3), kinds) from a NestedModel-like object."""
    frame = np.asarray(model.frame, float)
    st = list(model.structures)
    return (frame, float(model.nugget), np.array([s.sill for s in st], float),
            np.array([list(s.ranges) for s in st], float), tuple(s.kind for s in st))


def fit_nested(bins, start, *, n_structures=None, kinds=None, fixed_frame=None,
               fixed_nugget=None, total_sill=None, loss="soft_l1", f_scale=0.25,
               max_nfev=None, min_range=None, max_range=None, planar=False,
               ftol=1e-8, weighting="fixed_point", outer=3, shared_ratios=False,
               make_model=True, optimise=True) -> NestedFit:
    """Fit a nested geometric-anisotropy model to all fit bins at once.

    Parameters
    ----------
    bins : FitBins
        Experimental points (``lags``, ``gamma``, ``weight``).
    start : NestedModel or tuple
        Starting model, or ``(frame, nugget, sills, ranges, kinds)``.  When
        ``n_structures`` exceeds the start's count the longest structure is
        split (a shorter copy at a third of its ranges takes part of its sill).
    n_structures : int, optional
        Number of structures (default: the start's).
    kinds : sequence of str, optional
        Structure kinds (default: the start's; the last kind repeats).
    fixed_frame : (3, 3), optional
        Hold the frame fixed (e.g. to test an interpretation).
    fixed_nugget : float, optional
        Hold the nugget fixed.
    total_sill : float, optional
        Constrain nugget + sills to this value (the variance of the
        transformed variable; 1 for normal scores).  ``None`` frees it.
    loss, f_scale : robust loss of :func:`scipy.optimize.least_squares`.
        ``f_scale`` is in units of the weighted relative residual.
    max_nfev : int, optional
        Cap on function evaluations (warm-started refits use a small cap).
    ftol : float
        Relative cost tolerance of the optimiser (looser for quick screening).
    weighting : {"fixed_point", "cressie"}
        "cressie" minimises ``sum N (gamma_hat / gamma - 1)^2`` directly, which
        is biased upwards where bins hold few pairs (the minimiser of
        ``E (g / gamma - 1)^2`` is ``E g (1 + CV^2)``); "fixed_point" (default)
        holds the denominators at the previous iterate's model,
        ``sum N ((gamma_hat - gamma) / gamma_prev)^2``, and repeats (iteratively
        re-weighted least squares; Cressie 1985 discusses both forms).
    outer : int
        Outer re-weighting iterations of the fixed-point form (stops early
        when the denominators change by under 2 %).
    planar : bool
        Planar data (one bench): the frame only turns about the vertical
        from the start frame (whose minor axis must be vertical) and the
        minor range is tied to the semi-major one (it is not resolved).
    shared_ratios : bool
        All structures share the first structure's anisotropy ratios (one
        scale factor each) instead of having three ranges each (default: each
        structure has its own ranges in the shared frame).
    make_model : bool
        Build the :class:`~anisotropy.models.NestedModel` (set False in inner
        loops that only need the parameters).
    optimise : bool
        False: no search; the start (after the ``total_sill`` scaling and the
        bounds) is returned with its residuals against the bins, for a model
        whose parameters come from elsewhere (``objective`` is then the
        soft-L1 cost, or half the residual sum of squares for
        ``loss="linear"``).

    Returns
    -------
    NestedFit
    """
    if bins.n < 3:
        raise FitError(f"only {bins.n} experimental points with enough pairs: a variogram "
                       "model cannot be fitted; use a longer lag or more samples")
    frame0, nug0, sills0, ranges0, kinds = _start_values(start, n_structures, kinds,
                                                         total_sill)
    prob = _Problem(bins, kinds, fixed_frame=fixed_frame, fixed_nugget=fixed_nugget,
                    total_sill=total_sill, min_range=min_range, max_range=max_range,
                    planar=planar, shared_ratios=shared_ratios)
    p0 = prob.pack(frame0, nug0 if fixed_nugget is None else fixed_nugget, sills0, ranges0)
    lo, hi = prob.bounds()
    p0 = np.clip(p0, lo + 1e-9, hi - 1e-9)
    if not optimise:
        return _evaluated_at_start(prob, p0, loss, f_scale, weighting, make_model)
    res, nfev = _reweighted_search(prob, p0, lo, hi, loss=loss, f_scale=f_scale,
                                   max_nfev=max_nfev, ftol=ftol, weighting=weighting,
                                   outer=outer)
    return _fit_result(prob, res.x, res.cost, success=bool(res.status > 0), nfev=nfev,
                       make_model=make_model, message=str(res.message))


def _start_values(start, n_structures, kinds, total_sill):
    """The start's frame, nugget, sills, ranges and kinds, brought to ``n_structures``.

    A structure is added by splitting the longest one's sill 60/40 with a
    copy a third as long; structures beyond ``n_structures`` are dropped,
    smallest sill first, their sill shared among the rest. The sills are
    scaled to ``total_sill`` when it is given.
    """
    if isinstance(start, tuple):
        frame0, nug0, sills0, ranges0, kinds0 = start
        sills0 = np.atleast_1d(np.asarray(sills0, float))
        ranges0 = np.atleast_2d(np.asarray(ranges0, float))
    else:
        frame0, nug0, sills0, ranges0, kinds0 = _from_model(start)
    K = int(n_structures or len(sills0))
    if not 1 <= K <= 3:
        raise ValueError("n_structures must be 1, 2 or 3")
    while len(sills0) < K:
        j = int(np.argmax(ranges0.max(axis=1)))
        sills0 = np.concatenate([sills0, [sills0[j] * 0.4]])
        sills0[j] *= 0.6
        ranges0 = np.vstack([ranges0, ranges0[j] / 3.0])
        kinds0 = tuple(kinds0) + (kinds0[j],)
    if len(sills0) > K:
        order = np.argsort(-sills0)[:K]
        extra = sills0.sum() - sills0[order].sum()
        sills0 = sills0[order] + extra / K
        ranges0 = ranges0[order]
        kinds0 = tuple(kinds0[i] for i in order)
    kinds = tuple(kinds0) if kinds is None else tuple(kinds)
    kinds = (kinds + (kinds[-1],) * (K - len(kinds)))[:K]
    if total_sill is not None:
        s = nug0 + sills0.sum()
        if s > 0:
            nug0, sills0 = nug0 * total_sill / s, sills0 * total_sill / s
    return frame0, nug0, sills0, ranges0, kinds


def _evaluated_at_start(prob, p0, loss, f_scale, weighting, make_model):
    """The fit at ``p0`` without a search (``optimise=False``)."""
    if loss not in ("soft_l1", "linear"):
        raise ValueError("optimise=False supports the soft_l1 and linear losses, "
                         f"not {loss!r}")
    if weighting != "cressie":
        prob.gw = np.maximum(prob.gamma_model(p0), 1e-3 * prob.scale)
    z = prob.residuals(p0) ** 2
    cost = (0.5 * np.sum(z) if loss == "linear" else
            f_scale ** 2 * np.sum(np.sqrt(1.0 + z / f_scale ** 2) - 1.0))
    return _fit_result(prob, p0, cost, success=True, nfev=1, make_model=make_model,
                       message="evaluated at the start (optimise=False)")


def _reweighted_search(prob, p0, lo, hi, *, loss, f_scale, max_nfev, ftol, weighting, outer):
    """SciPy's least squares from ``p0``, its weights renewed from the model between rounds
    (fixed point) until the model moves less than 2 %; (last result, evaluations)."""
    n_outer = 1 if weighting == "cressie" else max(int(outer), 1)
    jac = prob.jacobian if ANALYTIC_JACOBIAN else "2-point"
    nfev = 0
    x = p0
    with threadpool_limits(1):
        # one BLAS thread: the problem is small (m x p with p <= 15) and a
        # threaded SVD per iteration is many times slower on a shared machine
        for _ in range(n_outer):
            if weighting != "cressie":
                prob.gw = np.maximum(prob.gamma_model(x), 1e-3 * prob.scale)
            try:
                res = least_squares(prob.residuals, x, jac=jac, bounds=(lo, hi), loss=loss,
                                    f_scale=f_scale, method="trf", x_scale="jac",
                                    max_nfev=max_nfev, ftol=ftol, xtol=1e-8, gtol=1e-8)
            except Exception as exc:  # pragma: no cover - numerical failure inside SciPy
                raise FitError(f"the nested-model fit failed numerically: {exc}") from exc
            nfev += res.nfev
            change = np.max(np.abs(prob.gamma_model(res.x) / prob.gw - 1.0)) \
                if prob.gw is not None else 0.0
            x = res.x
            if change < 0.02:
                break
    return res, nfev


def _fit_result(prob, x, cost, *, success, nfev, make_model, message):
    """The :class:`NestedFit` of parameters ``x`` with its residuals against the bins."""
    frame, nug, sills, ranges = prob.unpack(x)
    rel = prob.gamma / prob.gamma_model(x) - 1.0
    resid = prob.sw * rel  # Cressie (1985) residuals at x
    model = _to_model(frame, nug, sills, ranges, prob.kinds) if make_model else None
    return NestedFit(model=model, objective=float(cost), residuals=resid,
                     n_params=len(x), wrss=float(np.sum(resid ** 2)), relative=rel,
                     frame=frame, nugget=float(nug), sills=sills, ranges=ranges,
                     kinds=prob.kinds, success=success, nfev=int(nfev),
                     info={"x": x, "message": message})
