"""Uncertainty of a discovered continuity model: bootstrap replicates and intervals.

Two ways of making replicates of the fitted model are offered.

**Block bootstrap** (:func:`block_bootstrap`, the default). The domain is cut
into spatial blocks; a replicate draws as many blocks as there are occupied
blocks, with replacement (multinomial block counts, the block bootstrap of
Lahiri 2003, ch. 2 and 12 for spatial data), and re-weights the per-block
sums that the pair engine kept, ``coarse sums = sum_b w_b * block_sums[b]``.
No new pass over the pairs is made. Each replicate is refitted by the
``refit`` callable handed in by :mod:`anisotropy.pipeline`, warm-started from
the main fit.

A pair is credited to the block that holds its *midpoint*, as the pair
engine does. Re-weighting therefore resamples pairs grouped by where they
sit, not samples: a pair whose two ends lie in different blocks travels with
its midpoint block, and the dependence between neighbouring blocks is
treated as if absent. When blocks are much smaller than the ranges this
makes the replicates too alike and the bands too narrow; this is why the
blocks used for resampling are grouped (see :func:`choose_block_grouping`)
into super-blocks as large as the fitted major range allows while leaving
enough blocks (25 by default, common practice) to resample.

**Model-based bootstrap** (:func:`model_bootstrap`). Gaussian fields are
simulated at the data locations with the fitted model
(:func:`anisotropy.simulate.simulate_field`), optionally passed through the
transform, the lag volume is rebuilt and the model refitted. It is much
slower (one full pair pass per replicate) and meant for small to medium data
and as a check on the block bootstrap; it ignores any misfit of the model.

**Intervals.** Percentile intervals (Efron & Tibshirani 1993, ch. 13), the
default, and BCa intervals (ibid., ch. 14.3; acceleration from the delete-one
jackknife, eq. 14.15, or, for the block bootstrap, from empirical influence
values obtained by regressing the replicates on their block counts, Davison &
Hinkley 1997, sec. 2.7.4, which needs no extra refits). In the coverage
study (benchmarks/RESULTS.md) BCa under-covered the ranges more than the
percentile intervals did, and the uncalibrated block bootstrap under-covered
by about 7 points at 90 %; cone radii and range intervals are therefore
widened by the calibration factors :data:`CONE_CALIBRATION` and
:data:`RANGE_CALIBRATION` (log scale) by default. For each axis: the
mean axis as the principal eigenvector of the orientation tensor
``T = sum u u^T / n`` of the replicate axes (Scheidegger 1965; Fisher, Lewis
& Embleton 1987, ch. 3), the radius of the cone around the reported axis that
holds the confidence fraction of the replicate axes, and trend and plunge
intervals.

Replicate frames are matched to the reference frame by the permutation of
their axes that maximises the summed absolute cosines (Hungarian assignment,
:func:`scipy.optimize.linear_sum_assignment`, on ``|R_ref^T R|``), not by
re-sorting the replicate's axes by range; the share of replicates in which
the replicate's longest axis lands on the reference semi-major axis (or the
reverse) is the *swap rate*: when it is high the data do not say which of
the two in-plane axes is the longer.

The package's modules, each with one job:

- :mod:`~anisotropy.uncertainty.replicates` runs the replicates (block and
  model-based bootstrap);
- :mod:`~anisotropy.uncertainty.blocks` cuts, groups and re-weights the
  spatial blocks;
- :mod:`~anisotropy.uncertainty.axes` holds the orientation statistics of
  undirected axes (mean axis, cones, frame matching, trend and plunge);
- :mod:`~anisotropy.uncertainty.intervals` holds the scalar intervals and
  the rules every reported interval obeys;
- :mod:`~anisotropy.uncertainty.result` is the typed result,
  :class:`~anisotropy.uncertainty.result.BootstrapResult`, with its cones,
  intervals and bands.

The package imports fitting-side modules only and never
:mod:`anisotropy.pipeline` (which calls it).
"""

from anisotropy.constants import AXES as AXIS_NAMES

from anisotropy.uncertainty.axes import (axis_cone, match_frame, match_frames, mean_axis,
                                         orientation_tensor, trend_plunge_intervals)
from anisotropy.uncertainty.blocks import (MIN_BLOCKS, BlockGrouping, choose_block_grouping,
                                           engine_block_side, resample_weights,
                                           reweighted_sums)
from anisotropy.uncertainty.intervals import (bca_interval, bounded_by_lags, carried_interval,
                                              held_fixed, holding_estimate,
                                              influence_acceleration, jackknife_acceleration,
                                              percentile_interval, range_text)
from anisotropy.uncertainty.replicates import (CONE_CALIBRATION, DEFAULT_REPLICATES,
                                               RANGE_CALIBRATION, REPLICATE_ERRORS,
                                               block_bootstrap, fixed_frame_objectives,
                                               model_bootstrap)
from anisotropy.uncertainty.result import SWAP_AXES, BootstrapResult, ConfidenceInterval

__all__ = [
    "held_fixed",
    "holding_estimate",
    "bounded_by_lags",
    "range_text",
    "carried_interval",
    "AXIS_NAMES",
    "SWAP_AXES",
    "MIN_BLOCKS",
    "BootstrapResult",
    "BlockGrouping",
    "block_bootstrap",
    "model_bootstrap",
    "choose_block_grouping",
    "resample_weights",
    "engine_block_side",
    "reweighted_sums",
    "percentile_interval",
    "bca_interval",
    "jackknife_acceleration",
    "influence_acceleration",
    "orientation_tensor",
    "mean_axis",
    "axis_cone",
    "match_frame",
    "match_frames",
    "trend_plunge_intervals",
    "fixed_frame_objectives",
    "ConfidenceInterval",
    "DEFAULT_REPLICATES",
    "CONE_CALIBRATION",
    "RANGE_CALIBRATION",
    "REPLICATE_ERRORS",
]
