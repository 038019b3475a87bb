"""The discovery chain for one domain and variable: ``discover(data, value=...)``.

The chain runs as typed stages (:mod:`anisotropy.discovery`), in one
direction and without going back; each stage returns a small frozen record
carrying its own choices and warnings:

1. :class:`~anisotropy.discovery.DiscoverParams` - every setting, checked once;
2. ``read`` and ``prepare`` - intake (:mod:`anisotropy.samples`) and
   exploration (:mod:`anisotropy.exploration`) -> ``Prepared``;
3. ``choose_transform`` (normal scores by default for skewed grades) and
   ``choose_sill`` -> ``TransformChoice``, ``SillChoice``;
4. ``choose_lags`` (from the nominal spacing, each choice recorded with its
   reason and overridable) -> ``LagChoice``;
5. ``build_volume`` - one pass of the pair engine into the lag-vector volume
   -> ``PairVolume``; without blocks whether or not a bootstrap follows, so
   that the answer does not depend on it (the bootstrap makes its own pass
   with blocks, ``Discovery.volume_with_blocks``);
6. ``weighted_bins`` - one fit bin per distance class and coarse direction
   cell, with drill-hole information weights and the down-hole nugget ->
   ``WeightedBins``;
7. ``fan_ranges`` - the fan of directional variograms (about 5 degrees
   apart), a range per direction under the shared nugget and sill, thin
   directions marked, and the robust ellipsoid through them -> ``FanRanges``;
8. ``starting_frames`` and ``search_orientation`` - the joint fit over all
   bins from several starts, the best kept -> ``Start`` records, ``Search``;
9. ``choose_structures`` - 1..3 structures by a penalised criterion, then
   the frame refined by the samples' nearest-neighbour likelihood
   (:mod:`anisotropy.fitting.refine`) -> ``Refinement``;
10. ``diagnose`` - the model against the fan, what the sampling resolves,
    the cautions -> ``Diagnostics``;

and the :class:`~anisotropy.discovery.Discovery` result (schema
``anisotropy.discovery/1``) composed of these records, with
:meth:`~anisotropy.discovery.Discovery.bootstrap` for the bands.
"""

from __future__ import annotations

import dataclasses
import sys
import time

from threadpoolctl import threadpool_limits

from anisotropy.audit import run_record
from anisotropy.constants import AXES
from anisotropy.fitting.continuity import check_continuity
from anisotropy.fitting.resolution import hole_axes
from anisotropy.discovery import (CAUTION, PLANAR_CAUTION, SCHEMA, DiscoverParams, Discovery,
                                  FitSettings, RefitState, build_volume, choose_lags,
                                  choose_sill, choose_structures, choose_transform, diagnose,
                                  fan_ranges, prepare, read, refinement_applies,
                                  search_orientation, starting_frames, weighted_bins,
                                  with_bootstrap)
from anisotropy.discovery.params import DEFAULT_FAN_SPACING

__all__ = ["discover", "run_discovery", "Discovery", "DiscoverParams", "SCHEMA", "CAUTION",
           "PLANAR_CAUTION"]


class _Clock:
    """Runs the stages, times each, and prints the progress lines."""

    def __init__(self, progress):
        self.progress, self.t0, self.seconds = progress, time.perf_counter(), {}

    def __call__(self, name, stage, *args, **kwargs):
        t = time.perf_counter()
        out = stage(*args, **kwargs)
        self.seconds[name] = time.perf_counter() - t
        return out

    def say(self, text):
        """One progress line on stderr (``progress=True``) or to a callable, with the time."""
        if not self.progress:
            return
        line = f"discover: {text} [{time.perf_counter() - self.t0:.1f} s]"
        if callable(self.progress):
            self.progress(line)
        else:
            print(line, file=sys.stderr, flush=True)

    def total(self) -> dict:
        return dict(self.seconds, total=time.perf_counter() - self.t0)


