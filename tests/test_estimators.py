"""Tests of the estimators (anisotropy.estimators) from pair sums."""

import math
import warnings

import numpy as np
import pytest
from scipy import special

from anisotropy.errors import InputError
from anisotropy.estimators import ESTIMATORS, ROBUST_A, ROBUST_B, estimate


def sums_of(head, tail, dist=None):
    """Channel sums (15,) of a list of pairs written out directly."""
    h = np.asarray(head, float)
    t = np.asarray(tail, float)
    dlt = h - t
    s = h + t
    nz = s != 0
    d = np.ones_like(h) if dist is None else np.asarray(dist, float)
    return np.array([len(h), d.sum(), (dlt**2).sum(), np.abs(dlt).sum(), np.sqrt(np.abs(dlt)).sum(),
                     h.sum(), t.sum(), (h * h).sum(), (t * t).sum(), (h * t).sum(),
                     (4 * dlt[nz] ** 2 / s[nz] ** 2).sum(), nz.sum(), 0.0, 0.0, 0.0])


# Hand-worked example: four samples on an east line, x = 0, 1, 2, 3 m, values
# 1, 2, 4, 3. The lag-1 pairs (lag vector +x is canonical: z = 0, x > 0, so the
# head is the eastern sample) are (head, tail) = (2, 1), (4, 2), (3, 4), with
# delta = 1, 2, -1.
HEADS = [2.0, 4.0, 3.0]
TAILS = [1.0, 2.0, 4.0]


def test_semivariogram_by_hand():
    # Matheron (1963): gamma = sum(delta^2) / (2N) = (1 + 4 + 1) / 6 = 1
    assert estimate(sums_of(HEADS, TAILS), "semivariogram") == pytest.approx(1.0, rel=1e-15)


def test_madogram_by_hand():
    # sum |delta| / (2N) = (1 + 2 + 1) / 6 = 2/3
    assert estimate(sums_of(HEADS, TAILS), "madogram") == pytest.approx(2.0 / 3.0, rel=1e-15)


def test_robust_by_hand():
    # Cressie & Hawkins (1980): mean sqrt|delta| = (1 + sqrt 2 + 1) / 3 = 1.13807...;
    # its 4th power 1.67757... / (0.457 + 0.494/3) = 2.69851..., halved = 1.34925...
    m = (2.0 + math.sqrt(2.0)) / 3.0
    want = m**4 / (0.457 + 0.494 / 3.0) / 2.0
    assert want == pytest.approx(1.34925, abs=2e-5)
    assert estimate(sums_of(HEADS, TAILS), "robust") == pytest.approx(want, rel=1e-14)


def test_pairwise_relative_by_hand():
    # Srivastava & Parker (1989): sum delta^2 / ((h + t)/2)^2 / (2N)
    # = (1/1.5^2 + 4/3^2 + 1/3.5^2) / 6 = (0.44444 + 0.44444 + 0.08163) / 6 = 0.16175...
    want = (1 / 1.5**2 + 4 / 3.0**2 + 1 / 3.5**2) / 6.0
    assert want == pytest.approx(0.161754, abs=1e-6)
    assert estimate(sums_of(HEADS, TAILS), "pairwise_relative") == pytest.approx(want, rel=1e-14)


def test_correlogram_by_hand():
    # Srivastava & Parker (1989), shown as 1 - rho. Heads 2, 4, 3: mean 3, variance
    # (4 + 16 + 9)/3 - 9 = 2/3. Tails 1, 2, 4: mean 7/3, variance 7 - 49/9 = 14/9.
    # Covariance (2 + 8 + 12)/3 - 3 * 7/3 = 1/3. rho = (1/3) / sqrt(2/3 * 14/9) = 0.32733...
    rho = (1.0 / 3.0) / math.sqrt(2.0 / 3.0 * 14.0 / 9.0)
    assert rho == pytest.approx(0.327327, abs=1e-6)
    assert estimate(sums_of(HEADS, TAILS), "correlogram") == pytest.approx(1 - rho, rel=1e-12)
    # the same as NumPy's Pearson coefficient of head and tail values
    assert 1 - np.corrcoef(HEADS, TAILS)[0, 1] == pytest.approx(1 - rho, rel=1e-12)


