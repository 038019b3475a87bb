"""Cell lists for the pair search.

The samples are sorted into a regular grid of cubic cells of side ``c``.
Every unordered pair within the search radius ``R`` is visited exactly once
by looping, for each cell ``A``, over the pairs inside ``A`` (``j > i``) and
over the pairs between ``A`` and each cell ``A + o`` for the offsets ``o`` of
the *half* stencil: the offsets that are lexicographically positive and whose
two cells can hold points closer than ``R``. (The other half of the offsets
would visit the same cell pairs again from the other side.)

The cell side is a fraction of ``R`` (``R / cell_divisions``); smaller cells
hug the search sphere more closely so that fewer candidate pairs are
rejected, at the price of more (and emptier) cell pairs. The benchmark
(``benchmarks/bench_pairs.py``) measures the choice; the default is set from
that measurement. The number of cells is capped so the grid never holds more
than a few cells per sample.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["CellGrid", "make_grid", "half_stencil", "cell_bounds", "DEFAULT_CELL_DIVISIONS"]

#: Cells per search radius (cell side = R / this), from the benchmark.
DEFAULT_CELL_DIVISIONS = 6


@dataclass
class CellGrid:
    """Samples sorted into cubic cells.

    Attributes
    ----------
    origin : ndarray (3,)
        Lower corner of the grid.
    cell : float
        Cell side in metres.
    dims : ndarray (3,) int64
        Cells along x, y, z.
    order : ndarray (n,) int64
        Sample indices sorted by cell (stable).
    start : ndarray (n_cells + 1,) int64
        ``order[start[c]:start[c + 1]]`` are the samples of flat cell ``c``
        (flat index ``(ix * ny + iy) * nz + iz``).
    occupied : ndarray int64
        Flat indices of the non-empty cells, ascending.
    """

    origin: np.ndarray
    cell: float
    dims: np.ndarray
    order: np.ndarray
    start: np.ndarray
    occupied: np.ndarray

    @property
    def n_cells(self) -> int:
        return int(np.prod(self.dims))


def make_grid(coords: np.ndarray, radius: float, divisions: int = DEFAULT_CELL_DIVISIONS,
              max_cells_per_sample: float = 8.0) -> CellGrid:
    """Sort samples into cells of side ``radius / divisions``.

    The side is enlarged when the grid would hold more than
    ``max_cells_per_sample`` cells per sample (or more than 2**31 cells).
    """
    coords = np.asarray(coords, dtype=np.float64)
    n = len(coords)
    lo = coords.min(axis=0) if n else np.zeros(3)
    hi = coords.max(axis=0) if n else np.zeros(3)
    ext = np.maximum(hi - lo, 0.0)
    cell = float(radius) / max(int(divisions), 1)
    if not (cell > 0) or not math.isfinite(cell):
        cell = float(max(ext.max(), 1.0))
    budget = max(max_cells_per_sample * max(n, 1), 64.0)
    budget = min(budget, 2.0**31 - 1)
    while np.prod(np.floor(ext / cell) + 1.0) > budget:
        cell *= 1.25
    dims = (np.floor(ext / cell) + 1).astype(np.int64)
    ijk = np.floor((coords - lo) / cell).astype(np.int64)
    ijk = np.minimum(np.maximum(ijk, 0), dims - 1)
    flat = (ijk[:, 0] * dims[1] + ijk[:, 1]) * dims[2] + ijk[:, 2]
    order = np.argsort(flat, kind="stable").astype(np.int64)
    counts = np.bincount(flat, minlength=int(np.prod(dims)))
    start = np.zeros(len(counts) + 1, dtype=np.int64)
    np.cumsum(counts, out=start[1:])
    occupied = np.flatnonzero(counts).astype(np.int64)
    return CellGrid(origin=lo, cell=cell, dims=dims, order=order, start=start, occupied=occupied)


def half_stencil(cell: float, radius: float, dims=None) -> np.ndarray:
    """Offsets (m, 3) of the half neighbourhood, lexicographically positive.

    An offset ``(a, b, c)`` is kept when the closest two points of cells that
    far apart, ``cell * (max(|a|-1, 0), max(|b|-1, 0), max(|c|-1, 0))``, are
    within ``radius`` (a small relative slack keeps pairs at exactly ``R``).
    Offsets larger than the grid are dropped when ``dims`` is given.
    """
    m = int(math.ceil(radius / cell)) + 1
    if dims is not None:
        lim = np.minimum(np.asarray(dims, dtype=np.int64) - 1, m)
    else:
        lim = np.array([m, m, m])
    ax = [np.arange(-int(l), int(l) + 1) for l in lim]
    a, b, c = np.meshgrid(*ax, indexing="ij")
    off = np.stack([a.ravel(), b.ravel(), c.ravel()], axis=1)
    gap = np.maximum(np.abs(off) - 1, 0) * cell
    keep = (gap * gap).sum(axis=1) <= (radius * radius) * (1 + 1e-9) + 1e-300
    pos = (off[:, 0] > 0) | ((off[:, 0] == 0) & ((off[:, 1] > 0) | ((off[:, 1] == 0) & (off[:, 2] > 0))))
    return np.ascontiguousarray(off[keep & pos].astype(np.int64))


def cell_bounds(grid: CellGrid, sorted_coords: np.ndarray):
    """Bounding boxes of the samples of each occupied cell.

    Parameters
    ----------
    grid : CellGrid
    sorted_coords : ndarray (n, 3)
        Coordinates already in ``grid.order``.

    Returns
    -------
    occ_index : ndarray (n_cells,) int64
        Position of each cell in ``grid.occupied`` (-1 when empty).
    lo, hi : ndarray (n_occupied, 3)
    """
    occ_index = np.full(grid.n_cells, -1, dtype=np.int64)
    occ_index[grid.occupied] = np.arange(len(grid.occupied))
    if len(grid.occupied) == 0:
        return occ_index, np.zeros((0, 3)), np.zeros((0, 3))
    starts = grid.start[grid.occupied]
    lo = np.minimum.reduceat(sorted_coords, starts, axis=0)
    hi = np.maximum.reduceat(sorted_coords, starts, axis=0)
    return occ_index, np.ascontiguousarray(lo), np.ascontiguousarray(hi)
