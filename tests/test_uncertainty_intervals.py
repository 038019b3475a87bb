"""Tests of anisotropy.uncertainty.intervals: percentile, BCa, carried intervals and their rules.

Outside references used below:
* scipy.stats.bootstrap (percentile and BCa, Efron & Tibshirani 1993, ch. 13-14)
* numpy.quantile
"""

from __future__ import annotations


import numpy as np
import pytest
from scipy import stats

from anisotropy import uncertainty as U
from anisotropy.errors import InputError


def test_percentile_matches_numpy_quantile(rng):
    r = rng.gamma(2.0, 1.0, size=999)
    lo, hi = U.percentile_interval(r, 0.9)
    # numpy.quantile (linear) at 5 % and 95 %
    assert lo == pytest.approx(np.quantile(r, 0.05))
    assert hi == pytest.approx(np.quantile(r, 0.95))


def test_percentile_matches_scipy_bootstrap(rng):
    x = rng.lognormal(size=40)
    res = stats.bootstrap((x,), np.mean, n_resamples=2000, method="percentile",
                          confidence_level=0.9, rng=np.random.default_rng(1))
    lo, hi = U.percentile_interval(res.bootstrap_distribution, 0.9)
    # scipy.stats.bootstrap(method="percentile") on the same resamples
    assert lo == pytest.approx(res.confidence_interval.low, rel=1e-12)
    assert hi == pytest.approx(res.confidence_interval.high, rel=1e-12)


@pytest.mark.parametrize("stat", [np.mean, lambda x, axis=-1: np.var(x, axis=axis, ddof=1)])
def test_bca_matches_scipy_on_same_resamples(rng, stat):
    x = rng.lognormal(sigma=0.8, size=35)
    res = stats.bootstrap((x,), stat, n_resamples=3000, method="BCa",
                          confidence_level=0.9, rng=np.random.default_rng(7))
    jack = np.array([stat(np.delete(x, i)) for i in range(len(x))])
    acc = U.jackknife_acceleration(jack)
    lo, hi = U.bca_interval(res.bootstrap_distribution, stat(x), 0.9, acceleration=acc)
    # scipy.stats.bootstrap(method="BCa"), same bootstrap distribution and the
    # delete-one jackknife of Efron & Tibshirani (1993) eq. 14.15
    assert lo == pytest.approx(res.confidence_interval.low, rel=1e-9)
    assert hi == pytest.approx(res.confidence_interval.high, rel=1e-9)


def test_influence_acceleration_equals_jackknife_for_the_mean(rng):
    # For the mean the statistic is exactly linear in the resampling counts,
    # so the regression recovers influence values proportional to x_i - mean,
    # as are the jackknife differences (Davison & Hinkley 1997, sec. 2.7.4;
    # Efron & Tibshirani 1993, eq. 14.15): same acceleration.
    x = rng.lognormal(sigma=1.0, size=20)
    counts = rng.multinomial(20, np.full(20, 1 / 20), size=400)
    reps = counts @ x / 20.0
    jack = np.array([np.delete(x, i).mean() for i in range(20)])
    assert U.influence_acceleration(reps, counts) == pytest.approx(
        float(U.jackknife_acceleration(jack)), rel=1e-8)
    # too few replicates per unit: no acceleration (documented fallback)
    assert U.influence_acceleration(reps[:30], counts[:30]) == 0.0


def test_bca_degenerate_returns_nan():
    # every replicate above the estimate: z0 infinite (Efron & Tibshirani 1993, 14.3)
    lo, hi = U.bca_interval(np.arange(1.0, 11.0), 0.0, 0.9)
    assert np.isnan(lo) and np.isnan(hi)


def test_confidence_validated():
    with pytest.raises(InputError):
        U.percentile_interval([1.0, 2.0], 1.5)


def test_interval_helpers_hold_the_estimate_and_drop_bounds_beyond_the_lags():
    # by hand: an interval that misses its estimate is widened to it, never narrowed
    assert U.holding_estimate([488.0, 10557.0], 314.0) == ([314.0, 10557.0], True)
    assert U.holding_estimate([100.0, 200.0], 150.0) == ([100.0, 200.0], False)
    # bounds beyond the longest lag (261 m) are unbounded
    assert U.bounded_by_lags([120.0, 400.0], 261.0)[0] == [120.0, None]
    iv, note = U.bounded_by_lags([300.0, 400.0], 261.0)
    assert iv == [None, None] and "> 261 m" in note
    assert U.bounded_by_lags([120.0, 200.0], 261.0) == ([120.0, 200.0], None)
    assert U.range_text([120.0, None], 261.0) == "120 m to > 261 m"
    assert U.range_text([None, None], 261.0) == "> 261 m"
    # a value every replicate repeats was held fixed; a spread one was not
    assert U.held_fixed([0.2, 0.2, 0.2], 0.2)
    assert not U.held_fixed([0.2, 0.21, 0.19], 0.2)


def test_carried_interval_is_the_replicates_spread_about_their_median_placed_at_the_estimate():
    # by hand with NumPy's quantiles: estimate * q / median, the estimate inside; plain
    # percentiles where the estimate is not positive
    r = np.random.default_rng(2).lognormal(np.log(100.0), 0.3, 500)
    lo, hi = np.quantile(r, [0.05, 0.95])
    med = np.median(r)
    got, how = U.carried_interval(r, 150.0, 0.9)
    np.testing.assert_allclose(got, [150.0 * lo / med, 150.0 * hi / med])
    assert got[0] < 150.0 < got[1] and how == "percentile, carried to the estimate"
    np.testing.assert_allclose(U.carried_interval(r, 0.0, 0.9)[0], [lo, hi])
    assert U.carried_interval(r[:1], 150.0, 0.9)[1] == "none"
