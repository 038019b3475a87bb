"""The discovery chain for one domain and variable, and the ``Discovery`` result.

``discover(data, value=...)`` runs, in one direction and without going back:

1. intake (:mod:`anisotropy.samples`) and exploration (:mod:`anisotropy.explore`);
2. the transform (normal scores by default for skewed grades);
3. the lags, chosen from the nominal spacing (each choice recorded with its
   reason and overridable);
4. one pass of the pair engine into the lag-vector volume
   (:func:`anisotropy.pairs.build_volume`);
5. the fit bins (one per distance class and coarse direction cell), with
   drill-hole information weights;
6. the nugget: from the down-hole variogram where there are holes, from the
   shortest lags otherwise;
7. the fan of directional variograms (about 5 degree spacing) and a range
   per direction under the shared nugget and sill, thin directions marked;
8. the robust ellipsoid fitted to the reliable ranges, and the principal
   axes of the volume's low-variability region (starting frames);
9. the joint nested fit over all bins from several starts (the best kept),
   then 1..3 structures chosen by a penalised criterion;
10. the axes in the geologist's terms, the checks of what the sampling can
    resolve, and the result record (schema ``anisotropy.discovery/1``).

Drill-hole strings (documented choice).  Most pairs of a drill-hole data set
lie inside one hole, so a bin's pair count overstates its information.  The
within-hole pairs of every bin are counted exactly (per hole, in NumPy), and
the bin's information weight is ``N_between + H_within``: the pairs between
different holes plus the number of distinct holes contributing within-hole
pairs (each hole an independent look at that lag).  The weights enter the
Cressie (1985) objective in place of the pair counts.  The nugget is taken
from the down-hole variogram at the composite spacing (extrapolated to zero
from the first lags) and held in the joint fit.

Frame refinement.  After step 9 the frame is refined by a nearest-neighbour
(Vecchia 1988) Gaussian likelihood of the samples themselves
(:mod:`anisotropy.fitting.likelihood`), for semivariogram and robust
estimators on non-planar data, scattered or strung in holes; the ranges and
sills are then refitted to the variogram bins with that frame held.  The
likelihood sees which sample sits next to which, so on drill-hole strings it
uses the across-hole information that the variogram bins dilute.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from anisotropy.errors import AnisotropyError, FitError, InputError, InsufficientDataError

__all__ = ["discover", "Discovery", "SCHEMA", "CAUTION"]

SCHEMA = "anisotropy.discovery/1"

CAUTION = ("Automated continuity suggestions support, and do not replace, the judgement of "
           "the competent or qualified person responsible under the public reporting code "
           "that applies (JORC, NI 43-101, SAMREC, PERC or the local equivalent). The result "
           "depends on the domaining: a domain that mixes populations or styles of "
           "mineralisation gives a mixed answer.")

AXES = ("major", "semi_major", "minor")

# --- defaults (each one is reported with its reason when used) ------------
DEFAULT_FAN_SPACING = 5.0       # degrees between fan directions
DEFAULT_ANGULAR_TOLERANCE = 15.0  # degrees (common practice: 15-22.5)
WIDE_ANGULAR_TOLERANCE = 30.0   # degrees, for directions thin at the default
MIN_LAGS, MAX_LAGS_AUTO = 12, 20
MIN_SAMPLES = 30
PAIR_BUDGET = 1.5e8             # pairs in the one pass, for automatic lags
N_RANDOM_STARTS = 8
# Frame refinement by the nearest-neighbour likelihood (fitting.likelihood), on
# scattered samples and drill-hole strings alike (on strings it took the issue-4
# drill-hole benchmarks from 6-7 degree median errors to 2-3); larger sets are
# subsampled to this size.
LIKELIHOOD_REFINEMENT = True
LIKELIHOOD_MAX_SAMPLES = 2000
LIKELIHOOD_NEIGHBOURS = 30      # 20: about half the time, less accurate (RESULTS.md)
#: When the variogram fit keeps one structure, the likelihood is also
#: maximised with a second, shorter structure added (ranges this fraction of
#: the first, half the sill each to start), and that frame is kept when the
#: likelihood gain passes the BIC penalty of the four extra parameters: a
#: one-structure likelihood on a two-structure field turned the frame up to
#: 15 degrees wrong (benchmarks/RESULTS.md, issue 4).
LIKELIHOOD_NESTED_SHORT = 0.3
#: Least share of the total sill either structure must keep in the variogram
#: refit for the likelihood's second structure to be reported.
LIKELIHOOD_MIN_SHARE = 0.05
#: Relative stopping tolerance of the nested likelihood search (see
#: ``fitting.likelihood.refine_frame_likelihood``).
LIKELIHOOD_NESTED_FTOL = 1e-5
#: The same for the first (variogram structures) likelihood search (None:
#: SciPy's default, which took three times the evaluations for a frame that
#: differed by thousandths of a degree on the composites speed benchmark).
LIKELIHOOD_FTOL = 1e-5


def _f(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _plain(obj):
    """JSON-ready plain Python types."""
    if isinstance(obj, dict):
        return {str(k): _plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return _plain(obj.tolist())
    if isinstance(obj, (np.bool_, bool)):
        return bool(obj)
    if isinstance(obj, (np.integer,)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        return _f(obj)
    return obj


# ---------------------------------------------------------------------------
# the result
# ---------------------------------------------------------------------------

@dataclass
class Discovery:
    """The continuity proposal for one domain and variable.

    Attributes
    ----------
    model : anisotropy.models.NestedModel
        Nugget and structures in the transformed variable's units (normal
        scores: unit variance); frame columns major, semi-major, minor.
    frame : ndarray (3, 3)
        Right-handed, canonical (major and minor pointing down or horizontal).
    samples : SampleSet
    exploration : Exploration or None
    transform : TransformResult
    lags : dict
        unit_lag, n_lags, lag_tolerance, max_distance and the reasons.
    uncertainty : BootstrapResult or None
    diagnostics : dict
        pairs, directions, selection, ``residuals_by_direction`` (the final
        model against each fan direction's experimental variogram, see
        ``_residuals_by_direction``), seconds, ...
    warnings : list of str
    volume_, fan_, bins_ : the lag volume, the fan and the fit bins.
    ranges_ : DirectionRanges
    ellipsoid_ : EllipsoidFit
    fit_ : NestedFit
    """

    model: object
    frame: np.ndarray
    samples: object
    exploration: object
    transform: object
    lags: dict
    uncertainty: object = None
    diagnostics: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)
    choices: list = field(default_factory=list)
    estimator: str = "semivariogram"
    planar: bool = False
    run: dict = field(default_factory=dict)
    volume_: object = field(default=None, repr=False)
    fan_: object = field(default=None, repr=False)
    bins_: object = field(default=None, repr=False)
    ranges_: object = field(default=None, repr=False)
    ellipsoid_: object = field(default=None, repr=False)
    fit_: object = field(default=None, repr=False)
    _refit_state: dict = field(default_factory=dict, repr=False)

    # -- derived geometry ------------------------------------------------------
    def axes(self) -> dict:
        """Axis vectors, trend/plunge and range (longest-range structure)."""
        from anisotropy.geometry import vector_to_line

        out = {}
        longest = self._longest()
        for i, name in enumerate(AXES):
            v = self.frame[:, i]
            t, p = vector_to_line(v)
            out[name] = {"vector": [float(x) for x in v], "trend": float(t), "plunge": float(p),
                         "range": float(longest.ranges[i])}
        return out

    def _longest(self):
        st = self.model.structures
        return max(st, key=lambda s: s.ranges[0])

    def plane(self) -> dict:
        """Plane of greatest continuity (pole = minor axis) and the major axis's pitch."""
        from anisotropy.geometry import pitch_of, pole_to_plane, strike_of

        dd, dip = pole_to_plane(self.frame[:, 2])
        dd, dip = float(dd), float(dip)
        pitch = float(pitch_of(self.frame[:, 0], dd, dip))
        return {"dip_direction": dd, "dip": dip, "strike": float(strike_of(dd)),
                "pitch": pitch}

    def angles(self) -> dict:
        from anisotropy.geometry import angles_from_frame

        a, p, r = angles_from_frame(self.frame)
        return {"azimuth": float(a), "plunge": float(p), "rotation": float(r),
                "convention": "azimuth and plunge of the major axis, then rotation of the "
                              "semi-major axis about the major axis away from horizontal "
                              "(anisotropy.geometry.frame_from_angles)"}

    # -- record ------------------------------------------------------------------
    def to_dict(self) -> dict:
        """The result record, schema ``anisotropy.discovery/1`` (design.md)."""
        s = self.samples
        cols = getattr(s, "columns", {}) or {}
        structures = []
        for st in self.model.structures:
            structures.append({"type": st.kind, "sill": float(st.sill),
                               "ranges": {"major": float(st.ranges[0]),
                                          "semi_major": float(st.ranges[1]),
                                          "minor": float(st.ranges[2])}})
        units = self.diagnostics.get("units", "")
        unc = {}
        if self.uncertainty is not None:
            unc = self.uncertainty.to_dict() if hasattr(self.uncertainty, "to_dict") \
                else dict(self.uncertainty)
        d = {
            "schema": SCHEMA,
            "input": {"file": str(getattr(s, "source", "<table>")), "value": cols.get("value"),
                      "domain": getattr(s, "domain", None), "n_samples": getattr(s, "n_read", None),
                      "n_used": int(s.n), "dropped": dict(getattr(s, "dropped", {}) or {}),
                      "changed": dict(getattr(s, "changed", {}) or {}),
                      "columns": dict(cols),
                      "origin": [float(o) for o in np.ravel(getattr(s, "origin", None)
                                                            if getattr(s, "origin", None)
                                                            is not None else [])]},
            "transform": dict(self.transform.record) if self.transform is not None else {},
            "estimator": self.estimator,
            "lags": {k: v for k, v in self.lags.items()},
            "axes": self.axes(),
            "plane": self.plane(),
            "rotation": {"matrix": self.frame.tolist(), "angles": self.angles()},
            "model": {"nugget": float(self.model.nugget), "structures": structures,
                      "total_sill": float(self.model.total_sill), "units": units},
            "uncertainty": unc,
            "run": dict(self.run),
            "diagnostics": dict(self.diagnostics, warnings=list(self.warnings),
                                choices=list(self.choices)),
            "planar": bool(self.planar),
            "cautions": [CAUTION] + ([PLANAR_CAUTION] if self.planar else []),
        }
        return _plain(d)

    def to_json(self, path) -> Path:
        """Write :meth:`to_dict` as JSON, atomically."""
        from anisotropy._safety import atomic_write_json

        path = Path(path)
        atomic_write_json(path, self.to_dict())
        return path

    def summary(self) -> str:
        """The proposal in the geologist's words."""
        return _summary(self)

    # -- refit for replicates ----------------------------------------------------
    def refit_function(self):
        """``refit(coarse_sums, *, fixed_frame=None, start=None) -> (NestedModel, objective)``.

        Rebuilds the fit bins from (re-weighted) coarse sums, re-applies the
        main fit's information weights (per bin, as a ratio to the pair
        count), and refits the same number and kinds of structures,
        warm-started from ``start`` (default: the main fit), with the same
        nugget policy, one re-weighting pass (the Cressie denominators of the
        warm start) and a relative cost tolerance of 1e-5; ``fixed_frame`` holds the frame (for checking an
        interpretation).  No pass over the pairs.  The returned model's frame
        is ordered and canonical like the main one.  Where the main frame was
        refined by the likelihood, each replicate's frame is turned by the
        same rotation (the refinement needs the samples, which a re-weighted
        replicate does not have).
        """
        st = dict(self._refit_state)
        main = self.model

        def refit(coarse_sums, *, fixed_frame=None, start=None):
            from anisotropy.fitting import bins_from_sums, fit_nested

            bins = bins_from_sums(coarse_sums, estimator=st["estimator"],
                                  min_pairs=st["min_pairs"])
            bins.weight = _information_weight(bins, st["weight_ratio"])
            if bins.n < 3:
                raise FitError("a replicate has fewer than 3 fit bins with enough pairs")
            s0 = start if start is not None else main
            Q = st.get("frame_correction")
            if Q is not None and fixed_frame is None:
                # the main frame was refined by the likelihood: the replicate's
                # variogram fit starts from the variogram's own frame and is
                # turned by the same rotation afterwards
                from anisotropy.fitting.nested import _from_model
                s0 = _from_model(s0) if not isinstance(s0, tuple) else s0
                s0 = (Q.T @ np.asarray(s0[0], float),) + tuple(s0[1:])
            f = fit_nested(bins, s0, n_structures=len(main.structures),
                           kinds=tuple(x.kind for x in main.structures),
                           fixed_frame=fixed_frame, fixed_nugget=st["fixed_nugget"],
                           total_sill=st["total_sill"], max_nfev=st["max_nfev"],
                           min_range=st["min_range"], max_range=st["max_range"],
                           planar=st["planar"], ftol=1e-5, outer=1,
                           shared_ratios=st["shared_ratios"], make_model=False)
            if Q is not None and fixed_frame is None:
                f.frame = Q @ np.asarray(f.frame, float)
            model = _ordered_model(f, keep_frame=fixed_frame is not None,
                                   planar=st["planar"])
            return model, float(f.objective)

        return refit


