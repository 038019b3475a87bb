"""What the geologist must know before variography.

:func:`explore` gathers, for one domain and one grade:

* descriptive statistics (count, mean, standard deviation, CV, min, max,
  skewness) and quantiles;
* the declustered mean and standard deviation by cell declustering
  (:func:`cell_declustering`; Journel 1983, Math. Geol. 15(3); Isaaks &
  Srivastava 1989, *An Introduction to Applied Geostatistics*, ch. 10);
* top-cut candidates with the method behind each and the metal each removes
  (:func:`topcut_candidates`), and a flag for strongly skewed data;
* the nominal sample spacing and a suggested unit lag per direction class
  (:func:`nominal_spacing`);
* a linear and quadratic trend check (:func:`trend_check`).

Standard deviations here are population values (divisor n, or weights
summing to one), consistent between the raw and the declustered figures and
with the variogram sill.

``explore`` takes an :class:`anisotropy.samples.record.SampleSet` (the usual route)
or, for scripts and tests, plain arrays: ``explore(coords, values,
holes=None)``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import stats
from scipy.spatial import ConvexHull, QhullError
from scipy.spatial import cKDTree as _KDTree  # private: not part of this module's API

from anisotropy.errors import DataError, InputError, InsufficientDataError
from anisotropy.geometry import vector_to_line

__all__ = [
    "DEFAULT_QUANTILES",
    "STRONG_SKEW_CV",
    "TREND_R2_THRESHOLD",
    "explore",
    "Exploration",
    "cell_declustering",
    "Declustering",
    "nominal_spacing",
    "Spacing",
    "topcut_candidates",
    "footprint_spacing",
    "suggested_topcut",
    "detect_logprob_break",
    "trend_check",
    "TrendCheck",
]

DEFAULT_QUANTILES = (0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95, 0.975, 0.99, 0.995)
#: CV above which the data are called strongly skewed (common practice)
STRONG_SKEW_CV = 2.0
#: R^2 above which a trend is called material (a judgement; common practice)
TREND_R2_THRESHOLD = 0.1
#: top-cut quantiles offered as candidates
TOPCUT_QUANTILES = (0.975, 0.99, 0.995)
#: share of metal above which a cap is called aggressive (common practice)
AGGRESSIVE_METAL_PCT = 10.0
MIN_SAMPLES = 3
#: The unit lag's bounds in lags out to half the domain extent (common practice:
#: at least about a dozen lags to see the shape; about 20 automatic lags keep the
#: fit bins few enough for a fast fit).
MIN_LAGS, MAX_LAGS_AUTO = 12, 20


# ---------------------------------------------------------------------------
# small helpers
# ---------------------------------------------------------------------------

def _f(x):
    """Plain float, or None for missing/NaN/inf (JSON-ready)."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _qkey(p: float) -> str:
    return f"{float(p):g}"


def _round_sig(x: float, sig: int = 2) -> float:
    if not x or not math.isfinite(x):
        return x
    return float(round(x, sig - 1 - int(math.floor(math.log10(abs(x))))))


def _coords_values(coords, values):
    c = np.asarray(coords, dtype=float)
    if c.ndim != 2 or c.shape[1] not in (2, 3):
        raise InputError(f"coords must be an (n, 3) array of x, y, z; got shape {c.shape}.")
    if c.shape[1] == 2:
        c = np.column_stack([c, np.zeros(len(c))])
    v = np.asarray(values, dtype=float).ravel()
    if len(v) != len(c):
        raise InputError(f"{len(c)} coordinates but {len(v)} values; give one value per sample.")
    bad = ~(np.isfinite(v) & np.all(np.isfinite(c), axis=1))
    if bad.any():
        raise DataError(f"{int(bad.sum())} samples have blank/NaN coordinates or values "
                        f"(first positions {np.flatnonzero(bad)[:5].tolist()}); read the table "
                        "with anisotropy.read_samples, which drops and counts them.")
    return c, v


def _wmean_std(v, w):
    m = float(np.sum(w * v))
    return m, float(np.sqrt(np.sum(w * (v - m) ** 2)))


# ---------------------------------------------------------------------------
# cell declustering
# ---------------------------------------------------------------------------

