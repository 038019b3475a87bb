"""Range ellipsoids: a robust fit to directional ranges, the linear baseline,
and the principal axes of the variogram volume's low-variability region.

An ellipsoid with frame ``R`` (columns = axes) and semi-axes ``a`` gives the
range along a unit direction ``u`` as ``r(u) = 1 / sqrt(u^T A u)`` with
``A = R diag(a^-2) R^T`` (the geometric-anisotropy distance of Journel &
Huijbregts 1978, ch. II).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares
from scipy.spatial.transform import Rotation

__all__ = ["EllipsoidFit", "fit_ellipsoid", "linear_ellipsoid", "ellipsoid_range",
           "inertia_frame", "order_frame"]


@dataclass
class EllipsoidFit:
    """An ellipsoid fitted to ranges.

    Attributes
    ----------
    frame : ndarray (3, 3)
        Right-handed, columns ordered by decreasing range (major, semi-major, minor).
    ranges : ndarray (3,)
        Semi-axes along the columns, decreasing.
    loss : float
        Robust cost at the optimum (``inf`` for the linear baseline when it
        had to clip a non-positive eigenvalue).
    method : str
    """

    frame: np.ndarray
    ranges: np.ndarray
    loss: float
    method: str = "robust"

    def to_dict(self) -> dict:
        return {"frame": np.asarray(self.frame).tolist(),
                "ranges": [float(r) for r in self.ranges], "loss": float(self.loss),
                "method": self.method}


def ellipsoid_range(directions, frame, ranges):
    """Range along each unit direction of an ellipsoid (frame columns = axes)."""
    u = np.asarray(directions, float) @ np.asarray(frame, float)
    return 1.0 / np.sqrt(np.sum((u / np.asarray(ranges, float)) ** 2, axis=-1))


def order_frame(frame, ranges):
    """Sort the columns by decreasing range and make the frame right-handed."""
    frame = np.asarray(frame, float)
    ranges = np.asarray(ranges, float)
    o = np.argsort(-ranges, kind="stable")
    fr = frame[:, o].copy()
    if np.linalg.det(fr) < 0:
        fr[:, 2] *= -1
    return fr, ranges[o]


def linear_ellipsoid(directions, ranges) -> EllipsoidFit:
    """The naive baseline: linear least squares for the quadric ``x^T A x = 1``.

    Each direction ``u`` with range ``r`` gives one equation
    ``u^T A u = 1 / r^2`` in the six unique entries of the symmetric ``A``;
    the axes are its eigenvectors.  Eigenvalues that come out non-positive
    (the quadric is then not an ellipsoid) are clipped to a small positive
    value.  This is the method to beat, not the method used.
    """
    u = np.asarray(directions, float)
    r = np.asarray(ranges, float)
    ok = np.isfinite(r) & (r > 0)
    u, r = u[ok], r[ok]
    if len(r) < 6:
        raise ValueError("the linear ellipsoid needs at least six directions with ranges")
    x, y, z = u.T
    M = np.stack([x * x, y * y, z * z, 2 * x * y, 2 * x * z, 2 * y * z], axis=1)
    coef, *_ = np.linalg.lstsq(M, 1.0 / r ** 2, rcond=None)
    A = np.array([[coef[0], coef[3], coef[4]], [coef[3], coef[1], coef[5]],
                  [coef[4], coef[5], coef[2]]])
    w, V = np.linalg.eigh(A)
    clipped = bool(np.any(w <= 0))
    w = np.maximum(w, 1e-12 * max(w.max(), 1e-300))
    frame, semi = order_frame(V, 1.0 / np.sqrt(w))
    return EllipsoidFit(frame=frame, ranges=semi, loss=np.inf if clipped else 0.0,
                        method="linear")


def _random_rotations(n, seed):
    if n <= 0:
        return []
    return list(Rotation.random(n, random_state=np.random.default_rng(seed)).as_matrix())


def fit_ellipsoid(directions, ranges, weights=None, *, seed=0, n_starts=8,
                  starts=None, loss="soft_l1", f_scale=0.1) -> EllipsoidFit:
    """Fit an ellipsoid to directional ranges by robust optimisation.

    Minimises ``sum_i w_i rho((log r_model(u_i) - log r_i)^2)`` over a rotation
    vector and three log semi-axes, so the ellipsoid is positive definite by
    construction and no Euler-angle lock can occur.  Several starts: the
    linear baseline's axes, any ``starts`` given (e.g. the variogram volume's
    inertia axes, :func:`inertia_frame`) and seeded random rotations; the best
    optimum is kept.

    Parameters
    ----------
    directions : ndarray (n, 3)
        Unit directions.
    ranges : ndarray (n,)
        Range along each direction (NaN or <= 0 entries are ignored).
    weights : ndarray (n,), optional
        Reliability weights (default 1).
    seed : int or Generator
        Seed of the random starts.
    n_starts : int
        Number of random starts in addition to the deterministic ones.
    starts : sequence of (3, 3), optional
        Extra starting frames.
    loss, f_scale : robust loss; ``f_scale`` is in log-range units (0.1 ~ 10 %).

    Returns
    -------
    EllipsoidFit
    """
    u = np.asarray(directions, float)
    r = np.asarray(ranges, float)
    w = np.ones(len(r)) if weights is None else np.asarray(weights, float)
    ok = np.isfinite(r) & (r > 0) & np.isfinite(w) & (w > 0)
    u, r, w = u[ok], r[ok], w[ok]
    if len(r) < 4:
        raise ValueError("an ellipsoid fit needs ranges in at least four directions")
    sw = np.sqrt(w / w.mean())
    lr = np.log(r)
    lo_r, hi_r = lr.min() - np.log(20.0), lr.max() + np.log(20.0)

    def resid(p):
        R = Rotation.from_rotvec(p[:3]).as_matrix()
        local = u @ R
        q = np.sum(local * local * np.exp(-2.0 * p[3:]), axis=1)
        return sw * (-0.5 * np.log(q) - lr)

    frames = []
    semis = []
    try:
        lin = linear_ellipsoid(u, r)
        frames.append(lin.frame)
        semis.append(np.clip(lin.ranges, np.exp(lo_r), np.exp(hi_r)))
    except ValueError:
        pass
    for f in (starts or []):
        frames.append(np.asarray(f, float))
        semis.append(None)
    for f in _random_rotations(n_starts, seed):
        frames.append(f)
        semis.append(None)
    best = None
    lo = np.r_[[-np.inf] * 3, [lo_r] * 3]
    hi = np.r_[[np.inf] * 3, [hi_r] * 3]
    for f, s in zip(frames, semis):
        f = np.asarray(f, float).copy()
        if np.linalg.det(f) < 0:
            f[:, 2] *= -1
        if s is None:
            # semi-axes: the largest range seen within 30 degrees of each axis
            cos = np.abs(u @ f)
            s = np.array([r[c > np.cos(np.radians(30))].max() if np.any(c > np.cos(np.radians(30)))
                          else np.exp(np.median(lr)) for c in cos.T])
        p0 = np.r_[Rotation.from_matrix(f).as_rotvec(), np.clip(np.log(s), lo_r + 1e-6,
                                                                   hi_r - 1e-6)]
        res = least_squares(resid, p0, bounds=(lo, hi), loss=loss, f_scale=f_scale,
                            method="trf")
        if best is None or res.cost < best.cost - 1e-12:
            best = res
    frame, semi = order_frame(Rotation.from_rotvec(best.x[:3]).as_matrix(), np.exp(best.x[3:]))
    return EllipsoidFit(frame=frame, ranges=semi, loss=float(best.cost), method="robust")


def inertia_frame(lags, gamma, sill, *, fraction=0.6, weights=None):
    """Principal axes of the low-variability region of a variogram volume.

    The second-moment tensor ``sum_j w_j h_j h_j^T`` of the lag vectors whose
    experimental value is below ``fraction x sill`` is elongated along the
    directions of greatest continuity: along a direction of range ``r`` the
    region extends to about ``fraction``'s crossing distance, so for an
    even cover of directions its eigenvectors are the ellipsoid's axes.  Each
    bin counts once (not by its pairs) so that the sampling pattern does not
    steer the axes; pass ``weights`` to change that.

    Returns
    -------
    frame : ndarray (3, 3)
        Right-handed, columns by decreasing extent.
    extents : ndarray (3,)
        Root-mean-square extent along each column (a scale, not a range).
    """
    lags = np.asarray(lags, float)
    gamma = np.asarray(gamma, float)
    sel = np.isfinite(gamma) & (gamma < fraction * sill)
    if sel.sum() < 6:
        # too few low bins: take the lowest half instead
        sel = gamma <= np.nanmedian(gamma)
    h = lags[sel]
    w = np.ones(len(h)) if weights is None else np.asarray(weights, float)[sel]
    T = (h * w[:, None]).T @ h / max(w.sum(), 1e-300)
    ev, V = np.linalg.eigh(T)
    ext = np.sqrt(np.maximum(ev, 0.0))
    return order_frame(V, ext)
