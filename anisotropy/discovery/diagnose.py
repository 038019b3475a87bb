"""What the result can be trusted for: fit along the fan, resolution, cautions."""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from anisotropy.fitting import DirectionRanges, FitBins, direction_ranges
from anisotropy.fitting.resolution import downhole_resolved_axes
from anisotropy.geometry import vector_to_line
from anisotropy.models import NestedModel
from anisotropy.uncertainty import SWAP_AXES

from anisotropy.constants import AXES
from anisotropy.discovery.fan import FanRanges
from anisotropy.discovery.params import WIDE_ANGULAR_TOLERANCE



@dataclass(frozen=True)
class Diagnostics:
    """The final model held against the fan, and what the sampling resolves.

    Attributes
    ----------
    direction_ranges : DirectionRanges
        One range per fan direction under the final nugget and sill.
    residuals : list of dict
        The final model against each fan direction (see
        :func:`residuals_by_direction`).
    unresolved_axes, unresolved_ranges : list of str
        Axes whose direction, and axes whose range, the sampling does not resolve.
    continuity : dict or None
        The permutation test of :func:`anisotropy.fitting.continuity.check_continuity`.
    resolved_down_hole : tuple of str
        Axes the holes run along and resolve by their down-hole lags.
    ambiguous_axes : tuple of str
        Axes on which a rival frame of the likelihood is as well supported.
    planar : bool
        One level of samples: its pole (the minor axis) is assumed, so it
        opens no other axis (:func:`with_open_ranges`).
    """

    direction_ranges: DirectionRanges
    residuals: list
    unresolved_axes: list
    unresolved_ranges: list
    choices: tuple[dict, ...] = ()
    warnings: tuple[str, ...] = ()
    continuity: dict | None = None
    resolved_down_hole: tuple[str, ...] = ()
    ambiguous_axes: tuple[str, ...] = ()
    planar: bool = False


def residuals_by_direction(model, directions, distance, value, pairs, *, min_pairs,
                            tolerance, flags):
    """The fitted model against the experimental variogram of each fan direction.

    The model is evaluated at the lag vector ``distance * direction`` of every
    lag (:meth:`anisotropy.models.NestedModel.variogram`), and the relative
    residual ``experimental / model - 1`` is summarised over the lags the fan's
    range step uses (finite, positive distance and at least ``min_pairs``
    pairs, as in :func:`anisotropy.fitting.direction_ranges`).

    Parameters
    ----------
    model : anisotropy.models.NestedModel
        The final model.
    directions : ndarray (n_dir, 3)
        Fan directions.
    distance, value, pairs : ndarray (n_dir, n_lags)
        Mean lag distance, estimator value and pair count per direction and lag.
    min_pairs : float
        Fewest pairs for a lag to count.
    tolerance : ndarray (n_dir,)
        Angular tolerance (degrees) each direction was read at.
    flags : list of str
        The direction-range flag of each direction ("" usable, "thin", ...).

    Returns
    -------
    list of dict
        One row per direction: ``trend``, ``plunge`` (degrees), ``vector``
        (unit, east-north-up), ``angular_tolerance``, ``flag``, ``n_lags``
        (lags used), ``pairs`` (in the lags used), ``mean_relative_residual``
        and ``rms_relative_residual`` (unweighted over the lags used; None
        without any, computed before rounding), and ``lags``: ``distance``,
        ``experimental``, ``model`` (6 significant digits), ``pairs`` and
        ``used`` for every lag of the direction holding pairs.
    """
    u = np.asarray(directions, float)
    u = u / np.linalg.norm(u, axis=1, keepdims=True)
    d = np.asarray(distance, float)
    g = np.asarray(value, float)
    n = np.asarray(pairs, float)
    present = np.isfinite(d) & np.isfinite(g) & np.isfinite(n) & (n > 0) & (d > 0)
    used = present & (n >= min_pairs)
    mod = np.full(d.shape, np.nan)
    lagv = np.where(present, d, 0.0)[..., None] * u[:, None, :]
    mod[present] = model.variogram(lagv[present])
    with np.errstate(invalid="ignore", divide="ignore"):
        rel = np.where(used & (mod > 0), g / mod - 1.0, np.nan)
    trend, plunge = vector_to_line(u)
    trend, plunge = np.atleast_1d(trend), np.atleast_1d(plunge)
    rows = []
    for j in range(len(u)):
        r = rel[j][np.isfinite(rel[j])]
        k = present[j]
        rows.append({
            "trend": round(float(trend[j]), 2), "plunge": round(float(plunge[j]), 2),
            "vector": [float(x) for x in u[j]],
            "angular_tolerance": float(tolerance[j]), "flag": flags[j],
            "n_lags": int(r.size), "pairs": int(n[j][used[j]].sum()),
            "mean_relative_residual": float(r.mean()) if r.size else None,
            "rms_relative_residual": float(np.sqrt(np.mean(r ** 2))) if r.size else None,
            "lags": {"distance": _sig6(d[j][k]), "experimental": _sig6(g[j][k]),
                     "model": _sig6(mod[j][k]), "pairs": [int(x) for x in n[j][k]],
                     "used": used[j][k].tolist()}})
    return rows


