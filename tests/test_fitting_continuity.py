"""Tests of the continuity permutation test (anisotropy.fitting.continuity)."""

import numpy as np
import pytest

from anisotropy.fitting.continuity import (band_pairs, check_continuity, continuity_test,
                                           geary_ratio, nearest_pairs)


def _exp_field(X, rng, a=30.0, nugget=0.0):
    """Gaussian field with an isotropic exponential covariance exp(-3h/a) (practical range a),
    drawn by a plain NumPy Cholesky factorisation (independent of the engine)."""
    d = np.linalg.norm(X[:, None, :] - X[None, :, :], axis=2)
    C = (1 - nugget) * np.exp(-3.0 * d / a) + nugget * np.eye(len(X))
    L = np.linalg.cholesky(C + 1e-10 * np.eye(len(X)))
    return L @ rng.standard_normal(len(X))


def test_geary_ratio_matches_the_weight_matrix_definition():
    # Geary (1954): C = (n-1) sum_ij w_ij (y_i - y_j)^2 / (2 W sum (y - ybar)^2), with a
    # symmetric 0/1 weight matrix W; brute force over the full n x n matrix with NumPy.
    rng = np.random.default_rng(1)
    n = 40
    y = rng.standard_normal(n)
    pairs = np.array([(i, j) for i in range(n) for j in range(i + 1, n) if rng.random() < 0.2])
    w = np.zeros((n, n))
    w[pairs[:, 0], pairs[:, 1]] = 1
    w = w + w.T
    brute = (n - 1) * np.sum(w * (y[:, None] - y[None, :]) ** 2) / (
        2 * w.sum() * np.sum((y - y.mean()) ** 2))
    assert geary_ratio(y, pairs) == pytest.approx(brute, rel=1e-12)


def test_permutation_mean_is_one_as_under_randomisation():
    # Cliff & Ord (1981, ch. 2): under randomisation E[C] = 1 exactly.  The mean of the
    # permuted ratios must agree within Monte Carlo error.
    from anisotropy.fitting.continuity import _permuted_sums

    rng = np.random.default_rng(2)
    X = rng.uniform(0, 100, (300, 3))
    y = rng.standard_normal(300)
    pairs, _ = nearest_pairs(X, 6)
    sums = _permuted_sums(y, pairs[:, 0].copy(), pairs[:, 1].copy(), 4000, 7)
    ratios = (len(y) - 1) * sums / (2 * len(pairs) * np.sum((y - y.mean()) ** 2))
    se = ratios.std() / np.sqrt(len(ratios))
    assert abs(ratios.mean() - 1.0) < 4 * se


def test_nearest_pairs_against_brute_force():
    # exact brute force: every sample's k nearest others from the full distance matrix
    rng = np.random.default_rng(3)
    X = rng.uniform(0, 50, (60, 3))
    pairs, dist = nearest_pairs(X, 4)
    d = np.linalg.norm(X[:, None] - X[None], axis=2)
    np.fill_diagonal(d, np.inf)
    expect = set()
    for i in range(len(X)):
        for j in np.argsort(d[i])[:4]:
            expect.add((min(i, j), max(i, j)))
    assert set(map(tuple, pairs.tolist())) == expect
    assert np.allclose(dist, d[pairs[:, 0], pairs[:, 1]])


def test_band_pairs_against_brute_force():
    rng = np.random.default_rng(4)
    X = rng.uniform(0, 50, (80, 3))
    pairs, dist = band_pairs(X, 5.0, 15.0)
    d = np.linalg.norm(X[:, None] - X[None], axis=2)
    i, j = np.triu_indices(len(X), 1)
    m = (d[i, j] > 5.0) & (d[i, j] <= 15.0)
    assert set(map(tuple, pairs.tolist())) == set(zip(i[m].tolist(), j[m].tolist()))


def test_correlated_field_is_resolved_and_independent_values_are_not():
    rng = np.random.default_rng(5)
    X = rng.uniform(0, 200, (400, 3))
    y = _exp_field(X, rng, a=120.0, nugget=0.2)
    chk = check_continuity(X, y, lag=20.0, seed=1)
    assert chk.verdict == "resolved"
    assert chk.first_lag.ratio < 0.9
    # the same locations with the values drawn independently (no spatial correlation)
    flat = check_continuity(X, rng.standard_normal(400), lag=20.0, seed=1)
    assert flat.verdict == "none"
    assert "no spatial continuity" in flat.text