@dataclass
class Declustering:
    """Cell-declustering result.

    Attributes
    ----------
    weights : ndarray
        Weights summing to one, for the chosen cell size.
    cell_size : float
        Chosen cell size (m) in x and y; the z size is ``cell_size *
        cell_shape[2]``.
    mean, std : float
        Declustered mean and (population) standard deviation.
    table : pandas.DataFrame
        ``cell_size``, ``mean``, ``std`` for every size tried.
    criterion : str
        How the size was chosen ("min_mean", "max_mean" or "given").
    naive_mean, naive_std : float
        Equal-weight values, for comparison.
    n_offsets : int
        Grid origins averaged per size.
    cell_shape : tuple
        Relative cell dimensions (x, y, z).
    notes : list of str
    """

    weights: np.ndarray
    cell_size: float
    mean: float
    std: float
    table: pd.DataFrame
    criterion: str = "min_mean"
    naive_mean: float = float("nan")
    naive_std: float = float("nan")
    n_offsets: int = 1
    cell_shape: tuple = (1.0, 1.0, 1.0)
    notes: list = field(default_factory=list)

    def to_dict(self) -> dict:
        """JSON-ready summary (weights summarised, not listed)."""
        w = self.weights
        return {
            "mean": _f(self.mean), "std": _f(self.std), "cell_size": _f(self.cell_size),
            "criterion": self.criterion, "naive_mean": _f(self.naive_mean),
            "naive_std": _f(self.naive_std), "n_offsets": int(self.n_offsets),
            "cell_shape": [float(s) for s in self.cell_shape],
            "weight_range": [_f(w.min() * len(w)), _f(w.max() * len(w))],
            "table": [{"cell_size": _f(r.cell_size), "mean": _f(r.mean), "std": _f(r.std)}
                      for r in self.table.itertuples()],
            "method": "cell declustering, weight 1/(occupied cells x samples in the cell), "
                      "averaged over shifted grid origins (Journel 1983; Isaaks & Srivastava "
                      "1989 ch. 10)",
            "notes": list(self.notes),
        }


def _cell_weights(c0: np.ndarray, size: float, shape, n_offsets: int) -> np.ndarray:
    """Cell-declustering weights for one cell size, averaged over origins.

    ``c0`` are coordinates with their minimum already subtracted. Origin k
    (k = 0..n_offsets-1) shifts the grid by ``k / n_offsets`` of a cell along
    all three axes at once.
    """
    n = len(c0)
    dims = size * np.asarray(shape, dtype=float)
    w = np.zeros(n)
    for k in range(n_offsets):
        off = dims * (k / n_offsets)
        idx = np.floor((c0 + off) / dims).astype(np.int64)
        span = idx.max(axis=0) + 1
        key = idx[:, 0] + span[0] * (idx[:, 1] + span[1] * idx[:, 2])
        if float(np.prod(span.astype(float))) <= 4.0 * n + 1e6:
            counts = np.bincount(key)          # direct cell counts (small grids)
            w += 1.0 / (np.count_nonzero(counts) * counts[key])
        else:
            inv, uniq = pd.factorize(key)      # hashing: linear time, no sort
            counts = np.bincount(inv, minlength=len(uniq))
            w += 1.0 / (len(uniq) * counts[inv])
    return w / n_offsets


