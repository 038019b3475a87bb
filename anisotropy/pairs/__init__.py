"""The pair engine: one compiled pass over all pairs into a lag-vector volume.

Every unordered pair of samples closer than ``max_distance = (n_lags + 1/2)
lag`` is visited once (cell lists, ``_cells.py``; compiled kernels,
``_kernels.py``) and its contribution is added to three sets of bins:

``sums`` (n_lags + 1, n_fine, n_ch)
    distance class x fine direction cell (nearest axis of a Fibonacci
    lattice, about 2 degrees apart by default), the basis of every directional
    variogram and fan;
``block_sums`` (n_blocks, n_lags + 1, n_coarse, n_ch)
    the same sums per spatial block, at the coarse direction resolution the
    fit uses (about 10 degrees), for the block bootstrap;
``map_sums`` (nx, ny, nz, n_ch)
    a Cartesian lag volume of cell ``map_cell`` for variogram maps.

Conventions (shared with :func:`anisotropy.experimental_variogram` and the
brute-force tests):

* lag vector of a pair in the canonical orientation of
  :func:`anisotropy.geometry.to_lower_hemisphere` (z < 0; if z == 0 then
  x > 0; if also x == 0 then y > 0); head = tail + canonical lag,
  delta = head - tail;
* distance class ``k = ceil(d / lag - 1/2)``, k = 0..n_lags, so class k covers
  (k lag - lag/2, k lag + lag/2] and class 0 holds the shortest pairs,
  coincident points included; a pair whose class would exceed ``n_lags`` is
  not counted (it lies beyond ``max_distance``);
* coincident pairs (zero lag) have no direction: they sit in class 0, fine
  cell 0, map centre cell;
* the fine cell of a pair is read from a lookup table over the stereographic
  plane coordinates of its direction (``_lattice.py``): exact at pixel
  centres, at most one pixel (well under a tenth of the lattice spacing) off
  near cell boundaries;
* block of a pair: the block holding the pair's midpoint. The midpoint is
  symmetric in the two samples (it does not depend on which one is the
  head), and with a regular grid it sends each pair to exactly one block, so
  the blocks partition the pairs and a bootstrap that re-weights blocks
  re-weights disjoint sets of pairs. ``block_of_sample`` gives each sample's
  own block for resampling schemes that need it;
* map cell of a pair: ``round(v / map_cell)`` componentwise (floor(x + 1/2))
  of the canonical lag ``v``; only the canonical half (z <= 0) is stored,
  see :meth:`LagVolume.full_map` for the symmetrised read-out.

The fine sums, block sums and map may keep only the channels one estimator
reads (``channels`` / ``block_channels`` / ``map_channels`` of
:func:`build_volume`; the others are NaN), which makes the pass cheaper (a
channel no accumulator keeps costs nothing per pair; measured in
benchmarks/RESULTS.md); the default keeps all. When the fine sums hold every
channel the blocks keep, the pass goes block by block: the cell pairs inside
one block are binned into a scratch copy of the fine sums and the block's
sums are folded from it, so block sums cost no per-pair work for them.

Memory is bounded independently of the number of pairs: the accumulators
(one slice per work chunk plus the merged result) are the only large arrays,
and the block grid is coarsened until the block sums fit ``block_memory``.
Before a long run the estimated pair count is printed to standard error (or
passed to a ``progress`` callable), and the run is processed in batches of
cells with progress after each batch.
"""

from __future__ import annotations

import time
import warnings

import numpy as np

from ..constants import CHANNELS
from . import _lattice
from .build import build_volume
from .channels import CORE_CHANNELS, ESTIMATOR_CHANNELS, resolve_channels
from .checks import check_angular_tolerance, check_bandwidth, direction_vector
from .exact import exact_sums
from .planning import RunPlan, estimate_pair_count, plan_run
from .volume import LagVolume

__all__ = [
    "CHANNELS",
    "LagVolume",
    "RunPlan",
    "build_volume",
    "exact_sums",
    "check_angular_tolerance",
    "check_bandwidth",
    "estimate_pair_count",
    "plan_run",
    "direction_vector",
    "resolve_channels",
    "warm_up",
    "CORE_CHANNELS",
    "ESTIMATOR_CHANNELS",
    "DEFAULT_FINE_SPACING",
    "DEFAULT_COARSE_SPACING",
]

#: Default spacings (degrees) of the fine and coarse direction lattices.
DEFAULT_FINE_SPACING = _lattice.DEFAULT_FINE_SPACING
DEFAULT_COARSE_SPACING = _lattice.DEFAULT_COARSE_SPACING


def warm_up() -> float:
    """Compile (or load from Numba's on-disk cache) the pair kernels a discovery uses.

    The kernels are compiled for argument *types*, so a pass over a few random
    samples with the options ``anisotropy.discover`` passes (blocks, map, one
    estimator's channels) and an exact directional pass compile everything a
    real run needs. Call it once in a parent process before starting several
    worker processes: otherwise, on a fresh installation, every worker
    compiles the same kernels at the same time (about half a minute each on
    two cores). :func:`anisotropy.parallel.warm_up` also compiles the
    likelihood kernels of ``anisotropy.fitting``. Returns the seconds it took
    (one to two once cached: loading the cached kernels).
    """
    t0 = time.perf_counter()
    rng = np.random.default_rng(0)
    c = rng.random((60, 3)) * 20.0
    v = rng.random(60)
    with warnings.catch_warnings():  # the toy values mean nothing: no notes about them
        warnings.simplefilter("ignore")
        for est in ("semivariogram", None):
            build_volume(c, v, lag=2.0, n_lags=4, progress=False, channels=est,
                         block_channels=est, map_channels=est)
        # the calls anisotropy.directional.experimental_variogram makes
        for est in ("semivariogram", "correlogram"):
            exact_sums(c, v, lag=2.0, n_lags=4, channels=est)
            exact_sums(c, v, lag=2.0, n_lags=4, direction=(0.0, 0.0), channels=est)
    return time.perf_counter() - t0
