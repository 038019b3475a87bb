"""The nominal sample spacing per direction class and the unit lag it suggests."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy.spatial import ConvexHull, QhullError
from scipy.spatial import cKDTree as _KDTree  # private: not part of this module's API

from anisotropy.errors import InputError, InsufficientDataError
from anisotropy.exploration.common import MAX_LAGS_AUTO, MIN_LAGS, _f, _round_sig


@dataclass
class Spacing:
    """Nominal sample spacing and suggested unit lags.

    Attributes
    ----------
    across_hole : float or None
        Median distance from each hole (centroid of its samples) to the
        nearest other hole centroid, in 3D; for blast holes (and one level),
        the pattern spacing from the area per sample (``pattern``).
    across_hole_plan : float or None
        The same hole-centroid distance measured in plan (x, y only).
    down_hole : float or None
        Median distance between consecutive samples along a hole.
    bench : float or None
        Median gap between detected bench levels (blast holes).
    suggested_lag : dict
        Unit lag (m) per direction class "along_hole", "across_hole",
        "vertical", "omni"; rounded to two significant figures.
    reasons : dict
        Why each lag was suggested.
    nearest : float or None
        Median 3D nearest-neighbour distance between samples.
    layout : str
        "drill_holes", "benches", "single_level" or "scattered".
    lag_tolerance : dict
        Half the suggested lag per class (common practice).
    n_holes, n_levels : int or None
    levels : list of float
        Detected bench elevations (local coordinates).
    pattern : float or None
        Bench or level layouts: the pattern spacing read from the area per
        sample of each level's footprint (see :func:`footprint_spacing`),
        the median over the levels; ``across_hole`` takes this value.
    plan_nearest : float or None
        Bench or level layouts: the median in-level nearest-neighbour
        distance in plan, reported beside ``pattern`` (it understates a
        jittered pattern's spacing).
    extent : float or None
        Largest extent of the samples along x, y or z (m).
    """

    across_hole: float | None
    down_hole: float | None
    bench: float | None
    suggested_lag: dict
    reasons: dict
    nearest: float | None = None
    layout: str = "scattered"
    lag_tolerance: dict = field(default_factory=dict)
    n_holes: int | None = None
    n_levels: int | None = None
    levels: list = field(default_factory=list)
    across_hole_plan: float | None = None
    pattern: float | None = None
    plan_nearest: float | None = None
    extent: float | None = None

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        rule = discovery_lags(self, has_holes=bool(self.n_holes)) if self.extent else None
        return {
            "discovery_lag": (None if rule is None else
                              {"unit_lag": rule[0], "n_lags": rule[1],
                               "reason": rule[2][0]["reason"]}),
            "pattern": _f(self.pattern), "plan_nearest": _f(self.plan_nearest),
            "pattern_method": (PATTERN_METHOD if self.pattern is not None else None),
            "across_hole": _f(self.across_hole), "across_hole_plan": _f(self.across_hole_plan),
            "down_hole": _f(self.down_hole),
            "bench": _f(self.bench), "nearest": _f(self.nearest), "layout": self.layout,
            "suggested_lag": {k: _f(v) for k, v in self.suggested_lag.items()},
            "lag_tolerance": {k: _f(v) for k, v in self.lag_tolerance.items()},
            "reasons": dict(self.reasons),
            "n_holes": self.n_holes, "n_levels": self.n_levels,
            "levels": [float(z) for z in self.levels],
        }


def _nn_median(points: np.ndarray) -> float | None:
    """Median distance to the nearest other (non-coincident) point."""
    if len(points) < 2:
        return None
    tree = _KDTree(points)
    k = min(len(points), 4)
    d, _ = tree.query(points, k=k)
    d = np.where(d > 0, d, np.inf)[:, 1:].min(axis=1)
    d = d[np.isfinite(d)]
    return float(np.median(d)) if d.size else None


#: How :func:`footprint_spacing` reads a pattern, in words (for the record).
PATTERN_METHOD = ("square root of the area per sample on each level: the level's convex hull "
                  "grown by half a spacing, divided by its distinct sample positions; median "
                  "over the levels")


def footprint_spacing(points) -> float | None:
    """Pattern spacing of one level from the area per sample of its footprint.

    The footprint is the convex hull of the distinct plan positions
    (``scipy.spatial.ConvexHull``: area ``A``, perimeter ``P``) grown by half
    a spacing ``s`` all round, since each sample stands for a cell of side
    ``s`` centred on it; growing a convex set by a disc of radius ``r`` adds
    ``P r + pi r^2`` (Steiner's formula). Setting ``n s^2 = A + P s/2 +
    pi s^2/4`` for ``n`` positions gives
    ``s = (P/2 + sqrt(P^2/4 + 4 (n - pi/4) A)) / (2 (n - pi/4))``.
    For a regular ``a x b`` pattern this is ``sqrt(a b)`` (the equivalent
    square spacing) to within a few per cent on a few hundred holes; it
    overstates the spacing of a footprint that is far from convex (an L-shaped
    bench), where the hull takes in unsampled ground.

    Parameters
    ----------
    points : array_like, shape (n, 2)
        Plan positions (x, y) of one level.

    Returns
    -------
    float or None
        None for fewer than three distinct positions or positions on a line.
    """
    p = np.unique(np.round(np.asarray(points, dtype=float), 3), axis=0)
    n = len(p)
    if n < 3:
        return None
    try:
        hull = ConvexHull(p)
    except QhullError:   # every position on one line
        return None
    area, perimeter = float(hull.volume), float(hull.area)   # 2D: volume is the area
    if area <= 0:
        return None
    a = n - math.pi / 4.0
    half_p = 0.5 * perimeter
    return float((half_p + math.sqrt(half_p * half_p + 4.0 * a * area)) / (2.0 * a))


def _level_spacings(c: np.ndarray, label: np.ndarray, n_levels: int):
    """(pattern, plan nearest neighbour) over the levels: medians, None when unknown."""
    patterns, nn = [], []
    for k in range(n_levels):
        pts = c[label == k, :2]
        if len(pts) >= 2:
            d, _ = _KDTree(pts).query(pts, k=min(len(pts), 4))
            d = np.where(d > 0, d, np.inf)[:, 1:].min(axis=1)
            nn.append(d[np.isfinite(d)])
        s = footprint_spacing(pts)
        if s is not None:
            patterns.append(s)
    nn = np.concatenate(nn) if nn else np.array([])
    return (float(np.median(patterns)) if patterns else None,
            float(np.median(nn)) if nn.size else None)


def _bench_levels(z: np.ndarray, tolerance: float):
    """Split elevations into levels where sorted z jumps by more than ``tolerance``.

    This is the same as reading a histogram of z with bins of width
    ``tolerance``: runs of occupied elevations separated by empty gaps wider
    than the tolerance form one level each.
    """
    order = np.argsort(z, kind="mergesort")
    zs = z[order]
    cuts = np.flatnonzero(np.diff(zs) > tolerance) + 1
    groups = np.split(np.arange(len(zs)), cuts)
    label = np.empty(len(z), dtype=np.int64)
    for g_id, g in enumerate(groups):
        label[order[g]] = g_id
    centres = np.array([np.median(zs[g]) for g in groups])
    spreads = np.array([zs[g].max() - zs[g].min() for g in groups])
    return label, centres, spreads


def nominal_spacing(coords, holes=None, *, bench_tolerance: float = 1.0,
                    min_per_level: int = 10) -> Spacing:
    """Nominal spacing of the samples and a suggested unit lag per direction class.

    Parameters
    ----------
    coords : array_like, shape (n, 3)
    holes : array_like, shape (n,), optional
        Hole or string identifier per sample. When every id holds a single
        sample (blast holes with ids) the samples are treated as unstrung.
    bench_tolerance : float, default 1.0
        Without hole ids: elevation gap (m) that separates two bench levels.
    min_per_level : int, default 10
        Without hole ids: median samples per level needed to call the data
        benched (blast holes).

    Returns
    -------
    Spacing

    Notes
    -----
    With hole ids: ``across_hole`` is the median, over holes, of the
    distance from the centroid of the hole's samples to the nearest other
    hole centroid (scipy.spatial.cKDTree); parallel holes of equal length
    give the collar spacing. It is measured in 3D because in a steep body
    holes from successive collar rows pierce the body at nearly the same
    plan position at different depths, so the plan distance
    (``across_hole_plan``, also reported) understates the spacing there;
    in flat bodies the two agree. ``down_hole`` is the median gap between consecutive samples
    ordered along each hole's principal axis.
    Without hole ids the elevations are split into levels (see
    ``bench_tolerance``); with two or more well-filled levels the data are
    treated as blast holes: ``bench`` is the median gap between levels and
    ``across_hole`` the pattern spacing, the square root of the area per
    sample on each level's footprint (:func:`footprint_spacing`, the median
    over levels), as a pattern is read off a plan; the median in-level
    nearest-neighbour distance in plan is reported beside it
    (``plan_nearest``): on a jittered pattern it comes out well under the
    pattern spacing (a jittered 5 x 5 m pattern gives about 4 m). One level
    (``single_level``) is read the same way.
    One level is a single bench only when its elevations spread over no more
    than three bench tolerances or the plan spacing, whichever is larger;
    elevations spread continuously over more than that (no gap wider than
    the tolerance) are a scattered 3D cloud.
    Unit lags are set to about the nominal spacing and the lag tolerance to
    half the lag (common practice).
    """
    c = np.asarray(coords, dtype=float)
    if c.ndim != 2 or c.shape[1] != 3:
        raise InputError(f"coords must be an (n, 3) array of x, y, z; got shape {c.shape}.")
    n = len(c)
    if n < 2:
        raise InsufficientDataError("Spacing needs at least two samples.")
    nearest = _nn_median(c)
    codes, n_holes = _hole_codes(holes, n)
    if codes is not None:
        s = _drill_hole_spacing(c, codes, n_holes)
    else:
        s = _level_spacing(c, float(bench_tolerance), min_per_level)
    lags, reasons = _suggested_lags(s, nearest)
    tol = {k: (v / 2.0 if v else None) for k, v in lags.items()}
    return Spacing(across_hole=s["across"], down_hole=s["down"], bench=s["bench"],
                   suggested_lag=lags, reasons=reasons, nearest=nearest, layout=s["layout"],
                   lag_tolerance=tol, n_holes=n_holes, n_levels=s["n_levels"],
                   levels=s["levels"],
                   across_hole_plan=(s["across_plan"] if s["layout"] == "drill_holes"
                                     else s["across"]),
                   pattern=s["pattern"], plan_nearest=s["plan_nearest"],
                   extent=float(np.max(c.max(axis=0) - c.min(axis=0))))


def discovery_lags(spacing: Spacing, *, has_holes=False, n_lags=None) -> tuple:
    """The unit lag and number of lags a discovery starts from, and why.

    The one rule from the spacing to the lags (:func:`anisotropy.discover`
    then shortens the reach only if the pairs would exceed its budget).
    Drill holes take the across-hole spacing (short lags are dominated by
    down-hole pairs), benches and levels the pattern spacing. Scattered
    samples (no holes, no benches) give pairs at every separation and in
    every direction, so their lag is set by ``MAX_LAGS_AUTO`` lags out to half
    the domain extent, but not under half the nearest-neighbour spacing.
    The lag is then kept between ``MIN_LAGS`` and ``MAX_LAGS_AUTO`` lags out
    to half the extent (common practice: lags out to about half the extent).

    Parameters
    ----------
    spacing : Spacing
        From :func:`nominal_spacing` (its ``extent`` is needed).
    has_holes : bool
        The samples are drill-hole strings.
    n_lags : int, optional
        Asked for by the user.

    Returns
    -------
    lag : float
    n_lags : int
    choices : list of dict
        The "unit lag" and "number of lags" rows with their reasons.
    """
    extent = float(spacing.extent)
    max_d = 0.5 * extent
    sl = dict(spacing.suggested_lag or {})
    base_key = "across_hole" if has_holes and sl.get("across_hole") else "omni"
    base = sl.get(base_key) or spacing.nearest or max_d / MIN_LAGS
    if not has_holes and spacing.layout == "scattered":
        lag = max(max_d / MAX_LAGS_AUTO, 0.5 * float(base))
        reason = (f"scattered samples (no holes, no benches; median 3D nearest-neighbour "
                  f"distance {base:.3g} m): pairs come at every separation, so the lag "
                  f"gives {MAX_LAGS_AUTO} lags out to half the domain extent "
                  f"({max_d:.0f} m), but not under half that spacing")
    else:
        lag = float(base)
        reason = (f"the nominal {'across-hole' if base_key == 'across_hole' else 'sample'} "
                  f"spacing {base:.3g} m (common practice: unit lag about the nominal "
                  "spacing)")
    if max_d / lag > MAX_LAGS_AUTO:
        lag = max_d / MAX_LAGS_AUTO
        reason += (f", lengthened to keep {MAX_LAGS_AUTO} lags out to half the domain "
                   f"extent ({max_d:.0f} m): the fit bins stay few enough for a fast fit")
    if max_d / lag < MIN_LAGS:
        lag = max_d / MIN_LAGS
        reason += (f", shortened so that at least {MIN_LAGS} lags reach half the "
                   f"domain extent ({max_d:.0f} m)")
    lag = float(f"{lag:.3g}")
    rows = [{"choice": "unit lag", "value": lag, "reason": reason}]
    asked = n_lags is not None
    n_lags = int(n_lags) if asked else int(max(4, round(max_d / lag)))
    rows.append({"choice": "number of lags", "value": n_lags,
                 "reason": ("as requested" if asked else
                            f"lags out to half the largest extent of the domain "
                            f"({extent:.0f} m, common practice)")})
    return lag, n_lags, rows


def _hole_codes(holes, n: int):
    """Integer hole codes per sample and the number of distinct ids.

    The codes are None without hole ids, or when every id holds a single
    sample (blast holes with ids: treated as unstrung samples); the count
    is None only without hole ids.
    """
    if holes is None:
        return None, None
    h = np.asarray(holes, dtype=object).ravel()
    if len(h) != n:
        raise InputError(f"{len(h)} hole ids for {n} samples; give one per sample.")
    codes, uniq = pd.factorize(pd.Series(h).astype(str), sort=False)
    n_holes = int(len(uniq))
    if np.bincount(codes).max() < 2:
        return None, n_holes
    return codes, n_holes


def _spacing_parts(layout: str = "scattered", **parts) -> dict:
    """The spacings :func:`nominal_spacing` reports, None where not measured."""
    out = dict(layout=layout, across=None, across_plan=None, down=None, bench=None,
               pattern=None, plan_nearest=None, n_levels=None, levels=[])
    out.update(parts)
    return out


def _drill_hole_spacing(c: np.ndarray, codes: np.ndarray, n_holes: int) -> dict:
    """Across-hole (centroid to nearest centroid, 3D and plan) and down-hole spacing."""
    per_hole = np.bincount(codes, minlength=n_holes)
    cent = np.column_stack([np.bincount(codes, weights=c[:, a], minlength=n_holes)
                            for a in range(3)]) / per_hole[:, None]
    gaps = []
    order = np.argsort(codes, kind="stable")
    for members in np.split(order, np.cumsum(per_hole)[:-1]):
        p = c[members]
        if len(p) < 2:
            continue
        q = p - p.mean(axis=0)
        axis = np.linalg.svd(q, full_matrices=False)[2][0]
        p = p[np.argsort(q @ axis, kind="mergesort")]
        d = np.linalg.norm(np.diff(p, axis=0), axis=1)
        gaps.append(d[d > 0])
    gaps = np.concatenate(gaps) if gaps else np.array([])
    return _spacing_parts("drill_holes", across=_nn_median(cent),
                          across_plan=_nn_median(cent[:, :2]),
                          down=float(np.median(gaps)) if gaps.size else None)


def _level_spacing(c: np.ndarray, bench_tolerance: float, min_per_level: int) -> dict:
    """Without hole ids: one bench, several benches of blast holes, or a scattered cloud."""
    label, centres, spreads = _bench_levels(c[:, 2], bench_tolerance)
    n_lv = len(centres)
    per_level = np.bincount(label)
    if n_lv == 1:
        plan_nn = _nn_median(c[:, :2])
        # one thin level is a bench; elevations spread continuously over more
        # than the plan spacing are a 3D cloud (layout stays "scattered")
        if spreads[0] <= max(3.0 * bench_tolerance, plan_nn):
            pattern, plan_nearest = _level_spacings(c, label, 1)
            return _spacing_parts("single_level", n_levels=1, levels=centres.tolist(),
                                  pattern=pattern, plan_nearest=plan_nearest,
                                  across=pattern if pattern is not None else plan_nn)
    elif np.median(per_level) >= min_per_level:
        bench_gap = float(np.median(np.diff(centres)))
        if bench_gap > 2 * float(spreads.max()):
            pattern, plan_nearest = _level_spacings(c, label, n_lv)
            return _spacing_parts("benches", bench=bench_gap, n_levels=int(n_lv),
                                  levels=centres.tolist(), pattern=pattern,
                                  plan_nearest=plan_nearest,
                                  across=pattern if pattern is not None else plan_nearest)
    return _spacing_parts()


def _suggested_lags(s: dict, nearest) -> tuple[dict, dict]:
    """Unit lag and the reason for it per direction class, from the layout's spacings.

    A spacing that could not be measured falls back to ``nearest`` (the
    median 3D nearest-neighbour distance), and the reason says so.
    """
    lags: dict = {}
    reasons: dict = {}

    def put(cls, val, why):
        if val is None:
            val, why = nearest, why + " unknown; median 3D nearest-neighbour distance used"
        lags[cls] = _round_sig(val) if val else None
        reasons[cls] = why

    layout, across, down, bench = s["layout"], s["across"], s["down"], s["bench"]
    pattern = s["pattern"]
    if layout == "drill_holes":
        put("along_hole", down,
            "about the down-hole sample spacing" if down else "down-hole spacing")
        put("across_hole", across, "about the across-hole (hole-to-hole centroid) spacing"
            if across else "across-hole spacing")
        put("vertical", down, "holes cross the vertical: about the down-hole spacing"
            if down else "down-hole spacing")
        put("omni", across, "about the across-hole spacing, so the lags resolve structure "
            "between holes (short lags are dominated by down-hole pairs)"
            if across else "across-hole spacing")
    elif layout == "benches":
        put("along_hole", bench, "blast holes sample one bench each: about the bench spacing")
        put("across_hole", across, "about the in-bench blast-hole pattern spacing (area per "
            "hole on each bench)" if pattern is not None else "about the in-bench blast-hole "
            "spacing in plan")
        put("vertical", bench, "about the bench spacing")
        put("omni", across, "about the in-bench blast-hole pattern spacing (area per hole)"
            if pattern is not None else "about the in-bench blast-hole spacing")
    else:
        what = ("single level: the pattern spacing from the area per sample of its footprint"
                if layout == "single_level" and pattern is not None else
                "single level: in-plane nearest-neighbour spacing" if layout == "single_level"
                else "no hole ids and no benches: median 3D nearest-neighbour distance "
                     "(give the hole column for down-hole spacing)")
        base = across if layout == "single_level" else nearest
        for cls in ("along_hole", "across_hole", "omni"):
            put(cls, base, what)
        if layout == "single_level":
            lags["vertical"], reasons["vertical"] = None, "single level: no vertical pairs"
        else:
            put("vertical", nearest, what)
    return lags, reasons