def cell_declustering(coords, values, cell_sizes=None, *, n_offsets: int = 5,
                      cell_shape=(1.0, 1.0, 1.0), criterion: str = "min_mean") -> Declustering:
    """Cell declustering with the cell size chosen over a range.

    Each sample in a cell holding ``n_c`` samples, among ``L`` occupied cells,
    gets weight ``1 / (L * n_c)`` (Isaaks & Srivastava 1989, ch. 10;
    Journel 1983); weights are averaged over ``n_offsets`` grid origins
    shifted diagonally by a fraction of a cell so that the answer does not
    hang on one arbitrary origin.

    Parameters
    ----------
    coords : array_like, shape (n, 3)
    values : array_like, shape (n,)
    cell_sizes : float or array_like, optional
        Sizes to try (m). Default: 24 sizes spaced geometrically from 1/100
        to 1/2 of the largest extent of the data.
    n_offsets : int, default 5
    cell_shape : (float, float, float), default (1, 1, 1)
        Relative cell dimensions; e.g. ``(1, 1, 0.2)`` for flat cells.
    criterion : {"min_mean", "max_mean"}, default "min_mean"
        ``"min_mean"`` picks the size with the smallest declustered mean:
        right for positively skewed grades where drilling is clustered in
        the high grades (the usual case in resource drilling; Journel 1983).
        ``"max_mean"`` is for clustering in low grades. With a single size
        given the criterion is reported as "given".

    Returns
    -------
    Declustering
    """
    c, v = _coords_values(coords, values)
    if criterion not in ("min_mean", "max_mean"):
        raise InputError(f"criterion={criterion!r}: choose 'min_mean' or 'max_mean'.")
    if int(n_offsets) < 1:
        raise InputError("n_offsets must be at least 1.")
    shape = tuple(float(s) for s in cell_shape)
    if len(shape) != 3 or min(shape) <= 0:
        raise InputError("cell_shape needs three positive relative dimensions (x, y, z).")
    c0 = c - c.min(axis=0)
    extent = float(c0.max())
    if cell_sizes is None:
        if extent <= 0:
            sizes = np.array([1.0])
        else:
            sizes = np.geomspace(extent / 100.0, extent / 2.0, 24)
    else:
        sizes = np.atleast_1d(np.asarray(cell_sizes, dtype=float))
        if sizes.size == 0 or np.any(~np.isfinite(sizes)) or np.any(sizes <= 0):
            raise InputError("cell_sizes must be positive numbers (metres).")
    rows, weights = [], []
    for s in sizes:
        w = _cell_weights(c0, float(s), shape, int(n_offsets))
        m, sd = _wmean_std(v, w)
        rows.append((float(s), m, sd))
        weights.append(w)
    table = pd.DataFrame(rows, columns=["cell_size", "mean", "std"])
    means = table["mean"].to_numpy()
    if len(sizes) == 1:
        best, crit = 0, "given"
    else:
        best = int(np.argmin(means) if criterion == "min_mean" else np.argmax(means))
        crit = criterion
    naive_m, naive_sd = float(np.mean(v)), float(np.std(v))
    notes = []
    flat = naive_m != 0 and abs(means[best] - naive_m) / abs(naive_m) < 0.005
    if len(sizes) > 1 and best == 0 and flat:
        notes.append("No cell size moves the mean by more than 0.5 %: no sign of clustering "
                     "(weights close to equal).")
    elif len(sizes) > 1 and best in (0, len(sizes) - 1):
        notes.append("The chosen cell size is at the end of the range tried; widen cell_sizes "
                     "and check the size makes geological sense.")
    if len(sizes) > 1 and not (best == 0 and flat) and naive_m != 0 \
            and abs(means[best] - naive_m) / abs(naive_m) < 0.01:
        notes.append("Declustering changes the mean by less than 1 %: no material "
                     "clustering effect on the mean.")
    return Declustering(weights=weights[best], cell_size=float(sizes[best]), mean=float(means[best]),
                        std=float(table["std"].iloc[best]), table=table, criterion=crit,
                        naive_mean=naive_m, naive_std=naive_sd, n_offsets=int(n_offsets),
                        cell_shape=shape, notes=notes)


# ---------------------------------------------------------------------------
# spacing
# ---------------------------------------------------------------------------

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
        put("along_hole", down, "about the down-hole sample spacing" if down else "down-hole spacing")
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


# ---------------------------------------------------------------------------
# top-cut
# ---------------------------------------------------------------------------

def detect_logprob_break(values, *, search_from: float = 0.75, min_tail: int | None = None,
                         min_slope_ratio: float = 1.5, min_sse_gain: float = 0.5,
                         max_candidates: int = 200) -> dict | None:
    """Break in the upper tail of the log-probability plot.

    The positive values are sorted and plotted as log10(grade) against the
    normal score of their position (i - 0.5)/n. Over the upper half of the
    plot a continuous two-segment line ``y = a + b x + c max(0, x - x0)`` is
    fitted by least squares for every candidate break ``x0`` at a sample
    between the ``search_from`` quantile and the ``min_tail``-th largest value
    (default ``max(5, 0.5 % of the samples)``)
    (at most ``max_candidates`` evenly spread candidates). The break with the
    least residual sum of squares is reported when the upper segment is
    steeper by at least ``min_slope_ratio`` and the two segments cut the
    residual of a single line by at least ``min_sse_gain`` (both thresholds
    are judgements). A steeper upper segment is the usual sign of a sparse
    high-grade population that a top-cut aims at.

    Parameters
    ----------
    values : array_like

    Returns
    -------
    dict or None
        ``value`` (grade at the break), ``quantile``, ``slope_lower``,
        ``slope_upper``, ``sse_gain``; None when no break qualifies.
    """
    z = np.sort(np.asarray(values, dtype=float).ravel())
    n_all = z.size
    if min_tail is None:
        min_tail = max(5, int(math.ceil(0.005 * n_all)))
    pos = z > 0
    if n_all < 2 * min_tail + 10:
        return None
    p_all = (np.arange(1, n_all + 1) - 0.5) / n_all
    x, y, pz = stats.norm.ppf(p_all[pos]), np.log10(z[pos]), p_all[pos]
    upper = pz >= 0.5
    x, y, pz = x[upper], y[upper], pz[upper]
    if x.size < 2 * min_tail + 5:
        return None
    lo = int(np.searchsorted(pz, search_from))
    hi = x.size - min_tail
    if hi - lo < 1:
        return None
    cand = np.unique(np.linspace(lo, hi - 1, min(max_candidates, hi - lo)).astype(int))
    # least squares by the normal equations, with the sums that do not depend on
    # the break computed once (x is sorted, so the hinge is zero below index i).
    # Element-wise sums rather than BLAS products: a threaded BLAS crawls on a
    # busy machine for these thin 1-D products.
    m, sx, sxx = float(x.size), float(x.sum()), float((x * x).sum())
    sy, sxy = float(y.sum()), float((x * y).sum())
    c1 = np.linalg.solve(np.array([[m, sx], [sx, sxx]]), np.array([sy, sxy]))
    sse1 = float(((y - c1[0] - c1[1] * x) ** 2).sum())
    best = None
    for i in cand:
        x0 = x[i]
        if x[-1] == x0:
            continue
        h = x[i:] - x0
        sh, sxh, shh, shy = h.sum(), (x[i:] * h).sum(), (h * h).sum(), (h * y[i:]).sum()
        G = np.array([[m, sx, sh], [sx, sxx, sxh], [sh, sxh, shh]])
        r = np.array([sy, sxy, shy])
        try:
            coef = np.linalg.solve(G, r)
        except np.linalg.LinAlgError:
            continue
        fit = coef[0] + coef[1] * x
        fit[i:] += coef[2] * h
        sse = float(np.sum((y - fit) ** 2))
        if best is None or sse < best[0]:
            best = (sse, i, coef)
    if best is None or sse1 <= 0:
        return None
    sse, i, coef = best
    b, c = float(coef[1]), float(coef[2])
    gain = 1.0 - sse / sse1
    if b <= 0 or (b + c) / b < min_slope_ratio or gain < min_sse_gain:
        return None
    return {"value": float(10 ** y[i]), "quantile": float(pz[i]), "slope_lower": b,
            "slope_upper": b + c, "sse_gain": float(gain)}


