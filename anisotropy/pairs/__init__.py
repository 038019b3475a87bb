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

import math
import time
import warnings
from dataclasses import dataclass, field

import numba
import numpy as np

from .. import geometry
from ..constants import CHANNEL_INDEX as CH
from ..constants import CHANNELS
from ..errors import DataError, InputError
from ..progress import note
from . import _cells, _kernels, _lattice

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

#: Channels every set of bins keeps (pair count, mean distance, mean lag vector).
CORE_CHANNELS = ("count", "dist", "dx", "dy", "dz")
#: Channels that are kept or dropped together in block and map sums.
CHANNEL_GROUPS = (("sq",), ("abs",), ("sqrt",), ("head", "tail", "head2", "tail2", "cross"),
                  ("rel", "rel_n"))
#: Channels each estimator reads (besides the core), see ``anisotropy.estimators``.
ESTIMATOR_CHANNELS = {"semivariogram": ("sq",), "correlogram": ("head", "tail", "head2", "tail2", "cross"),
                      "pairwise_relative": ("rel", "rel_n"), "madogram": ("abs",), "robust": ("sqrt",)}


def against_cells(sums, directions, U) -> np.ndarray:
    """Fine cells whose pairs' canonical lag points against each direction, (n_dir, n_fine).

    Read from the cell's summed canonical lag vector (channels dx, dy, dz
    over every class), and from the cell axis where the cell is empty. The
    summed vector, not the axis, decides because a cell on the rim of the
    lattice (near-horizontal lags) may be filed under an axis pointing the
    other way round (axes are undirected; the canonical lag of an exactly
    horizontal pair has x > 0 whatever its cell). A rim cell holding pairs of
    both orientations (lags within a fraction of a cell of the horizontal,
    above and below it) cannot be split from its sums; its minority keeps
    the other orientation.
    """
    M = np.asarray(sums, dtype=np.float64)[..., [CH["dx"], CH["dy"], CH["dz"]]].sum(axis=0)
    empty = ~np.any(M != 0.0, axis=1)
    M[empty] = np.asarray(directions, dtype=np.float64)[empty]
    return np.atleast_2d(np.asarray(U, dtype=np.float64)) @ M.T < 0.0


def turn_round(out, against, sums, subscripts):
    """Swap head and tail (and their squares) of the bins ``against`` in summed channels.

    A directional variogram gathers bins whose canonical lag can point either
    way along its direction (a cone crossing the horizontal). Its head must be
    the sample further along the direction, so in the bins whose canonical lag
    points against it head and tail are exchanged (issue 17). ``out`` holds
    the gathered sums (channels last) and is changed in place:
    ``out[..., head] += einsum(subscripts, against, sums[..., tail] -
    sums[..., head])`` and ``out[..., tail]`` loses the same (likewise head2,
    tail2); cross, the squared differences and every other channel are
    symmetric in the two samples and are left alone.

    Returns
    -------
    ndarray
        ``out``.
    """
    w = np.asarray(against, dtype=np.float64)
    if not w.any() or np.isnan(sums[..., CH["head"]]).all():   # no head/tail channels kept
        return out
    for h, t in ((CH["head"], CH["tail"]), (CH["head2"], CH["tail2"])):
        d = np.einsum(subscripts, w, sums[..., t] - sums[..., h])
        out[..., h] += d
        out[..., t] -= d
    return out


def resolve_channels(spec) -> tuple:
    """Channels kept by block or map sums for a ``block_channels``/``map_channels`` value.

    None or "all": every channel. An estimator name (or a list of them): the
    core channels (count, dist, dx, dy, dz) plus what those estimators read.
    A list of channel names: the core plus the groups holding them (sq; abs;
    sqrt; head, tail, head2, tail2, cross; rel, rel_n). Returned in
    ``CHANNELS`` order.
    """
    if spec is None or (isinstance(spec, str) and spec == "all"):
        return CHANNELS
    items = [spec] if isinstance(spec, str) else list(spec)
    want = set(CORE_CHANNELS)
    for it in items:
        if it in ESTIMATOR_CHANNELS:
            want.update(ESTIMATOR_CHANNELS[it])
        elif it in CH:
            want.add(it)
        else:
            raise InputError(
                f"unknown channel or estimator {it!r} for the volume channels; use None, 'all', "
                f"estimator names {tuple(ESTIMATOR_CHANNELS)} or channel names {CHANNELS}.")
    for grp in CHANNEL_GROUPS:
        if want.intersection(grp):
            want.update(grp)
    return tuple(c for c in CHANNELS if c in want)


def _columns(kept):
    """Column of each channel in a compact accumulator row (-1 = dropped), and the row width."""
    cols = np.full(len(CHANNELS), -1, dtype=np.int64)
    for i, name in enumerate(kept):
        cols[CH[name]] = i
    width = 8 if len(kept) <= 8 else _kernels.NPAD
    return cols, width

#: Fixed number of work chunks (each with its own accumulator slice). Fixed so
#: that sums do not depend on the thread count; at least the thread count.
def _n_chunks() -> int:
    return max(4, int(numba.get_num_threads()))


#: Pairs above which a run announces its estimate and reports progress.
ANNOUNCE_PAIRS = 20_000_000
#: Candidate pairs per batch of cells.
BATCH_CANDIDATES = 400_000_000
#: Default bound (bytes) for the block sums, all chunk slices included.
BLOCK_MEMORY = 384 * 2**20


