"""Running the replicates: the block bootstrap and the model-based bootstrap.

Each replicate is refitted by the ``refit`` callable that
:mod:`anisotropy.pipeline` hands in, warm-started from the main fit; a
replicate that fails for a reason the fitting states is counted and
reported (:data:`REPLICATE_ERRORS`).
"""

from __future__ import annotations

import math
import time
from typing import Callable

import numpy as np

from anisotropy.errors import AnisotropyError, InputError
from anisotropy.estimators import check_estimator, estimate
from anisotropy.pairs import build_volume
from anisotropy.parallel import check_jobs, n_workers, run_tasks
from anisotropy.progress import Bar, note
from anisotropy.simulate import simulate_field
from anisotropy.uncertainty.axes import match_frames
from anisotropy.uncertainty.blocks import (MIN_BLOCKS, block_weights_from_groups,
                                           choose_block_grouping, resample_weights,
                                           reweighted_sums)
from anisotropy.uncertainty.intervals import _alpha
from anisotropy.uncertainty.result import BootstrapResult, _model_ranges_along


#: Replicates by default: enough for 90 % percentile bands (Efron & Tibshirani
#: 1993, ch. 19 suggest 1000 for intervals; 200 is a common-practice compromise
#: for a refit per replicate).
DEFAULT_REPLICATES = 200

#: Default widening of the block bootstrap's cone radii: none.  The factor of
#: 1.2 once fitted on a lean stand-in chain made the real ``discover`` chain's
#: 90 % cones hold the truth in 98-99 % of 96 simulations, and that chain
#: still covered 97-99 % without it (benchmarks/RESULTS.md, coverage of the
#: real chain), so no widening is applied.
CONE_CALIBRATION = 1.0
#: Default widening of the range intervals (log scale), from the same study
#: (ranges held the truth in 91-95 % of the real chain's simulations with it).
RANGE_CALIBRATION = 1.25


#: Errors a replicate's refit may end in for a reason the fitting states (too
#: few bins with pairs, no convergence: ``FitError``; a volume that cannot be
#: built: ``InputError``), an optimiser's own non-convergence (``RuntimeError``)
#: or a numerical breakdown. Such a replicate is counted and its message
#: reported; any other exception (a ``TypeError``, ``IndexError`` or a shape
#: ``ValueError``: a bug) stops the run instead of thinning the bands.
REPLICATE_ERRORS = (AnisotropyError, RuntimeError, np.linalg.LinAlgError, FloatingPointError)


def _run_chunk(weights, refit, start, keep_experimental, estimator, *, block_sums):
    """Refit a chunk of replicates; returns a list of (model, objective, exp, error)."""
    out = []
    for w in weights:
        sums = reweighted_sums(block_sums, w)
        exp = np.asarray(estimate(sums, estimator), dtype=float) if keep_experimental else None
        try:
            model, obj = refit(sums, start=start, block_weights=w)
            out.append((model, float(obj), exp, None))
        except REPLICATE_ERRORS as exc:  # counted and reported, never hidden
            out.append((None, math.nan, exp, f"{type(exc).__name__}: {exc}"))
    return out


def _run_replicates(fn, tasks, *, shared, n_jobs, scheduler, progress, label):
    """Run ``fn(*task, **shared)`` over chunks of replicates, in order, counting them."""
    with Bar(progress, sum(len(t[0]) for t in tasks), label) as bar:
        return run_tasks(fn, tasks, shared=shared, n_jobs=n_jobs, scheduler=scheduler,
                         on_result=lambda k, res: bar.update(len(tasks[k][0])), label=label)