def _cap_effect(v: np.ndarray, cap: float) -> dict:
    over = v > cap
    total = float(np.sum(v))
    removed = float(np.sum(v[over] - cap))
    capped = np.minimum(v, cap)
    m = float(capped.mean())
    return {"n_capped": int(over.sum()),
            "metal_removed_pct": _f(100.0 * removed / total) if total > 0 else None,
            "mean_after": _f(m), "cv_after": _f(capped.std() / m) if m > 0 else None}


def topcut_candidates(values, *, quantiles=TOPCUT_QUANTILES) -> list[dict]:
    """Top-cut candidates, each with its method and the metal it removes.

    Parameters
    ----------
    values : array_like
        Grades.
    quantiles : sequence of float
        High quantiles offered (default 0.975, 0.99, 0.995; numpy linear
        quantiles).

    Returns
    -------
    list of dict
        One per candidate, sorted by value: ``method``, ``value``,
        ``quantile``, ``n_capped``, ``metal_removed_pct`` (sum of
        ``value - cap`` over capped samples, % of the total, unweighted),
        ``mean_after``, ``cv_after``, ``reason``, and ``aggressive`` when the
        cap removes more than 10 % of the metal (common practice).
    """
    v = np.asarray(values, dtype=float).ravel()
    v = v[np.isfinite(v)]
    if v.size < MIN_SAMPLES:
        return []
    out = []
    for q in quantiles:
        cap = float(np.quantile(v, q))
        d = {"method": f"quantile_{_qkey(q)}", "value": cap, "quantile": float(q),
             "reason": f"the {100 * q:g} % quantile of the grades"}
        d.update(_cap_effect(v, cap))
        out.append(d)
    brk = detect_logprob_break(v)
    if brk is not None:
        d = {"method": "logprob_break", "value": brk["value"], "quantile": brk["quantile"],
             "reason": (f"break in the log-probability plot at the {100 * brk['quantile']:.1f} % "
                        f"point: the upper tail is {brk['slope_upper'] / brk['slope_lower']:.1f}x "
                        "steeper (two-segment least-squares fit)")}
        d.update(_cap_effect(v, brk["value"]))
        out.append(d)
    for d in out:
        d["aggressive"] = bool(d["metal_removed_pct"] is not None
                               and d["metal_removed_pct"] > AGGRESSIVE_METAL_PCT)
    return sorted(out, key=lambda d: d["value"])


