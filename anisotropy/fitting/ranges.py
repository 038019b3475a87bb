"""A range per direction under a shared nugget and sill.

For each direction of a fan, the single range ``a`` of a one-structure model
``gamma(d) = c0 + c (1 - rho(d / a))`` (nugget ``c0`` and sill ``c`` shared by
every direction) is found by minimising the Cressie (1985) weighted sum
``sum_k N_k (gamma_hat_k / gamma(d_k) - 1)^2`` over a log-spaced grid of
ranges, refined by a parabola through the best grid point and its neighbours.
All directions are solved at once (vectorised).

Reliability (0..1) combines the pairs that inform the range (lags up to 1.5
ranges, by weight) and the fit quality (weighted RMS relative residual):
``min(1, P / P_ref) / (1 + (e / 0.25)^2)``, halved when the range is beyond
the longest lag seen (censored) or shorter than the first lag (unresolved).
Directions with fewer than ``min_lags`` lags holding ``min_pairs`` pairs, or
fewer than ``min_total_pairs`` pairs in all, are flagged ``thin`` and get
reliability 0: they are reported, not used.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from anisotropy.fitting.nested import rho
from anisotropy.geometry import vector_to_line

__all__ = ["DirectionRanges", "direction_ranges"]


@dataclass
class DirectionRanges:
    """Per-direction ranges.

    Attributes
    ----------
    directions : ndarray (n, 3)
    range : ndarray (n,)
        Fitted range (NaN for thin directions).
    reliability : ndarray (n,)
        0..1 (0 for thin directions).
    pairs : ndarray (n,)
        Pairs over all lags of the direction.
    rms : ndarray (n,)
        Weighted RMS relative residual of the 1-D fit.
    flag : list of str
        "" (usable), "thin", "beyond longest lag", "below first lag".
    nugget, sill : float
        The shared values used.
    kind : str
    """

    directions: np.ndarray
    range: np.ndarray
    reliability: np.ndarray
    pairs: np.ndarray
    rms: np.ndarray
    flag: list
    nugget: float
    sill: float
    kind: str
    settings: dict = field(default_factory=dict)

    @property
    def usable(self) -> np.ndarray:
        """Directions with a range and positive reliability."""
        return np.isfinite(self.range) & (self.reliability > 0)

    @property
    def n_thin(self) -> int:
        return int(sum(f == "thin" for f in self.flag))

    def to_dict(self) -> dict:

        t, p = vector_to_line(self.directions)
        rows = []
        for i in range(len(self.range)):
            rows.append({"trend": round(float(t[i]), 2), "plunge": round(float(p[i]), 2),
                         "range": None if not np.isfinite(self.range[i]) else float(self.range[i]),
                         "reliability": float(self.reliability[i]),
                         "pairs": int(self.pairs[i]),
                         "rms": None if not np.isfinite(self.rms[i]) else float(self.rms[i]),
                         "flag": self.flag[i]})
        return {"kind": self.kind, "nugget": float(self.nugget), "sill": float(self.sill),
                "n_directions": len(rows), "n_thin": self.n_thin, "settings": self.settings,
                "directions": rows}


def direction_ranges(directions, distance, value, pairs, *, nugget, sill, kind="spherical",
                     weights=None, min_pairs=30, min_lags=3, min_total_pairs=100,
                     reference_pairs=None, n_grid=96, min_range=None,
                     max_range=None) -> DirectionRanges:
    """Fit one range per direction under a shared nugget and sill.

    Parameters
    ----------
    directions : ndarray (n_dir, 3)
    distance, value, pairs : ndarray (n_dir, n_lags)
        Mean distance, estimator value and pair count per direction and lag
        (e.g. the arrays of ``anisotropy.directional.variogram_fan``).
    nugget, sill : float
        Shared nugget and structured sill (total = nugget + sill).
    kind : str
        Structure kind of the 1-D model.
    weights : ndarray (n_dir, n_lags), optional
        Information weights to use instead of the pair counts (e.g. capped
        for drill-hole strings); ``pairs`` still decides what is thin.
    min_pairs, min_lags, min_total_pairs : thresholds for "thin" (common
        practice: about 30 pairs per experimental point).
    reference_pairs : float, optional
        Pairs for full reliability (default: the median over directions).
    n_grid : int
        Grid size of the range search.
    min_range, max_range : float, optional
        Search interval (default 0.1 x the shortest and 3 x the longest lag).

    Returns
    -------
    DirectionRanges
    """
    u = np.asarray(directions, float)
    d = np.asarray(distance, float)
    g = np.asarray(value, float)
    n = np.asarray(pairs, float)
    w = n if weights is None else np.asarray(weights, float)
    valid = np.isfinite(d) & np.isfinite(g) & (n >= min_pairs) & (d > 0)
    n_ok = valid.sum(axis=1)
    total = np.where(np.isfinite(n), n, 0).sum(axis=1)
    thin = (n_ok < min_lags) | (total < min_total_pairs)
    dpos = d[valid]
    if dpos.size == 0:
        nan = np.full(len(u), np.nan)
        return DirectionRanges(u, nan, np.zeros(len(u)), total, nan, ["thin"] * len(u),
                               float(nugget), float(sill), kind)
    lo = min_range if min_range is not None else 0.1 * dpos.min()
    hi = max_range if max_range is not None else 3.0 * dpos.max()
    W = np.where(valid, w, 0.0)
    D = np.where(valid, d, 1.0)
    G = np.where(valid, g, 0.0)
    a = _grid_ranges(W, D, G, nugget, sill, kind, lo, hi, n_grid)
    rel_w, rms, pref = _reliabilities(W, D, G, valid, thin, a, nugget, sill, kind,
                                      reference_pairs)
    flags = _range_flags(thin, a, np.where(valid, d, -np.inf).max(axis=1),
                         np.where(valid, d, np.inf).min(axis=1))
    rel_w = np.where(np.isin(np.array(flags), ["beyond longest lag", "below first lag"]),
                     0.5 * rel_w, rel_w)
    rel_w = np.where(thin, 0.0, np.nan_to_num(rel_w))
    a = np.where(thin, np.nan, a)
    rms = np.where(thin, np.nan, rms)
    return DirectionRanges(u, a, rel_w, total, rms, flags, float(nugget), float(sill), kind,
                           settings={"min_pairs": min_pairs, "min_lags": min_lags,
                                     "min_total_pairs": min_total_pairs,
                                     "reference_pairs": float(pref)})


def _model_values(D, a, nugget, sill, kind):
    """The 1-D model at distances ``D`` for ranges ``a`` (broadcast), floored above zero."""
    return np.maximum(nugget + sill * (1.0 - rho(kind, D / a)), 1e-6 * (nugget + sill))


def _grid_ranges(W, D, G, nugget, sill, kind, lo, hi, n_grid):
    """Each direction's range minimising the weighted relative misfit over a log grid,
    refined by a parabola through the grid's best point and its neighbours."""
    grid = np.exp(np.linspace(np.log(lo), np.log(hi), n_grid))
    # model (n_dir, n_lags, n_grid)
    model = _model_values(D[..., None], grid[None, None, :], nugget, sill, kind)
    obj = np.sum(W[..., None] * (G[..., None] / model - 1.0) ** 2, axis=1)
    k = np.argmin(obj, axis=1)
    lg = np.log(grid)
    kk = np.clip(k, 1, n_grid - 2)
    i = np.arange(len(W))
    y0, y1, y2 = obj[i, kk - 1], obj[i, kk], obj[i, kk + 1]
    den = y0 - 2 * y1 + y2
    with np.errstate(invalid="ignore", divide="ignore"):
        off = np.where(den > 0, 0.5 * (y0 - y2) / den, 0.0)
    off = np.clip(off, -1.0, 1.0)
    best_log = np.where((k > 0) & (k < n_grid - 1), lg[kk] + off * (lg[1] - lg[0]), lg[k])
    return np.exp(best_log)


def _reliabilities(W, D, G, valid, thin, a, nugget, sill, kind, reference_pairs):
    """Each direction's reliability (its informative weight against the reference, cut by
    its misfit), its RMS relative misfit at the range, and the reference weight."""
    rel = np.where(valid, G / _model_values(D, a[:, None], nugget, sill, kind) - 1.0, 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        rms = np.sqrt(np.sum(W * rel ** 2, axis=1) / W.sum(axis=1))
    informative = np.where(valid & (D <= 1.5 * a[:, None]), W, 0.0).sum(axis=1)
    if reference_pairs is not None:
        pref = float(reference_pairs)
    else:
        pref = float(np.median(informative[~thin])) if np.any(~thin) else 1.0
    pref = max(pref, 1.0)
    return np.minimum(1.0, informative / pref) / (1.0 + (rms / 0.25) ** 2), rms, pref


def _range_flags(thin, a, dmax, dmin) -> list:
    """"thin", "beyond longest lag", "below first lag" or "" per direction."""
    return ["thin" if t else "beyond longest lag" if r > hi else "below first lag" if r < lo
            else "" for t, r, hi, lo in zip(thin, a, dmax, dmin)]