def _collect(reference, outcomes):
    """Turn refit outcomes into the arrays of a BootstrapResult."""
    ref_frame = np.asarray(reference.frame, dtype=float)
    n_struct = len(reference.structures)
    models, objs, frames, exps, keep, failures = [], [], [], [], [], []
    n_failed = 0
    for k, (m, obj, exp, err) in enumerate(outcomes):
        if m is None:
            n_failed += 1
            if len(failures) < 5:
                failures.append(err)
            continue
        fr = np.asarray(m.frame, dtype=float)
        if fr.shape != (3, 3) or not np.all(np.isfinite(fr)):
            n_failed += 1
            if len(failures) < 5:
                failures.append("refit returned a frame that is not a finite 3x3 matrix")
            continue
        models.append(m)
        objs.append(obj)
        frames.append(fr)
        exps.append(exp)
        keep.append(k)
    if models:
        axes, perms = match_frames(ref_frame, np.stack(frames))
        ranges = np.stack([_model_ranges_along(m, axes[k]) for k, m in enumerate(models)])
        nug = np.array([float(m.nugget) for m in models])
        tot = np.array([float(m.total_sill) for m in models])
        sills = np.full((len(models), n_struct), np.nan)
        for k, m in enumerate(models):
            if len(m.structures) == n_struct:
                sills[k] = [float(s.sill) for s in m.structures]
    else:
        axes = np.empty((0, 3, 3))
        perms = np.empty((0, 3), dtype=int)
        ranges = np.empty((0, 3))
        nug = tot = np.empty(0)
        sills = np.empty((0, n_struct))
    exp_arr = None
    if exps and all(e is not None for e in exps):
        exp_arr = np.stack(exps)
    return dict(models=models, objectives=np.asarray(objs, dtype=float), axes=axes,
                permutations=perms, ranges=ranges, nugget=nug, total_sill=tot, sills=sills,
                experimental=exp_arr), np.asarray(keep, dtype=int), n_failed, failures


def _check_interval(interval):
    if interval not in ("percentile", "bca"):
        raise InputError(f"interval must be 'percentile' or 'bca' (got {interval!r})")
    return interval


def _check_common(n_replicates, confidence, n_jobs):
    if int(n_replicates) < 2:
        raise InputError(f"the bootstrap needs at least 2 replicates (got {n_replicates}); "
                         "use 0 to turn it off at the command line, or 200 (the default)")
    _alpha(confidence)
    check_jobs(n_jobs)


def block_bootstrap(volume, refit: Callable, reference, *, n_replicates=DEFAULT_REPLICATES,
                    confidence=0.9, seed=0, n_jobs=1, scheduler=None, progress=False,
                    min_blocks=MIN_BLOCKS, estimator="semivariogram",
                    keep_experimental=True, interval="percentile",
                    cone_calibration=None, range_calibration=None) -> BootstrapResult:
    """Block bootstrap of the fitted model from the lag volume's per-block sums.

    Parameters
    ----------
    volume : LagVolume
        Needs ``block_sums`` (n_blocks, n_lags+1, n_coarse, n_ch),
        ``block_shape``, ``block_size``, ``coarse_directions`` and
        ``block_of_sample``.
    refit : callable
        ``refit(coarse_sums, *, fixed_frame=None, start=None, block_weights=None)
        -> (NestedModel, objective)``, from ``Discovery.refit_function(volume)``.
        Called once per replicate with ``start=reference`` (warm start) and
        the replicate's weight of each block (for what the refit re-estimates
        besides the sums: a held down-hole nugget).
    reference : NestedModel
        The main fit; its frame is what replicate axes are matched to.
    n_replicates : int
    confidence : float
    seed : int or numpy.random.Generator
        All block counts are drawn up front from this one generator, so the
        same seed gives the same bands whatever ``n_jobs`` is.
    n_jobs : int
        Processes (joblib; -1 = every core).
    scheduler : str or dask.distributed.Client, optional
        Run the replicates on a Dask cluster at this address instead.
    progress : bool
        Text progress bar on stderr.
    min_blocks : int
        See :func:`choose_block_grouping`.
    estimator : str
        Estimator for the experimental bands kept per replicate.
    keep_experimental : bool
    interval : {"percentile", "bca"}
        Interval for ranges, nugget and sills. Percentile is the default: in
        the coverage study (benchmarks/RESULTS.md) BCa under-covered the
        ranges, because the bias correction follows the replicates' own
        bias (resampled blocks make the variogram noisier and the fit more
        anisotropic) rather than the estimator's.
    cone_calibration, range_calibration : float, optional
        Factors widening the cone radii and (on the log scale around the
        estimate) the range intervals; default :data:`CONE_CALIBRATION` and
        :data:`RANGE_CALIBRATION`, set from the coverage study; 1.0 = none.

    Returns
    -------
    BootstrapResult
    """
    _check_common(n_replicates, confidence, n_jobs)
    check_estimator(estimator)
    _check_interval(interval)
    t0 = time.perf_counter()
    ref_frame = np.asarray(reference.frame, dtype=float)
    major_range = float(reference.range_along(ref_frame[:, 0]))
    grouping = choose_block_grouping(volume, major_range, min_blocks=min_blocks)
    counts = resample_weights(grouping.n_groups, int(n_replicates), seed)
    weights = block_weights_from_groups(counts, grouping.group_of_block)
    block_sums = np.ascontiguousarray(volume.block_sums, dtype=float)
    workers = n_workers(n_jobs, scheduler)
    n_chunks = max(1, min(len(weights), 4 * workers if (workers > 1 or scheduler) else 1))
    chunks = np.array_split(np.arange(len(weights)), n_chunks)
    tasks = [(weights[c], refit, reference, keep_experimental, estimator)
             for c in chunks if len(c)]
    results = _run_replicates(_run_chunk, tasks, shared={"block_sums": block_sums},
                              n_jobs=n_jobs, scheduler=scheduler, progress=progress,
                              label="bootstrap")
    outcomes = [o for r in results for o in r]
    arrays, keep, n_failed, failures = _collect(reference, outcomes)
    warnings = list(grouping.warnings)
    if n_failed:
        warnings.append(f"{n_failed} of {n_replicates} replicate fits failed and are left out "
                        "of the bands")
    lags = np.arange(volume.n_lags + 1) * float(volume.lag) if hasattr(volume, "lag") else None
    res = BootstrapResult(method="block", confidence=float(confidence), reference=reference,
                          counts=counts[keep], coarse_directions=np.asarray(
                              getattr(volume, "coarse_directions", None)),
                          distances=lags, n_requested=int(n_replicates), n_failed=n_failed,
                          failures=failures, blocks=grouping.to_dict(),
                          seed=seed if isinstance(seed, int) else None,
                          warnings=warnings, interval_method=_check_interval(interval),
                          cone_calibration=float(CONE_CALIBRATION if cone_calibration is None
                                                 else cone_calibration),
                          range_calibration=float(RANGE_CALIBRATION if range_calibration is None
                                                  else range_calibration),
                          group_of_block=grouping.group_of_block, **arrays)
    if not keep_experimental:
        res.experimental = None
    res.seconds = time.perf_counter() - t0
    note(progress, f"bootstrap blocks: {grouping.reason}")
    return res