def _sig6(a):
    """Floats to 6 significant digits (the per-lag lists are most of discovery.json)."""
    return [float(f"{x:.6g}") for x in np.asarray(a, float)]


def resolution(lags, pairs, ranges, frame, *, nearest=None, across=None,
               min_pairs=10.0, resolved=(), planar=False, lag_index=None, bench=None):
    """Say which ranges the lag bins cannot resolve, and which directions that leaves open.

    A range along an axis is resolved when well-paired lag bins within 25
    degrees of the axis lie shorter than it in at least two distance classes
    (the variogram's rise is seen at more than one distance). Bins of one
    class in neighbouring directions are one point on the rise, not two: on
    benches 10 m apart, every pair across one bench lies near 10 m, and a
    range of 12 m along the pole is then seen at 10 m only, however many
    direction cells those pairs fall in.

    Which directions that leaves open (:func:`_open_directions`): a frame
    cannot have exactly one open axis, since two axes whose directions are
    resolved fix the third (it is square to both); so one unresolved range
    leaves its axis's direction fixed, on any layout, and only its range is
    in doubt. The exception is a steep axis (more than 45 degrees from the
    horizontal) on benches: pairs within a bench fix only horizontal
    directions, so with the steep axis open the plunges of the other two are
    open too, and all three are reported. Two unresolved ranges leave their
    axes free to turn about the third, three the whole frame. A lone range
    kept here is opened later if another axis opens for another reason
    (:func:`with_open_ranges`).
    On planar data (one bench or level) the minor axis is the one across the
    plane: no lag and no spacing on that level can resolve it, so it is
    always reported, with that reason, and the rules above apply to the two
    axes in the plane.

    Parameters
    ----------
    lags : ndarray (m, 3)
        Mean lag vector of each fit bin.
    pairs : ndarray (m,)
        Pairs of each fit bin.
    ranges : sequence of 3 floats
        Ranges of the longest structure along the frame's columns.
    frame : ndarray (3, 3)
        Columns major, semi-major, minor.
    nearest : float, optional
        Nominal sample spacing (m).
    across : float, optional
        Across-hole spacing (m; drill holes only).
    min_pairs : float
        Fewest pairs of a bin that counts.
    resolved : sequence of str
        Axes already resolved another way (down-hole lags), never reported.
    planar : bool
        The samples lie on one plane (one bench or level); its pole is the
        minor axis.
    lag_index : ndarray (m,) int, optional
        Distance class of each bin (``FitBins.lag_index``). None: every bin
        is a class of its own.
    bench : float, optional
        Gap between bench levels (m; blast holes only): the warning on a
        steep axis names it.

    Returns
    -------
    axes : list of str
        Axes whose direction the sampling does not resolve.
    ranges : list of str
        Axes whose range the sampling does not resolve.
    texts : list of str
        The warnings.
    """
    L = np.asarray(lags, float)
    d = np.linalg.norm(L, axis=1)
    u = L / np.maximum(d, 1e-12)[:, None]
    pairs = np.asarray(pairs)
    cls = np.arange(len(d)) if lag_index is None else np.asarray(lag_index)
    # on benches a steep axis is seen only across the benches (pairs within a bench are
    # horizontal); an axis within 45 degrees of the horizontal is surrounded in every bench
    steep = np.abs(np.asarray(frame, float)[2]) > np.cos(np.radians(45))
    seen = {}
    for i, name in enumerate(AXES):
        along = np.abs(u @ frame[:, i]) > np.cos(np.radians(25))
        below = along & (d < ranges[i]) & (pairs >= min_pairs)
        if np.unique(cls[below]).size >= 2 or name in resolved or (planar and name == "minor"):
            continue
        seen[name] = (d[along], np.sort(d[below]))
    unresolved = list(seen)
    steep_open = [a for a in unresolved if bench is not None and steep[AXES.index(a)]]
    axes = _open_directions(unresolved, steep_open)
    texts = [_unresolved_text(a, ranges[AXES.index(a)], *seen[a], a not in axes, nearest,
                              across, bench if a in steep_open else None) for a in unresolved]
    texts = _direction_texts(unresolved, axes, steep_open, texts, planar)
    if planar:
        near = np.abs(u @ frame[:, 2]) > np.cos(np.radians(25))
        axes.append("minor")
        unresolved.append("minor")
        texts.append(_planar_text(ranges[2], int(near.sum())))
    return axes, unresolved, texts


