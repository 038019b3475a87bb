"""Starting frames and the search for the orientation over all lag bins at once.

Orientation is a property of the whole volume: one-structure fits over every
bin, from several starting frames (the ellipsoid of the directional ranges,
the linear baseline, the inertia axes of the low-variability region and
seeded random rotations), are screened at a loose tolerance; the best three
are polished, the best is restarted with each pair of axes exchanged, and the
other structure kinds are tried from the best frame.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial.transform import Rotation

from anisotropy.fitting import (FitBins, NestedFit, ellipsoid_range, fit_nested, inertia_frame,
                                linear_ellipsoid)
from anisotropy.geometry import frame_from_axes

from anisotropy.discovery.fan import FanRanges
from anisotropy.discovery.params import N_RANDOM_STARTS


@dataclass(frozen=True)
class FitSettings:
    """Constraints shared by every joint fit of one run (and its bootstrap refits)."""

    fixed_nugget: float | None
    total_sill: float | None
    min_range: float
    max_range: float
    planar: bool

    @classmethod
    def for_lags(cls, unit_lag, max_distance, *, fixed_nugget, total_sill, planar):
        """Ranges searched between 0.05 unit lag and 20 times the longest lag."""
        return cls(fixed_nugget=fixed_nugget, total_sill=total_sill,
                   min_range=0.05 * unit_lag, max_range=20.0 * max_distance, planar=planar)

    def kwargs(self) -> dict:
        """Keywords of :func:`anisotropy.fitting.fit_nested` (no model built)."""
        return dict(fixed_nugget=self.fixed_nugget, total_sill=self.total_sill,
                    min_range=self.min_range, max_range=self.max_range, planar=self.planar,
                    make_model=False)


@dataclass(frozen=True)
class Start:
    """A starting frame (columns: major, semi-major, minor) and its starting ranges."""

    name: str
    frame: np.ndarray
    ranges: np.ndarray


def planar_start(F):
    """Nearest frame with a vertical minor axis (planar data)."""
    major = np.asarray(F[:, 0], float).copy()
    major[2] = 0.0
    if np.linalg.norm(major) < 1e-9:
        major = np.array([1.0, 0.0, 0.0])
    return frame_from_axes(major, minor=np.array([0.0, 0.0, -1.0]))


def starting_frames(fan: FanRanges, bins: FitBins, *, unit_lag, max_distance, seed=0,
                    planar=False) -> tuple[Start, ...]:
    """The frames the orientation search starts from, each with starting ranges.

    Ranges come from the fan's ellipsoid along the frame's columns (or the
    isotropic range without one), clipped to half a lag .. three longest lags.
    """
    frames = []
    ell = fan.ellipsoid
    if ell is not None:
        frames.append(("ellipsoid of directional ranges", ell.frame))
    usable = fan.ranges.usable
    try:
        lin = linear_ellipsoid(fan.directions[usable], fan.ranges.range[usable])
        frames.append(("linear ellipsoid (baseline)", lin.frame))
    except ValueError:  # fewer than six usable directions
        pass
    in_frame, _ = inertia_frame(bins.lags, bins.gamma, fan.nugget + fan.sill, fraction=0.6)
    frames.append(("inertia axes of the low-variability region", in_frame))
    rng = np.random.default_rng(seed)
    for R in Rotation.random(N_RANDOM_STARTS, random_state=rng).as_matrix():
        frames.append(("seeded random rotation", R))
    out = []
    for name, F in frames:
        F = np.asarray(F, float)
        if ell is not None:
            r = ellipsoid_range(F.T, ell.frame, ell.ranges)
        else:
            r = np.full(3, fan.iso_range)
        r = np.clip(r, 0.5 * unit_lag, 3 * max_distance)
        out.append(Start(name=name, frame=planar_start(F) if planar else F, ranges=r))
    return tuple(out)


@dataclass(frozen=True)
class Search:
    """The best one-structure fit of the orientation search, and what was tried.

    Attributes
    ----------
    best : NestedFit
        The best fit over starts, swapped-axis restarts and kinds.
    tried : list of dict
        One row per screened start and restart: start, kind, objective.
    kinds : list of dict
        Weighted residual sum of squares of each kind from the best frame.
    polished : tuple of NestedFit
        The polished fits of the best screened starts (other good frames,
        candidates of the likelihood's global frame choice).
    """

    best: NestedFit
    tried: list
    kinds: list
    polished: tuple[NestedFit, ...] = ()
    choices: tuple[dict, ...] = ()
    warnings: tuple[str, ...] = ()


def _screen(bins, starts, nugget, sill, kind, common):
    """Every start, one structure, a loose tolerance; sorted by objective."""
    tried, screened = [], []
    for s in starts:
        f = fit_nested(bins, (s.frame, nugget, [sill], [s.ranges], (kind,)), ftol=1e-4,
                       outer=1, max_nfev=300, **common)
        tried.append({"start": s.name, "kind": kind, "objective": f.objective})
        screened.append(f)
    screened.sort(key=lambda f: f.objective)
    return screened, tried


def _swap_axes(bins, best, common, tried):
    """Restart from the best frame with each pair of axes exchanged; keep what fits better.

    The usual local optima exchange two axes (major and semi-major above all).
    """
    for a, b_ in ((0, 1), (1, 2), (0, 2)):
        perm = [0, 1, 2]
        perm[a], perm[b_] = perm[b_], perm[a]
        rr = np.asarray(best.ranges, float).copy()
        F = np.asarray(best.frame, float)
        f = fit_nested(bins, (F, best.nugget, best.sills, rr[:, perm], best.kinds),
                       ftol=1e-4, outer=1, max_nfev=300, **common)
        tried.append({"start": f"best frame, axes {a + 1} and {b_ + 1} exchanged",
                      "kind": best.kinds[0], "objective": f.objective})
        if f.objective < best.objective - 1e-6:
            f = fit_nested(bins, (f.frame, f.nugget, f.sills, f.ranges, f.kinds), **common)
            if f.objective < best.objective:
                best = f
    return best


def search_orientation(bins: FitBins, starts, settings: FitSettings, *, nugget, sill,
                       kinds=("spherical", "exponential")) -> Search:
    """The orientation that best fits all lag bins at once (one structure).

    Parameters
    ----------
    bins : FitBins
    starts : sequence of Start
    settings : FitSettings
    nugget, sill : float
        Starting nugget and sill (the isotropic fit's).
    kinds : sequence of str
        The first is screened from every start; the others are tried from the
        best frame and kept when they fit better.
    """
    common = settings.kwargs()
    screened, tried = _screen(bins, starts, nugget, sill, kinds[0], common)
    # polish the three best, then try the other kinds from the best frame
    best = None
    polished = []
    for f0 in screened[:3]:
        f = fit_nested(bins, (f0.frame, f0.nugget, f0.sills, f0.ranges, f0.kinds), **common)
        polished.append(f)
        if best is None or f.objective < best.objective:
            best = f
    best = _swap_axes(bins, best, common, tried)
    kind_table = [{"kind": best.kinds[0], "wrss": best.wrss}]
    for kind in kinds[1:]:
        f = fit_nested(bins, (best.frame, best.nugget, best.sills, best.ranges, (kind,)),
                       **common)
        kind_table.append({"kind": kind, "wrss": f.wrss})
        if f.wrss < best.wrss:
            best = f
    return Search(best=best, tried=tried, kinds=kind_table, polished=tuple(polished))