# ----------------------------------------------------------------- validation
def _check_coords_values(coords, values, what="samples"):
    c = np.asarray(coords, dtype=np.float64)
    if c.ndim != 2 or c.shape[1] not in (2, 3):
        raise InputError(f"coordinates must be an (n, 3) array of x, y, z; got shape {c.shape}.")
    if c.shape[1] == 2:
        c = np.column_stack([c, np.zeros(len(c))])
    v = np.asarray(values, dtype=np.float64).ravel()
    if len(v) != len(c):
        raise InputError(
            f"{len(c)} coordinate rows but {len(v)} values: give one value per sample."
        )
    bad = np.flatnonzero(~np.all(np.isfinite(c), axis=1))
    if len(bad):
        rows = ", ".join(str(int(r)) for r in bad[:10]) + (" ..." if len(bad) > 10 else "")
        raise DataError(
            f"{len(bad)} {what} have missing (NaN) or infinite coordinates, at rows {rows} "
            "(0-based). Remove or fix those rows before computing variograms."
        )
    badv = np.flatnonzero(~np.isfinite(v))
    if len(badv):
        rows = ", ".join(str(int(r)) for r in badv[:10]) + (" ..." if len(badv) > 10 else "")
        raise DataError(
            f"{len(badv)} {what} have missing (NaN) or infinite values, at rows {rows} "
            "(0-based). Remove them or set a missing-value policy when reading the samples."
        )
    return np.ascontiguousarray(c), np.ascontiguousarray(v)


def _check_lag(lag, n_lags):
    try:
        lag = float(lag)
    except (TypeError, ValueError):
        raise InputError(f"lag must be a positive distance in metres; got {lag!r}.") from None
    if not (lag > 0) or not math.isfinite(lag):
        raise InputError(f"lag must be a positive distance in metres; got {lag}.")
    if isinstance(n_lags, bool) or int(n_lags) != n_lags or int(n_lags) < 1:
        raise InputError(f"n_lags must be a whole number >= 1; got {n_lags!r}.")
    return lag, int(n_lags)


def direction_vector(direction) -> np.ndarray:
    """Unit vector of a direction given as (trend, plunge) degrees or a 3-vector.

    Returned in the canonical (lower-hemisphere) orientation.
    """
    d = np.asarray(direction, dtype=float).ravel()
    if d.shape == (2,):
        if not np.all(np.isfinite(d)) or not (-1e-9 <= d[1] <= 90 + 1e-9):
            raise InputError(
                f"direction (trend, plunge) must have plunge in [0, 90] degrees; got {tuple(d)}."
            )
        u = geometry.line_to_vector(d[0], d[1])
    elif d.shape == (3,):
        n = float(np.linalg.norm(d))
        if not (n > 0) or not math.isfinite(n):
            raise InputError(f"direction vector must be non-zero and finite; got {tuple(d)}.")
        u = d / n
    else:
        raise InputError(
            "direction must be (trend, plunge) in degrees or an (east, north, up) vector; "
            f"got {direction!r}."
        )
    return geometry.to_lower_hemisphere(np.asarray(u, dtype=float).reshape(3))


# ------------------------------------------------------------------- planning
_WEIGHT_CACHE: dict = {}


def _offset_weights(offsets: np.ndarray, cell: float, radius: float) -> np.ndarray:
    """P(|p - q| <= R) for p, q uniform in two cells ``offset`` apart (seeded Monte Carlo)."""
    key = (offsets.tobytes(), round(cell / radius, 12))
    if key in _WEIGHT_CACHE:
        return _WEIGHT_CACHE[key]
    if len(_WEIGHT_CACHE) > 64:
        _WEIGHT_CACHE.clear()
    rng = np.random.default_rng(12345)
    m = 4000
    a = rng.random((m, 3))
    b = rng.random((m, 3))
    r = radius / cell
    allo = np.vstack([np.zeros((1, 3), dtype=np.int64), offsets])
    w = np.empty(len(allo))
    for i, o in enumerate(allo):
        d = b + o - a
        w[i] = np.mean((d * d).sum(axis=1) <= r * r)
    _WEIGHT_CACHE[key] = w
    return w


def estimate_pair_count(coords, max_distance) -> int:
    """Estimated number of unordered pairs closer than ``max_distance``.

    Counts samples in cells of side ``max_distance / 4`` and weights each cell
    pair by the probability that two points uniform in those cells are within
    the distance (a seeded Monte Carlo per offset). Cost grows with the number
    of cells, not of pairs, so it is safe for distances implying billions of
    pairs. Accuracy is that of the within-cell uniformity assumption (a few
    per cent on spread-out data).

    Parameters
    ----------
    coords : array_like (n, 3)
    max_distance : float

    Returns
    -------
    int
    """
    c = np.asarray(coords, dtype=np.float64)
    if c.ndim != 2 or len(c) < 2:
        return 0
    if c.shape[1] == 2:
        c = np.column_stack([c, np.zeros(len(c))])
    r = float(max_distance)
    if not (r > 0):
        return 0
    grid = _cells.make_grid(c, r, divisions=4, max_cells_per_sample=2.0)
    off = _cells.half_stencil(grid.cell, r, grid.dims)
    w = _offset_weights(off, grid.cell, r)
    counts = np.diff(grid.start)
    total = _kernels.count_estimate(counts, grid.dims, grid.occupied, off, w)
    n = len(c)
    return int(round(min(total, n * (n - 1) / 2.0)))