def _fixed_chunk(weights, refit, frame, start, *, block_sums):
    out = []
    for w in weights:
        try:
            _, obj = refit(reweighted_sums(block_sums, w), fixed_frame=frame, start=start,
                           block_weights=w)
            out.append(float(obj))
        except REPLICATE_ERRORS:  # counted by the caller as NaN
            out.append(math.nan)
    return out


def fixed_frame_objectives(result, volume, refit, frame, *, max_replicates=100, n_jobs=1,
                           scheduler=None, progress=False):
    """Refit block-bootstrap replicates with the frame held fixed.

    Used by :mod:`anisotropy.check` to place the objective ratio of an
    interpretation (fixed-frame fit over free fit) in the distribution of the
    same ratio when the frame is fixed to the reported one in every
    replicate.

    Parameters
    ----------
    result : BootstrapResult
        A block bootstrap (it keeps the block counts of every replicate).
    volume : LagVolume
        The volume the bootstrap resampled.
    refit : callable
        As for :func:`block_bootstrap`.
    frame : array_like, shape (3, 3)
        The frame to hold fixed.
    max_replicates : int
        Use the first this many replicates (the fits are the expensive part).

    Returns
    -------
    fixed : ndarray, shape (m,)
        Fixed-frame objectives (NaN where the fit failed).
    free : ndarray, shape (m,)
        The replicates' own (free) objectives.
    """
    if result.counts is None or result.group_of_block is None:
        raise InputError("only a block bootstrap keeps the block counts needed to refit its "
                         "replicates; run the block bootstrap")
    m = min(int(max_replicates), result.n_replicates)
    weights = block_weights_from_groups(result.counts[:m], result.group_of_block)
    block_sums = np.ascontiguousarray(volume.block_sums, dtype=float)
    n_chunks = 1 if (n_jobs == 1 and scheduler is None) else max(1, min(m, 8))
    chunks = [c for c in np.array_split(np.arange(m), n_chunks) if len(c)]
    frame = np.asarray(frame, dtype=float)
    tasks = [(weights[c], refit, frame, result.reference) for c in chunks]
    res = _run_replicates(_fixed_chunk, tasks, shared={"block_sums": block_sums},
                          n_jobs=n_jobs, scheduler=scheduler, progress=progress,
                          label="fixed-frame refits")
    return np.asarray([o for r in res for o in r], dtype=float), result.objectives[:m].copy()


