"""The lag-vector volume one pass accumulates, and the ways it is read: directional
aggregates, coarse and block-re-weighted sums, the symmetrised map, and the bins and
blocks of given pairs by the pass's own rules."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..constants import CHANNEL_INDEX as CH
from ..constants import CHANNELS
from ..errors import InputError
from . import _lattice
from .channels import against_cells, turn_round
from .checks import direction_vector


@dataclass
class LagVolume:
    """Accumulated pair sums of one pass (see the conventions in :mod:`anisotropy.pairs`).

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