def _information_weight(bins, ratio):
    """Information weight of each bin: drill-hole-corrected pairs per metre of lag."""
    r = ratio[bins.lag_index, bins.direction_index]
    r = np.where(np.isfinite(r), r, 1.0)
    return bins.pairs * r / np.maximum(bins.distance, 1e-9)


PLANAR_CAUTION = ("The samples lie in one plane (one bench or level): only the azimuths of "
                  "continuity within that plane are resolved; the axis across the plane and "
                  "its range are not, and are reported only to complete the frame.")


def _ordered_model(fit, keep_frame=False, planar=False):
    """NestedModel with frame columns ordered by the longest structure, canonical.

    For planar data the column nearest the vertical stays last (minor): its
    range is tied to the semi-major one and not resolved.
    """
    from anisotropy.geometry import canonical_frame
    from anisotropy.models import NestedModel, Structure

    ranges = np.asarray(fit.ranges, float)
    frame = np.asarray(fit.frame, float)
    if not keep_frame:
        j = int(np.argmax(ranges.max(axis=1)))
        if planar:
            v = int(np.argmax(np.abs(frame[2])))
            h = [i for i in range(3) if i != v]
            h = sorted(h, key=lambda i: -ranges[j, i])
            order = np.array(h + [v])
        else:
            order = np.argsort(-ranges[j], kind="stable")
        frame = frame[:, order]
        ranges = ranges[:, order]
        if planar:  # not resolved: reported equal to the semi-major range
            ranges[:, 2] = ranges[:, 1]
        if np.linalg.det(frame) < 0:
            frame = frame.copy()
            frame[:, 2] *= -1
        frame = canonical_frame(frame)
    structs = [Structure(kind=k, sill=float(c), ranges=tuple(float(x) for x in r))
               for k, c, r in zip(fit.kinds, fit.sills, ranges)]
    order = np.argsort([max(s.ranges) for s in structs], kind="stable")
    structs = [structs[i] for i in order]
    return NestedModel(nugget=float(fit.nugget), structures=structs, frame=frame)


# ---------------------------------------------------------------------------
# pieces of the chain
# ---------------------------------------------------------------------------

def _intake(data, value, x, y, z, domain, domain_value, hole, intake):
    from anisotropy.samples import SampleSet, read_samples, samples_from_frame

    if isinstance(data, SampleSet):
        return data
    try:
        import pandas as pd
    except ImportError:  # pragma: no cover
        pd = None
    kw = dict(value=value, x=x, y=y, z=z, domain=domain, domain_value=domain_value, hole=hole,
              **intake)
    if pd is not None and isinstance(data, pd.DataFrame):
        return samples_from_frame(data, **kw)
    return read_samples(data, **kw)


def _skew(v):
    v = np.asarray(v, float)
    m = v.mean()
    s = v.std()
    if s == 0:
        return 0.0, 0.0
    cv = s / abs(m) if m != 0 else np.inf
    sk = float(np.mean(((v - m) / s) ** 3))
    return float(cv), sk


def _choose_transform(values, transform, weights, choices, threshold=None):
    from anisotropy.transform import apply_transform

    cv, sk = _skew(values)
    kind = transform
    if transform == "auto":
        if (cv > 1.0 or sk > 1.0) and np.all(values >= 0):
            kind = "normal_score"
            why = []
            if cv > 1.0:
                why.append(f"CV {cv:.2f} > 1")
            if sk > 1.0:
                why.append(f"skewness {sk:.2f} > 1")
            choices.append({"choice": "transform", "value": "normal_score",
                            "reason": "grades are skewed (" + ", ".join(why) + "): normal "
                                      "scores keep a few high grades from dominating the "
                                      "variogram (Goovaerts 1997); sills are reported in "
                                      "normal-score units (total sill 1)"})
        else:
            kind = "raw"
            choices.append({"choice": "transform", "value": "raw",
                            "reason": f"grades are not strongly skewed (CV {cv:.2f}, "
                                      f"skewness {sk:.2f}, both <= 1 or negative values "
                                      "present): raw values, sills in grade units squared"})
    else:
        choices.append({"choice": "transform", "value": kind, "reason": "as requested"})
    kw = {}
    if kind == "normal_score" and weights is not None:
        kw["weights"] = weights
    if kind == "indicator":
        if threshold is None:
            kw["quantile"] = 0.5
        else:
            kw["threshold"] = threshold
    return apply_transform(values, kind, **kw)