def suggested_topcut(candidates) -> dict | None:
    """The one top-cut candidate taken by ``--top-cut auto``, with the reason.

    Parameters
    ----------
    candidates : list of dict
        As returned by :func:`topcut_candidates`.

    Returns
    -------
    dict or None
        The chosen candidate (a copy) with ``reason`` saying why it was
        chosen; None when there is no candidate.

    Notes
    -----
    The rule: among the candidates that are not aggressive (remove at most
    ``AGGRESSIVE_METAL_PCT`` % of the metal), the log-probability break when
    one was found (it is read off this domain's own distribution), else the
    99 % quantile (common practice), else the highest such candidate; when
    every candidate is aggressive, the highest (the one removing least).
    """
    cands = [dict(c) for c in candidates or []]
    if not cands:
        return None
    mild = [c for c in cands if not c.get("aggressive")]
    by = {c["method"]: c for c in mild}
    if "logprob_break" in by:
        c, why = by["logprob_break"], "the break in the log-probability plot"
    elif f"quantile_{_qkey(0.99)}" in by:
        c, why = by[f"quantile_{_qkey(0.99)}"], ("no usable break in the log-probability plot; "
                                                 "the 99 % quantile (common practice)")
    elif mild:
        c, why = max(mild, key=lambda d: d["value"]), ("the highest candidate removing at most "
                                                       f"{AGGRESSIVE_METAL_PCT:g} % of the metal")
    else:
        c, why = max(cands, key=lambda d: d["value"]), (
            f"every candidate removes more than {AGGRESSIVE_METAL_PCT:g} % of the metal; the "
            "highest, which removes least")
    c["reason"] = (f"{why}: {c['reason']}; caps {c['n_capped']} "
                   f"{'sample' if c['n_capped'] == 1 else 'samples'} and removes "
                   + ("an unknown share" if c.get("metal_removed_pct") is None
                      else f"{c['metal_removed_pct']:.1f} %") + " of the metal")
    return c


# ---------------------------------------------------------------------------
# trend
# ---------------------------------------------------------------------------

@dataclass
class TrendCheck:
    """Linear and quadratic trend of the grade in x, y, z.

    Attributes
    ----------
    r2_linear, r2_quadratic : float or None
        Share of variance explained (ordinary least squares R^2).
    gradient : list of float
        Linear-trend gradient (grade per metre) along (east, north, up).
    gradient_trend, gradient_plunge : float or None
        The gradient as an undirected axis (lower hemisphere).
    rising_azimuth, rising_inclination : float or None
        Azimuth and inclination below horizontal (negative = upward) of the
        direction in which grade increases.
    material : bool
        True when either R^2 exceeds ``threshold``.
    threshold : float
    axes_used : list of str
    warning : str or None
    notes : list of str
    """

    r2_linear: float | None
    r2_quadratic: float | None
    gradient: list
    gradient_trend: float | None
    gradient_plunge: float | None
    rising_azimuth: float | None
    rising_inclination: float | None
    material: bool
    threshold: float = TREND_R2_THRESHOLD
    axes_used: list = field(default_factory=list)
    warning: str | None = None
    notes: list = field(default_factory=list)

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {
            "r2_linear": _f(self.r2_linear), "r2_quadratic": _f(self.r2_quadratic),
            "gradient": [_f(g) for g in self.gradient],
            "gradient_per_100m": _f(100 * float(np.linalg.norm(self.gradient)))
            if self.gradient else None,
            "gradient_trend": _f(self.gradient_trend), "gradient_plunge": _f(self.gradient_plunge),
            "rising_azimuth": _f(self.rising_azimuth),
            "rising_inclination": _f(self.rising_inclination),
            "material": bool(self.material), "threshold": float(self.threshold),
            "threshold_basis": "judgement (common practice)",
            "axes_used": list(self.axes_used), "warning": self.warning,
            "method": "least squares on polynomial features of x, y, z (scikit-learn "
                      "PolynomialFeatures + LinearRegression), degree 1 and 2",
            "notes": list(self.notes),
        }


