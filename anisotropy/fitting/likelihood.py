"""Refining the frame by a nearest-neighbour Gaussian likelihood.

The joint nested fit (:mod:`~anisotropy.fitting.nested`) minimises a
weighted distance between the model and the experimental variogram of the
lag-vector volume.  On scattered layouts of 1,500-2,000 samples the minimum
of that objective can sit 10-20 degrees from the frame the samples actually
support: the experimental variogram's long lags carry the realisation's
low-frequency fluctuations, which the least-squares objective treats as
independent evidence.  A likelihood takes the covariance between samples
into account; here it is approximated by the product of each sample's
conditional density given its ``m`` nearest predecessors in a random order
(Vecchia 1988, J. R. Stat. Soc. B 50(2); orderings discussed by Guinness
2018, Technometrics 60(4)), which costs
``O(n m^3)`` per evaluation instead of ``O(n^3)``.

The model: the values are a Gaussian field with an unknown constant mean
(estimated by the sample mean), a nugget and one to three structures of
the given kinds sharing one frame (geometric anisotropy; Journel &
Huijbregts 1978, ch. II).  The total sill is profiled out, so the free
parameters are the frame (rotation vector), the log ranges and the shares
of the nugget and the structures.  The refined frame is meant to be handed
back to the variogram fit with the frame held (ranges and sills in the
variogram's own terms).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import minimize
from scipy.spatial.transform import Rotation
from threadpoolctl import threadpool_limits

from anisotropy.errors import FitError
from anisotropy.fitting._vecchia_kernels import vecchia_terms as _vecchia_terms
from anisotropy.fitting._vecchia_kernels import vecchia_terms_grad as _vecchia_terms_grad
from anisotropy.geometry import rotation_vector_jacobian

__all__ = ["LikelihoodFit", "VecchiaSetup", "refine_frame_likelihood", "vecchia_setup",
           "vecchia_neighbours", "vecchia_negloglik", "vecchia_negloglik_grad"]

DEFAULT_NEIGHBOURS = 20
DEFAULT_MAX_SAMPLES = 3000


@dataclass
class LikelihoodFit:
    """Result of :func:`refine_frame_likelihood`.

    Attributes
    ----------
    frame : ndarray (3, 3)
        Refined frame (columns along the start's axes, right-handed).
    ranges : ndarray (K, 3)
        Ranges along the frame's columns, per structure.
    nugget_share : float
        Nugget as a share of the total sill.
    shares : ndarray (K,)
        Structure sills as shares of the total sill.
    negloglik, negloglik_start : float
        Approximate negative log-likelihood (up to a constant) at the
        optimum and at the start.
    n_samples, n_neighbours : int
        Samples used (after subsampling) and neighbours per sample.
    info : dict
        Optimiser message, function and gradient evaluations (``nfev``,
        ``njev``), the gradient used, and the conditioning setup's summary
        (:meth:`VecchiaSetup.to_dict`: samples used, dropped, hole-aware).
    kinds : tuple of str
        The structure kinds searched.
    """

    frame: np.ndarray
    ranges: np.ndarray
    nugget_share: float
    shares: np.ndarray
    negloglik: float
    negloglik_start: float
    n_samples: int
    n_neighbours: int
    info: dict = field(default_factory=dict)
    kinds: tuple = ()

    def parameters(self) -> np.ndarray:
        """The fit as the parameter vector of :func:`vecchia_negloglik`."""
        return _start_vector(self.frame, self.ranges, self.nugget_share, self.shares,
                             len(self.shares))[2]

    def to_dict(self) -> dict:
        return {"frame": np.asarray(self.frame, float).tolist(),
                "ranges": np.asarray(self.ranges, float).tolist(),
                "nugget_share": float(self.nugget_share),
                "shares": [float(x) for x in self.shares],
                "negloglik": float(self.negloglik),
                "negloglik_start": float(self.negloglik_start),
                "n_samples": int(self.n_samples), "n_neighbours": int(self.n_neighbours),
                "info": dict(self.info)}


def vecchia_neighbours(coords, m=DEFAULT_NEIGHBOURS, *, seed=0, metric=None, ordering="random",
                       holes=None):
    """Random order and the ``m`` nearest predecessors of each sample.

    Parameters
    ----------
    coords : ndarray (n, 3)
    m : int
        Neighbours per sample (fewer for the first ``m`` samples of the order).
    seed : int
        Seed of the random order.
    ordering : {"random", "maxmin"}
        Conditioning order: random, or maximum-minimum distance (Guinness 2018).
    metric : (3, 3) array, optional
        Linear map applied to the coordinates before measuring distances
        (e.g. ``frame / ranges``: neighbours in the anisotropic metric).
    holes : array_like (n,), optional
        One label per sample (its drill hole). None: the ``m`` nearest
        predecessors, whatever their hole. Given: conditioning sets that see
        across holes. Of the ``m`` neighbours of a sample, at most
        ``ceil(m / 2)`` are taken from its own hole (the nearest ones); the
        other slots take the nearest predecessors from other holes; where
        fewer of those exist, the slots left are filled with the next
        nearest predecessors from its own hole. All distances are measured
        in ``metric``. (On 2-3 m composites the plain nearest predecessors
        are almost all from the sample's own string, and the likelihood
        then hardly sees across holes: issue 15.)

    Returns
    -------
    order : ndarray (n,) int
        Sample indices in conditioning order.
    nbr : ndarray (n, m) int
        For position ``i`` of the order, the order positions of its
        neighbours (all ``< i``, nearest first within the own-hole and
        other-hole groups when ``holes`` is given), ``-1`` where fewer than
        ``m`` exist; the valid entries come first.
    """
    X = np.asarray(coords, float)
    n = len(X)
    m = int(m)
    if m < 1:
        raise ValueError("m must be at least 1")
    if holes is not None:
        holes = np.asarray(holes).ravel()
        if len(holes) != n:
            raise ValueError(f"holes has {len(holes)} labels for {n} samples")
        holes = np.unique(holes, return_inverse=True)[1].ravel()
    Z = X if metric is None else X @ np.asarray(metric, float)
    order = _conditioning_order(Z, ordering, seed)
    Y = Z[order]
    lab = None if holes is None else holes[order]
    nbr = np.full((n, m), -1, dtype=np.int64)
    sq = np.sum(Y * Y, axis=1)
    block = 512
    for s in range(1, n, block):
        e = min(n, s + block)
        d = sq[s:e, None] + sq[None, :e] - 2.0 * Y[s:e] @ Y[:e].T
        rows = np.arange(s, e)
        d = np.where(np.arange(e)[None, :] < rows[:, None], d, np.inf)
        k = min(m, e - 1)
        if lab is None:
            part = np.argpartition(d, k - 1, axis=1)[:, :k]
            dd = np.take_along_axis(d, part, axis=1)
            nbr[s:e, :k] = np.where(np.isfinite(dd), part, -1)
        else:
            nbr[s:e] = _hole_share(d, lab[s:e, None] == lab[None, :e], m)
    return order, nbr


def _conditioning_order(Z, ordering, seed):
    n = len(Z)
    if ordering == "random":
        return np.random.default_rng(seed).permutation(n)
    if ordering != "maxmin":
        raise ValueError("ordering must be 'random' or 'maxmin'")
    # each next sample is the one farthest from all chosen so far (Guinness
    # 2018): early samples are spread out and condition on distant ones
    order = np.empty(n, dtype=np.int64)
    j = int(np.argmin(np.sum((Z - Z.mean(axis=0)) ** 2, axis=1)))
    dmin = np.sum((Z - Z[j]) ** 2, axis=1)
    order[0] = j
    dmin[j] = -1.0
    for i in range(1, n):
        j = int(np.argmax(dmin))
        order[i] = j
        dmin = np.minimum(dmin, np.sum((Z - Z[j]) ** 2, axis=1))
        dmin[j] = -1.0
    return order


def _nearest_sorted(d, k):
    """Columns of the ``k`` smallest finite entries per row, nearest first; -1 pads."""
    part = np.argpartition(d, k - 1, axis=1)[:, :k]
    dd = np.take_along_axis(d, part, axis=1)
    srt = np.argsort(dd, axis=1, kind="stable")
    part = np.take_along_axis(part, srt, axis=1)
    dd = np.take_along_axis(dd, srt, axis=1)
    return np.where(np.isfinite(dd), part, -1)


def _hole_share(d, same, m):
    """The own-hole / other-hole rule of :func:`vecchia_neighbours` on one block."""
    k = min(m, d.shape[1] - 1)
    own = _nearest_sorted(np.where(same, d, np.inf), k)
    oth = _nearest_sorted(np.where(same, np.inf, d), k)
    n_own_avail = np.sum(own >= 0, axis=1)
    n_own = np.minimum(n_own_avail, -(-m // 2))
    n_oth = np.minimum(np.sum(oth >= 0, axis=1), m - n_own)
    n_own = np.minimum(n_own_avail, m - n_oth)  # fill from the own hole
    cand = np.concatenate([own, oth], axis=1)
    cols = np.arange(k)[None, :]
    take = np.concatenate([cols < n_own[:, None], cols < n_oth[:, None]], axis=1)
    pos = np.where(take, np.cumsum(take, axis=1) - 1, m)
    out = np.full((len(d), m + 1), -1, dtype=np.int64)
    np.put_along_axis(out, pos, np.where(take, cand, -1), axis=1)
    return out[:, :m]


def _unpack(p, K):
    frame = Rotation.from_rotvec(p[:3]).as_matrix()
    ranges = np.exp(p[3:3 + 3 * K]).reshape(K, 3)
    z = np.concatenate([p[3 + 3 * K:], [0.0]])  # logits: nugget, structures 1..K-1, K fixed
    e = np.exp(z - z.max())
    f = e / e.sum()
    return frame, ranges, f[0], f[1:]


_KIND_CODE = {"spherical": 0, "exponential": 1, "gaussian": 2, "cubic": 3}


def _kind_codes(kinds):
    try:
        return np.array([_KIND_CODE[k] for k in kinds], dtype=np.int64)
    except KeyError as exc:
        raise FitError(f"the likelihood refinement does not handle the {exc.args[0]!r} "
                       "structure kind") from None


def _model_arrays(p, Y, kinds):
    """Frame, ranges, shares and the scaled coordinates ``S[k] = Y F / r_k``."""
    K = len(kinds)
    codes = _kind_codes(kinds)
    frame, ranges, nug, shares = _unpack(np.asarray(p, float), K)
    L = np.asarray(Y, float) @ frame
    S = np.ascontiguousarray(L[None, :, :] / ranges[:, None, :])
    return codes, frame, ranges, float(nug), np.asarray(shares, float), S


def vecchia_negloglik(p, Y, y, nbr, kinds):
    """Approximate negative log-likelihood with the total sill profiled out.

    ``-log L = n/2 log(q/n) + 1/2 sum log v_i`` up to a constant, with
    ``v_i`` the conditional variance of sample ``i`` given its neighbours
    and ``q`` the sum of its squared innovations over ``v_i``, both at unit
    total sill (Vecchia 1988; the sill's profile maximum is ``q / n``).

    Parameters
    ----------
    p : ndarray
        ``[rotation vector (3), log ranges (3K), share logits (K)]`` (the
        last structure's logit is fixed at 0).
    Y : ndarray (n, 3)
        Coordinates in conditioning order.
    y : ndarray (n,)
        Centred values in conditioning order.
    nbr : ndarray (n, m)
        From :func:`vecchia_neighbours`.
    kinds : tuple of str
        Structure kinds (spherical, exponential, gaussian or cubic).

    Returns
    -------
    float
    """
    codes, _, _, nug, shares, S = _model_arrays(p, Y, kinds)
    q, ld = _vecchia_terms(S, np.ascontiguousarray(y, dtype=float),
                           np.ascontiguousarray(nbr, dtype=np.int64), codes, shares, nug)
    if not np.isfinite(q) or q <= 0:
        return 1e30
    n = len(y)
    return float(0.5 * (n * np.log(q / n) + ld))


def vecchia_negloglik_grad(p, Y, y, nbr, kinds):
    """:func:`vecchia_negloglik` and its gradient with respect to ``p``, in one pass.

    The gradient is analytic (derivatives of the conditional variances and
    innovations of each conditioning set, from the published correlation
    formulas; see :mod:`anisotropy.fitting._vecchia_kernels`), computed in a
    compiled loop over the sets; only the last link of the chain rule, from
    the 3 x 3 frame to the rotation vector, is a central difference (step
    ``1e-6``, :func:`anisotropy.geometry.rotation_vector_jacobian`) of the
    3 x 3 map. Arguments as for :func:`vecchia_negloglik`.

    Returns
    -------
    value : float
        Same bits as :func:`vecchia_negloglik`.
    grad : ndarray
        Same length as ``p``. Zero where the value is the 1e30 guard (a
        conditioning set's covariance not positive definite).
    """
    p = np.asarray(p, float)
    K = len(kinds)
    codes, frame, ranges, nug, shares, S = _model_arrays(p, Y, kinds)
    q, ld, gq, gl, ok = _vecchia_terms_grad(S, np.ascontiguousarray(y, dtype=float),
                                            np.ascontiguousarray(nbr, dtype=np.int64),
                                            codes, shares, nug)
    if not ok or not np.isfinite(q) or q <= 0:
        return 1e30, np.zeros_like(p)
    n = len(y)
    G = n / (2.0 * q) * gq + 0.5 * gl
    g_frame, g_logr, gf = _raw_to_model(G, frame, ranges)
    g_rot = np.einsum("ed,jed->j", g_frame, rotation_vector_jacobian(p[:3]))
    f = np.r_[nug, shares]
    g_logit = f * (gf - gf @ f)  # softmax chain rule; the last logit is fixed
    return float(0.5 * (n * np.log(q / n) + ld)), np.r_[g_rot, g_logr, g_logit[:K]]


def _raw_to_model(G, frame, ranges):
    """The kernel's raw sums to derivatives by the frame, log ranges and shares.

    Per structure ``k`` the kernel sums ``M_k = sum w f_k g(h) u u'`` over
    pairs (``u`` the scaled lag in the frame). Then ``d/d log r_kd = -M_k[d, d]``
    and, as the lag ``y_a - y_b = F diag(r_k) u``,
    ``d/dF = sum_k F diag(r_k) M_k diag(1 / r_k)``.
    """
    K = len(ranges)
    g_frame = np.zeros((3, 3))
    g_logr = np.empty((K, 3))
    gf = np.full(K + 1, G[7 * K])
    for k in range(K):
        a = G[7 * k:7 * k + 7]
        M = np.array([[a[0], a[3], a[4]], [a[3], a[1], a[5]], [a[4], a[5], a[2]]])
        g_logr[k] = -np.diag(M)
        g_frame += frame @ (ranges[k][:, None] * M / ranges[k][None, :])
        gf[k + 1] += a[6]
    return g_frame, g_logr.ravel(), gf


@dataclass(frozen=True)
class VecchiaSetup:
    """Conditioning sets built once, shared by several likelihood searches.

    Built by :func:`vecchia_setup`; accepted by
    :func:`refine_frame_likelihood` (``setup=``), so that the one- and
    two-structure fits and several candidate frames use the same samples,
    order and neighbours (the comparison of their likelihoods is then between
    the same approximation) and the neighbour search is paid once. The arrays
    are shared, not copied: do not modify them.

    Attributes
    ----------
    coords : ndarray (n, 3)
        Coordinates in conditioning order, centred on their mean.
    values : ndarray (n,)
        Values in conditioning order, centred on their mean.
    order : ndarray (n,) int
        For each position of the order, the row of the input it came from.
    neighbours : ndarray (n, m) int
        Order positions of each position's neighbours (see
        :func:`vecchia_neighbours`).
    n_input : int
        Rows of the input (before dropping non-finite rows and subsampling).
    n_dropped : int
        Input rows dropped for a non-finite coordinate or value.
    hole_aware : bool
        Whether the sets follow the own-hole / other-hole rule.
    """

    coords: np.ndarray
    values: np.ndarray
    order: np.ndarray
    neighbours: np.ndarray
    n_input: int
    n_dropped: int
    hole_aware: bool

    @property
    def n_samples(self) -> int:
        return int(len(self.values))

    @property
    def n_neighbours(self) -> int:
        return int(self.neighbours.shape[1])

    def to_dict(self) -> dict:
        return {"n_samples": self.n_samples, "n_neighbours": self.n_neighbours,
                "n_input": int(self.n_input), "n_dropped": int(self.n_dropped),
                "hole_aware": bool(self.hole_aware)}


def _start_metric(frame, ranges):
    """``frame / ranges`` of the structure with the longest range (None if not given)."""
    if frame is None or ranges is None:
        return None
    F = np.asarray(frame, float)
    R = np.atleast_2d(np.asarray(ranges, float))
    j = int(np.argmax(R.max(axis=1)))
    return F / R[j][None, :]


def vecchia_setup(coords, values, *, frame=None, ranges=None, metric=None,
                  n_neighbours=DEFAULT_NEIGHBOURS, max_samples=DEFAULT_MAX_SAMPLES, seed=0,
                  ordering="random", holes=None) -> VecchiaSetup:
    """Samples, conditioning order and neighbour sets for the likelihood.

    Rows with a non-finite coordinate or value are dropped (counted in
    ``n_dropped``); larger sets are subsampled at random to ``max_samples``;
    neighbours are chosen in ``metric``, or in the metric of a start model
    (``frame / ranges`` of its longest structure: the sets then reach along
    the continuity rather than across it). With the same arguments this
    reproduces the sets :func:`refine_frame_likelihood` builds by itself.

    Parameters
    ----------
    coords : ndarray (n, 3)
    values : ndarray (n,)
    frame, ranges : optional
        Start model (columns major, semi-major, minor; ranges (K, 3)).
    metric : (3, 3), optional
        Used when ``frame``/``ranges`` are not given.
    n_neighbours, max_samples, seed, ordering
        As for :func:`refine_frame_likelihood`.
    holes : array_like (n,), optional
        Drill-hole label per row: conditioning sets that see across holes
        (rule in :func:`vecchia_neighbours`).

    Returns
    -------
    VecchiaSetup
    """
    X = np.asarray(coords, float)
    y = np.asarray(values, float)
    if X.ndim != 2 or X.shape[1] != 3 or len(X) != len(y):
        raise ValueError("coords must be (n, 3) and values (n,)")
    H = None if holes is None else np.asarray(holes).ravel()
    if H is not None and len(H) != len(X):
        raise ValueError(f"holes has {len(H)} labels for {len(X)} samples")
    ok = np.all(np.isfinite(X), axis=1) & np.isfinite(y)
    rows = np.flatnonzero(ok)
    if len(rows) < 50:
        raise FitError(f"only {len(rows)} samples: too few for the likelihood refinement")
    rng = np.random.default_rng(seed)
    if len(rows) > max_samples:
        rows = rows[rng.choice(len(rows), size=int(max_samples), replace=False)]
    X, y = X[rows], y[rows]
    start = _start_metric(frame, ranges)
    order, nbr = vecchia_neighbours(X, n_neighbours, seed=int(rng.integers(2 ** 31)),
                                    metric=metric if start is None else start,
                                    ordering=ordering, holes=None if H is None else H[rows])
    return VecchiaSetup(coords=X[order] - X.mean(axis=0), values=y[order] - y.mean(),
                        order=rows[order], neighbours=nbr, n_input=int(len(ok)),
                        n_dropped=int(np.sum(~ok)), hole_aware=H is not None)


def _start_vector(frame, ranges, nugget, sills, K):
    F = np.asarray(frame, float).copy()
    if np.linalg.det(F) < 0:
        F[:, 2] *= -1
    ranges = np.atleast_2d(np.asarray(ranges, float)).reshape(K, 3)
    sills = np.atleast_1d(np.asarray(sills, float))
    tot = float(nugget + sills.sum())
    if not tot > 0:
        raise FitError("the start model has no sill")
    shares = np.maximum(np.r_[nugget, sills] / tot, 1e-4)
    logit = np.log(shares[:-1] / shares[-1])
    return F, ranges, np.concatenate([Rotation.from_matrix(F).as_rotvec(),
                                      np.log(ranges).ravel(), logit])


def _search(p0, args, method, maxiter, ftol, gradient):
    """The minimisation; returns (SciPy result, value at the start)."""
    if method == "Nelder-Mead" or gradient == "numeric":
        f0 = vecchia_negloglik(p0, *args)
    else:  # same value; a run that needs the gradient then compiles one kernel, not two
        f0 = vecchia_negloglik_grad(p0, *args)[0]
    if method == "Nelder-Mead":
        opts = dict(maxiter=int(maxiter), xatol=1e-3, fatol=1e-3, adaptive=True)
        return minimize(vecchia_negloglik, p0, args=args, method=method, options=opts), f0
    opts = dict(maxiter=int(maxiter))
    if ftol is not None:
        opts["ftol"] = float(ftol)
    if gradient == "analytic":
        # a trial step of L-BFGS-B can overflow a log range (or underflow it to a zero
        # range); the value is then 1e30 and the search steps back, so the floating-point
        # warnings say nothing to the user
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            return minimize(vecchia_negloglik_grad, p0, args=args, method=method, jac=True,
                            options=opts), f0
    opts["eps"] = 1e-4
    return minimize(vecchia_negloglik, p0, args=args, method=method, options=opts), f0


def refine_frame_likelihood(coords, values, frame, ranges, nugget, sills, kinds, *,
                            n_neighbours=DEFAULT_NEIGHBOURS, max_samples=DEFAULT_MAX_SAMPLES,
                            seed=0, maxiter=400, method="L-BFGS-B",
                            ordering="random", ftol=None, setup=None, holes=None,
                            gradient="analytic") -> LikelihoodFit:
    """Refine a nested model's frame by the nearest-neighbour likelihood.

    Parameters
    ----------
    coords : ndarray (n, 3)
    values : ndarray (n,)
        The analysed variable (after any transform).
    frame : (3, 3)
        Start frame (columns major, semi-major, minor).
    ranges : (K, 3)
        Start ranges along the frame's columns.
    nugget : float
    sills : (K,)
    kinds : sequence of str
    n_neighbours : int
        Conditioning neighbours per sample (default 20: on the issue-4
        benchmark 30 was slightly more accurate and about 1.7 times slower).
    max_samples : int
        Larger sets are subsampled at random to this many samples (the cost
        grows linearly with the samples, the information roughly too).
    seed : int
        Seed of the subsample and of the conditioning order.
    maxiter : int
        Iterations of the search.
    ftol : float or None
        Relative change of the objective at which L-BFGS-B stops (None:
        SciPy's default, 2.2e-9). Differences of a few thousandths in the
        log-likelihood do not tell frames apart; 1e-5 stops about four times
        sooner on the issue-4 benchmark.
    setup : VecchiaSetup, optional
        Samples, order and neighbour sets from :func:`vecchia_setup`, built
        once and shared between searches (one- and two-structure models,
        candidate frames). ``coords`` and ``values`` must then be the arrays
        the setup was built from (their row count is checked), and
        ``n_neighbours``, ``max_samples``, ``seed``, ``ordering`` and
        ``holes`` are the setup's. None (default): built here with
        :func:`vecchia_setup` in the start model's metric, as before.
    holes : array_like (n,), optional
        Drill-hole label per row of ``coords``: conditioning sets that see
        across holes (rule in :func:`vecchia_neighbours`). None (default):
        the nearest predecessors, whatever their hole.
    gradient : {"analytic", "numeric"}
        For gradient searches (L-BFGS-B): the compiled analytic gradient
        (:func:`vecchia_negloglik_grad`, value and gradient in one call), or
        SciPy's forward differences (step 1e-4; the earlier behaviour, about
        ``len(p) + 1`` evaluations per gradient).

    Returns
    -------
    LikelihoodFit
    """
    if gradient not in ("analytic", "numeric"):
        raise ValueError("gradient must be 'analytic' or 'numeric'")
    kinds = tuple(kinds)
    K = len(kinds)
    _kind_codes(kinds)
    F, R, p0 = _start_vector(frame, ranges, nugget, sills, K)
    if setup is None:
        setup = vecchia_setup(coords, values, frame=F, ranges=R, n_neighbours=n_neighbours,
                              max_samples=max_samples, seed=seed, ordering=ordering,
                              holes=holes)
    elif holes is not None:
        raise ValueError("pass holes to vecchia_setup, not with a ready setup")
    elif len(np.asarray(values)) != setup.n_input:
        raise ValueError(f"the setup was built from {setup.n_input} samples, "
                         f"not the {len(np.asarray(values))} given")
    args = (setup.coords, setup.values, setup.neighbours, kinds)
    with threadpool_limits(1):
        res, f0 = _search(p0, args, method, maxiter, ftol, gradient)
    p = res.x if res.fun < f0 else p0
    fr, rr, nug, sh = _unpack(p, K)
    info = {"message": str(res.message), "nfev": int(res.nfev),
            "njev": int(getattr(res, "njev", 0) or 0),
            "gradient": gradient if method != "Nelder-Mead" else None,
            "setup": setup.to_dict()}
    return LikelihoodFit(frame=fr, ranges=rr, nugget_share=float(nug), shares=sh,
                         negloglik=float(min(res.fun, f0)),
                         negloglik_start=float(f0), n_samples=setup.n_samples,
                         n_neighbours=setup.n_neighbours, info=info, kinds=kinds)