def test_correlogram_equals_numpy_corrcoef(rng):
    # reference library: numpy.corrcoef on the head and tail values of each lag
    for _ in range(5):
        h = rng.lognormal(size=50)
        t = 0.6 * h + rng.lognormal(size=50)
        assert estimate(sums_of(h, t), "correlogram") == pytest.approx(
            1 - np.corrcoef(h, t)[0, 1], rel=1e-10)


def test_zero_variance_correlogram_is_nan_with_warning():
    s = np.stack([sums_of([2.0, 2.0, 2.0], [1.0, 5.0, 3.0]), sums_of(HEADS, TAILS)])
    with pytest.warns(RuntimeWarning, match="zero variance"):
        out = estimate(s, "correlogram")
    assert np.isnan(out[0]) and np.isfinite(out[1])
    # values with a large constant offset still count as constant
    s2 = sums_of([1e4 + 0.1] * 4, [1e4 + 0.1, 1e4 + 0.2, 1e4, 1e4 + 0.3])
    with pytest.warns(RuntimeWarning):
        assert np.isnan(estimate(s2, "correlogram"))


def test_empty_bins_are_nan_without_warnings():
    s = np.zeros((3, 15))
    s[1] = sums_of(HEADS, TAILS)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        for e in ESTIMATORS:
            out = estimate(s, e)
            assert np.isnan(out[0]) and np.isnan(out[2]) and np.isfinite(out[1])


def test_pairwise_relative_skips_zero_sum_pairs():
    # a pair with head + tail = 0 has no relative term; it is counted out in rel_n
    s = sums_of([1.0, 2.0], [-1.0, 1.0])
    assert s[11] == 1
    assert estimate(s, "pairwise_relative") == pytest.approx((1.0 / 1.5**2) / 2.0)


def test_unknown_estimator():
    with pytest.raises(InputError, match="estimator"):
        estimate(np.zeros(15), "kriging")
    with pytest.raises(InputError, match="channels"):
        estimate(np.zeros(14), "madogram")


def test_cressie_hawkins_constants_from_gaussian_moments():
    # The constants are recalled from memory (Cressie & Hawkins 1980; Cressie 1993,
    # sec. 2.4.3). Their origin, derived here with scipy.special.gamma: for
    # Z ~ N(0, 1), nu = E|Z|^(1/2) = 2^(1/4) Gamma(3/4) / sqrt(pi), and nu^4 is the
    # leading constant; the second-order term of E[(mean of N |Z|^(1/2))^4] is
    # 6 nu^2 Var(|Z|^(1/2)) / N with Var = E|Z| - nu^2 = sqrt(2/pi) - nu^2.
    nu = 2**0.25 * special.gamma(0.75) / math.sqrt(math.pi)
    assert nu**4 == pytest.approx(ROBUST_A, abs=6e-4)
    b = 6 * nu**2 * (math.sqrt(2 / math.pi) - nu**2)
    assert b == pytest.approx(ROBUST_B, abs=1e-3)


def test_robust_estimator_unbiased_for_gaussian_increments():
    # Monte Carlo, fixed seed: Gaussian increments with variance 2 gamma, N pairs per
    # lag; the mean of the corrected estimator is gamma within Monte Carlo error,
    # while dropping the 0.494/N term leaves a clear upward bias.
    rng = np.random.default_rng(1980)
    gamma, n, reps = 1.7, 8, 200_000
    delta = rng.normal(0.0, math.sqrt(2 * gamma), size=(reps, n))
    s = np.zeros((reps, 15))
    s[:, 0] = n
    s[:, 4] = np.sqrt(np.abs(delta)).sum(axis=1)
    est = estimate(s, "robust")
    assert est.mean() == pytest.approx(gamma, rel=0.01)
    m = s[:, 4] / n
    uncorrected = (m**4 / ROBUST_A / 2).mean()
    assert uncorrected > 1.08 * gamma