@dataclass
class RunPlan:
    """What a pass will cost before it runs.

    Attributes
    ----------
    n_samples, estimated_pairs, candidate_pairs : int
    batches : list of (int, int)
        Ranges of search-stencil offsets processed one after the other.
    cell : float
        Cell side of the search grid, metres.
    accumulator_bytes : int
        Bytes of all accumulators (chunk slices and merged result).
    """

    n_samples: int
    max_distance: float
    estimated_pairs: int
    candidate_pairs: int
    batches: list
    cell: float
    accumulator_bytes: int = 0

    @property
    def n_batches(self) -> int:
        return len(self.batches)

    def to_dict(self) -> dict:
        return {
            "n_samples": int(self.n_samples),
            "max_distance": float(self.max_distance),
            "estimated_pairs": int(self.estimated_pairs),
            "candidate_pairs": int(self.candidate_pairs),
            "n_batches": int(self.n_batches),
            "cell": float(self.cell),
            "accumulator_bytes": int(self.accumulator_bytes),
        }


def _plan_batches(work: np.ndarray, target: float) -> list:
    """Split consecutive work items (stencil offsets or cells) into batches of about ``target`` candidates."""
    if len(work) == 0:
        return []
    cum = np.cumsum(work)
    total = float(cum[-1])
    nb = max(1, int(math.ceil(total / max(target, 1.0))))
    if nb == 1:
        return [(0, len(work))]
    cuts = np.searchsorted(cum, total * np.arange(1, nb) / nb, side="left") + 1
    edges = np.unique(np.concatenate([[0], np.clip(cuts, 1, len(work)), [len(work)]]))
    return [(int(a), int(b)) for a, b in zip(edges[:-1], edges[1:]) if b > a]


def _grid_and_plan(coords, radius, divisions, batch_candidates):
    """Search grid, stencil (self offset first), candidate pairs per offset, batches."""
    grid = _cells.make_grid(coords, radius, divisions=divisions)
    off = np.vstack([np.zeros((1, 3), dtype=np.int64),
                     _cells.half_stencil(grid.cell, radius, grid.dims)])
    work = _kernels.offset_work(grid.start, grid.dims, grid.occupied, off)
    batches = _plan_batches(work, batch_candidates)
    return grid, off, work, batches


def plan_run(coords, max_distance, *, divisions=_cells.DEFAULT_CELL_DIVISIONS,
             batch_candidates=BATCH_CANDIDATES) -> RunPlan:
    """Plan a pass: pair-count estimate, candidate pairs and batches (nothing is binned).

    Parameters
    ----------
    coords : array_like (n, 3)
    max_distance : float
    divisions : int
        Cells per search radius.
    batch_candidates : float
        Candidate pairs per batch.

    Returns
    -------
    RunPlan
    """
    c = np.asarray(coords, dtype=np.float64)
    c = c - c.min(axis=0) if len(c) else c
    grid, off, work, batches = _grid_and_plan(c, float(max_distance), divisions, batch_candidates)
    return RunPlan(
        n_samples=len(c),
        max_distance=float(max_distance),
        estimated_pairs=estimate_pair_count(c, max_distance),
        candidate_pairs=int(work.sum()),
        batches=batches,
        cell=float(grid.cell),
    )


