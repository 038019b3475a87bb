"""Tests of anisotropy.uncertainty.blocks: block grouping, resampling weights, re-weighted sums.

Outside references: the multinomial distribution's moments (NumPy's
generator) and an explicit loop over the blocks.
"""

from __future__ import annotations


import numpy as np
import pytest

from anisotropy import uncertainty as U
from anisotropy.errors import InsufficientDataError
from uncertainty_stand_ins import StandInVolume, truth


def test_resample_weights_are_multinomial_and_seeded():
    w1 = U.resample_weights(30, 50, seed=3)
    w2 = U.resample_weights(30, 50, seed=3)
    assert np.array_equal(w1, w2)
    assert np.all(w1.sum(axis=1) == 30)
    # same draws as numpy's multinomial from the same generator
    ref = np.random.default_rng(3).multinomial(30, np.full(30, 1 / 30), size=50)
    assert np.array_equal(w1, ref)


def test_reweighted_sums_equal_explicit_loop(rng):
    vol = StandInVolume((3, 3, 2), (10, 10, 10), rng, truth())
    w = rng.integers(0, 3, size=len(vol.block_sums)).astype(float)
    explicit = sum(w[b] * vol.block_sums[b] for b in range(len(w)))
    # exact brute force
    assert np.allclose(U.reweighted_sums(vol.block_sums, w), explicit)


def test_block_grouping_rule(rng):
    vol = StandInVolume((12, 12, 1), (10, 10, 10), rng, truth())
    g = U.choose_block_grouping(vol, major_range=45.0, min_blocks=25)
    # side may not exceed 45 m and at least 25 occupied blocks remain:
    # factor 4 gives 40 m and 3 x 3 = 9 blocks (too few); factor 2 gives
    # 6 x 6 = 36 blocks at 20 m; factor 3 gives 4 x 4 = 16 (too few).
    assert g.factor[:2] == (2, 2) and g.n_groups == 36
    # brute force: every engine block in exactly one group
    idx = np.unravel_index(np.arange(144), (12, 12, 1))
    expected = (idx[0] // 2) * 6 + idx[1] // 2
    assert np.array_equal(g.group_of_block, expected)
    # no range cap, 9 blocks wanted: factors 4 and 5 both leave ceil(12/f)^2 = 9
    # blocks, 6 leaves 4; the rule takes the largest, 5
    g2 = U.choose_block_grouping(vol, major_range=1000.0, min_blocks=9)
    assert g2.factor[:2] == (5, 5) and g2.n_groups == 9
    assert "occupied" in g2.reason


def test_too_few_blocks_warns_or_refuses(rng):
    vol = StandInVolume((2, 2, 1), (10, 10, 10), rng, truth())
    g = U.choose_block_grouping(vol, 100.0)
    assert g.n_groups == 4 and g.warnings
    vol1 = StandInVolume((1, 1, 1), (10, 10, 10), rng, truth())
    with pytest.raises(InsufficientDataError):
        U.choose_block_grouping(vol1, 100.0)
