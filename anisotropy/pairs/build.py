"""The pass into a :class:`~anisotropy.pairs.volume.LagVolume`: lattices, block grid and
map grid, accumulators, the compiled kernels over batches of cells, and the merge."""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from ..constants import CHANNEL_INDEX as CH
from ..constants import CHANNELS
from ..errors import InputError
from ..progress import note
from . import _cells, _kernels, _lattice
from .channels import _columns, resolve_channels
from .checks import _check_coords_values, _check_lag
from .planning import BATCH_CANDIDATES, _grid_and_plan, _n_chunks, estimate_pair_count
from .volume import LagVolume

#: Pairs above which a run announces its estimate and reports progress.
ANNOUNCE_PAIRS = 20_000_000

#: Default bound (bytes) for the block sums, all chunk slices included.
BLOCK_MEMORY = 384 * 2**20


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
    fine, coarse, f2c, table = _lattices(fine_directions, coarse_directions)
    n_chunks = _n_chunks()
    keep = tuple(resolve_channels(k) for k in (channels, block_channels, map_channels))
    do_blocks, do_map = blocks is not False, map_cell is not False
    n_cls, nch = n_lags + 1, len(CHANNELS)
    bwidth = _columns(keep[1])[1]
    size, bshape, n_blocks, block_of_sample = _block_grid(
        blocks, cl, cl.max(axis=0) if len(c) else np.zeros(3), max_distance,
        n_cls * len(coarse) * 8 * (bwidth * n_chunks + nch), block_memory)
    mc, mhalf = _map_grid(map_cell, lag, max_distance)
    grid, off, work, batches = _grid_and_plan(cl, max_distance, cell_divisions, batch_candidates)
    # blocks whose channels the fine sums hold go block by block: pairs are binned into a
    # scratch copy of the fine sums and each block's sums are folded from it, so the cell
    # pairs inside one block cost no per-pair block work (the grid starts at the shifted
    # origin 0, which the block-major kernel's cell ranges assume)
    block_major = bool(do_blocks and set(keep[1]) <= set(keep[0])
                       and np.all(grid.origin == 0.0))
    acc = _Accumulators.allocate(n_chunks, n_cls, len(fine), len(coarse), n_blocks if do_blocks
                                 else None, (2 * mhalf + 1, mhalf + 1) if do_map else None,
                                 keep, block_major, table.nbytes)
    loud = callable(progress) or (progress is True and work.sum() > ANNOUNCE_PAIRS)
    est = (_announce_start(progress, cl, max_distance, work, batches, acc.memory) if loud
           else None)
    P = _PassInputs.of(grid, cl, v, off, max_distance, lag, n_lags, table, f2c, len(coarse),
                       size, bshape, mc, mhalf, keep, do_blocks, block_major)
    for bi, (q0, q1) in enumerate(batches):
        _run_batch(P, acc, q0, q1)
        if loud and len(batches) > 1:
            done = float(work[:q1].sum() / max(work.sum(), 1))
            note(progress, f"pair engine: batch {bi + 1}/{len(batches)} done "
                           f"({100 * done:.0f} % of candidates)")
    sums, block_sums, map_sums = acc.merged(keep, n_cls, len(fine), len(coarse))
    st = acc.stats.sum(axis=0)
    return LagVolume(
        lag=lag, n_lags=n_lags, max_distance=max_distance,
        directions=fine, sums=sums, coarse_directions=coarse, fine_to_coarse=f2c,
        block_shape=tuple(int(b) for b in bshape) if do_blocks else (0, 0, 0),
        block_origin=origin.copy(), block_size=size, block_of_sample=block_of_sample,
        block_sums=block_sums, map_cell=mc, map_sums=map_sums,
        n_pairs=int(st[1]), seconds=time.perf_counter() - t_start, memory_bytes=int(acc.memory),
        stats={"candidates": int(st[0]), "cell": float(grid.cell), "batches": len(batches),
               "chunks": int(n_chunks), "table_size": int(table.shape[0]),
               "block_bytes": int(block_sums.nbytes),
               "estimated_pairs": -1 if est is None else int(est)},
        channels=keep[0], block_channels=keep[1], map_channels=keep[2],
    )


@dataclass
class _Accumulators:
    """The pass's chunk slices (fine, block and map sums; the block-major scratch and its
    touched rows; candidate and pair counts) and their memory in bytes.

    ``n_blocks`` is None without blocks, ``map_shape`` (cells across, cells up)
    None without a map.
    """

    fine: np.ndarray
    blk: np.ndarray
    map: np.ndarray
    scratch: np.ndarray
    touched: np.ndarray
    stats: np.ndarray
    memory: int
    n_blocks: int | None
    map_shape: tuple | None

    @classmethod
    def allocate(cls, n_chunks, n_cls, n_fine, n_coarse, n_blocks, map_shape, keep,
                 block_major, table_bytes):
        """Zeroed slices, on 64-byte boundaries."""
        (_, fwidth), (_, bwidth), (_, mwidth) = map(_columns, keep)
        fine = _aligned_zeros((n_chunks, n_cls * n_fine, fwidth))
        blk = _aligned_zeros((n_chunks, max(n_blocks, 1) * n_cls * n_coarse
                              if n_blocks is not None else 1, bwidth))
        mp = _aligned_zeros((n_chunks, map_shape[0] ** 2 * map_shape[1]
                             if map_shape is not None else 1, mwidth))
        memory = (fine.nbytes + blk.nbytes + mp.nbytes) * (n_chunks + 1) // n_chunks
        memory += table_bytes
        scratch = _aligned_zeros(fine.shape) if block_major else np.zeros((1, 1, 1))
        touched = np.zeros(fine.shape[:2] if block_major else (1, 1), dtype=np.int64)
        if block_major:
            memory += scratch.nbytes + touched.nbytes
        return cls(fine, blk, mp, scratch, touched, np.zeros((n_chunks, 2), dtype=np.int64),
                   int(memory), n_blocks, map_shape)

    def merged(self, keep, n_cls, n_fine, n_coarse):
        """(fine sums, block sums, map sums) in the volume's shapes; the slices are released
        one by one as they are merged."""
        nch = len(CHANNELS)
        sums = _merge(self.fine, keep[0]).reshape(n_cls, n_fine, nch)
        self.fine = self.scratch = None
        block_sums = (np.zeros((0, n_cls, n_coarse, nch)) if self.n_blocks is None else
                      _merge(self.blk, keep[1]).reshape(self.n_blocks, n_cls, n_coarse, nch))
        self.blk = None
        if self.map_shape is None:
            map_sums = np.zeros((1, 1, 1, nch))
        else:
            ny, nz = self.map_shape
            map_sums = _merge(self.map, keep[2]).reshape(ny, ny, nz, nch)
        self.map = None
        return sums, block_sums, map_sums