# ---------------------------------------------------------------- the volume
@dataclass
class LagVolume:
    """Accumulated pair sums of one pass (see the module docstring).

    Attributes
    ----------
    lag, n_lags, max_distance : float, int, float
        Distance classes k = 0..n_lags of width ``lag``; pairs up to
        ``max_distance = (n_lags + 1/2) lag``.
    directions : ndarray (n_fine, 3)
        Fine lattice (unit vectors, canonical orientation).
    sums : ndarray (n_lags + 1, n_fine, n_ch)
    coarse_directions : ndarray (n_coarse, 3)
    fine_to_coarse : ndarray (n_fine,) int64
        Nearest coarse axis of each fine direction.
    block_shape : tuple of 3 int
    block_origin : ndarray (3,)
        Lower corner of the block grid, input coordinates.
    block_size : ndarray (3,)
    block_of_sample : ndarray (n,) int64
        Flat block index ``(bx * ny + by) * nz + bz`` of each sample.
    block_sums : ndarray (n_blocks, n_lags + 1, n_coarse, n_ch)
        Per block of pair midpoints; empty (0, ...) when blocks were turned off.
    map_cell : float or None
    map_sums : ndarray (2m + 1, 2m + 1, m + 1, n_ch)
        Canonical half of the Cartesian lag volume: index (ix, iy, iz) holds
        lags with ``round(v / map_cell) == (ix - m, iy - m, iz - m)``.
    n_pairs : int
        Pairs binned (within ``max_distance``).
    seconds : float
    memory_bytes : int
        Bytes of all accumulators during the run (chunk slices + result).
    stats : dict
        Candidates looked at, cell side, batches, chunks, block memory.
    """

    lag: float
    n_lags: int
    max_distance: float
    directions: np.ndarray
    sums: np.ndarray
    coarse_directions: np.ndarray
    fine_to_coarse: np.ndarray
    block_shape: tuple
    block_origin: np.ndarray
    block_size: np.ndarray
    block_of_sample: np.ndarray
    block_sums: np.ndarray
    map_cell: float | None
    map_sums: np.ndarray
    n_pairs: int
    seconds: float
    memory_bytes: int
    stats: dict = field(default_factory=dict)
    channels: tuple = CHANNELS
    block_channels: tuple = CHANNELS
    map_channels: tuple = CHANNELS

    @property
    def n_blocks(self) -> int:
        return int(self.block_sums.shape[0])

    @property
    def class_centres(self) -> np.ndarray:
        """Nominal distance of each class, k * lag, k = 0..n_lags."""
        return np.arange(self.n_lags + 1) * self.lag

    def cell_mask(self, direction, angular_tolerance, bandwidth=None) -> np.ndarray:
        """Bins (n_lags + 1, n_fine) that count for a direction.

        A fine cell counts when the angle between its lattice axis and the
        direction is <= ``angular_tolerance`` (all cells when the tolerance is
        >= 90 degrees or ``direction`` is None). With a bandwidth ``b``, bin
        (k, cell) counts only when ``k lag sin(angle) <= b``: the bandwidth
        rule applied at the class centre and the cell axis.
        """
        nf = len(self.directions)
        if direction is None or angular_tolerance >= 90.0:
            m = np.ones(nf, dtype=bool)
            sin = None
            if direction is not None and bandwidth is not None:
                u = direction_vector(direction)
                c = np.abs(self.directions @ u)
                sin = np.sqrt(np.maximum(0.0, 1.0 - c * c))
        else:
            u = direction_vector(direction)
            c = np.minimum(np.abs(self.directions @ u), 1.0)
            m = c >= math.cos(math.radians(float(angular_tolerance)))
            sin = np.sqrt(np.maximum(0.0, 1.0 - c * c))
        mask = np.broadcast_to(m, (self.n_lags + 1, nf)).copy()
        if bandwidth is not None and sin is not None:
            perp = self.class_centres[:, None] * sin[None, :]
            mask &= perp <= float(bandwidth)
        return mask

    def aggregate(self, direction, angular_tolerance, bandwidth=None) -> np.ndarray:
        """Sums (n_lags + 1, n_ch) over the fine cells of a direction.

        Cell-resolution approximation of the exact rule: a pair counts when
        its *cell axis* (not its own lag vector) is within the tolerance, so
        the pair set differs from :func:`anisotropy.experimental_variogram`
        only for pairs whose angle to the direction is within one cell radius
        of the tolerance. With ``direction=None`` (omnidirectional) it is
        exact.

        Parameters
        ----------
        direction : None, (trend, plunge) or vector
        angular_tolerance : float, degrees
        bandwidth : float or None, metres (applied at class centres)
        """
        mask = self.cell_mask(direction, angular_tolerance, bandwidth)
        out = np.einsum("kf,kfc->kc", mask.astype(np.float64), self.sums)
        if direction is not None:   # head = the sample further along the direction
            against = against_cells(self.sums, self.directions, direction_vector(direction))[0]
            turn_round(out, mask & against[None, :], self.sums, "kf,kf->k")
        return out

    def coarse_sums(self, block_weights=None) -> np.ndarray:
        """Sums (n_lags + 1, n_coarse, n_ch) on the coarse lattice.

        ``block_weights`` (n_blocks,) re-weights the blocks (a bootstrap
        replicate); None sums every block, which equals the fine ``sums``
        aggregated through ``fine_to_coarse``. Channels the blocks did not
        keep (``block_channels``) are NaN in re-weighted sums and come from
        the fine sums when ``block_weights`` is None.
        """
        if block_weights is None:
            if self.n_blocks and len(self.block_channels) == len(CHANNELS):
                return self.block_sums.sum(axis=0)
            out = np.zeros((self.n_lags + 1, len(self.coarse_directions), len(CHANNELS)))
            np.add.at(out, (slice(None), self.fine_to_coarse), self.sums)
            if self.n_blocks:  # kept channels from the blocks, as with all channels kept
                kept = [CH[c] for c in self.block_channels]
                out[..., kept] = self.block_sums[..., kept].sum(axis=0)
            return out
        w = np.asarray(block_weights, dtype=np.float64).ravel()
        if len(w) != self.n_blocks:
            raise InputError(
                f"block_weights needs one weight per block ({self.n_blocks}); got {len(w)}."
            )
        return np.tensordot(w, self.block_sums, axes=(0, 0))

    def full_map(self) -> tuple:
        """Symmetrised Cartesian map: (centres (n,), sums (n, n, n, n_ch)).

        Each pair appears at its lag v and at -v (as in a variogram map);
        the centre cell holds each zero-or-near-zero pair once.
        ``centres`` are the cell-centre coordinates along every axis.
        """
        m = (self.map_sums.shape[0] - 1) // 2
        n = 2 * m + 1
        full = np.zeros((n, n, n, self.map_sums.shape[-1]))
        full[:, :, : m + 1] = self.map_sums
        full += full[::-1, ::-1, ::-1]
        full[m, m, m] = self.map_sums[m, m, m]
        return (np.arange(-m, m + 1) * self.map_cell, full)

    def blocks_of_pairs(self, coords, i, j) -> np.ndarray:
        """Flat block index of each pair ``(i, j)``'s midpoint, by this pass's own rule.

        As the pass credits a pair: the midpoint of the two samples'
        coordinates less ``block_origin``, times the inverse block side,
        floored and clamped to the grid. Sums over pairs weighted by their
        block's weight then re-weight exactly as the block sums do.

        Parameters
        ----------
        coords : array_like (n, 3)
            The coordinates the volume was built from.
        i, j : array_like of int (m,)

        Returns
        -------
        ndarray of int64 (m,)
        """
        c = np.asarray(coords, dtype=np.float64) - self.block_origin
        mid = 0.5 * (c[np.asarray(i)] + c[np.asarray(j)])
        size = np.asarray(self.block_size, dtype=float)
        inv = np.where(size > 0, 1.0 / np.where(size > 0, size, 1.0), 0.0)
        shape = np.asarray(self.block_shape, dtype=np.int64)
        b = np.clip(np.floor(mid * inv).astype(np.int64), 0, np.maximum(shape - 1, 0))
        return (b[:, 0] * shape[1] + b[:, 1]) * shape[2] + b[:, 2]

    def bins_of_pairs(self, coords, i, j) -> tuple:
        """Distance class and coarse cell of the pairs ``(i, j)``, by this pass's own rule.

        The lag vector is formed as the pass forms it (coordinates less the
        pass's origin, ``block_origin``), its class is ``ceil(d / lag - 1/2)``
        and its cell is the lookup table's fine cell mapped to its coarse cell
        (``fine_to_coarse``), with the same canonical orientation. Counts made
        with it therefore agree pair for pair with the pass's, which is what a
        subset of the pairs (those inside one drill hole, say) needs to be
        subtracted from the pass's bins.

        Parameters
        ----------
        coords : array_like (n, 3)
            The coordinates the volume was built from.
        i, j : array_like of int (m,)
            The pairs' sample indices.

        Returns
        -------
        k : ndarray of int64 (m,)
            Distance class, -1 for a pair beyond the pass's reach.
        cell : ndarray of int64 (m,)
            Coarse cell (row of ``coarse_directions``).
        """
        c = np.asarray(coords, dtype=np.float64) - self.block_origin
        v = c[np.asarray(j)] - c[np.asarray(i)]
        d2 = v[:, 0] * v[:, 0] + v[:, 1] * v[:, 1] + v[:, 2] * v[:, 2]
        d = np.sqrt(d2)
        with np.errstate(invalid="ignore"):
            k = np.maximum(np.ceil(d / self.lag - 0.5), 0.0)
        beyond = (d2 > (self.max_distance * (1 + 1e-12)) ** 2) | (k > self.n_lags)
        k = np.where(beyond, -1, k).astype(np.int64)
        fine = np.zeros(len(v), dtype=np.int64)       # coincident points: first cell
        moved = d2 > 0.0
        if moved.any():
            fine[moved] = _lattice.lookup(v[moved], _lattice.direction_table(self.directions))
        return k, np.asarray(self.fine_to_coarse, dtype=np.int64)[fine]

    def to_dict(self) -> dict:
        """JSON-ready summary (no arrays)."""
        return {
            "lag": float(self.lag),
            "n_lags": int(self.n_lags),
            "max_distance": float(self.max_distance),
            "n_fine": int(len(self.directions)),
            "n_coarse": int(len(self.coarse_directions)),
            "block_shape": [int(b) for b in self.block_shape],
            "block_size": [float(b) for b in self.block_size],
            "n_blocks": int(self.n_blocks),
            "map_cell": None if self.map_cell is None else float(self.map_cell),
            "n_pairs": int(self.n_pairs),
            "seconds": float(self.seconds),
            "memory_bytes": int(self.memory_bytes),
            "stats": {k: (float(v) if isinstance(v, (float, np.floating)) else
                          int(v) if isinstance(v, (int, np.integer)) else v)
                      for k, v in self.stats.items()},
        }