def _open_directions(unresolved, steep_open):
    """Axes whose direction the unresolved ranges leave open (see :func:`resolution`).

    A frame cannot have exactly one open axis: two axes whose directions are
    resolved fix the third (it is square to both). So one unresolved range
    leaves its direction fixed, unless it is a steep axis on benches: pairs
    within a bench fix only horizontal directions, so the plunges of the
    other two rest on the pairs across benches as well, and the whole frame's
    tilt is open with it. Two or three unresolved ranges leave their axes free
    to turn (about the third, or altogether).
    """
    if steep_open:
        return list(AXES)
    return list(unresolved) if len(unresolved) >= 2 else []


def _direction_texts(unresolved, axes, steep_open, texts, planar):
    """What the open directions mean, appended to the range warnings."""
    if len(unresolved) == 1 and not axes:
        texts[0] += (KEPT if not planar
                     else ". Its direction is still fixed: the samples surround it in their "
                     "plane, and it is square to the other axis in that plane, whose range "
                     "is resolved")
    elif steep_open:
        steep = " and ".join(a.replace("_", "-") for a in steep_open)
        texts.append(f"the steep {steep} axis is open on benches, and with it the tilt of the "
                     "whole frame: pairs within a bench fix only horizontal directions, so "
                     "the plunges of all three axes rest on the pairs across benches; all "
                     "three are reported unresolved; treat their plunges as a guess and "
                     "check them against the geology")
    elif len(unresolved) == 2:
        other = next(a for a in AXES if a not in unresolved).replace("_", "-")
        a, b = (x.replace("_", "-") for x in unresolved)
        texts.append(f"the {a} and {b} axes are not resolved in direction: with neither "
                     f"range resolved they may turn about the {other} axis; treat their "
                     "directions as a guess and check them against the geology")
    elif len(unresolved) == 3:
        texts.append("no range is resolved along any axis: the whole frame is a guess; "
                     "check it against the geology and the sampling before using it")
    return texts


def _planar_text(r, n_near):
    """The minor axis of planar data: across the one level, which no lag can resolve."""
    seen = ("no lag bin lies within 25 degrees of it" if not n_near else
            f"only {n_near} lag {'bin lies' if n_near == 1 else 'bins lie'} within 25 degrees "
            "of it")
    return ("the minor axis, across the plane of the samples, is not resolved: all samples "
            f"lie on one level (one bench or plane) and {seen}; one level cannot resolve the "
            "axis across it, whatever the lag or the spacing of the samples on it. Its direction "
            f"is taken as the pole of that plane and its range ({r:.3g} m) only completes "
            "the frame; samples on other levels (further benches, or drill holes through "
            "this one) would resolve it")