def _model_chunk(fields, transform, build_kwargs, refit, start, estimator, *, coords):
    out = []
    for v in fields:
        vals = transform(v) if transform is not None else v
        try:
            vol = build_volume(coords, np.asarray(vals, dtype=float), progress=False,
                               **build_kwargs)
            sums = vol.coarse_sums()
            exp = np.asarray(estimate(sums, estimator), dtype=float) if estimator else None
            model, obj = refit(sums, start=start)
            out.append((model, float(obj), exp, None))
        except REPLICATE_ERRORS as exc:  # counted and reported
            out.append((None, math.nan, None, f"{type(exc).__name__}: {exc}"))
    return out


def model_bootstrap(coords, model, refit: Callable, *, volume, transform=None,
                    n_replicates=50, confidence=0.9, seed=0, n_jobs=1, scheduler=None,
                    progress=False, method="auto", interval="percentile", cone_calibration=1.0,
                    range_calibration=1.0) -> BootstrapResult:
    """Parametric bootstrap: simulate with the fitted model, rebuild the volume, refit.

    Parameters
    ----------
    coords : array_like, shape (n, 3)
        The data locations (local coordinates, as the volume was built from).
    model : NestedModel
        The fitted model (in the analysed variable's units, e.g. normal scores).
    refit : callable
        As for :func:`block_bootstrap`; its coarse directions and lags must be
        those of ``volume``, which the rebuilt volumes copy.
    volume : LagVolume
        The data's volume: the lag, number of lags and directions are copied.
    transform : callable, optional
        Applied to every simulated field before the volume is rebuilt, e.g.
        the back-transform to grades followed by the forward transform fitted
        on the simulated grades, so the replicates see what the data saw.
    n_replicates : int
        Default 50: each replicate costs a full pass over the pairs.
    confidence, seed, n_jobs, scheduler, progress, interval
        As for :func:`block_bootstrap`; the fields are simulated up front
        from ``seed``.
    cone_calibration, range_calibration : float
        Default 1.0 (none): the model bootstrap was not part of the
        calibration study.
    method : str
        Simulation method for :func:`anisotropy.simulate.simulate_field`.

    Returns
    -------
    BootstrapResult
        ``method == "model"``.
    """
    _check_common(n_replicates, confidence, n_jobs)
    _check_interval(interval)
    t0 = time.perf_counter()
    coords = np.asarray(coords, dtype=float)
    fields = simulate_field(coords, model, n_realisations=int(n_replicates), seed=seed,
                            method=method)
    fields = np.atleast_2d(fields)
    # each replicate needs only the coarse sums of the channels the volume kept: no block
    # sums, no map (the rebuild is the whole cost of a model-bootstrap replicate)
    build_kwargs = dict(lag=float(volume.lag), n_lags=int(volume.n_lags),
                        fine_directions=np.asarray(volume.directions),
                        coarse_directions=np.asarray(volume.coarse_directions),
                        channels=getattr(volume, "channels", None),
                        blocks=False, map_cell=False)
    workers = 1 if n_jobs == 1 else max(2, abs(int(n_jobs)))
    chunks = np.array_split(np.arange(len(fields)), max(1, min(len(fields), 2 * workers)))
    tasks = [(fields[c], transform, build_kwargs, refit, model, "semivariogram")
             for c in chunks if len(c)]
    results = _run_replicates(_model_chunk, tasks, shared={"coords": coords}, n_jobs=n_jobs,
                              scheduler=scheduler, progress=progress, label="model bootstrap")
    outcomes = [o for r in results for o in r]
    arrays, keep, n_failed, failures = _collect(model, outcomes)
    warnings = []
    if n_failed:
        warnings.append(f"{n_failed} of {n_replicates} replicate fits failed and are left out "
                        "of the bands")
    res = BootstrapResult(method="model", confidence=float(confidence), reference=model,
                          coarse_directions=np.asarray(volume.coarse_directions),
                          distances=np.arange(volume.n_lags + 1) * float(volume.lag),
                          n_requested=int(n_replicates), n_failed=n_failed, failures=failures,
                          seed=seed if isinstance(seed, int) else None, warnings=warnings,
                          interval_method=_check_interval(interval),
                          cone_calibration=float(cone_calibration),
                          range_calibration=float(range_calibration), **arrays)
    res.seconds = time.perf_counter() - t0
    return res
