"""What the down-hole lags resolve.

The lag-vector volume's bins start at the unit lag, which on drill-hole data
is chosen from the spacing *between* holes.  Composites along a hole are far
closer than that: an axis that the holes run along is seen at the composite
spacing, the best-sampled direction there is.  A check that reads only the
volume's bins would call such an axis unresolved although every hole
samples it; this module says which axes the holes themselves resolve.

Rule (stated in :func:`downhole_resolved_axes`): an axis is resolved by its
down-hole lags when holes holding at least ``min_share`` of the hole samples
run within the angular tolerance of the axis, and those holes give at least
two down-hole lag classes (multiples of the composite spacing) shorter than
the axis's range, each with at least ``min_pairs`` pairs — the same "more
than one point on the rise" test the volume's bins get.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from anisotropy.geometry import to_lower_hemisphere

__all__ = ["HoleAxes", "hole_axes", "downhole_resolved_axes"]

_AXES = ("major", "semi_major", "minor")


@dataclass(frozen=True)
class HoleAxes:
    """Direction and sampling of each hole.

    Attributes
    ----------
    labels : ndarray (H,)
        Hole identifiers.
    directions : ndarray (H, 3)
        Principal direction of each hole's samples (lower hemisphere); NaN for
        holes with a single sample.
    counts : ndarray (H,) int
        Samples per hole.
    spacing : ndarray (H,)
        Median distance between consecutive samples along each hole (NaN for
        single-sample holes).
    """

    labels: np.ndarray
    directions: np.ndarray
    counts: np.ndarray
    spacing: np.ndarray


def hole_axes(coords, holes) -> HoleAxes:
    """Principal direction, sample count and composite spacing of every hole.

    Parameters
    ----------
    coords : ndarray (n, 3)
    holes : array-like (n,)
        Hole identifier of each sample.

    Returns
    -------
    HoleAxes
    """
    X = np.asarray(coords, float)
    labels, inv = np.unique(np.asarray(holes).astype(str), return_inverse=True)
    H = len(labels)
    dirs = np.full((H, 3), np.nan)
    spacing = np.full(H, np.nan)
    counts = np.bincount(inv, minlength=H)
    order = np.argsort(inv, kind="stable")
    bounds = np.r_[0, np.cumsum(counts)]
    for h in range(H):
        idx = order[bounds[h]:bounds[h + 1]]
        if len(idx) < 2:
            continue
        P = X[idx] - X[idx].mean(axis=0)
        v = np.linalg.svd(P, full_matrices=False)[2][0]
        dirs[h] = to_lower_hemisphere(v)
        s = np.sort(P @ v)
        step = np.diff(s)
        step = step[step > 0]
        if step.size:
            spacing[h] = float(np.median(step))
    return HoleAxes(labels, dirs, counts, spacing)


def downhole_resolved_axes(frame, ranges, holes: HoleAxes, *, tolerance=15.0,
                           min_share=0.2, min_pairs=30) -> list:
    """Axes of ``frame`` that the down-hole lags resolve.

    Parameters
    ----------
    frame : (3, 3)
        Columns major, semi-major, minor.
    ranges : (3,)
        Range along each axis (the longest structure's).
    holes : HoleAxes
    tolerance : float
        Angular tolerance (degrees): a hole runs along an axis when its
        direction lies within this angle of it.
    min_share : float
        Least share of the hole samples that must run along the axis.
    min_pairs : int
        Fewest down-hole pairs in each of the two shortest lag classes.

    Returns
    -------
    list of str
        Names of the resolved axes, in axis order.
    """
    F = np.asarray(frame, float)
    R = np.asarray(ranges, float)
    ok = np.all(np.isfinite(holes.directions), axis=1) & np.isfinite(holes.spacing)
    total = holes.counts[ok].sum()
    out = []
    if total == 0:
        return out
    cos_t = np.cos(np.radians(tolerance))
    for i, name in enumerate(_AXES):
        along = ok & (np.abs(holes.directions @ F[:, i]) >= cos_t)
        if holes.counts[along].sum() < min_share * total:
            continue
        comp = float(np.median(holes.spacing[along]))
        # pairs at one and two composite spacings: (count - 1) and (count - 2) per hole
        pairs1 = np.maximum(holes.counts[along] - 1, 0).sum()
        pairs2 = np.maximum(holes.counts[along] - 2, 0).sum()
        if 2 * comp < R[i] and pairs1 >= min_pairs and pairs2 >= min_pairs:
            out.append(name)
    return out
