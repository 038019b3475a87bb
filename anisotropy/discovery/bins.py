"""The fit bins of the volume and their information weights (drill-hole strings).

Most pairs of a drill-hole data set lie inside one hole, so a bin's pair
count overstates its information.  The within-hole pairs of every bin are
counted exactly (per hole, and filed in the bins by the pair engine's own
rule, so they are a subset of each bin's pairs), and the bin's information weight is
``N_between + H_within``: the pairs between different holes plus the number
of distinct holes contributing within-hole pairs (each hole an independent
look at that lag).  The weights enter the Cressie (1985) objective in place
of the pair counts, divided by the lag distance.  The nugget is taken from the
down-hole variogram at the composite spacing (extrapolated to zero from the
first lags) and held in the joint fit.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from anisotropy.errors import FitError, InsufficientDataError
from anisotropy.exploration import Spacing
from anisotropy.fitting import FitBins, bins_from_sums

from anisotropy.discovery.lags import LagChoice, PairVolume


@dataclass(frozen=True)
class WeightedBins:
    """Fit bins (one per distance class and coarse cell) with information weights.

    Attributes
    ----------
    bins : FitBins
        ``weight`` holds the information weights.
    ratio : ndarray (n_lags + 1, n_coarse)
        Information weight per pair of each (class, cell): 1 without holes.
    fixed_nugget : float or None
        The down-hole nugget held in the fits, None when it is fitted.
    downhole : dict or None
        The down-hole variogram's first points and nugget (drill holes only).
    min_pairs : float
        Fewest pairs of a bin.
    downhole_pairs : tuple or None
        Distances (m,) and sample indices (m, 2) of the down-hole pairs the
        held nugget came from (for the bootstrap, which re-estimates it in
        each replicate); None when the nugget is fitted.
    """

    bins: FitBins
    ratio: np.ndarray
    fixed_nugget: float | None
    downhole: dict | None
    min_pairs: float
    choices: tuple[dict, ...] = ()
    warnings: tuple[str, ...] = ()
    downhole_pairs: tuple | None = None


@dataclass(frozen=True)
class ReplicateNugget:
    """The held down-hole nugget of a block-bootstrap replicate: the same rule, re-weighted.

    Each down-hole pair carries the replicate's weight of the block holding
    its midpoint (:meth:`anisotropy.pairs.LagVolume.blocks_of_pairs`), as
    the pass's pairs do in the re-weighted block sums, and the nugget is
    read from the weighted first lags by :func:`downhole_nugget`. So the
    replicates re-estimate the nugget instead of holding the main one.

    Attributes
    ----------
    distances : ndarray (m,)
    pairs : ndarray (m, 2)
        Sample indices of the down-hole pairs.
    pair_block : ndarray (m,)
        Block of each pair's midpoint in the resampled volume.
    values : ndarray (n,)
        The analysed values.
    composite : float
    total : float or None
    estimator : str
    """

    distances: np.ndarray
    pairs: np.ndarray
    pair_block: np.ndarray
    values: np.ndarray
    composite: float
    total: float | None
    estimator: str

    @classmethod
    def of(cls, weighted: "WeightedBins", volume, coords, values, *, total, estimator):
        """The rule for ``volume``'s blocks, or None where ``weighted`` holds no down-hole
        nugget."""
        if weighted.fixed_nugget is None or weighted.downhole_pairs is None:
            return None
        d, ij = weighted.downhole_pairs
        return cls(distances=d, pairs=ij, pair_block=volume.blocks_of_pairs(coords, ij[:, 0],
                                                                            ij[:, 1]),
                   values=np.asarray(values, float),
                   composite=float(weighted.downhole["composite"]), total=total,
                   estimator=estimator)

    def __call__(self, block_weights) -> float:
        """The nugget for one replicate's block weights.

        Raises
        ------
        FitError
            Too few down-hole pairs of positive weight for the rule.
        """
        w = np.asarray(block_weights, float)[self.pair_block]
        nug, _ = downhole_nugget((self.distances, self.pairs), self.values, self.composite,
                                 self.total, self.estimator, weights=w)
        if nug is None:
            raise FitError("the replicate's down-hole pairs are too few to read its nugget")
        return nug


def information_weight(bins: FitBins, ratio) -> np.ndarray:
    """Information weight of each bin: drill-hole-corrected pairs per metre of lag."""
    r = ratio[bins.lag_index, bins.direction_index]
    r = np.where(np.isfinite(r), r, 1.0)
    return bins.pairs * r / np.maximum(bins.distance, 1e-9)


def _drill_hole_ratio(pv, csums, coords, holes, values, spacing, lags, total, estimator):
    """Information per pair of each (class, cell), the down-hole nugget, the choices, and the
    down-hole pairs where the nugget is held."""
    within, within_h, dh = within_hole_pairs(pv.volume, coords, holes)
    N = csums[..., 0]
    if np.any(within > N):   # the same rule files both: a subset cannot outnumber its bin
        raise AssertionError("within-hole pairs outnumber the pass's pairs in a bin")
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = np.where(N > 0, (N - within + within_h) / N, 1.0)
    choices = [{"choice": "drill-hole weights", "value": "between-hole pairs + holes",
                "reason": f"{int(within.sum()):,} of {pv.n_pairs:,} pairs lie inside one "
                          "hole; each bin counts its between-hole pairs plus one per "
                          "hole contributing within-hole pairs, so the along-hole "
                          "direction does not dominate the fit"}]
    composite = spacing.down_hole
    nug, pts = downhole_nugget(dh, values, composite, total, estimator)
    downhole = {"composite": composite, "points": pts, "nugget": nug}
    fixed = None
    if nug is not None and composite and composite < 0.5 * lags.unit_lag:
        fixed = nug
        choices.append({"choice": "nugget", "value": nug,
                        "reason": f"from the first down-hole lags ({composite:.3g} m "
                                  "composites), extrapolated to zero and held in the fit "
                                  "(the joint fit's shortest lag is "
                                  f"{lags.unit_lag:.3g} m)"})
    return ratio, fixed, downhole, choices, dh if fixed is not None else None


def weighted_bins(pv: PairVolume, coords, values, *, holes, spacing: Spacing,
                  lags: LagChoice, total, estimator="semivariogram", min_pairs=10.0,
                  source="<table>") -> WeightedBins:
    """The fit bins of the volume, weighted by their information.

    Parameters
    ----------
    pv : PairVolume
    coords, values : ndarray
        Sample coordinates and the analysed values.
    holes : ndarray or None
        Hole id of each sample.
    spacing : anisotropy.exploration.spacing.Spacing
    lags : LagChoice
    total : float or None
        Total sill (caps the down-hole nugget).
    estimator : str
    min_pairs : float
        Fewest pairs of a bin.

    Raises
    ------
    InsufficientDataError
        Fewer than 12 bins with enough pairs.
    """
    csums = pv.volume.coarse_sums()
    bins = bins_from_sums(csums, pv.coarse_directions, estimator=estimator,
                          min_pairs=min_pairs)
    if bins.n < 12:
        raise InsufficientDataError(
            f"{source}: only {bins.n} lag-direction bins have {min_pairs:g} pairs or more "
            f"({pv.n_pairs} pairs in all): too few for a 3D answer, which needs pairs in many "
            "directions. Add samples or holes in other directions, widen the lag, or fit "
            "a 2D or omnidirectional model by hand.")
    ratio, fixed, downhole, choices, dh = np.ones(csums.shape[:2]), None, None, [], None
    if holes is not None and spacing.n_holes and spacing.n_holes > 1:
        ratio, fixed, downhole, choices, dh = _drill_hole_ratio(
            pv, csums, coords, holes, values, spacing, lags, total, estimator)
    bins.weight = information_weight(bins, ratio)
    choices.append({"choice": "bin weights", "value": "pairs / distance",
                    "reason": "the pairs of a 3D lag bin grow with the square of the distance, "
                              "so bins near the sill would outvote the short lags that carry "
                              "the shape; weights are pair counts per metre of lag, inside the "
                              "Cressie (1985) form"})
    if fixed is None:
        choices.append({"choice": "nugget", "value": "fitted",
                        "reason": "fitted jointly, pinned by the shortest lags of the volume"})
    return WeightedBins(bins=bins, ratio=ratio, fixed_nugget=fixed, downhole=downhole,
                        min_pairs=min_pairs, choices=tuple(choices), downhole_pairs=dh)


def within_hole_pairs(volume, coords, holes):
    """Exact within-hole pair counts and distinct holes per (class, coarse cell).

    Samples are sorted by hole and, inside a hole, along its principal
    direction; pairs ``(a, a + step)`` of the same hole are formed for every
    step (vectorised over holes) and filed in the bins by the pass's own rule
    (:meth:`anisotropy.pairs.LagVolume.bins_of_pairs`), so each count is a
    subset of the pass's count of the same bin.  Also returns the down-hole
    pairs of the first six steps (distances and sample indices) for the
    nugget.

    Parameters
    ----------
    volume : anisotropy.pairs.LagVolume
        The pass over all samples.
    coords : ndarray (n, 3)
        The coordinates the pass was built from.
    holes : array_like (n,)
        Hole id of each sample.

    Returns
    -------
    within : ndarray (n_lags + 1, n_coarse)
        Within-hole pairs of each bin.
    within_holes : ndarray (n_lags + 1, n_coarse)
        Holes contributing within-hole pairs to each bin.
    downhole : tuple
        Distances (m,) and sample indices (m, 2) of the down-hole pairs.
    """
    codes, inv = np.unique(np.asarray(holes).astype(str), return_inverse=True)
    order = np.lexsort((_position_along_hole(coords, inv), inv))
    h_sorted = inv[order]
    n_c = volume.coarse_directions.shape[0]
    within = np.zeros((volume.n_lags + 1, n_c))
    keys, dh_d, dh_i, dh_j = [], [], [], []
    for step in range(1, len(order)):
        ia = np.flatnonzero(h_sorted[step:] == h_sorted[:-step])
        if ia.size == 0:
            break
        i, j = order[ia], order[ia + step]
        k, cell = volume.bins_of_pairs(coords, i, j)
        if step <= 6:
            d = np.linalg.norm(coords[j] - coords[i], axis=1)
            dh_d.append(d[d > 0])
            dh_i.append(i[d > 0])
            dh_j.append(j[d > 0])
        ok = k >= 0
        if not ok.any() and step > 6:
            break
        np.add.at(within, (k[ok], cell[ok]), 1.0)
        keys.append((k[ok] * n_c + cell[ok]) * len(codes) + h_sorted[ia[ok]])
    within_holes = np.zeros((volume.n_lags + 1) * n_c)
    if keys:
        np.add.at(within_holes, np.unique(np.concatenate(keys)) // len(codes), 1.0)
    dh = (np.concatenate(dh_d) if dh_d else np.empty(0),
          np.column_stack([np.concatenate(dh_i), np.concatenate(dh_j)]) if dh_i
          else np.empty((0, 2), int))
    return within, within_holes.reshape(within.shape), dh


def _position_along_hole(coords, inv):
    """Position of each sample along its hole's principal direction."""
    pos = np.zeros(len(coords))
    order = np.argsort(inv, kind="stable")
    starts = np.r_[0, np.flatnonzero(np.diff(inv[order])) + 1, len(order)]
    for a0, a1 in zip(starts[:-1], starts[1:]):
        idx = order[a0:a1]
        if len(idx) > 1:
            p = coords[idx] - coords[idx].mean(axis=0)
            _, _, vt = np.linalg.svd(p, full_matrices=False)
            pos[idx] = p @ vt[0]
    return pos


