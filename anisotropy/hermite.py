"""The model in grade units from a normal-score model (Gaussian anamorphosis).

A normal-score transform writes the grade as a function of a standard
Gaussian variable, ``Z = phi(Y)`` (the *anamorphosis*; here the
back-transform of :class:`anisotropy.transform.NormalScore`, tails
included). Expanded on the normalised Hermite polynomials
``eta_n(y) = He_n(y) / sqrt(n!)`` (``He_n`` the probabilists' Hermite
polynomials, orthogonal under the standard normal density ``g``)::

    phi(y) = sum_{n>=0} phi_n eta_n(y),     phi_n = E[phi(Y) eta_n(Y)]

and for two points whose scores are bivariate normal with correlation
``rho``, ``E[eta_n(Y1) eta_m(Y2)] = rho^n`` if ``n == m`` else 0, so the
grade covariance is (Rivoirard 1994, *Introduction to Disjunctive Kriging
and Non-Linear Geostatistics*; Chiles & Delfiner 2012, ch. 6)::

    C_Z(h) = sum_{n>=1} phi_n^2 rho_Y(h)^n,     Var Z = sum_{n>=1} phi_n^2.

:func:`grade_model` evaluates that covariance from the fitted normal-score
model and fits the grade sills (nugget and one sill per structure) to it
with the frame, kinds and ranges held, so the grade model can be used
directly in estimation in the same frame.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import nnls

from anisotropy.errors import InputError
from anisotropy.models import NestedModel, Structure

__all__ = ["hermite_coefficients", "hermite_covariance", "GradeModel", "grade_model",
           "downhole_check",
           "N_HERMITE", "Y_LIMIT"]

N_HERMITE = 100      # terms of the expansion
Y_LIMIT = 12.0       # the scores are integrated over [-Y_LIMIT, Y_LIMIT]
N_GRID = 36001       # integration nodes (trapezoid rule)


def _normalised_hermite(y, n_terms):
    """The normalised Hermite polynomials up to ``n_terms`` at ``y`` (three-term recurrence).

    ``eta_{n+1} = (y eta_n - sqrt(n) eta_{n-1}) / sqrt(n + 1)``, the
    recurrence ``He_{n+1} = y He_n - n He_{n-1}`` divided by ``sqrt((n+1)!)``
    (no factorials, no overflow).
    """
    y = np.asarray(y, dtype=float)
    out = np.empty((n_terms + 1,) + y.shape)
    out[0] = 1.0
    if n_terms >= 1:
        out[1] = y
    for n in range(1, n_terms):
        out[n + 1] = (y * out[n] - np.sqrt(n) * out[n - 1]) / np.sqrt(n + 1.0)
    return out


def hermite_coefficients(anamorphosis, n_terms: int = N_HERMITE, *,
                         y_limit: float = Y_LIMIT, n_grid: int = N_GRID):
    """Hermite coefficients (``phi_0`` to ``phi_n``) of an anamorphosis and its variance.

    ``phi_n = integral phi(y) eta_n(y) g(y) dy`` with ``eta_n`` the
    normalised Hermite polynomials, by the trapezoid rule on ``n_grid``
    nodes over ``[-y_limit, y_limit]`` (the standard normal mass outside
    12 is below 1e-32; a limit of 9 loses 1e-6 on the coefficients of exp(y)).

    Parameters
    ----------
    anamorphosis : callable
        Scores -> grades, vectorised (e.g. ``NormalScore.back_transform``).
    n_terms : int
        Highest order.

    Returns
    -------
    phi : ndarray, shape (n_terms + 1,)
        ``phi[0]`` is the mean grade.
    variance : float
        ``Var phi(Y)`` by the same quadrature (the limit of
        ``sum_{n>=1} phi_n^2``).
    """
    if int(n_terms) < 1:
        raise InputError(f"the Hermite expansion needs at least one term; got {n_terms}.")
    y = np.linspace(-y_limit, y_limit, int(n_grid))
    w = np.exp(-0.5 * y * y) / np.sqrt(2.0 * np.pi)
    w[0] *= 0.5
    w[-1] *= 0.5
    w *= y[1] - y[0]
    w /= w.sum()
    z = np.asarray(anamorphosis(y), dtype=float)
    if z.shape != y.shape or not np.all(np.isfinite(z)):
        raise InputError("the anamorphosis must return one finite grade per score.")
    eta = _normalised_hermite(y, int(n_terms))
    phi = eta @ (w * z)
    variance = float(np.sum(w * (z - phi[0]) ** 2))
    return phi, variance


def hermite_covariance(phi, rho, variance=None):
    """Grade covariance ``sum_{n>=1} phi_n^2 rho^n`` at score correlations ``rho``.

    Parameters
    ----------
    phi : array_like
        Hermite coefficients (``phi[0]``, the mean, is not used).
    rho : array_like
        Correlations of the scores, in [-1, 1].
    variance : float, optional
        If given, returned where ``rho == 1`` exactly (same point), so the
        terms beyond the truncation are not lost at the origin.

    Returns
    -------
    ndarray
    """
    phi = np.asarray(phi, dtype=float)
    rho = np.asarray(rho, dtype=float)
    c = np.zeros_like(rho)
    p = np.ones_like(rho)
    for n in range(1, phi.size):
        p = p * rho
        c = c + phi[n] ** 2 * p
    if variance is not None:
        c = np.where(rho == 1.0, float(variance), c)
    return c


@dataclass
class GradeModel:
    """The model in grade units and how it was obtained.

    Attributes
    ----------
    model : NestedModel
        Nugget and structures in grade units squared; same frame, kinds and
        ranges as the normal-score model.
    method : str
        ``"hermite"`` (sills fitted to the Hermite back-transformed
        covariance).
    reason : str
        Why this method, in words.
    variance : float
        Grade variance of the anamorphosis (declustered when the scores were).
    captured : float
        ``sum_{n=1..N} phi_n^2 / variance``: the share of the grade variance
        the truncated expansion holds.
    max_misfit : float
        Largest absolute difference between the fitted grade covariance and
        the Hermite covariance at the fitting lags, as a share of the
        variance.
    n_terms : int
    phi : ndarray
    """

    model: NestedModel
    method: str
    reason: str
    variance: float
    captured: float
    max_misfit: float
    n_terms: int
    phi: np.ndarray = field(repr=False)

    def to_dict(self) -> dict:
        """JSON-ready record (model without the frame, which is the normal-score one)."""
        m = self.model.to_dict()
        return {"method": self.method, "reason": self.reason,
                "nugget": m["nugget"], "structures": m["structures"],
                "total_sill": m["total_sill"], "grade_variance": float(self.variance),
                "hermite_terms": int(self.n_terms), "variance_captured": float(self.captured),
                "max_misfit_share": float(self.max_misfit),
                "hermite_coefficients": [float(x) for x in self.phi]}


def _fit_lags(model: NestedModel, n_dist: int = 40) -> np.ndarray:
    """Lag vectors along the axes and diagonals of the frame, out past every range."""
    F = model.frame
    dirs = [F[:, 0], F[:, 1], F[:, 2]]
    for s1 in (1.0, -1.0):
        for s2 in (1.0, -1.0):
            dirs.append(F @ np.array([1.0, s1, s2]) / np.sqrt(3.0))
    lags = []
    for u in dirs:
        reach = max(float(model.range_along(u)), 1e-9)
        d = np.linspace(reach / n_dist, 1.5 * reach, n_dist)
        lags.append(d[:, None] * u[None, :])
    return np.concatenate(lags)


def grade_model(score_model: NestedModel, anamorphosis, *, n_terms: int = N_HERMITE) -> GradeModel:
    """Grade-unit model of a normal-score model by Hermite expansion.

    The normal-score correlation is ``rho_Y(h) = C_Y(h) / C_Y(0)``; the
    grade covariance is ``C_Z(h) = sum_{n>=1} phi_n^2 rho_Y(h)^n``
    (Rivoirard 1994; Chiles & Delfiner 2012, ch. 6). The grade model keeps
    the frame, kinds and ranges and fits one sill per structure by
    non-negative least squares to ``C_Z`` at lags along the three axes and
    four diagonals of the frame, out to 1.5 times the range in each
    direction; the nugget is the grade variance minus the structure sills
    (never negative), so the total sill is the grade variance.

    Parameters
    ----------
    score_model : NestedModel
        The model fitted to normal scores.
    anamorphosis : callable
        Scores -> grades (the normal-score back-transform).
    n_terms : int

    Returns
    -------
    GradeModel
    """
    if not score_model.structures:
        raise InputError("the normal-score model has no structure to carry into grade units.")
    phi, var = hermite_coefficients(anamorphosis, n_terms)
    lags = _fit_lags(score_model)
    rho = score_model.covariance(lags) / score_model.total_sill
    target = hermite_covariance(phi, rho)
    A = np.stack([s.correlation(lags, score_model.frame) for s in score_model.structures], -1)
    sills, _ = nnls(A, target)
    total = float(np.sum(sills))
    if total > var:  # the structures cannot exceed the variance; scale them into it
        sills = sills * (var / total)
        total = var
    nugget = max(var - total, 0.0)
    structures = [Structure(s.kind, float(b), s.ranges, s.frame)
                  for s, b in zip(score_model.structures, sills)]
    model = NestedModel(nugget, structures, score_model.frame)
    misfit = float(np.max(np.abs(A @ sills - target))) / var if var > 0 else 0.0
    captured = float(np.sum(phi[1:] ** 2) / var) if var > 0 else 1.0
    reason = ("the grades were turned into normal scores, so the grade covariance follows "
              "from the normal-score model through the Hermite expansion of the "
              "back-transform (Gaussian anamorphosis); the frame, kinds and ranges are "
              "held and only the sills are fitted to it")
    return GradeModel(model=model, method="hermite", reason=reason, variance=var,
                      captured=captured, max_misfit=misfit, n_terms=int(n_terms), phi=phi)


def _downhole_pairs(coords, holes, max_step: int = 3):
    """Pairs ``(i, j)`` of samples ``step`` apart along the same hole, steps 1..max_step.

    Inside a hole the samples are ordered along the hole's principal
    direction (first right singular vector of the centred coordinates).
    """
    coords = np.asarray(coords, float)
    codes, inv = np.unique(np.asarray(holes).astype(str), return_inverse=True)
    pos = np.zeros(len(coords))
    for h in range(len(codes)):
        idx = np.flatnonzero(inv == h)
        if len(idx) > 1:
            p = coords[idx] - coords[idx].mean(axis=0)
            pos[idx] = p @ np.linalg.svd(p, full_matrices=False)[2][0]
    order = np.lexsort((pos, inv))
    pairs = []
    for step in range(1, max_step + 1):
        a, b = order[:-step], order[step:]
        same = inv[a] == inv[b]
        pairs.append(np.stack([a[same], b[same]], axis=1))
    return np.concatenate(pairs) if pairs else np.empty((0, 2), int)


def downhole_check(model: NestedModel, coords, grades, holes, composite, *,
                   n_classes: int = 3, min_pairs: int = 20) -> list:
    """The grade model against the direct grade variogram down the holes.

    For the down-hole pairs in classes of ``k`` composite lengths
    (k = 1 .. ``n_classes``, distance rounded to the nearest multiple), the
    experimental semivariogram of the grades, ``0.5 mean (z_i - z_j)^2``
    (unweighted), beside the model's semivariogram averaged over the same
    pairs' lag vectors.

    Parameters
    ----------
    model : NestedModel
        The grade-unit model.
    coords : array_like (n, 3)
    grades : array_like (n,)
    holes : array_like (n,)
        Hole identifiers.
    composite : float
        Down-hole sample spacing, metres.

    Returns
    -------
    list of dict
        ``{lag_m, mean_distance_m, pairs, experimental, model}`` per class
        with at least ``min_pairs`` pairs.
    """
    if holes is None or not composite or composite <= 0:
        return []
    coords = np.asarray(coords, float)
    z = np.asarray(grades, float)
    ij = _downhole_pairs(coords, holes, n_classes + 1)
    if len(ij) == 0:
        return []
    lag = coords[ij[:, 1]] - coords[ij[:, 0]]
    dist = np.linalg.norm(lag, axis=1)
    cls = np.round(dist / float(composite)).astype(int)
    out = []
    for k in range(1, n_classes + 1):
        m = cls == k
        if m.sum() < min_pairs:
            continue
        diff = z[ij[m, 1]] - z[ij[m, 0]]
        out.append({"lag_m": k * float(composite), "mean_distance_m": float(dist[m].mean()),
                    "pairs": int(m.sum()), "experimental": float(0.5 * np.mean(diff * diff)),
                    "model": float(np.mean(model.variogram(lag[m])))})
    return out