@pytest.mark.parametrize("seed", range(12))
def test_no_run_on_uncorrelated_values_claims_continuity(seed):
    # twelve realisations of pure nugget, scattered and in vertical holes: at the default
    # level (0.002) the chance that any of the 24 runs is called resolved is under 5 %
    rng = np.random.default_rng(100 + seed)
    Xs = rng.uniform(0, 200, (400, 3))
    holes = np.repeat(np.arange(20), 20)
    Xh = np.column_stack([rng.uniform(0, 200, 20)[holes], rng.uniform(0, 200, 20)[holes],
                          -2.0 * np.tile(np.arange(20), 20)])
    for X in (Xs, Xh):
        chk = check_continuity(X, rng.standard_normal(len(X)), lag=15.0,
                               seed=seed, permutations=999)
        assert chk.verdict != "resolved"


def test_structure_shorter_than_the_first_lag_is_named():
    # holes 40 m apart with 1 m composites; a field whose practical range (3 m) is far under
    # the first lag (20 m): alike along the holes, unrelated at the lag scale
    rng = np.random.default_rng(6)
    nh, per = 25, 24
    hx, hy = np.meshgrid(np.arange(5) * 40.0, np.arange(5) * 40.0)
    X = np.column_stack([np.repeat(hx.ravel(), per), np.repeat(hy.ravel(), per),
                         -np.tile(np.arange(per, dtype=float), nh)])
    y = np.concatenate([_exp_field(X[h * per:(h + 1) * per], rng, a=3.0) for h in range(nh)])
    chk = check_continuity(X, y, lag=20.0, seed=2, shortest_downhole=1.0)
    assert chk.verdict == "shorter_than_first_lag"
    assert "1 m" in chk.text


def test_no_pairs_is_not_significant():
    t = continuity_test(np.arange(5.0), np.empty((0, 2), int))
    assert not t.significant


def test_first_lag_pairs_are_taken_across_holes_when_holes_are_given():
    # a flat lode drilled across (vertical holes): down the holes the values are
    # independent beyond 8 m, across the holes alike.  The first-lag band
    # (10-30 m) holds mostly down-hole pairs; across holes it shows the continuity.
    rng = np.random.default_rng(8)
    nh, per = 36, 15
    hx, hy = np.meshgrid(np.arange(6) * 20.0, np.arange(6) * 20.0)
    X = np.column_stack([np.repeat(hx.ravel(), per), np.repeat(hy.ravel(), per),
                         -2.0 * np.tile(np.arange(per, dtype=float), nh)])
    holes = np.repeat(np.arange(nh), per)
    # anisotropic exponential: 150 m in plan, 8 m across (practical ranges)
    L = X / np.array([150.0, 150.0, 8.0])
    d = np.linalg.norm(L[:, None] - L[None], axis=2)
    y = np.linalg.cholesky(np.exp(-3 * d) + 1e-9 * np.eye(len(X))) @ rng.standard_normal(len(X))
    chk = check_continuity(X, y, lag=20.0, seed=1, holes=holes)
    assert chk.first_lag.significant and chk.verdict == "resolved"
    # exactly the across-hole pairs of the band, counted by brute force over all pairs
    d = np.linalg.norm(X[:, None] - X[None], axis=2)
    i, j = np.triu_indices(len(X), 1)
    want = int(np.sum((d[i, j] > 10.0) & (d[i, j] <= 30.0) & (holes[i] != holes[j])))
    assert chk.first_lag.n_pairs == want
    # the down-hole pairs of the band (10-30 m, beyond the 8 m range across the lode)
    # carry no continuity
    down = check_continuity(X[holes == 0], y[holes == 0], lag=20.0, seed=1)
    assert not down.first_lag.significant


def test_group_ratios_equal_gearys_ratio_of_each_group():
    # each direction class's ratio is Geary's ratio of that class's pairs alone
    # (geary_ratio itself is checked against the weight-matrix definition above)
    from anisotropy.fitting.continuity import _group_ratios, direction_classes

    rng = np.random.default_rng(9)
    X = rng.uniform(0, 60, (150, 3))
    y = rng.standard_normal(150)
    pairs, _ = band_pairs(X, 5.0, 15.0)
    cls, U = direction_classes(X, pairs)
    r = _group_ratios(y, pairs[:, 0].copy(), pairs[:, 1].copy(), cls, len(U),
                      (len(y) - 1) / np.sum((y - y.mean()) ** 2))
    for q in np.unique(cls):
        assert r[q] == pytest.approx(geary_ratio(y, pairs[cls == q]), rel=1e-12)


def test_continuity_along_one_direction_only_is_found():
    # correlated along east only (practical range 200 m east, 2 m north and up): the
    # pairs of the first lag in every other direction are unrelated, so one ratio over
    # all of them stays near 1, while the east class stands out
    from anisotropy.fitting.continuity import direction_classes, directional_test

    rng = np.random.default_rng(10)
    X = rng.uniform(0, 120, (500, 3))
    # samples on east-running lines 10 m apart, so that east pairs exist at the first lag
    X[:, 1] = np.round(X[:, 1] / 10) * 10
    X[:, 2] = np.round(X[:, 2] / 10) * 10
    L = X / np.array([200.0, 2.0, 2.0])
    d = np.linalg.norm(L[:, None] - L[None], axis=2)
    y = np.linalg.cholesky(np.exp(-3 * d) + 1e-6 * np.eye(500)) @ rng.standard_normal(500)
    pairs, dist = band_pairs(X, 10.0, 30.0)
    cls, U = direction_classes(X, pairs)
    t = directional_test(y, pairs, cls, U, seed=1)
    assert t.significant
    assert abs(np.cos(np.radians(t.direction[1])) * np.sin(np.radians(t.direction[0]))) > 0.9