def _aligned_zeros(shape):
    """Zeros starting on a 64-byte boundary, so that accumulator rows sit on cache lines."""
    n = int(np.prod(shape))
    raw = np.zeros(n + 8)
    off = (-raw.ctypes.data % 64) // 8
    return raw[off:off + n].reshape(shape)


def _merge(acc, kept):
    """Sum the chunk slices (n_chunks, n_bins, width) in chunk order -> (n_bins, 15).

    Column ``i`` of a row holds channel ``kept[i]``; pad columns are dropped
    and channels not kept are NaN.
    """
    tot = acc[0].copy()
    for a in acc[1:]:
        tot += a
    if len(kept) == len(CHANNELS):
        return np.ascontiguousarray(tot[:, :len(CHANNELS)])
    out = np.full((tot.shape[0], len(CHANNELS)), np.nan)
    out[:, [CH[c] for c in kept]] = tot[:, :len(kept)]
    return out


def _announce_start(progress, cl, max_distance, work, batches, memory) -> int:
    """Send the estimated pair count of a run to ``progress``; returns the estimate."""
    est = estimate_pair_count(cl, max_distance)
    note(progress, (
        f"pair engine: about {est:,} pairs within {max_distance:g} m among {len(cl):,} samples "
        f"({int(work.sum()):,} candidates, {len(batches)} batch(es), "
        f"{memory / 2**20:.0f} MB of accumulators)"))
    return est


def _lattices(fine_directions, coarse_directions):
    """Fine and coarse lattices, the fine-to-coarse map and the fine lookup table."""
    fine = _lattice.lattice(fine_directions, _lattice.DEFAULT_FINE_SPACING)
    if fine_directions is None or np.isscalar(fine_directions):
        # generated lattice: number it along a Z-order curve for cache locality
        fine = np.ascontiguousarray(fine[_lattice.spatial_order(fine)])
    coarse = _lattice.lattice(coarse_directions, _lattice.DEFAULT_COARSE_SPACING)
    return fine, coarse, _lattice.nearest_axis(fine, coarse), _lattice.direction_table(fine)


