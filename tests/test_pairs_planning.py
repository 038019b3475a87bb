"""Tests of planning a pass (anisotropy.pairs.planning): batches, the pair-count estimate.

The pair count is checked against scipy.spatial.distance.pdist (exact brute
force) and against n(n-1)/2 where every pair is within reach.
"""

import numpy as np
from scipy.spatial.distance import pdist

from anisotropy.pairs import estimate_pair_count, plan_run
from anisotropy.pairs.planning import BATCH_CANDIDATES, _plan_batches


def test_plan_batches_cover_everything_once():
    work = np.array([5.0, 1, 1, 8, 0, 3, 2, 2, 9, 1])
    for target in (1, 4, 10, 100):
        b = _plan_batches(work, target)
        covered = np.concatenate([np.arange(q0, q1) for q0, q1 in b])
        np.testing.assert_array_equal(covered, np.arange(len(work)))
    assert _plan_batches(work, 100) == [(0, len(work))]


def test_pair_count_estimate_close_to_pdist():
    # brute-force count with scipy pdist; the estimate assumes uniformity within cells
    rng = np.random.default_rng(3)
    c = rng.random((1500, 3)) * [200.0, 150.0, 40.0]
    for r in (10.0, 30.0, 80.0):
        exact = np.count_nonzero(pdist(c) <= r)
        est = estimate_pair_count(c, r)
        assert abs(est - exact) <= 0.1 * exact


def test_billions_of_pairs_are_estimated_and_chunked():
    # 100k samples and a distance spanning the whole cube: ~5e9 pairs. Nothing is
    # binned here; the plan must see them and split the run into many batches.
    rng = np.random.default_rng(5)
    c = rng.random((100_000, 3)) * 100.0
    plan = plan_run(c, 200.0)
    n = len(c)
    assert abs(plan.estimated_pairs - n * (n - 1) / 2) <= 0.01 * n * (n - 1) / 2
    assert plan.candidate_pairs >= n * (n - 1) / 2
    assert plan.n_batches >= plan.candidate_pairs / BATCH_CANDIDATES - 1
    assert plan.n_batches > 5