def _unresolved_text(name, r, d_along, short, surrounded, nearest, across, bench=None):
    """The warning for an unresolved range; ``surrounded``: its direction is fixed all the
    same, so only its range is in doubt; ``bench``: the bench gap, for a steep axis on
    benches."""
    label = name.replace("_", "-")
    if not d_along.size:
        seen = "cannot be checked: no lag bin lies within 25 degrees of that axis"
    elif short.size == 1:
        seen = (f"rests on one lag bin: only the bin at {short[0]:.3g} m, within 25 degrees "
                "of that axis, is shorter than it")
    elif short.size > 1:
        seen = (f"rests on one lag distance: the {short.size} bins within 25 degrees of that "
                f"axis that are shorter than it all lie at {short[0]:.3g}-{short[-1]:.3g} m, "
                "one distance class")
    else:
        seen = (f"is shorter than the shortest lag seen near that axis "
                f"({float(d_along.min()):.3g} m)")
    what = "range" if surrounded else "axis"
    msg = f"the {label} {what} is not resolved by the sampling: its fitted range ({r:.3g} m) {seen}"
    if across:
        msg += (f"; the across-hole spacing is {across:.3g} m. Closer holes, or holes "
                "drilled along this axis, would resolve it; until then treat "
                + ("its range" if surrounded else "this axis and its range")
                + " as a guess bounded by the spacing")
    elif bench:
        msg += (f"; the benches are {bench:.3g} m apart, so pairs along this steep axis start "
                "near that distance. Holes sampled down through the benches would resolve "
                "it; until then treat this axis and its range as a guess")
    elif nearest and nearest < 0.5 * r:
        msg += (f"; the samples are about {nearest:.3g} m apart, so a shorter unit lag "
                "(--lag) would resolve it")
    else:
        msg += "; closer samples along this axis would resolve it"
    return msg


def _range_warnings(model, fan, *, max_distance, max_range, transform_kind, estimator):
    """Extrapolated and unbounded ranges, thin directions, estimator and unit cautions."""
    out = []
    major_r = max(model.structures, key=lambda s: s.ranges[0]).ranges[0]
    if major_r > max_distance:
        out.append(f"the major range ({major_r:.3g} m) is longer than the longest lag "
                   f"({max_distance:.3g} m): it is an extrapolation; a larger "
                   "domain or longer lags (--n-lags) would show whether the variogram "
                   "levels off")
    if transform_kind == "indicator" and estimator in ("robust", "madogram",
                                                       "pairwise_relative"):
        out.append(f"the {estimator} estimator is not meaningful on 0/1 indicators "
                   "(it is built for continuous grades); prefer the semivariogram")
    for k, st_ in enumerate(model.structures, 1):
        if max(st_.ranges) >= 0.99 * max_range:
            out.append(f"structure {k}'s range reached the search limit ({max_range:.3g} m): "
                       "the fit could not find where the variogram levels off; treat "
                       "this model as unreliable and check the experimental variograms")
    n_thin = fan.ranges.n_thin
    if n_thin:
        out.append(f"{n_thin} of {len(fan.directions)} fan directions have too few pairs "
                   f"for a range even at {WIDE_ANGULAR_TOLERANCE:g} degrees; they are "
                   "marked thin and not used")
    if transform_kind == "normal_score" and estimator in ("semivariogram", "robust"):
        out.append("sills are in normal-score units (total 1); back-transformed grade "
                   "variograms differ in shape near the sill")
    return out


def _unresolvable(continuity, axes, ranges, texts):
    """No continuity at all: every axis and range unresolved, said first.

    Continuity seen only at the nearest pairs (down the holes) and not at the
    first lag is said as a warning: the first-lag test has less power (fewer
    pairs, split by direction), and the resolution check of the fitted ranges
    against the lag bins speaks to each axis.
    """
    if continuity is None or continuity.resolved:
        return axes, ranges, texts
    if continuity.verdict == "shorter_than_first_lag":
        return axes, ranges, texts + [continuity.text]
    return list(AXES), list(AXES), [continuity.text] + texts