def _block_grid(blocks, cl, hi, max_distance, per_block, block_memory):
    """Block side (3,), grid shape (3,), block count and each sample's flat block index.

    ``blocks``: None (cubes of side ``max_distance``), a side or three sides in
    metres, or False (no blocks: zeros). The side grows by 25 % steps until
    the blocks' accumulators (``per_block`` bytes each) fit ``block_memory``.
    """
    if blocks is False:
        return np.zeros(3), np.ones(3, dtype=np.int64), 0, np.zeros(len(cl), dtype=np.int64)
    if blocks is None:
        size = np.full(3, max_distance)
    else:
        size = np.broadcast_to(np.asarray(blocks, dtype=float), (3,)).astype(float).copy()
        if not np.all(np.isfinite(size)) or np.any(size <= 0):
            raise InputError(f"block size must be positive metres; got {blocks!r}.")
    while True:
        shape = np.maximum(np.ceil(np.maximum(hi, 1e-12) / size), 1).astype(np.int64)
        if int(np.prod(shape)) * per_block <= block_memory or np.prod(shape) == 1:
            break
        size = size * 1.25
    bidx = np.minimum(np.floor(cl / size).astype(np.int64), shape - 1)
    block_of_sample = (bidx[:, 0] * shape[1] + bidx[:, 1]) * shape[2] + bidx[:, 2]
    return size, shape, int(np.prod(shape)), block_of_sample


def _map_grid(map_cell, lag, max_distance):
    """Map cell (None without a map) and the map's half-width in cells."""
    if map_cell is False:
        return None, 0
    mc = float(lag if map_cell is None else map_cell)
    if not (mc > 0) or not math.isfinite(mc):
        raise InputError(f"map_cell must be a positive distance in metres; got {map_cell!r}.")
    return mc, int(math.ceil(max_distance / mc))