@pytest.mark.parametrize("seed", range(4))
def test_sparse_isotropic_continuity_is_seen_by_all_first_lag_pairs_together(seed):
    # 150 scattered samples in a 200 m cube: about 150 pairs in the first lag band
    # (10-30 m), too few for any one of 16 direction classes (30 pairs each at least),
    # but a field of practical range 150 m (NumPy Cholesky, independent of the engine)
    # makes all of them alike together: the family's pooled member must find it
    rng = np.random.default_rng(200 + seed)
    X = rng.uniform(0, 200, (150, 3))
    y = _exp_field(X, rng, a=150.0)
    chk = check_continuity(X, y, lag=20.0, seed=seed)
    assert chk.first_lag.significant and chk.verdict == "resolved"
    assert chk.first_lag.direction is None      # no class alone had enough pairs


def test_a_first_lag_without_pairs_between_holes_is_said_in_words():
    # holes 60 m apart and a 10 m lag: the first lag band (5-15 m) holds only down-hole
    # pairs, none between holes (checked by brute force over all pairs)
    rng = np.random.default_rng(11)
    nh, per = 9, 20
    hx, hy = np.meshgrid(np.arange(3) * 60.0, np.arange(3) * 60.0)
    X = np.column_stack([np.repeat(hx.ravel(), per), np.repeat(hy.ravel(), per),
                         -2.0 * np.tile(np.arange(per, dtype=float), nh)])
    holes = np.repeat(np.arange(nh), per)
    d = np.linalg.norm(X[:, None] - X[None], axis=2)
    i, j = np.triu_indices(len(X), 1)
    assert not np.any((d[i, j] > 5) & (d[i, j] <= 15) & (holes[i] != holes[j]))
    y = np.concatenate([_exp_field(X[h * per:(h + 1) * per], rng, a=20.0) for h in range(nh)])
    chk = check_continuity(X, y, lag=10.0, seed=3, holes=holes, shortest_downhole=2.0)
    assert chk.verdict == "shorter_than_first_lag"
    assert "too few pairs between different holes" in chk.text and "nan" not in chk.text