def _ambiguous(candidates, axes):
    """Axes a rival frame of the likelihood leaves open (the warning is the refinement's)."""
    amb = tuple((candidates or {}).get("ambiguous_axes") or ())
    return amb, [a for a in AXES if a in set(axes) | set(amb)]


def diagnose(model: NestedModel, fan: FanRanges, bins: FitBins, *, spacing, has_holes,
             planar, max_distance, max_range, min_pairs, transform_kind,
             estimator="semivariogram", continuity=None, holes=None,
             frame_candidates=None) -> Diagnostics:
    """The final model held against the fan, and what the sampling resolves.

    Parameters
    ----------
    model : NestedModel
        The final model (frame columns major, semi-major, minor).
    fan : FanRanges
    bins : FitBins
    spacing : anisotropy.exploration.spacing.Spacing
    has_holes, planar : bool
    max_distance : float
        The longest lag.
    max_range : float
        The fits' range limit.
    min_pairs : float
        Fewest pairs of a fit bin.
    transform_kind, estimator : str
    continuity : ContinuityCheck, optional
        Without any continuity (not even at the nearest pairs) every axis and
        range is unresolved; continuity only under the first lag is warned of.
    holes : HoleAxes, optional
        Hole directions: an axis the holes run along (within the fan's angular
        tolerance) is resolved by its down-hole lags
        (:func:`anisotropy.fitting.resolution.downhole_resolved_axes`).
    frame_candidates : dict, optional
        The likelihood's global frame choice (its ``ambiguous_axes`` are
        unresolved).
    """
    frame = np.asarray(model.frame, float)
    longest = max(model.structures, key=lambda s: s.ranges[0])
    # direction ranges under the fitted nugget and sill (for the report)
    dr = direction_ranges(fan.directions, fan.distance, fan.value, fan.pairs,
                          nugget=model.nugget,
                          sill=float(sum(s.sill for s in model.structures)),
                          kind=longest.kind, min_pairs=fan.min_pairs)
    rows = residuals_by_direction(model, fan.directions, fan.distance, fan.value, fan.pairs,
                                  min_pairs=fan.min_pairs, tolerance=fan.tolerances,
                                  flags=dr.flag)
    by_holes = () if holes is None else tuple(downhole_resolved_axes(
        frame, longest.ranges, holes, tolerance=fan.tolerance))
    benches = getattr(spacing, "layout", None) == "benches"
    axes, ranges, texts = resolution(
        bins.lags, bins.pairs, longest.ranges, frame,
        nearest=getattr(spacing, "nearest", None),
        across=getattr(spacing, "across_hole", None) if has_holes else None,
        min_pairs=min_pairs, resolved=by_holes, planar=planar, lag_index=bins.lag_index,
        bench=getattr(spacing, "bench", None) if benches else None)
    amb, axes = _ambiguous(frame_candidates, axes)
    axes, ranges, texts = _unresolvable(continuity, axes, ranges, texts)
    if planar:  # the pole of one bench is assumed, not resolved, and so is its range
        axes = sorted(set(axes) | {"minor"})
        ranges = sorted(set(ranges) | {"minor"})
    axes, before = with_open_ranges(axes, ranges, planar), axes
    texts = reopened(texts, before, axes)
    texts += _range_warnings(model, fan, max_distance=max_distance, max_range=max_range,
                             transform_kind=transform_kind, estimator=estimator)
    return Diagnostics(direction_ranges=dr, residuals=rows, unresolved_axes=axes,
                       unresolved_ranges=ranges, warnings=tuple(texts),
                       continuity=None if continuity is None else continuity.to_dict(),
                       resolved_down_hole=by_holes, ambiguous_axes=amb, planar=planar)


#: What the warning of a lone unresolved range says of its direction, and what it says
#: instead once another axis is open (:func:`with_open_ranges`).
KEPT = (". Its direction is still fixed: it is square to the other two axes, whose ranges "
        "are resolved")
REOPENED = (". Its direction is open as well: it would be square to the other two axes, "
            "but they are not both resolved in direction")