def _choose_lags(samples, spacing, lag, n_lags, choices, pair_budget=None):
    budget = PAIR_BUDGET if pair_budget is None else float(pair_budget)
    c = samples.coords
    ext = c.max(axis=0) - c.min(axis=0)
    extent = float(np.max(ext))
    if extent <= 0:
        raise InsufficientDataError("all samples sit at one location: no lag can be formed")
    max_d = 0.5 * extent
    holes = samples.holes is not None and getattr(spacing, "n_holes", None)
    sl = dict(getattr(spacing, "suggested_lag", {}) or {})
    user_set = lag is not None
    if lag is not None:
        lag = float(lag)
        if not lag > 0:
            raise InputError(f"the lag must be positive; got {lag}")
        choices.append({"choice": "unit lag", "value": lag, "reason": "as requested"})
        if n_lags is None:
            n_lags = int(np.clip(round(max_d / lag), 4, 200))
            choices.append({"choice": "number of lags", "value": n_lags,
                            "reason": f"half the largest extent of the domain ({extent:.0f} m, "
                                      "common practice) divided by the lag"})
        else:
            choices.append({"choice": "number of lags", "value": int(n_lags),
                            "reason": "as requested"})
        n_lags = int(n_lags)
    else:
        base_key = "across_hole" if holes and sl.get("across_hole") else "omni"
        base = sl.get(base_key) or spacing.nearest or max_d / MIN_LAGS
        if not holes and getattr(spacing, "layout", None) == "scattered":
            # scattered samples (no holes, no benches) give pairs at every separation
            # and in every direction: the lag is set by the number of lags, not by a
            # sampling pattern, but not under half the spacing (the first lags would
            # hold few pairs)
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
        choices.append({"choice": "unit lag", "value": lag, "reason": reason})
        n_lags = int(n_lags) if n_lags is not None else int(max(4, round(max_d / lag)))
        choices.append({"choice": "number of lags", "value": n_lags,
                        "reason": ("as requested" if n_lags is None else
                                   f"lags out to half the largest extent of the domain "
                                   f"({extent:.0f} m, common practice)")})
    est = None
    if not user_set:
        # pair budget: shorten the maximum distance (keeping the number of lags)
        # until the estimated pair count is within PAIR_BUDGET
        from anisotropy.pairs import estimate_pair_count

        d0 = (n_lags + 0.5) * lag
        est = estimate_pair_count(c, d0)
        d = d0
        for _ in range(4):
            if est <= budget:
                break
            d = d * (budget / est) ** (1.0 / 2.5)
            est = estimate_pair_count(c, d)
        if d < d0:
            # fewer lags first (the unit lag stays at the spacing), then a shorter lag
            n_new = int(math.floor(d / lag - 0.5))
            if n_new >= MIN_LAGS:
                how = f"the number of lags becomes {n_new} (unit lag kept at {lag:.3g} m)"
                n_lags = n_new
            else:
                n_lags = min(MIN_LAGS, n_lags)
                lag = float(f"{d / (n_lags + 0.5):.3g}")
                how = (f"{n_lags} lags of {lag:.3g} m (shorter than the nominal spacing: "
                       "the first lags hold few pairs)")
            for row in choices:
                if row["choice"] == "unit lag":
                    row["value"] = lag
                if row["choice"] == "number of lags":
                    row["value"] = n_lags
            choices.append({"choice": "maximum distance", "value": (n_lags + 0.5) * lag,
                            "reason": f"shortened from {d0:.0f} m to keep the single pass "
                                      f"over pairs near {budget:.1e} pairs (about "
                                      f"{est:.2e} estimated at the new distance): {how}. "
                                      "Give --lag and --n-lags to override"})
    choices.append({"choice": "lag tolerance", "value": lag / 2,
                    "reason": "half the lag (common practice; classes are contiguous)"})
    return {"unit_lag": lag, "n_lags": n_lags, "lag_tolerance": lag / 2,
            "max_distance": (n_lags + 0.5) * lag, "pairs_estimated": est}