def build_volume(coords, values, *, lag, n_lags, fine_directions=None, coarse_directions=None,
                 blocks=None, map_cell=None, progress=True, block_memory=BLOCK_MEMORY,
                 cell_divisions=_cells.DEFAULT_CELL_DIVISIONS,
                 batch_candidates=BATCH_CANDIDATES, channels=None, block_channels=None,
                 map_channels=None) -> LagVolume:
    """One pass over all pairs into a :class:`LagVolume`.

    Parameters
    ----------
    coords : array_like (n, 3)
        Sample coordinates (east, north, up), metres. Shifted internally to
        their minimum for precision.
    values : array_like (n,)
    lag : float
        Class width, metres.
    n_lags : int
        Classes 1..n_lags (plus class 0); pairs up to (n_lags + 1/2) lag.
    fine_directions, coarse_directions : None, float, int or (n, 3) array
        Direction lattices: None for the defaults (about 2 and 10 degrees
        apart), a spacing in degrees, a number of Fibonacci directions (> 90)
        or the vectors themselves.
    blocks : None, float, (3,) floats or False
        Block side(s) in metres for ``block_sums``. None: cubes of side
        ``max_distance`` (enlarged to fit ``block_memory``); False: no block
        sums.
    map_cell : None, float or False
        Cell of the Cartesian map, metres; None: ``lag``; False: no map.
    progress : bool or callable
        True prints the estimated pair count and per-batch progress to
        standard error for runs above ``ANNOUNCE_PAIRS`` pairs; a callable
        receives those messages (every run); False is silent.
    block_memory : int
        Bound in bytes for the block sums, all chunk slices included; the
        block side grows until it holds.
    cell_divisions : int
        Search cells per ``max_distance``.
    batch_candidates : float
        Candidate pairs per batch.
    channels, block_channels, map_channels : None, str or sequence of str
        Channels the fine sums / the block sums / the map accumulate (see
        :func:`resolve_channels`): None (default) keeps all 15; an estimator
        name such as ``"semivariogram"`` keeps count, dist, dx, dy, dz and
        what that estimator reads, which makes the pass cheaper (a channel
        no accumulator keeps costs nothing per pair). Dropped channels are
        NaN in ``sums`` / ``block_sums`` / ``map_sums`` (shapes do not
        change).

    Returns
    -------
    LagVolume
    """
    t_start = time.perf_counter()
    c, v = _check_coords_values(coords, values)
    lag, n_lags = _check_lag(lag, n_lags)
    max_distance = (n_lags + 0.5) * lag
    origin = c.min(axis=0) if len(c) else np.zeros(3)
    cl = c - origin
    hi = cl.max(axis=0) if len(c) else np.zeros(3)

    fine, coarse, f2c, table = _lattices(fine_directions, coarse_directions)
    n_fine, n_coarse, n_cls, nch = len(fine), len(coarse), n_lags + 1, len(CHANNELS)
    n_chunks = _n_chunks()
    fkeep, bkeep, mkeep = (resolve_channels(k) for k in (channels, block_channels, map_channels))
    (fcols, fwidth), (bcols, bwidth), (mcols, mwidth) = map(_columns, (fkeep, bkeep, mkeep))
    do_blocks, do_map = blocks is not False, map_cell is not False
    size, bshape, n_blocks, block_of_sample = _block_grid(
        blocks, cl, hi, max_distance, n_cls * n_coarse * 8 * (bwidth * n_chunks + nch),
        block_memory)
    mc, mhalf = _map_grid(map_cell, lag, max_distance)
    mny, mnz = 2 * mhalf + 1, mhalf + 1

    # accumulators (chunk slices)
    acc_fine = _aligned_zeros((n_chunks, n_cls * n_fine, fwidth))
    acc_blk = _aligned_zeros((n_chunks, max(n_blocks, 1) * n_cls * n_coarse if do_blocks else 1,
                              bwidth))
    acc_map = _aligned_zeros((n_chunks, mny * mny * mnz if do_map else 1, mwidth))
    stats = np.zeros((n_chunks, 2), dtype=np.int64)
    memory = (acc_fine.nbytes + acc_blk.nbytes + acc_map.nbytes) * (n_chunks + 1) // n_chunks
    memory += table.nbytes

    grid, off, work, batches = _grid_and_plan(cl, max_distance, cell_divisions, batch_candidates)
    # blocks whose channels the fine sums hold go block by block: pairs are binned into a
    # scratch copy of the fine sums and each block's sums are folded from it, so the cell
    # pairs inside one block cost no per-pair block work (the grid starts at the shifted
    # origin 0, which the block-major kernel's cell ranges assume)
    block_major = bool(do_blocks and set(bkeep) <= set(fkeep) and np.all(grid.origin == 0.0))
    acc_scratch = _aligned_zeros(acc_fine.shape) if block_major else np.zeros((1, 1, 1))
    touched = np.zeros(acc_fine.shape[:2] if block_major else (1, 1), dtype=np.int64)
    if block_major:
        memory += acc_scratch.nbytes + touched.nbytes
    loud = callable(progress) or (progress is True and work.sum() > ANNOUNCE_PAIRS)
    est = _announce_start(progress, cl, max_distance, work, batches, memory) if loud else None
    o = grid.order
    x, y, z, vv = (np.ascontiguousarray(a) for a in (cl[o, 0], cl[o, 1], cl[o, 2], v[o]))
    occ_index, cell_lo, cell_hi = _cells.cell_bounds(grid, np.column_stack([x, y, z]))
    maxd2 = (max_distance * (1 + 1e-12)) ** 2
    inv_pix = table.shape[0] / 2.0  # the plane coordinates cover [-1, 1]
    binv = np.where(size > 0, 1.0 / np.where(size > 0, size, 1.0), 0.0)
    borig = np.zeros(3)
    # no blocks, a fixed row layout (the map's, if any, the same): the specialised kernel
    fixed_layout = (not do_blocks and fkeep in (CHANNELS, resolve_channels("semivariogram"))
                    and (not do_map or mkeep == fkeep))
    for bi, (q0, q1) in enumerate(batches):
        if fixed_layout:
            _kernels.fine_pass(x, y, z, vv, grid.start, grid.dims, grid.occupied, off, q0, q1,
                               n_chunks, maxd2, lag, n_lags, table, inv_pix,
                               fkeep == CHANNELS, acc_fine, stats, do_map,
                               (1.0 / mc) if do_map else 0.0, mhalf, acc_map)
        else:
            if block_major:
                _kernels.block_major_pass(x, y, z, vv, grid.start, grid.dims, grid.occupied, off,
                                          q0, q1, n_chunks, maxd2, lag, n_lags, table, inv_pix,
                                          f2c, n_coarse, borig, binv, size, bshape,
                                          float(grid.cell), do_map,
                                          (1.0 / mc) if do_map else 0.0, mhalf, acc_fine,
                                          acc_scratch, touched, acc_blk, acc_map, stats,
                                          occ_index, cell_lo, cell_hi, fcols, bcols, mcols)
            _kernels.volume_pass(x, y, z, vv, grid.start, grid.dims, grid.occupied, off, q0, q1,
                                 n_chunks, maxd2, lag, n_lags, table, inv_pix, f2c, n_coarse,
                                 do_blocks, borig, binv, bshape, do_map,
                                 (1.0 / mc) if do_map else 0.0, mhalf,
                                 acc_fine, acc_blk, acc_map, stats, occ_index, cell_lo, cell_hi,
                                 fcols, bcols, mcols, block_major)
        if loud and len(batches) > 1:
            done = float(work[:q1].sum() / max(work.sum(), 1))
            note(progress, f"pair engine: batch {bi + 1}/{len(batches)} done "
                           f"({100 * done:.0f} % of candidates)")
    sums = _merge(acc_fine, fkeep).reshape(n_cls, n_fine, nch)
    del acc_fine
    block_sums = (_merge(acc_blk, bkeep).reshape(n_blocks, n_cls, n_coarse, nch) if do_blocks
                  else np.zeros((0, n_cls, n_coarse, nch)))
    del acc_blk
    map_sums = (_merge(acc_map, mkeep).reshape(mny, mny, mnz, nch) if do_map
                else np.zeros((1, 1, 1, nch)))
    del acc_map
    st = stats.sum(axis=0)
    return LagVolume(
        lag=lag, n_lags=n_lags, max_distance=max_distance,
        directions=fine, sums=sums, coarse_directions=coarse, fine_to_coarse=f2c,
        block_shape=tuple(int(b) for b in bshape) if do_blocks else (0, 0, 0),
        block_origin=origin.copy(), block_size=size, block_of_sample=block_of_sample,
        block_sums=block_sums, map_cell=mc, map_sums=map_sums,
        n_pairs=int(st[1]), seconds=time.perf_counter() - t_start, memory_bytes=int(memory),
        stats={"candidates": int(st[0]), "cell": float(grid.cell), "batches": len(batches),
               "chunks": int(n_chunks), "table_size": int(table.shape[0]),
               "block_bytes": int(block_sums.nbytes),
               "estimated_pairs": -1 if est is None else int(est)},
        channels=fkeep, block_channels=bkeep, map_channels=mkeep,
    )