def reopened(texts, before, after) -> list:
    """The warnings with :data:`KEPT` replaced where ``after`` opened a kept direction."""
    if set(after) == set(before):
        return list(texts)
    return [t.replace(KEPT, REOPENED) for t in texts]


def with_open_ranges(axes, ranges, planar=False) -> list:
    """The open axes, with every unresolved range whose direction they no longer fix.

    One unresolved range keeps its axis's direction only because the other
    two axes' directions fix it (:func:`_open_directions`). Once another
    axis is open for any reason (a rival frame, the bootstrap's exchanges, a
    wide cone, no continuity), that argument falls and the axis is open too.
    The assumed pole of one level of samples (``planar``) opens nothing: the
    axes in its plane fix each other.
    """
    triggers = [a for a in axes if not (planar and a == "minor")]
    if not triggers:
        return list(axes)
    return [a for a in AXES if a in set(axes) | set(ranges)]


def with_bootstrap(dg: Diagnostics, swap_rates: dict, confidence: float, *,
                   cones: dict | None = None, tolerance: float | None = None) -> Diagnostics:
    """The diagnosis after the bootstrap: axes its replicates leave open are unresolved.

    Two axes that trade places in more than ``1 - confidence`` of the
    replicates lie in each other's confidence region: the samples do not say
    which is the longer, so both are unresolved (the cones reach both modes,
    see :meth:`anisotropy.uncertainty.result.BootstrapResult.axis_summary`).  An
    axis whose cone is wider than twice the fan's angular ``tolerance`` is
    unresolved too: its cone then reaches directions whose directional
    variograms share no pair with the reported axis's (two tolerance cones
    more than twice the tolerance apart are disjoint).

    Parameters
    ----------
    dg : Diagnostics
    swap_rates : dict
        Share of replicates exchanging each pair of axes.
    confidence : float
    cones : dict, optional
        Each axis's cone half-angle (degrees) at ``confidence``.
    tolerance : float, optional
        The fan's angular tolerance (degrees).

    Returns
    -------
    Diagnostics
    """
    texts, amb = _swap_texts(swap_rates, 1.0 - float(confidence))
    amb |= set(dg.ambiguous_axes)
    wide, cone_texts = _wide_cones(cones, tolerance, confidence, set(dg.unresolved_axes) | amb)
    if not texts and not wide:
        return dg
    before = [x for x in AXES if x in set(dg.unresolved_axes) | amb | wide]
    axes = with_open_ranges(before, dg.unresolved_ranges, dg.planar)
    return replace(dg, unresolved_axes=axes, ambiguous_axes=tuple(x for x in AXES if x in amb),
                   warnings=tuple(reopened(dg.warnings + tuple(texts + cone_texts), before,
                                           axes)))


def _swap_texts(swap_rates, limit):
    """Warnings and axes of the exchanges more frequent than ``limit``."""
    texts, amb = [], set()
    for key, (a, b) in SWAP_AXES.items():
        rate = swap_rates.get(key)
        if rate is None or not np.isfinite(rate) or rate <= limit:
            continue
        amb |= {a, b}
        texts.append(f"the bootstrap exchanges the {a.replace('_', '-')} and "
                     f"{b.replace('_', '-')} axes in {rate:.0%} of its replicates (more than "
                     f"{limit:.0%}): the samples do not say which of the two is the longer; "
                     "both are unresolved and their cones reach both")
    return texts, amb


def _wide_cones(cones, tolerance, confidence, already):
    """Axes (not already unresolved) whose cone exceeds twice the angular tolerance."""
    if not cones or not tolerance or not np.isfinite(tolerance):
        return set(), []
    wide = {a for a in AXES if a not in already and np.isfinite(cones.get(a, np.nan))
            and cones[a] > 2.0 * tolerance}
    texts = [f"the {confidence:.0%} cone of the {a.replace('_', '-')} axis is "
             f"{cones[a]:.0f} degrees, more than twice the fan's angular tolerance "
             f"({tolerance:g} degrees): it reaches directions whose directional variograms "
             "share no pair with the reported axis's, so that direction is unresolved"
             for a in AXES if a in wide]
    return wide, texts