def trend_check(coords, values, *, threshold: float = TREND_R2_THRESHOLD) -> TrendCheck:
    """Fit linear and quadratic trends of the grade in x, y, z.

    Parameters
    ----------
    coords : array_like, shape (n, 3)
    values : array_like, shape (n,)
    threshold : float, default 0.1
        R^2 above which the trend is called material (a judgement; common
        practice is to look hard at a trend explaining more than about a
        tenth of the variance).

    Returns
    -------
    TrendCheck
        Axes without spread are left out; the quadratic fit is skipped when
        there are fewer than three samples per coefficient.
    """
    from sklearn.linear_model import LinearRegression
    from sklearn.preprocessing import PolynomialFeatures

    c, v = _coords_values(coords, values)
    names = np.array(["x", "y", "z"])
    spread = c.std(axis=0)
    active = spread > 0
    notes = []
    if not active.any() or v.size < MIN_SAMPLES or np.all(v == v[0]):
        notes.append("No trend fitted: the samples have no spatial spread or the grade is constant.")
        return TrendCheck(None, None, [], None, None, None, None, False, threshold,
                          names[active].tolist(), None, notes)
    from threadpoolctl import threadpool_limits

    X = (c[:, active] - c[:, active].mean(axis=0)) / spread[active]
    d = int(active.sum())
    n_quad = d + d * (d + 1) // 2
    r2_quad = None
    # a thin least-squares problem: one BLAS thread is faster, above all on a busy machine
    with threadpool_limits(1):
        lin = LinearRegression().fit(X, v)
        r2_lin = float(lin.score(X, v))
        if v.size >= 3 * (n_quad + 1):
            Xq = PolynomialFeatures(degree=2, include_bias=False).fit_transform(X)
            r2_quad = float(LinearRegression().fit(Xq, v).score(Xq, v))
    grad = np.zeros(3)
    grad[active] = lin.coef_ / spread[active]
    if r2_quad is None:
        notes.append(f"Quadratic trend skipped: {v.size} samples for {n_quad + 1} coefficients.")
    g_trend = g_plunge = az = inc = None
    if np.linalg.norm(grad) > 0:

        g_trend, g_plunge = vector_to_line(grad)
        az = float(np.degrees(np.arctan2(grad[0], grad[1])) % 360.0)
        inc = float(np.degrees(np.arctan2(-grad[2], np.hypot(grad[0], grad[1]))))
    material = bool(r2_lin > threshold or (r2_quad is not None and r2_quad > threshold))
    warning = None
    if material:
        best = max(r2_lin, r2_quad or 0.0)
        kind = "quadratic" if (r2_quad or 0.0) > r2_lin else "linear"
        warning = (f"A {kind} trend explains {100 * best:.0f} % of the grade variance (more than "
                   f"{100 * threshold:.0f} %, a judgement): work on residuals from the trend, or "
                   "prefer the correlogram, which is less sensitive to a drifting mean.")
    return TrendCheck(r2_lin, r2_quad, grad.tolist(), g_trend, g_plunge, az, inc, material,
                      float(threshold), names[active].tolist(), warning, notes)


# ---------------------------------------------------------------------------
# the exploration
# ---------------------------------------------------------------------------