# ------------------------------------------------------------ the exact pass
def check_angular_tolerance(angular_tolerance) -> float:
    """Angular tolerance as a float in (0, 90] degrees, or an InputError."""
    try:
        a = float(angular_tolerance)
    except (TypeError, ValueError):
        raise InputError(f"angular tolerance must be degrees in (0, 90]; got {angular_tolerance!r}.") from None
    if not (0.0 < a <= 90.0):
        raise InputError(f"angular tolerance must be degrees in (0, 90]; got {a}.")
    return a


def check_bandwidth(bandwidth):
    """Bandwidth as a positive float in metres, None kept, or an InputError."""
    if bandwidth is None:
        return None
    b = float(bandwidth)
    if not (b > 0) or not math.isfinite(b):
        raise InputError(f"bandwidth must be a positive distance in metres or None; got {bandwidth!r}.")
    return b


def exact_sums(coords, values, *, lag, n_lags, direction=None, angular_tolerance=22.5,
               lag_tolerance=None, bandwidth=None, channels=None) -> np.ndarray:
    """Exact channel sums (n_lags + 1, n_ch) of a directional variogram (row 0 unused).

    The exact directional pass: every pair closer than ``n_lags lag + tol``
    is visited once and tested against the lag-class, angle and bandwidth
    rules on its own lag vector (the rules are spelled out in
    :func:`anisotropy.directional.experimental_variogram`, which reads its
    values from these sums). ``channels``
    (see :func:`anisotropy.pairs.resolve_channels`): None keeps all 15; an
    estimator name keeps count, dist and what that estimator reads (not the
    lag-vector sums dx, dy, dz, which no variogram value needs, unless they
    are named), and the pass does no work for the others, which are NaN.
    """
    c, v = _check_coords_values(coords, values)
    lag, n_lags = _check_lag(lag, n_lags)
    tol = 0.5 * lag if lag_tolerance is None else float(lag_tolerance)
    if not (tol > 0) or not math.isfinite(tol):
        raise InputError(f"lag tolerance must be a positive distance in metres; got {lag_tolerance!r}.")
    ang = check_angular_tolerance(angular_tolerance)
    band = check_bandwidth(bandwidth)
    omni = direction is None
    u = np.zeros(3) if omni else direction_vector(direction)
    kept = resolve_channels(channels)
    asked = {channels} if isinstance(channels, str) else set(channels or ())
    if kept != CHANNELS and not asked & {"dx", "dy", "dz"}:
        # a variogram value needs no mean lag vector unless it was asked for by name
        kept = tuple(name for name in kept if name not in ("dx", "dy", "dz"))
    need = np.array([name in kept for name in ("abs", "sqrt", "head", "rel", "dx")], dtype=np.int64)
    n_chunks = _n_chunks()
    acc = np.zeros((n_chunks, (n_lags + 1) * len(CHANNELS)))
    stats = np.zeros((n_chunks, 2), dtype=np.int64)
    if len(c) >= 2:
        radius = n_lags * lag + tol
        cl = c - c.min(axis=0)
        grid = _cells.make_grid(cl, radius)
        off = _cells.half_stencil(grid.cell, radius, grid.dims)
        work = _kernels.cell_work(grid.start, grid.dims, grid.occupied, off)
        o = grid.order
        x, y, z, vv = (np.ascontiguousarray(a) for a in (cl[o, 0], cl[o, 1], cl[o, 2], v[o]))
        # 90 degrees: every direction (-1 so that perpendicular lags are not lost to rounding)
        cos_tol = math.cos(math.radians(ang)) if ang < 90.0 else -1.0
        maxd2 = (radius * (1 + 1e-12)) ** 2
        # class bounds of the rule k lag - tol < d <= k lag + tol, as the rule computes them
        k = np.arange(n_lags + 3)
        lo = k * lag - tol
        hi = k * lag + tol
        pad = (k == 0) | (k > n_lags)  # never match (the kernel also reads index -1)
        lo[pad] = np.inf
        hi[pad] = -np.inf
        narrow = bool(tol <= 0.5 * lag)
        lean_omni = omni and narrow and not need.any()  # the semivariogram, every direction
        for q0, q1 in _plan_batches(work, 4e8):
            if lean_omni:
                _kernels.omni_pass(x, y, z, vv, grid.start, grid.dims, grid.occupied, off, q0, q1,
                                   n_chunks, maxd2, 1.0 / lag, lo, hi, n_lags, acc, stats)
                continue
            _kernels.exact_pass(x, y, z, vv, grid.start, grid.dims, grid.occupied, off, q0, q1,
                                n_chunks, maxd2, 1.0 / lag, tol, lo, hi, narrow, n_lags, omni,
                                u[0], u[1], u[2], cos_tol, band is not None,
                                0.0 if band is None else band * band, need, acc, stats)
    out = acc.sum(axis=0).reshape(n_lags + 1, len(CHANNELS))
    out[:, [CHANNELS.index(name) for name in CHANNELS if name not in kept]] = np.nan
    return out


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
