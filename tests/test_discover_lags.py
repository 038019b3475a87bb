"""Tests of the ``choose_lags`` and ``build_volume`` stages.

Nearest-neighbour distances and pair counts are computed by brute force over
all pairs (``scipy.spatial.distance.pdist``); the bootstrap blocks are
counted with ``numpy.unique`` on the block indices.
"""

import numpy as np
import pytest
from scipy.spatial.distance import pdist, squareform

from anisotropy.discovery.lags import LagChoice, build_volume, choose_lags
from anisotropy.errors import InputError, InsufficientDataError
from anisotropy.exploration import nominal_spacing
from anisotropy.uncertainty import MIN_BLOCKS


@pytest.mark.parametrize("n, box", [(2000, (320.0, 320.0, 80.0)), (500, (200.0, 200.0, 200.0))])
def test_scattered_samples_get_twenty_lags_but_not_under_half_their_spacing(n, box):
    # scattered samples: 20 lags out to half the largest extent, unless that is under half
    # the median 3D nearest-neighbour distance (brute force over all pairs). Dense case:
    # 160 m / 20 = 8 m wins; sparse case: half the spacing wins
    coords = np.random.default_rng(4).uniform([0, 0, 0], box, size=(n, 3))
    d = squareform(pdist(coords))
    np.fill_diagonal(d, np.inf)
    nn = float(np.median(d.min(axis=1)))
    half_extent = 0.5 * float(np.max(coords.max(axis=0) - coords.min(axis=0)))
    spacing = nominal_spacing(coords)
    assert spacing.layout == "scattered"
    lc = choose_lags(coords, spacing)
    base = spacing.suggested_lag["omni"]            # the spacing, rounded to 2 digits
    assert base == pytest.approx(nn, rel=0.05)
    want = max(half_extent / 20, 0.5 * base)
    assert lc.unit_lag == pytest.approx(want, rel=0.01)
    assert (want == half_extent / 20) == (n == 2000)   # each case exercises its branch
    why = next(c for c in lc.choices if c["choice"] == "unit lag")["reason"]
    assert why.startswith("scattered samples") and "nearest-neighbour" in why
    # the tolerance is half the lag and the classes reach (n + 1/2) lags (design.md)
    assert lc.lag_tolerance == lc.unit_lag / 2
    assert lc.max_distance == pytest.approx((lc.n_lags + 0.5) * lc.unit_lag)


def test_a_requested_lag_is_kept_and_the_lags_reach_half_the_extent():
    coords = np.random.default_rng(1).uniform(0, 100, (300, 3))
    half_extent = 0.5 * float(np.max(np.ptp(coords, axis=0)))
    lc = choose_lags(coords, nominal_spacing(coords), lag=7.0)
    assert lc.unit_lag == 7.0 and lc.n_lags == round(half_extent / 7.0)
    assert lc.pairs_estimated is None                  # no pair budget on asked-for lags
    rows = {c["choice"]: c for c in lc.choices}
    assert rows["unit lag"]["reason"] == "as requested"
    assert list(rows) == ["unit lag", "number of lags", "lag tolerance"]
    assert lc.record() == {"unit_lag": 7.0, "n_lags": lc.n_lags, "lag_tolerance": 3.5,
                           "max_distance": (lc.n_lags + 0.5) * 7.0}


def test_bad_lags_and_a_single_location_are_refused():
    coords = np.random.default_rng(1).uniform(0, 100, (300, 3))
    with pytest.raises(InputError, match="positive"):
        choose_lags(coords, nominal_spacing(coords), lag=-1.0)
    same = np.ones((40, 3))
    with pytest.raises(InsufficientDataError, match="one location"):
        choose_lags(same, None)


def test_the_pair_budget_shortens_the_reach_and_says_so():
    coords = np.random.default_rng(2).uniform(0, 200, (3000, 3))
    spacing = nominal_spacing(coords)
    free = choose_lags(coords, spacing)
    n_free = int(np.sum(pdist(coords) <= free.max_distance))
    budget = n_free / 4
    lc = choose_lags(coords, spacing, pair_budget=budget)
    assert lc.max_distance < free.max_distance
    rows = {c["choice"]: c for c in lc.choices}
    assert rows["maximum distance"]["value"] == pytest.approx(lc.max_distance)
    # the rows rewritten after the budget agree with the record
    assert rows["unit lag"]["value"] == lc.unit_lag and rows["number of lags"]["value"] == lc.n_lags
    # the estimate is approximate (cells assumed uniform): within a factor of two of the
    # brute-force count at the new reach, which is well under the unconstrained count
    n_new = int(np.sum(pdist(coords) <= lc.max_distance))
    assert n_new < 0.5 * n_free
    assert 0.5 < lc.pairs_estimated / n_new < 2.0


def test_the_volume_counts_every_pair_once_and_has_blocks_without_a_bootstrap():
    # drill-hole-like strings: 36 vertical holes 25 m apart, 2 m samples
    rng = np.random.default_rng(3)
    xy = np.stack(np.meshgrid(np.arange(6) * 25.0, np.arange(6) * 25.0), -1).reshape(-1, 2)
    z = np.arange(0, 80, 2.0)
    coords = np.concatenate([np.c_[np.repeat([p], len(z), 0), -z] for p in xy])
    values = rng.normal(size=len(coords))
    lc = LagChoice(unit_lag=10.0, n_lags=8)
    pv = build_volume(coords, values, lc)
    # every unordered pair with 0 < d <= (n + 1/2) lag, once (design.md lag classes)
    d = pdist(coords)
    assert pv.n_pairs == int(np.sum((d > 0) & (d <= lc.max_distance)))
    # the blocks partition the pairs: their pair counts add up to the volume's
    assert np.array_equal(pv.volume.block_sums[..., 0].sum(axis=0),
                          pv.volume.coarse_sums()[..., 0])
    # issue 14: blocks sized for a bootstrap whether or not one follows; enough occupied
    # blocks to resample (uncertainty.MIN_BLOCKS)
    occupied = np.unique(np.floor((coords - coords.min(0)) / pv.block_side), axis=0)
    assert len(occupied) >= MIN_BLOCKS
    assert pv.choices[0]["choice"] == "bootstrap blocks"
    assert pv.choices[0]["value"] == pv.block_side


def test_too_few_pairs_are_refused():
    coords = np.random.default_rng(4).uniform(0, 5000, (40, 3))
    with pytest.raises(InsufficientDataError, match="pairs"):
        build_volume(coords, np.ones(40), LagChoice(unit_lag=5.0, n_lags=4))