@dataclass
class Exploration:
    """Everything :func:`explore` found; ``to_dict()`` is ``explore.json``."""

    count: int
    mean: float
    std: float
    cv: float | None
    min: float
    max: float
    skewness: float | None
    quantiles: dict
    declustering: Declustering
    spacing: Spacing
    topcut: list
    strongly_skewed: bool
    trend: TrendCheck
    dropped: dict = field(default_factory=dict)
    changed: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)
    source: str = "<arrays>"
    value_column: str | None = None
    domain: str | None = None
    n_read: int | None = None
    duplicates: dict | None = None
    planar: bool = False
    origin: list | None = None

    def to_dict(self) -> dict:
        """JSON-ready dictionary (the keys of ``explore.json``)."""
        return {
            "source": self.source, "value": self.value_column, "domain": self.domain,
            "n_read": self.n_read, "origin": self.origin,
            "count": int(self.count), "mean": _f(self.mean), "std": _f(self.std),
            "cv": _f(self.cv), "min": _f(self.min), "max": _f(self.max),
            "skewness": _f(self.skewness),
            "quantiles": {k: _f(v) for k, v in self.quantiles.items()},
            "declustered": self.declustering.to_dict(),
            "spacing": self.spacing.to_dict(),
            "topcut": {"candidates": [dict(d) for d in self.topcut],
                       "suggested": suggested_topcut(self.topcut),
                       "strongly_skewed": bool(self.strongly_skewed),
                       "strong_skew_cv": STRONG_SKEW_CV,
                       "note": "candidates only: the top-cut is the geologist's decision"},
            "trend": self.trend.to_dict(),
            "planar": bool(self.planar), "duplicates": self.duplicates,
            "dropped": {str(k): int(v) for k, v in self.dropped.items()},
            "changed": {str(k): int(v) for k, v in self.changed.items()},
            "warnings": list(self.warnings),
        }

    def summary(self) -> str:
        """Readable multi-line summary for the geologist."""
        def g(x, fmt=".4g"):
            return "n/a" if x is None or (isinstance(x, float) and not math.isfinite(x)) \
                else format(x, fmt)

        L = []
        head = f"Exploration of {self.value_column or 'grade'}"
        if self.domain is not None:
            head += f", domain {self.domain}"
        L.append(head + f" ({self.source})")
        L.append("=" * len(L[0]))
        if self.n_read is not None:
            L.append(f"Samples read {self.n_read}, used {self.count}.")
        else:
            L.append(f"Samples used {self.count}.")
        for k, v in self.dropped.items():
            L.append(f"  dropped ({k}): {v}")
        for k, v in self.changed.items():
            L.append(f"  changed ({k}): {v}")
        L.append("")
        L.append(f"Mean {g(self.mean)}   std {g(self.std)}   CV {g(self.cv, '.2f')}   "
                 f"skewness {g(self.skewness, '.2f')}")
        L.append(f"Min {g(self.min)}   max {g(self.max)}")
        L.append("Quantiles: " + "  ".join(f"{k}: {g(v)}" for k, v in self.quantiles.items()))
        d = self.declustering
        L.append("")
        L.append(f"Declustered mean {g(d.mean)} and std {g(d.std)} (naive {g(d.naive_mean)}), "
                 f"cell {g(d.cell_size, '.3g')} m, chosen as the size giving the "
                 f"{'smallest' if d.criterion == 'min_mean' else 'largest'} declustered mean"
                 if d.criterion != "given" else
                 f"Declustered mean {g(d.mean)} and std {g(d.std)} at the given cell "
                 f"{g(d.cell_size, '.3g')} m")
        L.append("  cell size (m) -> declustered mean: " + ", ".join(
            f"{r.cell_size:.3g}: {r.mean:.4g}" for r in d.table.itertuples()))
        s = self.spacing
        L.append("")
        def m(x):
            text = g(x, ".3g")
            return text if text == "n/a" else f"{text} m"

        L.append(f"Spacing ({s.layout.replace('_', ' ')}): across-hole {m(s.across_hole)} "
                 f"(in plan {m(s.across_hole_plan)}), "
                 f"down-hole {m(s.down_hole)}, bench {m(s.bench)}, "
                 f"nearest neighbour {m(s.nearest)}")
        if s.pattern is not None:
            L.append(f"  pattern spacing {m(s.pattern)} from the area per sample on each level "
                     f"(in-level nearest neighbour in plan {m(s.plan_nearest)}, which "
                     "understates a jittered pattern)")
        for k, lag in s.suggested_lag.items():
            L.append(f"  suggested unit lag {k.replace('_', ' '):<11} {m(lag):>9}  "
                     f"(tolerance {m(s.lag_tolerance.get(k))}): {s.reasons.get(k, '')}")
        if s.extent:
            lag, n_lags, rows = discovery_lags(s, has_holes=bool(s.n_holes))
            L.append(f"  discover starts from {n_lags} lags of {m(lag)}: {rows[0]['reason']}")
        L.append("")
        L.append("Top-cut candidates (the choice is yours):")
        pick = suggested_topcut(self.topcut)
        for c in self.topcut:
            L.append(f"  {c['value']:.4g}  {c['method']:<16} caps {c['n_capped']} "
                     f"{'sample' if c['n_capped'] == 1 else 'samples'}, removes "
                     f"{g(c['metal_removed_pct'], '.1f')} % of the metal"
                     + ("  [aggressive]" if c.get("aggressive") else "")
                     + ("  [taken by --top-cut auto]" if pick and c["method"] == pick["method"]
                        else ""))
        if self.strongly_skewed:
            L.append(f"  CV {self.cv:.2f} > {STRONG_SKEW_CV:g}: strongly skewed; prefer normal "
                     "scores or a robust estimator (common practice).")
        t = self.trend
        L.append("")
        L.append(f"Trend: linear R2 {g(t.r2_linear, '.3f')}, quadratic R2 {g(t.r2_quadratic, '.3f')}"
                 + (f"; grade rises toward azimuth {t.rising_azimuth:03.0f}, "
                    f"{abs(t.rising_inclination):.0f} degrees "
                    f"{'below' if t.rising_inclination >= 0 else 'above'} the horizontal"
                    if t.rising_azimuth is not None and t.rising_inclination is not None
                    else ""))
        if self.warnings:
            L.append("")
            L.append("Warnings:")
            L.extend(f"  - {w}" for w in self.warnings)
        return "\n".join(L)