@dataclass(frozen=True)
class _PassInputs:
    """What every batch of the pass hands the kernels: the samples in cell order, the
    search grid, the class, direction, block and map geometry, and the channel columns."""

    pts: tuple            # x, y, z, value (contiguous, in the grid's order)
    grid: object
    off: np.ndarray
    cells: tuple          # each occupied cell's index and its first and last sample
    maxd2: float
    lag: float
    n_lags: int
    table: np.ndarray
    inv_pix: float
    f2c: np.ndarray
    n_coarse: int
    blocks: tuple         # origin, inverse side, side, grid shape
    map: tuple            # inverse cell (0 without a map), half-width
    cols: tuple           # fine, block and map columns
    do_blocks: bool
    do_map: bool
    block_major: bool
    fixed_layout: bool    # no blocks, one of the two fixed row layouts: the specialised kernel
    all_channels: bool

    @classmethod
    def of(cls, grid, cl, v, off, max_distance, lag, n_lags, table, f2c, n_coarse, size,
           bshape, mc, mhalf, keep, do_blocks, block_major):
        o = grid.order
        x, y, z, vv = (np.ascontiguousarray(a) for a in (cl[o, 0], cl[o, 1], cl[o, 2], v[o]))
        do_map = mc is not None
        binv = np.where(size > 0, 1.0 / np.where(size > 0, size, 1.0), 0.0)
        fixed = (not do_blocks and keep[0] in (CHANNELS, resolve_channels("semivariogram"))
                 and (not do_map or keep[2] == keep[0]))
        return cls(pts=(x, y, z, vv), grid=grid, off=off,
                   cells=_cells.cell_bounds(grid, np.column_stack([x, y, z])),
                   maxd2=(max_distance * (1 + 1e-12)) ** 2, lag=lag, n_lags=n_lags,
                   table=table, inv_pix=table.shape[0] / 2.0,   # plane coordinates in [-1, 1]
                   f2c=f2c, n_coarse=n_coarse, blocks=(np.zeros(3), binv, size, bshape),
                   map=((1.0 / mc) if do_map else 0.0, mhalf),
                   cols=tuple(_columns(k)[0] for k in keep), do_blocks=do_blocks,
                   do_map=do_map, block_major=block_major, fixed_layout=fixed,
                   all_channels=keep[0] == CHANNELS)


def _run_batch(P: _PassInputs, acc: _Accumulators, q0: int, q1: int) -> None:
    """Search offsets ``q0:q1`` of the pass through the kernel its layout calls for."""
    x, y, z, vv = P.pts
    g = P.grid
    minv, mhalf = P.map
    n_chunks = acc.stats.shape[0]
    if P.fixed_layout:
        _kernels.fine_pass(x, y, z, vv, g.start, g.dims, g.occupied, P.off, q0, q1, n_chunks,
                           P.maxd2, P.lag, P.n_lags, P.table, P.inv_pix, P.all_channels,
                           acc.fine, acc.stats, P.do_map, minv, mhalf, acc.map)
        return
    borig, binv, size, bshape = P.blocks
    occ_index, cell_lo, cell_hi = P.cells
    fcols, bcols, mcols = P.cols
    if P.block_major:
        _kernels.block_major_pass(x, y, z, vv, g.start, g.dims, g.occupied, P.off, q0, q1,
                                  n_chunks, P.maxd2, P.lag, P.n_lags, P.table, P.inv_pix,
                                  P.f2c, P.n_coarse, borig, binv, size, bshape, float(g.cell),
                                  P.do_map, minv, mhalf, acc.fine, acc.scratch, acc.touched,
                                  acc.blk, acc.map, acc.stats, occ_index, cell_lo, cell_hi,
                                  fcols, bcols, mcols)
    _kernels.volume_pass(x, y, z, vv, g.start, g.dims, g.occupied, P.off, q0, q1, n_chunks,
                         P.maxd2, P.lag, P.n_lags, P.table, P.inv_pix, P.f2c, P.n_coarse,
                         P.do_blocks, borig, binv, bshape, P.do_map, minv, mhalf,
                         acc.fine, acc.blk, acc.map, acc.stats, occ_index, cell_lo, cell_hi,
                         fcols, bcols, mcols, P.block_major)