def discover(data, *, value=None, x=None, y=None, z=None, domain=None, domain_value=None,
             hole=None, transform="auto", estimator="semivariogram", structures="auto",
             lag=None, n_lags=None, angular_tolerance=None, bandwidth=None, bootstrap=0,
             confidence=0.9, seed=0, n_jobs=1, scheduler=None, progress=False,
             kinds=None, sill="variance", threshold=None, fan_spacing=DEFAULT_FAN_SPACING,
             coarse_spacing=None, min_pairs=None, pair_budget=None, shared_ratios=False,
             bootstrap_method="block", top_cut=None, top_cut_mode="cap",
             **intake) -> Discovery:
    """Discover the 3D continuity of one grade in one domain.

    Parameters
    ----------
    data : str, path, pandas.DataFrame or SampleSet
        The sample table (or samples already read).
    value, x, y, z, domain, domain_value, hole : str, optional
        Columns (see :func:`anisotropy.samples.intake.samples_from_frame`).
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
        Bootstrap replicates (0 = none): :meth:`Discovery.bootstrap` is run and
        its result kept as ``uncertainty``. The volume's blocks are sized for
        a bootstrap either way, so one can follow later.
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
    top_cut : float or "auto", optional
        Top-cut grade applied to the samples before anything else, or
        "auto" for the exploration's suggestion (see
        :func:`anisotropy.transform.apply_top_cut`); counted in
        ``input.changed``/``dropped`` and in ``transform.top_cut``.
    top_cut_mode : {"cap", "exclude"}
        Cap grades above the top-cut (default), or leave those samples out.
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
    p = DiscoverParams.from_kwargs(
        value=value, x=x, y=y, z=z, domain=domain, domain_value=domain_value, hole=hole,
        transform=transform, estimator=estimator, structures=structures, lag=lag,
        n_lags=n_lags, angular_tolerance=angular_tolerance, bandwidth=bandwidth,
        bootstrap=bootstrap, confidence=confidence, seed=seed, n_jobs=n_jobs,
        scheduler=scheduler, progress=progress, kinds=kinds, sill=sill, threshold=threshold,
        fan_spacing=fan_spacing, coarse_spacing=coarse_spacing, min_pairs=min_pairs,
        pair_budget=pair_budget, shared_ratios=shared_ratios,
        bootstrap_method=bootstrap_method, top_cut=top_cut, top_cut_mode=top_cut_mode,
        **intake)
    # BLAS on one thread: a multi-threaded BLAS adds in an order set by its thread count,
    # and on a flat likelihood those last bits moved the demo blanket's ranges by 20 %
    # between a direct call and a batch worker (benchmarks/RESULTS.md)
    with threadpool_limits(limits=1):
        return run_discovery(data, p)


@dataclasses.dataclass(frozen=True)
class _Measured:
    """The stages up to the fan: what the samples and their pairs show (steps 2-7)."""

    samples: object
    prep: object
    tc: object
    sc: object
    lc: object
    pv: object
    wb: object
    fr: object


@dataclasses.dataclass(frozen=True)
class _Fitted:
    """The stages from the starting frames to the diagnosis (steps 8-10)."""

    fs: FitSettings
    starts: tuple
    search: object
    ref: object
    dg: object


def run_discovery(data, p: DiscoverParams) -> Discovery:
    """The discovery chain for settings already checked (see :func:`discover`)."""
    t = _Clock(p.progress)
    m = _measure(data, p, t)
    f = _fit(m, p, t)
    records = (m.prep, m.tc, m.sc, m.lc, m.pv, m.wb, m.fr, f.search, f.ref, f.dg)
    D = Discovery(params=p, prepared=m.prep, transform_choice=m.tc, sill_choice=m.sc,
                  lag_choice=m.lc, pair_volume=m.pv, weighted=m.wb, fan_ranges=m.fr,
                  starts=f.starts, search=f.search, refinement=f.ref, diagnosis=f.dg,
                  refit=RefitState.of(f.ref, m.wb, f.fs, estimator=p.estimator,
                                      shared_ratios=p.shared_ratios),
                  warnings=[w for r in records for w in r.warnings],
                  choices=[dict(c) for r in records for c in r.choices], seconds=t.total())
    D.run = run_record(m.samples.source, _options(p), p.seed)
    if p.n_bootstrap:
        _add_bootstrap(D, p, t)
    return D


def _measure(data, p: DiscoverParams, t) -> _Measured:
    """Read, prepare, transform, lags, the pair volume, its fit bins and the fan."""
    samples = t("read", read, data, p)
    prep = t("prepare", prepare, samples, top_cut=p.top_cut, top_cut_mode=p.top_cut_mode)
    samples = prep.samples   # after the top-cut (exclusion leaves samples out)
    tc = t("transform", choose_transform, prep.values, transform=p.transform,
           estimator=p.estimator, weights=prep.declustering_weights, threshold=p.threshold)
    sc = t("sill", choose_sill, tc.values, kind=tc.kind, estimator=p.estimator, sill=p.sill)
    lc = t("lags", choose_lags, samples.coords, prep.spacing, has_holes=prep.has_holes,
           lag=p.lag, n_lags=p.n_lags, pair_budget=p.pair_budget)
    t.say(f"pairs: unit lag {lc.unit_lag:.3g} m, {lc.n_lags} lags, {samples.n} samples")
    pv = t("volume", build_volume, samples.coords, tc.values, lc, estimator=p.estimator,
           coarse_spacing=p.coarse_spacing, progress=p.progress, source=samples.source,
           # never blocks here: a pass that fills block channels adds the fine sums in
           # another order, and on drill holes the frame choice carried those last bits
           # into another answer (16 of 120 realisations; benchmarks/RESULTS.md)
           blocks=False)
    wb = t("bins", weighted_bins, pv, samples.coords, tc.values, holes=samples.holes,
           spacing=prep.spacing, lags=lc, total=sc.total, estimator=p.estimator,
           min_pairs=p.min_pairs_bin, source=samples.source)
    t.say("ranges along the direction fan")
    fr = t("fan", fan_ranges, pv.volume, wb.bins, total=sc.total, fixed_nugget=wb.fixed_nugget,
           kind=p.kind_list[0], fan_spacing=p.fan_spacing,
           angular_tolerance=p.angular_tolerance, bandwidth=p.bandwidth, estimator=p.estimator,
           min_pairs=p.min_pairs_fan, planar=prep.planar, seed=p.seed)
    return _Measured(samples=samples, prep=prep, tc=tc, sc=sc, lc=lc, pv=pv, wb=wb, fr=fr)


def _fit(m: _Measured, p: DiscoverParams, t) -> _Fitted:
    """The orientation search, the structures and likelihood, continuity and the diagnosis."""
    samples, prep, lc, wb, fr = m.samples, m.prep, m.lc, m.wb, m.fr
    starts = t("starts", starting_frames, fr, wb.bins, unit_lag=lc.unit_lag,
               max_distance=lc.max_distance, seed=p.seed, planar=prep.planar)
    fs = FitSettings.for_lags(lc.unit_lag, lc.max_distance, fixed_nugget=wb.fixed_nugget,
                              total_sill=m.sc.total, planar=prep.planar)
    t.say(f"fitting the orientation from {len(starts)} starting frames")
    search = t("search", search_orientation, wb.bins, starts, fs, nugget=fr.nugget,
               sill=fr.sill, kinds=p.kind_list)
    t.say("nested structures")
    ref = t("structures", choose_structures, wb.bins, search, fs, coords=samples.coords,
            values=m.tc.values, n_structures=p.n_structures, kinds=p.kinds,
            shared_ratios=p.shared_ratios, seed=p.seed, holes=samples.holes,
            confidence=p.confidence,
            refine=refinement_applies(planar=prep.planar, transform_kind=m.tc.kind,
                                      estimator=p.estimator))
    t.say("is there continuity to model? (permutation test)")
    cc = t("continuity", check_continuity, samples.coords, m.tc.values, lag=lc.unit_lag,
           seed=p.seed, shortest_downhole=prep.spacing.down_hole if prep.has_holes else None,
           holes=samples.holes if prep.has_holes else None)
    dg = t("diagnose", diagnose, ref.model, fr, wb.bins, spacing=prep.spacing,
           has_holes=prep.has_holes, planar=prep.planar, max_distance=lc.max_distance,
           max_range=fs.max_range, min_pairs=wb.min_pairs, transform_kind=m.tc.kind,
           estimator=p.estimator, continuity=cc,
           holes=hole_axes(samples.coords, samples.holes) if prep.has_holes else None,
           frame_candidates=(ref.record or {}).get("frame_candidates"))
    return _Fitted(fs=fs, starts=starts, search=search, ref=ref, dg=dg)


def _add_bootstrap(D: Discovery, p: DiscoverParams, t) -> None:
    """The bands, and the diagnosis after them (axes the replicates leave open)."""
    D.uncertainty = t("bootstrap", D.bootstrap, p.n_bootstrap, method=p.bootstrap_method,
                      confidence_level=p.confidence, rng=p.seed, n_jobs=p.n_jobs,
                      scheduler=p.scheduler, progress=p.progress)
    _record_bootstrap_blocks(D)
    after = with_bootstrap(D.diagnosis, D.uncertainty.swap_rates(), p.confidence,
                           cones=_cones(D.uncertainty), tolerance=D.fan_ranges.tolerance)
    # the diagnosis's own warnings come first in ``after``, some reworded (a lone range's
    # direction opened by an axis the replicates opened); the rest are new
    n = len(D.diagnosis.warnings)
    reworded = dict(zip(D.diagnosis.warnings, after.warnings[:n]))
    D.warnings = [reworded.get(w, w) for w in D.warnings]
    D.warnings.extend(w for w in after.warnings[n:] if w not in D.warnings)
    D.diagnosis = after
    D.uncertainty.open_axes = D.open_cone_floors()   # the axes the replicates also left open
    D.seconds = t.total()


def _cones(boot) -> dict:
    """Each axis's cone half-angle (degrees) from the bootstrap."""
    return {a: boot.axis_summary(i)["cone_deg"] for i, a in enumerate(AXES)}


def _options(p: DiscoverParams) -> dict:
    """The run's settings for the audit trail (intake keywords flattened in)."""
    out = {f.name: getattr(p, f.name) for f in dataclasses.fields(p) if f.name != "intake"}
    out.update(p.intake)
    return out


def _record_bootstrap_blocks(D: Discovery) -> None:
    """The "bootstrap blocks" choice names the block side the bootstrap resampled."""
    used = getattr(D.uncertainty, "blocks", None) or {}
    for c in D.choices:
        if c.get("choice") == "bootstrap blocks" and used.get("side"):
            # the side of the bootstrap's own pass, and the one its grouping resampled
            c.update(value=float(max(used["side"])),
                     engine_block_side=float(max(D.volume_with_blocks().block_size)),
                     reason=f"resampled blocks: {used.get('rule')}")