def explore(samples, values=None, *, holes=None, quantiles=DEFAULT_QUANTILES,
            cell_sizes=None, n_offsets: int = 5, cell_shape=(1.0, 1.0, 1.0),
            declustering_criterion: str = "min_mean", trend_threshold: float = TREND_R2_THRESHOLD,
            bench_tolerance: float = 1.0) -> Exploration:
    """Statistics, declustering, top-cut, spacing and trend for one grade.

    Parameters
    ----------
    samples : SampleSet or array_like
        An :class:`anisotropy.samples.record.SampleSet`; or, with ``values`` given,
        an (n, 3) array of local coordinates.
    values : array_like, optional
        Grades, when ``samples`` is a coordinate array.
    holes : array_like, optional
        Hole ids, when ``samples`` is a coordinate array (a SampleSet
        brings its own).
    quantiles : sequence of float
        Probabilities reported, keyed as strings like "0.975".
    cell_sizes, n_offsets, cell_shape, declustering_criterion
        Passed to :func:`cell_declustering`. Default sizes here: 24 sizes
        spaced geometrically from half the nominal across-hole spacing (or
        nearest-neighbour distance) to ten times it, capped at half the
        largest extent (common practice: try sizes around and above the
        nominal spacing).
    trend_threshold : float
        Passed to :func:`trend_check`.
    bench_tolerance : float
        Passed to :func:`nominal_spacing`.

    Returns
    -------
    Exploration
    """
    meta: dict = {}
    if values is None:
        if not hasattr(samples, "coords") or not hasattr(samples, "values"):
            raise InputError("explore() takes a SampleSet, or coordinates and values: "
                             "explore(coords, values, holes=None).")
        coords, vals = samples.coords, samples.values
        if holes is None:
            holes = getattr(samples, "holes", None)
        cols = getattr(samples, "columns", None) or {}
        origin = getattr(samples, "origin", None)
        meta = dict(dropped=dict(getattr(samples, "dropped", {}) or {}),
                    changed=dict(getattr(samples, "changed", {}) or {}),
                    warnings=list(getattr(samples, "warnings", []) or []),
                    source=str(getattr(samples, "source", "<table>")),
                    value_column=cols.get("value"), domain=getattr(samples, "domain", None),
                    n_read=getattr(samples, "n_read", None),
                    duplicates=getattr(samples, "duplicates", None),
                    planar=bool(getattr(samples, "planar", False)),
                    origin=None if origin is None else [float(o) for o in origin])
    else:
        coords, vals = samples, values
    c, v = _coords_values(coords, vals)
    if v.size < MIN_SAMPLES:
        raise InsufficientDataError(
            f"Only {v.size} samples remain after reading; exploration needs at least "
            f"{MIN_SAMPLES}. Check the domain selection and the dropped-sample counts.")
    qs = [float(q) for q in quantiles]
    if any(not 0.0 <= q <= 1.0 for q in qs):
        raise InputError("quantiles must be probabilities between 0 and 1.")
    warnings = list(meta.pop("warnings", []))
    mean = float(v.mean())
    std = float(v.std())
    cv = std / mean if mean > 0 else None
    skew = float(stats.skew(v)) if std > 0 else None
    qv = np.quantile(v, qs) if qs else []
    quant = {_qkey(q): float(x) for q, x in zip(qs, qv)}
    spacing = nominal_spacing(c, holes, bench_tolerance=bench_tolerance)
    if cell_sizes is None:
        base = spacing.across_hole or spacing.nearest
        extent = float(np.ptp(c, axis=0).max())
        if base and extent > 0:
            cell_sizes = np.geomspace(base / 2.0, max(base, min(10.0 * base, extent / 2.0)), 24)
    decl = cell_declustering(c, v, cell_sizes, n_offsets=n_offsets, cell_shape=cell_shape,
                             criterion=declustering_criterion)
    warnings.extend(n for n in decl.notes if "end of the range" in n)
    topcut = topcut_candidates(v)
    strongly = bool(cv is not None and cv > STRONG_SKEW_CV)
    if strongly:
        warnings.append(f"CV is {cv:.2f} (above {STRONG_SKEW_CV:g}): strongly skewed; prefer normal "
                        "scores or a robust estimator (common practice).")
    if mean <= 0:
        warnings.append("The mean grade is zero or negative: CV is not defined; check the value "
                        "column and the assay-code policy.")
    trend = trend_check(c, v, threshold=trend_threshold)
    if trend.warning:
        warnings.append(trend.warning)
    if v.size < 100:
        warnings.append(f"Only {v.size} samples: experimental variograms will be noisy "
                        "(fewer than about 100 is thin, common practice).")
    if spacing.layout == "scattered" and holes is None:
        warnings.append("No hole ids given and no bench levels found: down-hole spacing is "
                        "unknown; give the hole column if the samples come from drill holes.")
    return Exploration(count=int(v.size), mean=mean, std=std, cv=cv, min=float(v.min()),
                       max=float(v.max()), skewness=skew, quantiles=quant, declustering=decl,
                       spacing=spacing, topcut=topcut, strongly_skewed=strongly, trend=trend,
                       warnings=warnings, **meta)
