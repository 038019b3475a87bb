"""Planning a pass before it runs: the pair-count estimate, candidate pairs per search
offset, batches of about a fixed number of candidates, and the number of work chunks."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numba
import numpy as np

from . import _cells, _kernels


#: Fixed number of work chunks (each with its own accumulator slice). Fixed so
#: that sums do not depend on the thread count; at least the thread count.
def _n_chunks() -> int:
    return max(4, int(numba.get_num_threads()))


#: Candidate pairs per batch of cells.
BATCH_CANDIDATES = 400_000_000

#: Monte-Carlo weights of each search offset, by offsets and cell/radius (bounded).
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