def _legacy_shuffles(y, n_perm, seed):
    """The documented permutation stream, replayed with NumPy's legacy generator: chunk c
    of PERMUTATION_CHUNKS seeds numpy.random with seed + c and shuffles one copy of y
    again for each of its ceil(n_perm / chunks) consecutive permutations."""
    from anisotropy.fitting.continuity import PERMUTATION_CHUNKS

    size = -(-n_perm // PERMUTATION_CHUNKS)
    out = []
    for c in range(PERMUTATION_CHUNKS):
        np.random.seed(seed + c)
        yp = y.copy()
        for _ in range(c * size, min((c + 1) * size, n_perm)):
            np.random.shuffle(yp)
            out.append(yp.copy())
    return out


def test_permuted_ratios_are_gearys_ratio_of_the_same_shuffle():
    # reference: the same shuffles replayed with NumPy's legacy generator (the compiled
    # code seeds and shuffles as numpy.random.seed / numpy.random.shuffle do, chunk by
    # chunk in parallel), each group's ratio and the pooled one by geary_ratio (checked
    # against the weight matrix definition above)
    from anisotropy.fitting.continuity import _permuted_group_ratios, direction_classes

    rng = np.random.default_rng(12)
    X = rng.uniform(0, 60, (120, 3))
    y = rng.standard_normal(120)
    pairs, _ = band_pairs(X, 5.0, 15.0)
    cls, U = direction_classes(X, pairs)
    scale = (len(y) - 1) / np.sum((y - y.mean()) ** 2)
    got = _permuted_group_ratios(y, pairs[:, 0].copy(), pairs[:, 1].copy(), cls, len(U),
                                 scale, 19, 7)
    for b, yp in enumerate(_legacy_shuffles(y, 19, 7)):
        assert got[b, -1] == pytest.approx(geary_ratio(yp, pairs), rel=1e-12)
        for q in np.unique(cls):
            assert got[b, q] == pytest.approx(geary_ratio(yp, pairs[cls == q]), rel=1e-12)


def test_permuted_sums_are_the_same_shuffles_on_any_thread_count():
    # reference: the legacy-generator replay above and the sum of squared differences
    # written out in NumPy; the parallel chunks must not depend on which thread runs them
    import numba

    from anisotropy.fitting.continuity import _permuted_sums

    rng = np.random.default_rng(5)
    y = rng.standard_normal(90)
    pairs, _ = nearest_pairs(rng.uniform(0, 40, (90, 3)), 4)
    expect = [np.sum((yp[pairs[:, 0]] - yp[pairs[:, 1]]) ** 2) for yp in _legacy_shuffles(y, 21, 3)]
    for threads in sorted({1, numba.config.NUMBA_NUM_THREADS}):
        numba.set_num_threads(threads)
        try:
            got = _permuted_sums(y, pairs[:, 0].copy(), pairs[:, 1].copy(), 21, 3)
        finally:
            numba.set_num_threads(numba.config.NUMBA_NUM_THREADS)
        np.testing.assert_allclose(got, expect, rtol=1e-12)


def _all_permutation_ratios(y, pairs, classes, n_classes):
    """Geary's ratio of each class and of all pairs for every permutation of ``y``
    (exact brute force by enumeration with itertools)."""
    import itertools

    n = len(y)
    ss = np.sum((y - y.mean()) ** 2)
    out = []
    for perm in itertools.permutations(range(n)):
        yp = y[list(perm)]
        d2 = (yp[pairs[:, 0]] - yp[pairs[:, 1]]) ** 2
        row = [(n - 1) * d2[classes == c].sum() / (2 * np.sum(classes == c) * ss)
               for c in range(n_classes)]
        out.append(row + [(n - 1) * d2.sum() / (2 * len(pairs) * ss)])
    return np.array(out)


def test_randomisation_sd_equals_the_spread_over_every_permutation():
    # exact brute force: all 7! = 5040 permutations of skewed values over a pair set in two
    # classes (pairs sharing samples and disjoint ones); mean 1 exactly (Cliff & Ord 1981,
    # ch. 2) and the standard deviation of the enumerated ratios
    from anisotropy.fitting.continuity import randomisation_sd

    rng = np.random.default_rng(11)
    y = rng.lognormal(0.0, 1.0, 7)
    pairs = np.array([(0, 1), (1, 2), (2, 3), (0, 3), (4, 5), (5, 6), (1, 5), (0, 6), (2, 4)])
    classes = np.array([0, 0, 0, 1, 1, 1, 0, 1, 1])
    ratios = _all_permutation_ratios(y, pairs, classes, 2)
    np.testing.assert_allclose(ratios.mean(axis=0), 1.0, rtol=1e-12)
    np.testing.assert_allclose(randomisation_sd(y, pairs, classes, 2), ratios.std(axis=0),
                               rtol=1e-10)


def test_tail_bound_is_never_below_the_exact_permutation_p_value():
    # exact brute force: the p-value of the smallest standardised ratio over all 8! = 40320
    # permutations, against Cantelli's inequality summed over the members (any distribution
    # of mean 0 and variance 1: P(Z <= -t) <= 1 / (1 + t^2))
    from anisotropy.fitting.continuity import randomisation_sd, tail_bound

    rng = np.random.default_rng(12)
    pairs = np.array([(k, k + 1) for k in range(7)] + [(0, 2), (3, 5), (4, 7)])
    classes = np.array([0, 1, 0, 1, 0, 1, 0, 1, 0, 1])
    for _ in range(3):
        y = np.sort(rng.standard_normal(8)) + 0.3 * rng.standard_normal(8)  # alike neighbours
        all_r = _all_permutation_ratios(y, pairs, classes, 2)
        sd = randomisation_sd(y, pairs, classes, 2)
        obs = all_r[0]                       # the identity permutation comes first
        z_obs = np.min((obs - 1) / sd)
        exact = np.mean(np.min((all_r - 1) / sd, axis=1) <= z_obs + 1e-12)
        bound = tail_bound(z_obs, 3)
        assert z_obs < 0
        assert bound >= exact


def test_tail_bound_skips_the_permutations_only_where_they_agree():
    # a strongly correlated field with thousands of pairs: the bound decides (no
    # permutation drawn), and the permutations, forced by alpha = 0, rank the observed
    # ratio below every one of them (exact brute force by Monte Carlo permutation)
    rng = np.random.default_rng(13)
    X = rng.uniform(0, 200, (1200, 3))
    y = _exp_field(X, rng, a=120.0)
    pairs, dist = nearest_pairs(X, 6)
    fast = continuity_test(y, pairs, distances=dist)
    full = continuity_test(y, pairs, distances=dist, alpha=0.0, permutations=199)
    assert fast.method == "tail_bound" and fast.permutations == 0
    assert fast.significant and fast.p_value <= fast.alpha
    assert full.method == "permutation" and full.p_value == pytest.approx(1 / 200)
    assert fast.ratio == full.ratio
