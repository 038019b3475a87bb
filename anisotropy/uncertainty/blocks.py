"""Spatial blocks of the block bootstrap: their grouping, the resampling weights, the sums.

A pair is credited to the block that holds its midpoint, as the pair engine
does; blocks are grouped into super-blocks as large as the fitted major
range allows while leaving enough (:data:`MIN_BLOCKS`) to resample, and a
replicate re-weights the per-block sums by multinomial block counts (Lahiri
2003, ch. 2 and 12).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from anisotropy.errors import InputError, InsufficientDataError


#: Fewest occupied blocks the resampling should have (common practice: with
#: fewer than a few dozen blocks the bootstrap distribution is too coarse).
MIN_BLOCKS = 25


@dataclass
class BlockGrouping:
    """How the pair engine's blocks are grouped into resampling blocks.

    Attributes
    ----------
    factor : tuple of int
        Number of engine blocks per resampling block along x, y, z.
    side : list of float
        Side of a resampling block (metres) along x, y, z.
    group_of_block : ndarray of int, shape (n_blocks,)
        Resampling block of each engine block (-1: engine block with no pairs
        and no samples, never drawn).
    n_groups : int
        Occupied resampling blocks (those drawn from).
    reason : str
        The rule that fixed the size, in words.
    """

    factor: tuple
    side: list
    group_of_block: np.ndarray
    n_groups: int
    reason: str
    warnings: list = field(default_factory=list)

    def to_dict(self):
        return {"factor": [int(f) for f in self.factor],
                "side": [float(s) for s in self.side],
                "n_blocks": int(self.n_groups),
                "rule": self.reason,
                "warnings": list(self.warnings)}


def _occupied_blocks(volume):
    """Engine blocks holding any pair (count channel) or any sample."""
    bs = np.asarray(volume.block_sums)
    n_blocks = bs.shape[0]
    occ = bs[..., 0].reshape(n_blocks, -1).sum(axis=1) > 0
    bos = getattr(volume, "block_of_sample", None)
    if bos is not None:
        bos = np.asarray(bos)
        bos = bos[(bos >= 0) & (bos < n_blocks)]
        occ[np.unique(bos)] = True
    return occ


def _group(volume, factor, occ):
    shape = tuple(int(s) for s in volume.block_shape)
    idx = np.unravel_index(np.arange(int(np.prod(shape))), shape)
    g = [i // f for i, f in zip(idx, factor)]
    gshape = tuple(-(-s // f) for s, f in zip(shape, factor))
    gid = np.ravel_multi_index(g, gshape)
    gid = np.where(occ, gid, -1)
    used = np.unique(gid[gid >= 0])
    remap = -np.ones(int(np.prod(gshape)), dtype=np.int64)
    remap[used] = np.arange(len(used))
    return np.where(gid >= 0, remap[np.maximum(gid, 0)], -1), len(used)


def choose_block_grouping(volume, major_range=None, *, min_blocks=MIN_BLOCKS):
    """Group the pair engine's blocks into resampling blocks.

    Rule: resampling blocks are cubes (in numbers of engine blocks) as large
    as possible without exceeding the fitted major range and while keeping
    at least ``min_blocks`` occupied blocks to resample. Blocks as large as
    the range are close to independent of one another, which is what the
    bootstrap assumes; fewer than about 25 blocks give too coarse a
    bootstrap distribution (common practice). When even the engine's own
    blocks give fewer than ``min_blocks`` occupied blocks, those are used and
    a warning says the bands are less reliable.

    Parameters
    ----------
    volume : LagVolume
        Needs ``block_shape``, ``block_size`` and ``block_sums`` (and
        ``block_of_sample`` when available).
    major_range : float, optional
        Fitted range along the major axis (metres); no cap when None.
    min_blocks : int

    Returns
    -------
    BlockGrouping
    """
    shape = np.asarray(volume.block_shape, dtype=int)
    if np.prod(shape) != np.asarray(volume.block_sums).shape[0]:
        raise InputError("the lag volume's block_shape does not match its block_sums; "
                         "rebuild the volume")
    size = np.broadcast_to(np.asarray(volume.block_size, dtype=float), (3,))
    occ = _occupied_blocks(volume)
    warnings = []
    best = None
    max_f = int(max(shape.max(), 1))
    for f in range(1, max_f + 1):
        factor = tuple(int(min(f, s)) for s in shape)
        side = size * np.asarray(factor)
        if major_range is not None and f > 1 and \
                np.max(side[np.asarray(shape) > 1] if np.any(shape > 1) else side) > major_range:
            break
        gob, n = _group(volume, factor, occ)
        if n < min_blocks and f > 1:
            break
        best = (factor, side, gob, n)
        if n < min_blocks:
            break
    factor, side, gob, n = best
    cap = f"{major_range:.4g} m" if major_range is not None else "none"
    reason = (f"largest cube of engine blocks ({size[0]:.4g} x {size[1]:.4g} x {size[2]:.4g} m) "
              f"not wider than the major range ({cap}) that keeps at least {min_blocks} "
              f"occupied blocks: {factor[0]} x {factor[1]} x {factor[2]} engine blocks, "
              f"{n} occupied blocks")
    if n < min_blocks:
        warnings.append(f"only {n} occupied blocks to resample (fewer than {min_blocks}): "
                        "the bootstrap bands are coarse and probably too narrow")
    if n < 2:
        raise InsufficientDataError(
            f"the data occupy only {n} block(s) of the pair engine, so a block bootstrap "
            "cannot resample anything; rebuild the volume with smaller blocks or use "
            "model_bootstrap")
    return BlockGrouping(factor, [float(s) for s in side], gob, n, reason, warnings)


def engine_block_side(coords, *, target_blocks=4 * MIN_BLOCKS, max_side=None):
    """Block side for the pair engine so that the block bootstrap has room to work.

    The pair engine's blocks are the smallest units the bootstrap can
    resample; :func:`choose_block_grouping` later groups them into blocks as
    large as the fitted range allows. This picks the largest cube side
    (shrinking by 20 % steps from half the largest extent) that puts the
    samples in at least ``target_blocks`` occupied cubes (default 100, four
    times :data:`MIN_BLOCKS`, so that grouping still leaves 25 or more).

    Parameters
    ----------
    coords : array_like, shape (n, 3)
    target_blocks : int
    max_side : float, optional
        Never return more than this (e.g. the longest lag).

    Returns
    -------
    float
        Side in metres, to pass as ``blocks=`` to
        :func:`anisotropy.pairs.build_volume`.
    """
    c = np.asarray(coords, dtype=float)
    c = c[np.all(np.isfinite(c), axis=1)]
    if len(c) < 2:
        raise InsufficientDataError("fewer than 2 located samples: no blocks to resample")
    lo = c.min(axis=0)
    ext = float(np.max(c.max(axis=0) - lo))
    if ext <= 0:
        raise InsufficientDataError("all samples share one location: no blocks to resample")
    side = ext / 2.0 if max_side is None else min(ext / 2.0, float(max_side))
    for _ in range(60):
        occ = len(np.unique(np.floor((c - lo) / side).astype(np.int64), axis=0))
        if occ >= target_blocks or occ >= len(c) // 4:
            break
        side *= 0.8
    return float(side)


def resample_weights(n_groups, n_replicates, seed=0):
    """Multinomial block counts for every replicate, drawn up front from one generator.

    Parameters
    ----------
    n_groups : int
        Occupied resampling blocks.
    n_replicates : int
    seed : int or numpy.random.Generator

    Returns
    -------
    ndarray of int32, shape (n_replicates, n_groups)
        Each row sums to ``n_groups`` (``n_groups`` draws with replacement).
    """
    rng = np.random.default_rng(seed)
    p = np.full(n_groups, 1.0 / n_groups)
    return rng.multinomial(n_groups, p, size=n_replicates).astype(np.int32)


def block_weights_from_groups(counts, group_of_block):
    """Per-engine-block weights from per-resampling-block counts (0 for empty blocks)."""
    counts = np.asarray(counts, dtype=float)
    gob = np.asarray(group_of_block)
    w = np.zeros(counts.shape[:-1] + gob.shape, dtype=float)
    ok = gob >= 0
    w[..., ok] = counts[..., gob[ok]]
    return w


def reweighted_sums(block_sums, block_weights):
    """``sum_b w_b * block_sums[b]`` -> shape (n_lags+1, n_coarse, n_ch)."""
    bs = np.asarray(block_sums, dtype=float)
    w = np.asarray(block_weights, dtype=float)
    # einsum's own loop (no BLAS): the same summation order in every process,
    # so replicates do not depend on how many threads a worker's BLAS uses
    return np.einsum("b,b...->...", w, bs)