def _within_hole_pairs(coords, holes, lag, n_lags, coarse_dirs):
    """Exact within-hole pair counts and distinct holes per (class, coarse cell).

    Samples are sorted by hole and, inside a hole, along its principal
    direction; pairs ``(a, a + step)`` of the same hole are formed for every
    step (vectorised over holes).  Also returns the down-hole pairs of the
    first six steps (distances and sample indices) for the nugget.
    """
    from anisotropy.geometry import to_lower_hemisphere

    max_d = (n_lags + 0.5) * lag
    codes, inv = np.unique(np.asarray(holes).astype(str), return_inverse=True)
    n_c = coarse_dirs.shape[0]
    # position along each hole's principal direction
    pos = np.zeros(len(coords))
    order = np.argsort(inv, kind="stable")
    starts = np.r_[0, np.flatnonzero(np.diff(inv[order])) + 1, len(order)]
    for a0, a1 in zip(starts[:-1], starts[1:]):
        idx = order[a0:a1]
        if len(idx) > 1:
            p = coords[idx] - coords[idx].mean(axis=0)
            _, _, vt = np.linalg.svd(p, full_matrices=False)
            pos[idx] = p @ vt[0]
    order = np.lexsort((pos, inv))
    h_sorted = inv[order]
    c_sorted = coords[order]
    within = np.zeros((n_lags + 1, n_c))
    keys = []
    dh_d, dh_i, dh_j = [], [], []
    n = len(order)
    for step in range(1, n):
        same = h_sorted[step:] == h_sorted[:-step]
        if not same.any():
            break
        ia = np.flatnonzero(same)
        ja = ia + step
        v = c_sorted[ja] - c_sorted[ia]
        d = np.linalg.norm(v, axis=1)
        ok = (d > 0) & (d <= max_d)
        if step <= 6:
            dh_d.append(d[d > 0])
            dh_i.append(order[ia[d > 0]])
            dh_j.append(order[ja[d > 0]])
        if not ok.any():
            if step > 6:
                break
            continue
        ia, v, d = ia[ok], v[ok], d[ok]
        k = np.ceil(d / lag - 0.5).astype(int)
        m = k <= n_lags
        k, v, d, ia = k[m], v[m], d[m], ia[m]
        u = to_lower_hemisphere(v / d[:, None])
        cell = np.argmax(np.abs(u @ coarse_dirs.T), axis=1)
        np.add.at(within, (k, cell), 1.0)
        keys.append((k * n_c + cell) * len(codes) + h_sorted[ia])
    within_holes = np.zeros((n_lags + 1) * n_c)
    if keys:
        uk = np.unique(np.concatenate(keys))
        np.add.at(within_holes, uk // len(codes), 1.0)
    within_holes = within_holes.reshape(n_lags + 1, n_c)
    dh = (np.concatenate(dh_d) if dh_d else np.empty(0),
          np.column_stack([np.concatenate(dh_i), np.concatenate(dh_j)]) if dh_i
          else np.empty((0, 2), int))
    return within, within_holes, dh


def _downhole_nugget(dh, values, composite, total, estimator):
    """Nugget from the first down-hole lags: linear extrapolation to zero."""
    d, ij = dh
    if d.size < 30 or not composite or estimator not in ("semivariogram", "robust",
                                                          "correlogram"):
        return None, None
    cls = np.round(d / composite).astype(int)
    pts = []
    for k in (1, 2, 3):
        m = cls == k
        if m.sum() >= 20:
            diff = values[ij[m, 1]] - values[ij[m, 0]]
            if estimator == "correlogram":
                a, b = values[ij[m, 0]], values[ij[m, 1]]
                r = np.corrcoef(a, b)[0, 1]
                g = 1.0 - r
            else:
                g = 0.5 * np.mean(diff ** 2)
            pts.append((float(np.mean(d[m])), float(g), int(m.sum())))
    if len(pts) < 2:
        return None, pts
    x = np.array([p[0] for p in pts])
    y = np.array([p[1] for p in pts])
    slope, icpt = np.polyfit(x[:2], y[:2], 1)
    nug = float(np.clip(icpt, 0.0, min(y[0], 0.95 * total if total else y[0])))
    return nug, pts


def _stage(progress, t0, text):
    """One progress line on stderr (``progress=True``) or to a callable, with the elapsed time."""
    if not progress:
        return
    import sys

    line = f"discover: {text} [{time.perf_counter() - t0:.1f} s]"
    if callable(progress):
        progress(line)
    else:
        print(line, file=sys.stderr, flush=True)


def _iso_fit(bins, total, kind, fixed_nugget=None):
    """Isotropic 1-structure fit over all bins: nugget, sill, range (for starts)."""
    from anisotropy.fitting import fit_nested

    a0 = float(np.median(bins.distance))
    start = (np.eye(3), 0.1 * (total or np.nanmax(bins.gamma)),
             [0.9 * (total or np.nanmax(bins.gamma))], [[a0, a0, a0]], (kind,))
    # isotropy: three equal ranges is reached by a fixed frame and a fit whose
    # anisotropy is free; we only need nugget and sill here
    f = fit_nested(bins, start, fixed_frame=np.eye(3), fixed_nugget=fixed_nugget,
                   total_sill=total, make_model=False, max_nfev=200)
    return f


def _residuals_by_direction(model, directions, distance, value, pairs, *, min_pairs,
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
    from anisotropy.geometry import vector_to_line

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


def _worst_direction_line(rows):
    """One summary line: the typical and the worst fit among well-sampled fan directions.

    Well sampled: not thin, with a residual, and at least the median pairs of
    such directions.  None when no direction qualifies.
    """
    ok = [r for r in rows or [] if r.get("flag") != "thin"
          and r.get("rms_relative_residual") is not None]
    if not ok:
        return None
    med_pairs = float(np.median([r["pairs"] for r in ok]))
    well = [r for r in ok if r["pairs"] >= med_pairs]
    w = max(well, key=lambda r: r["rms_relative_residual"])
    med_rms = float(np.median([r["rms_relative_residual"] for r in ok]))
    rms, mean = 100 * w["rms_relative_residual"], 100 * w["mean_relative_residual"]
    return (f"fit along the fan: median RMS relative residual {100 * med_rms:.0f} % over "
            f"{len(ok)} directions; worst of the better-sampled half: trend "
            f"{w['trend']:05.1f}, plunge {w['plunge']:4.1f}, RMS {rms:.0f} % "
            f"(mean {mean:+.0f} %) over {w['n_lags']} lags, {w['pairs']:,} pairs")


def _resolution_warnings(bins, fit_model, frame, spacing, holes, warnings, min_pairs):
    """Say which ranges the lag bins cannot resolve, and which directions that leaves open.

    A range along an axis is resolved when at least two well-paired lag bins
    within 25 degrees of the axis lie shorter than it (the variogram's rise is
    seen by more than one point).  On drill holes and benches an unresolved
    range leaves its axis's direction open too (the hole or bench spacing is
    all the sampling says about that direction).  Scattered samples surround
    every direction at every distance, so there an axis whose range alone is
    unresolved keeps its direction (it is square to the two resolved axes);
    two unresolved ranges leave their axes free to turn about the third.

    Returns
    -------
    axes : list of str
        Axes whose direction the sampling does not resolve.
    ranges : list of str
        Axes whose range the sampling does not resolve.
    """
    st = max(fit_model.structures, key=lambda s: s.ranges[0])
    L = bins.lags
    d = np.linalg.norm(L, axis=1)
    u = L / np.maximum(d, 1e-12)[:, None]
    scattered = getattr(spacing, "layout", None) == "scattered" and not holes
    nearest = getattr(spacing, "nearest", None)
    across = getattr(spacing, "across_hole", None) if holes else None
    ranges, texts = [], []
    for i, name in enumerate(AXES):
        r = st.ranges[i]
        along = np.abs(u @ frame[:, i]) > np.cos(np.radians(25))
        short = np.sort(d[along & (d < r) & (bins.pairs >= min_pairs)])
        if short.size >= 2:
            continue
        ranges.append(name)
        label = name.replace("_", "-")
        if not np.any(along):
            seen = "cannot be checked: no lag bin lies within 25 degrees of that axis"
        elif short.size == 1:
            seen = (f"rests on one lag bin: only the bin at {short[0]:.3g} m, within 25 degrees "
                    "of that axis, is shorter than it")
        else:
            seen = (f"is shorter than the shortest lag seen near that axis "
                    f"({float(d[along].min()):.3g} m)")
        what = "range" if scattered else "axis"
        msg = f"the {label} {what} is not resolved by the sampling: its fitted range ({r:.3g} m) {seen}"
        if across:
            msg += (f"; the across-hole spacing is {across:.3g} m. Closer holes, or holes "
                    "drilled along this axis, would resolve it; until then treat this axis and "
                    "its range as a guess bounded by the spacing")
        elif nearest and nearest < 0.5 * r:
            msg += (f"; the samples are about {nearest:.3g} m apart, so a shorter unit lag "
                    "(--lag) would resolve it")
        else:
            msg += "; closer samples along this axis would resolve it"
        texts.append(msg)
    if not scattered:
        axes = list(ranges)
    elif len(ranges) == 1:
        axes = []
        texts[0] += (". Its direction is still fixed: the samples surround it, and it is "
                     "square to the other two axes, whose ranges are resolved")
    else:
        axes = list(ranges)
        if len(ranges) == 2:
            other = next(a for a in AXES if a not in ranges).replace("_", "-")
            a, b = (x.replace("_", "-") for x in ranges)
            texts.append(f"the {a} and {b} axes are not resolved in direction: with neither "
                         f"range resolved they may turn about the {other} axis; treat their "
                         "directions as a guess and check them against the geology")
        elif len(ranges) == 3:
            texts.append("no range is resolved along any axis: the whole frame is a guess; "
                         "check it against the geology and the sampling before using it")
    warnings.extend(texts)
    return axes, ranges


#: Units printed after the numeric value of a choice in the summary.
_CHOICE_UNITS = {"unit lag": "m", "lag tolerance": "m", "angular tolerance": "degrees",
                 "bootstrap blocks": "m", "bandwidth": "m", "maximum distance": "m"}


def _summary(D: "Discovery") -> str:
    a = D.axes()
    pl = D.plane()
    m = D.model
    t = D.transform.kind if D.transform is not None else "raw"
    units = D.diagnostics.get("units", "")
    s = D.samples
    head = f"Continuity proposal for {getattr(s, 'columns', {}).get('value', 'grade')}"
    if getattr(s, "domain", None) is not None:
        head += f", domain {s.domain}"
    L = [head, "=" * len(head)]
    L.append(f"samples used: {s.n} of {getattr(s, 'n_read', s.n)} ({getattr(s, 'source', '')})")
    L.append(f"transform: {t}; estimator: {D.estimator}; values in {units}")
    L.append("")
    if D.planar:
        L.append("PLANAR DATA: only the azimuths within the plane are resolved.")
    L.append(f"Plane of greatest continuity: dip direction {pl['dip_direction']:05.1f}, "
             f"dip {pl['dip']:4.1f} (strike {pl['strike']:05.1f}, right-hand rule)")
    L.append(f"Major axis:      trend {a['major']['trend']:05.1f}, plunge "
             f"{a['major']['plunge']:4.1f}, pitch {pl['pitch']:5.1f} in the plane; "
             f"range {a['major']['range']:.4g} m")
    L.append(f"Semi-major axis: trend {a['semi_major']['trend']:05.1f}, plunge "
             f"{a['semi_major']['plunge']:4.1f}; range {a['semi_major']['range']:.4g} m")
    minor_range = (f"range {a['minor']['range']:.4g} m" if not D.planar else
                   f"range not resolved (planar data; {a['minor']['range']:.4g} m is a "
                   "placeholder equal to the semi-major)")
    L.append(f"Minor axis:      trend {a['minor']['trend']:05.1f}, plunge "
             f"{a['minor']['plunge']:4.1f} (pole to the plane); {minor_range}")
    L.append("")
    L.append(f"Model ({units}): nugget {m.nugget:.3g} of total sill {m.total_sill:.3g} "
             f"({100 * m.nugget / max(m.total_sill, 1e-300):.0f} %)")
    for i, st in enumerate(m.structures, 1):
        L.append(f"  structure {i}: {st.kind}, sill {st.sill:.3g}, ranges "
                 f"{st.ranges[0]:.4g} / {st.ranges[1]:.4g} / {st.ranges[2]:.4g} m "
                 "(major / semi-major / minor"
                 + ("; practical range" if st.kind in ("exponential", "gaussian") else "") + ")")
    dg = D.diagnostics
    L.append("")
    L.append(f"pairs: {dg.get('pairs', 0):,}; fan directions: {dg.get('directions', {}).get('n', 0)}"
             f" ({dg.get('directions', {}).get('thin', 0)} too thin to use); "
             f"fit bins: {dg.get('bins', {}).get('bins', 0)}; run time {dg.get('seconds', 0):.1f} s")
    worst = _worst_direction_line(dg.get("residuals_by_direction"))
    if worst:
        L.append(worst)
    if D.uncertainty is not None and hasattr(D.uncertainty, "to_dict"):
        u = D.uncertainty.to_dict()
        for ax in AXES:
            if ax in u and isinstance(u[ax], dict) and u[ax].get("cone_deg") is not None:
                L.append(f"  {ax.replace('_', '-')} axis within {u[ax]['cone_deg']:.1f} degrees "
                         f"({100 * u.get('confidence', 0.9):.0f} % of replicates)")
    L.append("")
    L.append("Choices made (override with the options named):")
    for c in D.choices:
        v = c["value"]
        v = f"{v:.4g}" if isinstance(v, float) else str(v)
        unit = _CHOICE_UNITS.get(c["choice"])
        if unit and isinstance(c["value"], (int, float)) and not isinstance(c["value"], bool):
            v = f"{v} {unit}"
        L.append(f"  - {c['choice']}: {v} - {c['reason']}")
    if D.warnings:
        L.append("")
        L.append("Warnings:")
        for w in D.warnings:
            L.append(f"  ! {w}")
    L.append("")
    L.append("Caution: " + CAUTION)
    if D.planar:
        L.append(PLANAR_CAUTION)
    return "\n".join(L)


# ---------------------------------------------------------------------------
# the chain
# ---------------------------------------------------------------------------

def discover(data, *, value=None, x=None, y=None, z=None, domain=None, domain_value=None,
             hole=None, transform="auto", estimator="semivariogram", structures="auto",
             lag=None, n_lags=None, angular_tolerance=None, bandwidth=None, bootstrap=0,
             confidence=0.9, seed=0, n_jobs=1, scheduler=None, progress=False,
             kinds=None, sill="variance", threshold=None, fan_spacing=DEFAULT_FAN_SPACING,
             coarse_spacing=None, min_pairs=None, pair_budget=None, shared_ratios=False,
             bootstrap_method="block", **intake) -> Discovery:
    """Discover the 3D continuity of one grade in one domain.

    Parameters
    ----------
    data : str, path, pandas.DataFrame or SampleSet
        The sample table (or samples already read).
    value, x, y, z, domain, domain_value, hole : str, optional
        Columns (see :func:`anisotropy.samples.samples_from_frame`).
    transform : {"auto", "normal_score", "raw", "log", "indicator"}
        "auto" = normal scores when the grades are skewed (CV > 1 or skewness > 1).
    estimator : str
        One of ``anisotropy.estimators.ESTIMATORS``.
    structures : "auto" or int
        Number of nested structures (auto: 1..3 by the criterion of
        :func:`anisotropy.fitting.select_structures`, then a second, shorter
        structure when the samples' likelihood supports it). With two
        structures from the variogram (asked for or chosen), the likelihood
        that refines the frame is started both from that fit and from the
        one-structure answer with a shorter structure added; the higher
        likelihood wins (``diagnostics.frame_refinement``).
    lag, n_lags : optional
        Unit lag (m) and number of lags (default: from the spacing).
    angular_tolerance : float, optional
        Half-angle (degrees) of the fan's direction cones (default 15,
        widened to 30 for directions thin at 15).
    bandwidth : float, optional
        Fan bandwidth (m).
    bootstrap : int
        Bootstrap replicates (0 = none; needs ``anisotropy.uncertainty``).
    bootstrap_method : {"block", "model"}
        "block" (default): spatial blocks resampled by re-weighting the pair
        engine's block sums (no new pass over pairs), calibrated by the
        coverage study. "model": fields simulated at the data locations with
        the fitted model, a new pass over pairs and a refit per replicate —
        slower, for small to medium data and as a check on the block
        bootstrap; uncalibrated. The simulated fields are Gaussian in the
        analysed variable's units (normal scores, or raw/log values with the
        fitted sills), so no further transform is applied; indicators are
        refused.
    confidence : float
        Confidence of the bootstrap cones and intervals.
    seed : int
        Seed of every random step (random starts, bootstrap).
    n_jobs, scheduler : parallel settings of the bootstrap.
    progress : bool
        Progress messages on stderr.
    kinds : sequence of str, optional
        Structure kinds (default: the better of spherical and exponential).
    sill : "variance", "free" or float
        Total sill constraint: the variance of the transformed variable
        (default; 1 for normal scores and the correlogram), free, or a value.
    threshold : float, optional
        Indicator threshold (``transform="indicator"``; default the median).
    fan_spacing : float
        Degrees between fan directions.
    coarse_spacing : float, optional
        Degrees between the coarse direction cells of the fit (default: the
        pair engine's).
    min_pairs : float, optional
        Fewest pairs for a fit bin (default 10) and a fan lag (default 30).
    shared_ratios : bool
        Nested structures share one anisotropy shape (ratios), each with its own
        scale (default False: each structure has its own three ranges in the
        shared frame).
    pair_budget : float, optional
        With automatic lags, the maximum distance is shortened until the
        estimated pair count is within this (default ``PAIR_BUDGET``, 1.5e8).
    **intake
        Passed to the sample reader (missing_codes, below_detection, duplicates).

    Returns
    -------
    Discovery

    Raises
    ------
    InputError, InsufficientDataError
        Bad input, or too few samples or pairs for a 3D answer.
    FitError
        The fit failed.
    """
    run_options = {k: v for k, v in locals().items() if k != "data"}
    t0 = time.perf_counter()
    from anisotropy.explore import explore as _explore
    from anisotropy.fitting import (bins_from_sums, direction_ranges, ellipsoid_range,
                                    fit_ellipsoid, fit_nested, inertia_frame, linear_ellipsoid,
                                    select_structures)
    from anisotropy.geometry import fan_for_spacing

    choices: list = []
    warnings: list = []
    if bootstrap_method not in ("block", "model"):
        raise InputError(f"bootstrap method {bootstrap_method!r} is not known; use 'block' "
                         "(default, calibrated) or 'model' (simulation from the fitted model)")
    if bootstrap_method == "model" and transform == "indicator" and bootstrap:
        raise InputError("the model-based bootstrap simulates Gaussian fields, which indicators "
                         "are not; use the block bootstrap for indicator variograms")
    samples = _intake(data, value, x, y, z, domain, domain_value, hole, intake)
    warnings.extend(getattr(samples, "warnings", []) or [])
    if samples.n < MIN_SAMPLES:
        raise InsufficientDataError(
            f"{samples.source}: only {samples.n} usable samples"
            + (f" in domain {samples.domain}" if samples.domain is not None else "")
            + f"; a 3D continuity model needs at least {MIN_SAMPLES} (in practice a few "
              "hundred). Merge similar domains, add holes, or study the domain with fewer "
              "parameters by hand.")
    vals = np.asarray(samples.values, float)
    if np.nanstd(vals) == 0:
        raise InsufficientDataError(
            f"{samples.source}: every value of {samples.columns.get('value', 'the grade')} "
            f"is {vals[0]:g} in the {samples.n} samples used: there is no variability to "
            "study. Check the column and the domain selection.")
    try:
        exploration = _explore(samples)
    except AnisotropyError:
        raise
    spacing = exploration.spacing
    decl_w = getattr(exploration.declustering, "weights", None)
    planar = bool(getattr(samples, "planar", False))
    if planar:
        warnings.append("the samples lie in one plane: the result is azimuth-only "
                        "(directions within the plane); see the cautions")

    # transform
    relative = estimator == "pairwise_relative"
    if relative and transform not in ("auto", "raw"):
        raise InputError(
            f"the pairwise relative estimator divides each squared difference by the squared "
            f"mean of its pair, so it needs positive raw grades; the {transform} transform "
            "gives values near or below zero, which make it meaningless. Use --transform raw "
            "(or auto, which then picks raw) with --estimator pairwise_relative, or keep "
            f"--transform {transform} with another estimator.")
    tr = _choose_transform(vals, "raw" if relative else transform, decl_w, choices,
                           threshold=threshold)
    if relative and transform == "auto":
        choices[-1]["reason"] = ("the pairwise relative estimator needs positive raw grades "
                                 "(normal scores and logs change sign), so no transform")
    tv = np.asarray(tr.values, float)
    if np.nanstd(tv) == 0:
        raise InsufficientDataError("the transformed values are all equal (e.g. an indicator "
                                    "threshold outside the range of the grades): choose "
                                    "another threshold or transform")
    from anisotropy.estimators import ESTIMATORS

    if estimator not in ESTIMATORS:
        raise InputError(f"unknown estimator {estimator!r}; choose one of {', '.join(ESTIMATORS)}")
    var = float(np.var(tv))
    if isinstance(sill, (int, float)) and not isinstance(sill, bool):
        total = float(sill)
        choices.append({"choice": "total sill", "value": total, "reason": "as requested"})
    elif sill == "free" or estimator in ("pairwise_relative", "madogram"):
        total = None
        choices.append({"choice": "total sill", "value": "free",
                        "reason": "as requested" if sill == "free" else
                        f"the {estimator} has no variance to sum to"})
    elif estimator == "correlogram":
        total = 1.0
        choices.append({"choice": "total sill", "value": 1.0,
                        "reason": "the correlogram (1 - rho) rises to 1"})
    elif tr.kind == "normal_score":
        total = 1.0
        choices.append({"choice": "total sill", "value": 1.0,
                        "reason": "nugget and sills sum to 1, the variance of normal scores "
                                  "by construction (the plain variance of the scores is "
                                  f"{var:.3f} because the scores carry declustering weights)"})
    else:
        total = var
        choices.append({"choice": "total sill", "value": total,
                        "reason": "nugget and sills sum to the variance of the "
                                  + ("normal scores" if tr.kind == "normal_score" else
                                     f"{tr.kind} values")})
    units = ("normal-score units (variance 1)" if tr.kind == "normal_score" else
             {"raw": "grade units squared", "log": "log-grade units squared",
              "indicator": "indicator units (0-1 variance)"}.get(tr.kind, tr.kind))
    if estimator in ("correlogram",):
        units = "correlogram units (1 - rho)"
    elif estimator in ("pairwise_relative",):
        units = "pairwise relative units"
    elif estimator == "madogram":
        # half the mean absolute difference: the variable's own units, not squared
        units = {"normal_score": "normal-score units (madogram, not squared)",
                 "raw": "grade units (madogram, not squared)",
                 "log": "log-grade units (madogram, not squared)",
                 "indicator": "indicator units (madogram)"}.get(tr.kind, tr.kind)

    # lags
    lag_info = _choose_lags(samples, spacing, lag, n_lags, choices, pair_budget)
    lag_u, nl = lag_info["unit_lag"], lag_info["n_lags"]

    # pair engine
    _stage(progress, t0, f"pairs: unit lag {lag_u:.3g} m, {nl} lags, {samples.n} samples")
    from anisotropy import pairs as _pairs

    bw_kw = {}
    if bootstrap and int(bootstrap) > 0:
        try:
            from anisotropy.uncertainty import engine_block_side
        except ImportError:  # pragma: no cover - uncertainty not installed
            pass
        else:
            side = float(engine_block_side(samples.coords, max_side=lag_info["max_distance"]))
            bw_kw["blocks"] = side
            choices.append({"choice": "bootstrap blocks", "value": side,
                            "reason": "block side giving about 100 occupied blocks, so that "
                                      "the block bootstrap has room to resample "
                                      "(anisotropy.uncertainty.engine_block_side)"})
    if coarse_spacing is not None:
        coarse = fan_for_spacing(coarse_spacing)
    else:
        from anisotropy.pairs._lattice import DEFAULT_COARSE_SPACING
        coarse = fan_for_spacing(DEFAULT_COARSE_SPACING)
    n_est = lag_info.pop("pairs_estimated", None)
    # only the chosen estimator's channels: everything downstream (fits, fan, maps, the
    # bootstrap's block sums, the report) reads that estimator, and the pass is cheaper
    volume = _pairs.build_volume(samples.coords, tv, lag=lag_u, n_lags=nl,
                                 coarse_directions=coarse, progress=progress,
                                 channels=estimator, block_channels=estimator,
                                 map_channels=estimator, **bw_kw)
    coarse = np.asarray(volume.coarse_directions, float)
    n_pairs = int(volume.n_pairs)
    if n_pairs < 100:
        raise InsufficientDataError(
            f"{samples.source}: only {n_pairs} pairs of samples within "
            f"{lag_info['max_distance']:.3g} m; a 3D variogram needs thousands. Use a longer "
            "lag (--lag) or more lags (--n-lags), or add samples.")

    # bins and information weights
    mp_bin = 10 if min_pairs is None else float(min_pairs)
    mp_fan = 30 if min_pairs is None else float(min_pairs)
    csums = volume.coarse_sums()
    bins = bins_from_sums(csums, coarse, estimator=estimator, min_pairs=mp_bin)
    if bins.n < 12:
        raise InsufficientDataError(
            f"{samples.source}: only {bins.n} lag-direction bins have {mp_bin:g} pairs or more "
            f"({n_pairs} pairs in all): too few for a 3D answer, which needs pairs in many "
            "directions. Add samples or holes in other directions, widen the lag, or fit "
            "a 2D or omnidirectional model by hand.")
    holes = samples.holes
    ratio = np.ones(csums.shape[:2])
    downhole = None
    fixed_nugget = None
    if holes is not None and spacing.n_holes and spacing.n_holes > 1:
        wh = _within_hole_pairs(samples.coords, holes, lag_u, nl, coarse)
        within, within_h, dh = wh
        N = csums[..., 0]
        with np.errstate(invalid="ignore", divide="ignore"):
            eff = np.maximum(N - within, 0.0) + within_h
            ratio = np.where(N > 0, eff / N, 1.0)
        choices.append({"choice": "drill-hole weights", "value": "between-hole pairs + holes",
                        "reason": f"{int(within.sum()):,} of {n_pairs:,} pairs lie inside one "
                                  "hole; each bin counts its between-hole pairs plus one per "
                                  "hole contributing within-hole pairs, so the along-hole "
                                  "direction does not dominate the fit"})
        composite = spacing.down_hole
        nug, pts = _downhole_nugget(dh, tv, composite, total, estimator)
        downhole = {"composite": composite, "points": pts, "nugget": nug}
        if nug is not None and composite and composite < 0.5 * lag_u:
            fixed_nugget = nug
            choices.append({"choice": "nugget", "value": nug,
                            "reason": f"from the first down-hole lags ({composite:.3g} m "
                                      "composites), extrapolated to zero and held in the fit "
                                      "(the joint fit's shortest lag is "
                                      f"{lag_u:.3g} m)"})
    bins.weight = _information_weight(bins, ratio)
    choices.append({"choice": "bin weights", "value": "pairs / distance",
                    "reason": "the pairs of a 3D lag bin grow with the square of the distance, "
                              "so bins near the sill would outvote the short lags that carry "
                              "the shape; weights are pair counts per metre of lag, inside the "
                              "Cressie (1985) form"})
    if fixed_nugget is None:
        choices.append({"choice": "nugget", "value": "fitted",
                        "reason": "fitted jointly, pinned by the shortest lags of the volume"})

    # kind and isotropic start
    if kinds is not None:
        kinds = tuple(kinds)
        kind_list = [kinds[0]]
    else:
        kind_list = ["spherical", "exponential"]
    iso = _iso_fit(bins, total, kind_list[0], fixed_nugget)
    nug0 = iso.nugget if fixed_nugget is None else fixed_nugget
    sill0 = float(np.sum(iso.sills))

    # fan of directions and per-direction ranges
    _stage(progress, t0, "ranges along the direction fan")
    from anisotropy.directional import variogram_fan

    fan_dirs = fan_for_spacing(fan_spacing)
    tol = DEFAULT_ANGULAR_TOLERANCE if angular_tolerance is None else float(angular_tolerance)
    fan = variogram_fan(volume, fan_dirs, angular_tolerance=tol, bandwidth=bandwidth,
                        estimator=estimator)
    choices.append({"choice": "direction fan", "value": f"{len(fan_dirs)} directions",
                    "reason": f"Fibonacci lattice on the lower hemisphere (Gonzalez 2010), "
                              f"about {fan_spacing:g} degrees apart"})
    choices.append({"choice": "angular tolerance", "value": tol,
                    "reason": "as requested" if angular_tolerance is not None else
                    "common practice (15-22.5 degrees); directions thin at this tolerance "
                    f"are re-read at {WIDE_ANGULAR_TOLERANCE:g} degrees"})
    # copies: thin directions are re-read at a wider tolerance below, and the fan kept on the
    # result (``fan_``) must stay the fan at the stated tolerance
    dist, gval, npairs = (np.array(fan.distance, float), np.array(fan.value, float),
                          np.array(fan.pairs, float))
    dr = direction_ranges(fan_dirs, dist, gval, npairs, nugget=nug0, sill=sill0,
                          kind=kind_list[0], min_pairs=mp_fan)
    widened = 0
    if angular_tolerance is None and dr.n_thin > 0:
        thin = np.array([f == "thin" for f in dr.flag])
        fan_w = variogram_fan(volume, fan_dirs[thin], angular_tolerance=WIDE_ANGULAR_TOLERANCE,
                              bandwidth=bandwidth, estimator=estimator)
        dist[thin] = fan_w.distance
        gval[thin] = fan_w.value
        npairs[thin] = fan_w.pairs
        widened = int(thin.sum())
        dr = direction_ranges(fan_dirs, dist, gval, npairs, nugget=nug0, sill=sill0,
                              kind=kind_list[0], min_pairs=mp_fan)
    usable = dr.usable
    if usable.sum() < 6 and not planar:
        warnings.append(f"only {int(usable.sum())} fan directions have enough pairs for a "
                        "range; the ellipsoid start is weak and the joint fit carries the "
                        "orientation alone")

    # starting frames
    starts = []
    ell = None
    try:
        ell = fit_ellipsoid(fan_dirs[usable], dr.range[usable], dr.reliability[usable],
                            seed=seed, n_starts=4)
        starts.append(("ellipsoid of directional ranges", ell.frame))
    except ValueError:
        ell = None
    try:
        lin = linear_ellipsoid(fan_dirs[usable], dr.range[usable])
        starts.append(("linear ellipsoid (baseline)", lin.frame))
    except ValueError:
        lin = None
    in_frame, _ = inertia_frame(bins.lags, bins.gamma, nug0 + sill0, fraction=0.6)
    starts.append(("inertia axes of the low-variability region", in_frame))
    from scipy.spatial.transform import Rotation

    rng = np.random.default_rng(seed)
    for R in Rotation.random(N_RANDOM_STARTS, random_state=rng).as_matrix():
        starts.append(("seeded random rotation", R))

    def start_ranges(F):
        if ell is not None:
            r = ellipsoid_range(F.T, ell.frame, ell.ranges)
        else:
            r = np.full(3, iso.ranges[0].mean())
        return np.clip(r, 0.5 * lag_u, 3 * lag_info["max_distance"])

    tried = []
    lo_r, hi_r = 0.05 * lag_u, 20.0 * lag_info["max_distance"]
    common = dict(fixed_nugget=fixed_nugget, total_sill=total, min_range=lo_r, max_range=hi_r,
                  planar=planar, make_model=False)
    # screening: every start, one structure, a loose tolerance
    _stage(progress, t0, f"fitting the orientation from {len(starts)} starting frames")
    screened = []
    for name, F in starts:
        F = np.asarray(F, float)
        r0 = start_ranges(F)
        if planar:
            F = _planar_start(F)
        f = fit_nested(bins, (F, nug0, [sill0], [r0], (kind_list[0],)), ftol=1e-4, outer=1,
                       max_nfev=300, **common)
        tried.append({"start": name, "kind": kind_list[0], "objective": f.objective})
        screened.append(f)
    screened.sort(key=lambda f: f.objective)
    # polish the two best, then try the other kinds from the best frame
    best = None
    for f0 in screened[:3]:
        f = fit_nested(bins, (f0.frame, f0.nugget, f0.sills, f0.ranges, f0.kinds), **common)
        if best is None or f.objective < best.objective:
            best = f
    # swapped-axis restarts: the usual local optima exchange two axes (major and
    # semi-major above all); start again from the best frame with each pair of
    # axes exchanged and keep what fits better
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
    kind_table = [{"kind": best.kinds[0], "wrss": best.wrss}]
    for kind in kind_list[1:]:
        f = fit_nested(bins, (best.frame, best.nugget, best.sills, best.ranges, (kind,)),
                       **common)
        kind_table.append({"kind": kind, "wrss": f.wrss})
        if f.wrss < best.wrss:
            best = f
    # nested structures
    _stage(progress, t0, "nested structures")
    n_str = None if structures in ("auto", None) else int(structures)
    if n_str is not None and not 1 <= n_str <= 3:
        raise InputError(f"structures must be 1, 2, 3 or 'auto'; got {structures!r}")
    sel = select_structures(bins, (best.frame, best.nugget, best.sills, best.ranges, best.kinds),
                            max_structures=3, n_structures=n_str,
                            kinds=kinds if kinds is not None else best.kinds,
                            total_sill=total, fixed_nugget=fixed_nugget, min_range=lo_r,
                            max_range=hi_r, planar=planar, ftol=1e-6,
                            shared_ratios=shared_ratios)
    fit = sel.best
    if (LIKELIHOOD_REFINEMENT and not planar and tr.kind != "indicator"
            and estimator in ("semivariogram", "robust")):
        fit = _refine_frame(fit, bins, samples.coords, tv, seed, common, choices, warnings,
                            add_structure=n_str is None, one_structure=best)
    nest = (fit.info.get("likelihood") or {}).get("nested") or {}
    if n_str is None and nest.get("kept"):
        supported = ("the variogram bins' BIC kept one structure; the nearest-neighbour "
                     "likelihood supports a second, shorter one (log-likelihood gain "
                     f"{nest['gain']:.1f} against a BIC penalty of {nest['bic_penalty']:.1f})")
        if nest.get("structure_added"):
            why = f"{supported}, fitted to the variogram with the refined frame held"
        else:
            why = (f"{supported} and its frame is used, but the second structure is not "
                   f"reported: {nest['not_added']}")
        choices.append({"choice": "structures", "value": len(fit.sills), "reason": why})
    elif n_str is None:
        choices.append({"choice": "structures", "value": len(fit.sills),
                        "reason": "chosen by BIC with a minimum gain (see diagnostics."
                                  "selection)"})
    else:
        choices.append({"choice": "structures", "value": n_str, "reason": "as requested"})
    model = _ordered_model(fit, planar=planar)
    frame = np.asarray(model.frame, float)

    # final direction ranges under the fitted nugget and sill (for the report)
    longest = max(model.structures, key=lambda s: s.ranges[0])
    dr_final = direction_ranges(fan_dirs, dist, gval, npairs, nugget=model.nugget,
                                sill=float(sum(s.sill for s in model.structures)),
                                kind=longest.kind, min_pairs=mp_fan)

    # residuals of the final model along each fan direction the geologist sees
    tol_dir = np.full(len(fan_dirs), tol)
    if widened:
        tol_dir[thin] = WIDE_ANGULAR_TOLERANCE
    res_dir = _residuals_by_direction(model, fan_dirs, dist, gval, npairs, min_pairs=mp_fan,
                                      tolerance=tol_dir, flags=dr_final.flag)

    unresolved, unresolved_ranges = _resolution_warnings(bins, model, frame, spacing,
                                                         holes is not None, warnings, mp_bin)
    if planar:  # the pole of one bench is assumed, not resolved, and so is its range
        unresolved = sorted(set(unresolved) | {"minor"})
        unresolved_ranges = sorted(set(unresolved_ranges) | {"minor"})
    major_r = longest.ranges[0]
    if major_r > lag_info["max_distance"]:
        warnings.append(f"the major range ({major_r:.3g} m) is longer than the longest lag "
                        f"({lag_info['max_distance']:.3g} m): it is an extrapolation; a larger "
                        "domain or longer lags (--n-lags) would show whether the variogram "
                        "levels off")
    if tr.kind == "indicator" and estimator in ("robust", "madogram", "pairwise_relative"):
        warnings.append(f"the {estimator} estimator is not meaningful on 0/1 indicators "
                        "(it is built for continuous grades); prefer the semivariogram")
    for k, st_ in enumerate(model.structures, 1):
        if max(st_.ranges) >= 0.99 * hi_r:
            warnings.append(f"structure {k}'s range reached the search limit ({hi_r:.3g} m): "
                            "the fit could not find where the variogram levels off; treat "
                            "this model as unreliable and check the experimental variograms")
    if dr.n_thin:
        warnings.append(f"{dr.n_thin} of {len(fan_dirs)} fan directions have too few pairs "
                        f"for a range even at {WIDE_ANGULAR_TOLERANCE:g} degrees; they are "
                        "marked thin and not used")
    if tr.kind == "normal_score" and estimator in ("semivariogram", "robust"):
        warnings.append("sills are in normal-score units (total 1); back-transformed grade "
                        "variograms differ in shape near the sill")

    seconds = time.perf_counter() - t0
    diagnostics = {
        "pairs": n_pairs, "pairs_estimated": n_est,
        "directions": {"n": int(len(fan_dirs)), "thin": int(dr.n_thin), "widened": widened,
                       "angular_tolerance": tol, "usable": int(usable.sum())},
        "bins": bins.to_dict(),
        "units": units,
        "unresolved_axes": unresolved,
        "unresolved_ranges": unresolved_ranges,
        "selection": sel.to_dict(),
        "frame_refinement": fit.info.get("likelihood"),
        "starts": tried,
        "kinds": kind_table,
        "ellipsoid": None if ell is None else ell.to_dict(),
        "direction_ranges": dr_final.to_dict(),
        "residuals_by_direction": res_dir,
        "downhole": downhole,
        "volume": {"seconds": float(getattr(volume, "seconds", 0.0)),
                   "memory_bytes": int(getattr(volume, "memory_bytes", 0) or 0),
                   "coarse_directions": int(coarse.shape[0])},
        "seconds": seconds,
    }
    D = Discovery(model=model, frame=frame, samples=samples, exploration=exploration,
                  transform=tr, lags=dict(lag_info), uncertainty=None, diagnostics=diagnostics,
                  warnings=warnings, choices=choices, estimator=estimator, planar=planar,
                  volume_=volume, fan_=fan, bins_=bins, ranges_=dr_final, ellipsoid_=ell,
                  fit_=fit)
    D._refit_state = {"estimator": estimator, "min_pairs": mp_bin, "weight_ratio": ratio,
                      "fixed_nugget": fixed_nugget, "total_sill": total,
                      # a refined fit held its frame: replicates free it (3 more parameters)
                      "max_nfev": 60 * (fit.n_params + 1
                                        + (3 if "frame_correction" in fit.info else 0)),
                      "min_range": lo_r,
                      "max_range": hi_r, "planar": planar,
                      "shared_ratios": shared_ratios,
                      "frame_correction": fit.info.get("frame_correction")}
    from anisotropy.audit import run_record
    D.run = run_record(getattr(samples, "source", None), run_options, seed)

    if bootstrap and int(bootstrap) > 0:
        try:
            from anisotropy.uncertainty import block_bootstrap
        except ImportError:
            warnings.append("bootstrap requested but the uncertainty module is not available; "
                            "no bands computed")
        else:
            if bootstrap_method == "model":
                from anisotropy.uncertainty import model_bootstrap

                D.uncertainty = model_bootstrap(samples.coords, model, D.refit_function(),
                                                volume=volume, n_replicates=int(bootstrap),
                                                confidence=confidence, seed=seed,
                                                n_jobs=n_jobs, scheduler=scheduler,
                                                progress=progress)
            else:
                D.uncertainty = block_bootstrap(volume, D.refit_function(), model,
                                                n_replicates=int(bootstrap),
                                                confidence=confidence, seed=seed,
                                                n_jobs=n_jobs, scheduler=scheduler,
                                                progress=progress, estimator=estimator)
                used = getattr(D.uncertainty, "blocks", None) or {}
                for c in choices:  # record the block side the bootstrap used (issue 17)
                    if c.get("choice") == "bootstrap blocks" and used.get("side"):
                        c.update(value=float(max(used["side"])), engine_block_side=c["value"],
                                 reason=f"resampled blocks: {used.get('rule')}")
        D.diagnostics["seconds"] = time.perf_counter() - t0
    return D


def _refine_frame(fit, bins, coords, values, seed, common, choices, warnings,
                  add_structure=False, one_structure=None):
    """The variogram fit's frame refined by the nearest-neighbour likelihood.

    The ranges, nugget and sills are then refitted to the variogram bins with
    the refined frame held, so that the model stays in the variogram's terms.
    When the variogram fit has one structure, the refined one-structure model
    is refined again with a second, shorter structure added (see
    ``LIKELIHOOD_NESTED_SHORT``); its frame is kept when its likelihood gain
    passes the BIC penalty. Both likelihoods use the same samples and order;
    their neighbour sets are chosen in each start's metric, so the comparison
    is between two approximations of nearly the same conditioning. With
    ``add_structure`` (the number of structures was left to the engine) the
    kept nested model is also what is fitted to the variogram, from the
    likelihood's parameters with its frame held, unless the variogram then
    gives either structure less than ``LIKELIHOOD_MIN_SHARE`` of the sill or
    orders the frame's columns differently from the likelihood (the longest
    structure's longest range on another column: the refit traded ranges
    between the structures, and the axes the frame was fitted for would be
    relabelled); the reason is recorded in ``nested["not_added"]``.

    When the variogram fit has two structures and ``one_structure`` (the best
    one-structure variogram fit) is given, the two-structure likelihood is
    also maximised from a second start, built as above: the one-structure
    likelihood's answer with a shorter structure added. The variogram's
    two-structure fit can sit in a poor basin (a long structure with little
    sill running to the range limit, which on one issue-4 realisation turned
    the major axis 73 degrees); the start with the higher likelihood is kept
    and both are recorded in ``two_structure_starts``.
    """
    from anisotropy.fitting import fit_nested
    from anisotropy.fitting.likelihood import refine_frame_likelihood

    if len(coords) < 100:  # too few samples for the likelihood to add anything
        return fit
    kw = dict(common)
    kw["make_model"] = True
    lk_kw = dict(seed=seed, n_neighbours=LIKELIHOOD_NEIGHBOURS,
                 max_samples=LIKELIHOOD_MAX_SAMPLES)
    try:
        lk = refine_frame_likelihood(coords, values, fit.frame, fit.ranges, fit.nugget,
                                     fit.sills, fit.kinds, ftol=LIKELIHOOD_FTOL, **lk_kw)
        f = fit_nested(bins, (lk.frame, fit.nugget, fit.sills, fit.ranges, fit.kinds),
                       fixed_frame=lk.frame, **kw)
        nested = None
        starts = None

        def add_shorter(f1, kinds2):
            # the one-structure fit with a shorter structure added, half the sill each
            r1 = np.atleast_2d(np.asarray(f1.ranges, float))[0]
            s1 = float(np.asarray(f1.sills, float)[0])
            return refine_frame_likelihood(coords, values, f1.frame,
                                           [LIKELIHOOD_NESTED_SHORT * r1, r1], f1.nugget,
                                           [0.5 * s1, 0.5 * s1], kinds2,
                                           ftol=LIKELIHOOD_NESTED_FTOL, **lk_kw)

        if len(f.sills) == 2 and one_structure is not None:
            o = one_structure
            lk1 = refine_frame_likelihood(coords, values, o.frame, o.ranges, o.nugget, o.sills,
                                          o.kinds, ftol=LIKELIHOOD_FTOL, **lk_kw)
            f1 = fit_nested(bins, (lk1.frame, o.nugget, o.sills, o.ranges, o.kinds),
                            fixed_frame=lk1.frame, **kw)
            alt = add_shorter(f1, tuple(fit.kinds))
            starts = {"variogram_fit": lk.negloglik, "one_structure_plus_shorter":
                      alt.negloglik, "chosen": "variogram_fit"}
            if alt.negloglik < lk.negloglik:
                starts["chosen"] = "one_structure_plus_shorter"
                lk = alt
                f = fit_nested(bins, _likelihood_model(lk, f, fit.kinds),
                               fixed_frame=lk.frame, **kw)
        held = None
        if len(f.sills) > 1 and _axis_order(f.ranges) != _axis_order(lk.ranges):
            # the variogram refit traded ranges between the structures and relabelled
            # the axes the likelihood's frame was fitted for: the likelihood's own
            # ranges and shares are reported instead (scaled to the refit's total sill)
            tot = float(f.nugget + np.sum(f.sills))
            f = fit_nested(bins, _likelihood_model(lk, f, f.kinds), fixed_frame=lk.frame,
                           optimise=False, **kw)
            held = (f"the variogram refit with the likelihood's frame held {_RELABELLED}; "
                    "the likelihood's ranges and sill shares are reported")
            warnings.append(f"{held} (scaled to a total sill of {tot:.3g}); compare them "
                            "with the experimental variograms")
        if len(f.sills) == 1:
            lk2 = add_shorter(f, (f.kinds[0],) * 2)
            # BIC (Schwarz 1978): four more parameters (three log ranges, one share)
            penalty = 0.5 * 4 * np.log(lk2.n_samples)
            gain = lk.negloglik - lk2.negloglik
            polished = False
            if gain > penalty and LIKELIHOOD_FTOL is not None:
                # the first search stopped at a loose tolerance: finish it (from where it
                # stopped, SciPy's default tolerance) before the comparison, so that what
                # it left undone is not counted as the second structure's gain
                lk = refine_frame_likelihood(coords, values, lk.frame, lk.ranges,
                                             lk.nugget_share, lk.shares, fit.kinds, **lk_kw)
                f = fit_nested(bins, (lk.frame, fit.nugget, fit.sills, fit.ranges, fit.kinds),
                               fixed_frame=lk.frame, **kw)
                gain = lk.negloglik - lk2.negloglik
                polished = True
            kept = bool(gain > penalty)
            nested = {"negloglik": lk2.negloglik, "negloglik_one_structure": lk.negloglik,
                      "gain": gain, "bic_penalty": penalty, "kept": kept,
                      "one_structure_polished": polished,
                      "shares": [float(x) for x in lk2.shares],
                      "nugget_share": float(lk2.nugget_share),
                      "ranges": np.asarray(lk2.ranges, float).tolist(),
                      "structure_added": False}
            if kept:
                f = fit_nested(bins, (lk2.frame, f.nugget, f.sills, f.ranges, f.kinds),
                               fixed_frame=lk2.frame, **kw)
                if add_structure:
                    tot = float(f.nugget + np.sum(f.sills))
                    two = fit_nested(bins, _likelihood_model(lk2, f, (f.kinds[0],) * 2),
                                     fixed_frame=lk2.frame, **kw)
                    if np.min(two.sills) < LIKELIHOOD_MIN_SHARE * tot:
                        nested["not_added"] = (f"a structure kept under "
                                               f"{LIKELIHOOD_MIN_SHARE:.0%} of the sill")
                    elif _axis_order(two.ranges) != _axis_order(lk2.ranges):
                        # the variogram traded ranges between the two structures
                        # and relabelled the axes the likelihood's frame was fitted for
                        nested["not_added"] = ("the variogram refit with the frame held "
                                               + _RELABELLED)
                    else:
                        f = two
                        nested["structure_added"] = True
                lk = lk2
    except (FitError, ValueError) as exc:
        warnings.append(f"the likelihood refinement of the frame failed ({exc}); the "
                        "variogram fit's frame is kept")
        return fit
    cosines = np.abs(np.sum(np.asarray(lk.frame) * np.asarray(fit.frame), axis=0))
    turn = float(np.degrees(np.arccos(np.clip(cosines.min(), 0.0, 1.0))))
    model_text = ("its model carrying a second, shorter structure besides the variogram's "
                  "one (kept by BIC)" if nested and nested["kept"] else
                  "with the variogram's structures")
    choices.append({"choice": "frame refinement", "value": "nearest-neighbour likelihood",
                    "reason": f"the variogram fit's frame turned by {turn:.1f} degrees to the "
                              f"maximum of a Vecchia (1988) likelihood on {lk.n_samples} "
                              f"samples, {lk.n_neighbours} neighbours each, {model_text}; "
                              + ("the likelihood's ranges and sill shares kept: the variogram "
                                 "refit with that frame held relabelled the axes" if held else
                                 "ranges and sills refitted to the variogram with that frame "
                                 "held")})
    f.info["likelihood"] = {"turn_degrees": turn, "negloglik": lk.negloglik,
                            "negloglik_start": lk.negloglik_start,
                            "n_samples": lk.n_samples, "n_neighbours": lk.n_neighbours,
                            "variogram_objective_before": fit.objective,
                            "structures_in_likelihood": len(lk.shares),
                            "axis_order_agrees": _axis_order(f.ranges) == _axis_order(lk.ranges),
                            "ranges": np.asarray(lk.ranges, float).tolist(),
                            "shares": [float(x) for x in lk.shares],
                            "nugget_share": float(lk.nugget_share),
                            "nested": nested, "two_structure_starts": starts,
                            "likelihood_model_reported": held}
    f.info["frame_correction"] = np.asarray(lk.frame, float) @ np.asarray(fit.frame, float).T
    return f


#: What a variogram refit did when it moved the longest range to another column.
_RELABELLED = "changed which axis is the major, semi-major or minor"


def _likelihood_model(lk, fit, kinds):
    """A likelihood fit's model as a ``fit_nested`` start, scaled to ``fit``'s total sill."""
    tot = float(fit.nugget + np.sum(fit.sills))
    return (lk.frame, tot * lk.nugget_share, tot * np.asarray(lk.shares, float),
            np.asarray(lk.ranges, float), tuple(kinds))


def _axis_order(ranges):
    """Frame columns ordered from longest to shortest range of the longest structure."""
    r = np.atleast_2d(np.asarray(ranges, float))
    j = int(np.argmax(r.max(axis=1)))
    return tuple(int(i) for i in np.argsort(-r[j], kind="stable"))


def _planar_start(F):
    """Nearest frame with a vertical minor axis (planar data)."""
    from anisotropy.geometry import frame_from_axes

    major = np.asarray(F[:, 0], float).copy()
    major[2] = 0.0
    if np.linalg.norm(major) < 1e-9:
        major = np.array([1.0, 0.0, 0.0])
    return frame_from_axes(major, minor=np.array([0.0, 0.0, -1.0]))