def downhole_nugget(dh, values, composite, total, estimator, weights=None):
    """Nugget from the first down-hole lags: linear extrapolation to zero.

    Parameters
    ----------
    dh : tuple
        Distances (m,) and sample indices (m, 2) of the down-hole pairs.
    values : ndarray (n,)
    composite : float or None
        The composite length (m): pairs are classed by ``round(d / composite)``.
    total : float or None
        Total sill: the nugget is at most 0.95 of it.
    estimator : str
    weights : ndarray (m,), optional
        A weight per pair (a bootstrap replicate's block weights): every
        mean is then the weighted mean, and a class needs 20 pairs of
        positive weight.

    Returns
    -------
    nugget : float or None
        None with fewer than 30 pairs, no composite length, an estimator
        without a variance-like nugget, or fewer than two classes.
    points : list of (mean distance, value, pairs) or None
    """
    d, ij = dh
    if d.size < 30 or not composite or estimator not in ("semivariogram", "robust",
                                                          "correlogram"):
        return None, None
    w = np.ones(d.size) if weights is None else np.asarray(weights, float)
    cls = np.round(d / composite).astype(int)
    pts = []
    for k in (1, 2, 3):
        m = (cls == k) & (w > 0)
        if m.sum() >= 20:
            a, b = values[ij[m, 0]], values[ij[m, 1]]
            if estimator == "correlogram":
                g = 1.0 - np.corrcoef(a, b)[0, 1] if weights is None else \
                    1.0 - _weighted_correlation(a, b, w[m])
            else:
                g = 0.5 * np.average((b - a) ** 2, weights=w[m])
            pts.append((float(np.average(d[m], weights=w[m])), float(g), int(m.sum())))
    if len(pts) < 2:
        return None, pts
    x = np.array([p[0] for p in pts])
    y = np.array([p[1] for p in pts])
    slope, icpt = np.polyfit(x[:2], y[:2], 1)
    nug = float(np.clip(icpt, 0.0, min(y[0], 0.95 * total if total else y[0])))
    return nug, pts


def _weighted_correlation(a, b, w):
    """Pearson correlation of ``a`` and ``b`` with frequency-like weights ``w``."""
    c = np.cov(a, b, aweights=w)
    return c[0, 1] / np.sqrt(c[0, 0] * c[1, 1])
