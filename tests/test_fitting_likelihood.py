"""Tests of the nearest-neighbour likelihood refinement (anisotropy.fitting.likelihood)."""

import numpy as np
import pytest
from scipy.linalg import cholesky
from scipy.optimize import approx_fprime
from scipy.spatial.transform import Rotation
from scipy.stats import multivariate_normal

from anisotropy.errors import FitError
from anisotropy.fitting.likelihood import (refine_frame_likelihood, vecchia_negloglik,
                                           vecchia_negloglik_grad, vecchia_neighbours,
                                           vecchia_setup)


def spherical_cov(X, frame, ranges, nugget, sill):
    # spherical covariance, sill * (1 - 1.5 h + 0.5 h^3) for h < 1 (Journel &
    # Huijbregts 1978, ch. II), written here independently of anisotropy.models
    L = (X[:, None, :] - X[None, :, :]) @ frame
    h = np.sqrt(np.sum((L / np.asarray(ranges, float)) ** 2, axis=-1))
    hc = np.minimum(h, 1.0)
    C = sill * (1.0 - 1.5 * hc + 0.5 * hc ** 3)
    C[np.diag_indices_from(C)] += nugget
    return C


def test_neighbours_are_the_nearest_predecessors():
    # exact brute force: for each position, sort the distances to all earlier positions
    X = np.random.default_rng(0).uniform(0, 100, size=(200, 3))
    order, nbr = vecchia_neighbours(X, 7, seed=3)
    assert sorted(order) == list(range(200))
    Y = X[order]
    for i in range(200):
        d = np.linalg.norm(Y[:i] - Y[i], axis=1)
        want = set(np.argsort(d, kind="stable")[:min(7, i)].tolist())
        got = set(int(j) for j in nbr[i] if j >= 0)
        assert got == want
        assert np.sum(nbr[i] >= 0) == min(7, i)


def test_full_conditioning_sets_give_the_exact_likelihood():
    # with every predecessor as neighbour the Vecchia product is the chain rule of
    # probability, hence exact (Vecchia 1988); the reference is SciPy's
    # multivariate_normal.logpdf with the sill at its profile maximum y'C^-1 y / n
    rng = np.random.default_rng(1)
    n = 60
    X = rng.uniform(0, 50, size=(n, 3))
    F = Rotation.from_euler("zyx", [30, 20, 10], degrees=True).as_matrix()
    ranges = np.array([40.0, 25.0, 10.0])
    nug_share = 0.2
    C = spherical_cov(X, F, ranges, nug_share, 1.0 - nug_share)
    y = cholesky(C, lower=True) @ rng.standard_normal(n)
    order, nbr = vecchia_neighbours(X, n - 1, seed=0)
    Y, yo = X[order], y[order]
    p = np.r_[Rotation.from_matrix(F).as_rotvec(), np.log(ranges),
              np.log(nug_share / (1 - nug_share))]
    got = vecchia_negloglik(p, Y, yo, nbr, ("spherical",))
    s2 = y @ np.linalg.solve(C, y) / n
    exact = -multivariate_normal(mean=np.zeros(n), cov=s2 * C).logpdf(y)
    # the function drops the constant n/2 (log 2 pi + 1)
    assert got == pytest.approx(exact - 0.5 * n * (np.log(2 * np.pi) + 1.0), abs=1e-7)


def test_likelihood_value_does_not_depend_on_the_threads():
    # the terms are summed over a fixed number of chunks in chunk order, so one and
    # two threads give the same bits; and the sum equals a plain per-sample loop
    # (exact brute force: the chain of conditional normal densities, each from
    # numpy.linalg.solve on the sample's neighbours)
    import numba

    rng = np.random.default_rng(5)
    n, m = 300, 12
    X = rng.uniform(0, 80, size=(n, 3))
    F = Rotation.from_euler("zyx", [50, 10, -20], degrees=True).as_matrix()
    ranges = np.array([45.0, 20.0, 8.0])
    C = spherical_cov(X, F, ranges, 0.1, 0.9)
    y = cholesky(C, lower=True) @ rng.standard_normal(n)
    order, nbr = vecchia_neighbours(X, m, seed=2)
    Y, yo = X[order], y[order]
    p = np.r_[Rotation.from_matrix(F).as_rotvec(), np.log(ranges), np.log(0.1 / 0.9)]
    before = numba.get_num_threads()
    try:
        numba.set_num_threads(1)
        one = vecchia_negloglik(p, Y, yo, nbr, ("spherical",))
        numba.set_num_threads(max(1, min(2, numba.config.NUMBA_NUM_THREADS)))
        two = vecchia_negloglik(p, Y, yo, nbr, ("spherical",))
    finally:
        numba.set_num_threads(before)
    assert one == two
    Co = spherical_cov(Y, F, ranges, 0.1, 0.9)
    q = ld = 0.0
    for i in range(n):
        nb = nbr[i][nbr[i] >= 0]
        if nb.size:
            w = np.linalg.solve(Co[np.ix_(nb, nb)], Co[nb, i])
            mu, var = w @ yo[nb], Co[i, i] - Co[nb, i] @ w
        else:
            mu, var = 0.0, Co[i, i]
        q += (yo[i] - mu) ** 2 / var
        ld += np.log(var)
    assert one == pytest.approx(0.5 * (n * np.log(q / n) + ld), rel=1e-10)


def test_nested_likelihood_contains_the_one_structure_model():
    # discover refines the frame with a second, shorter structure added to a
    # one-structure fit; that model contains the one-structure model, so its share
    # going to zero must give the one-structure likelihood (the covariance is the same
    # matrix: exact identity up to rounding of the vanishing share)
    rng = np.random.default_rng(9)
    n = 250
    X = rng.uniform(0, 90, size=(n, 3))
    F = Rotation.from_euler("zyx", [-40, 25, 5], degrees=True).as_matrix()
    ranges = np.array([50.0, 30.0, 12.0])
    y = cholesky(spherical_cov(X, F, ranges, 0.2, 0.8), lower=True) @ rng.standard_normal(n)
    order, nbr = vecchia_neighbours(X, 15, seed=4)
    Y, yo = X[order], y[order]
    rv = Rotation.from_matrix(F).as_rotvec()
    one = vecchia_negloglik(np.r_[rv, np.log(ranges), np.log(0.2 / 0.8)], Y, yo, nbr,
                            ("spherical",))
    # logits relative to the last (long) structure: nugget 0.2/0.8, short structure e^-40
    two = vecchia_negloglik(np.r_[rv, np.log(0.3 * ranges), np.log(ranges),
                                  np.log(0.2 / 0.8), -40.0], Y, yo, nbr,
                            ("spherical", "spherical"))
    assert two == pytest.approx(one, rel=1e-12, abs=1e-9)


def test_refinement_recovers_a_simulated_frame():
    # truth recovery on a Gaussian field simulated by Cholesky factorisation of the
    # spherical covariance (Journel & Huijbregts 1978, ch. II), started 15 degrees off
    rng = np.random.default_rng(7)
    X = rng.uniform([0, 0, 0], [200, 200, 120], size=(700, 3))
    truth = Rotation.from_euler("zyx", [40, 25, 0], degrees=True).as_matrix()
    ranges = np.array([110.0, 45.0, 15.0])
    C = spherical_cov(X, truth, ranges, 0.1, 0.9)
    y = cholesky(C, lower=True) @ rng.standard_normal(len(X)) + 5.0
    start = Rotation.from_rotvec([0.0, 0.0, np.radians(15.0)]).as_matrix() @ truth
    fit = refine_frame_likelihood(X, y, start, [ranges * [0.8, 1.2, 1.1]], 0.1, [0.9],
                                  ("spherical",), n_neighbours=20, seed=0)

    def err(a, b):
        return np.degrees(np.arccos(min(1.0, abs(float(a @ b)))))

    assert err(start[:, 0], truth[:, 0]) > 14.0
    assert err(fit.frame[:, 0], truth[:, 0]) < 6.0
    assert err(fit.frame[:, 2], truth[:, 2]) < 6.0
    assert fit.negloglik <= fit.negloglik_start
    assert fit.n_samples == 700


def test_too_few_samples_and_unknown_kinds_are_refused():
    X = np.random.default_rng(2).uniform(0, 10, size=(20, 3))
    with pytest.raises(FitError):
        refine_frame_likelihood(X, np.ones(20), np.eye(3), [[5, 5, 5]], 0.1, [0.9],
                                ("spherical",))
    X = np.random.default_rng(2).uniform(0, 10, size=(80, 3))
    with pytest.raises(FitError):
        refine_frame_likelihood(X, np.random.default_rng(3).normal(size=80), np.eye(3),
                                [[5, 5, 5]], 0.1, [0.9], ("hole_effect",))


def _gradient_case(seed, K):
    # a small random layout with two duplicated locations (zero distances between
    # distinct samples), random values and random parameters: ranges from 8 to 90 m
    # on a 60 m box, so that pairs fall on both sides of the compact kernels' range
    rng = np.random.default_rng(seed)
    X = rng.uniform(0, 60, size=(120, 3))
    X[7] = X[3]
    X[50] = X[11]
    y = rng.standard_normal(120)
    order, nbr = vecchia_neighbours(X, 10, seed=seed)
    p = np.r_[rng.normal(0, 1.0, 3), np.log(rng.uniform(8, 90, 3 * K)), rng.normal(0, 1, K)]
    return p, X[order] - X.mean(axis=0), y[order] - y.mean(), nbr


@pytest.mark.parametrize("K", [1, 2])
@pytest.mark.parametrize("kind", ["spherical", "exponential", "gaussian", "cubic"])
def test_analytic_gradient_matches_finite_differences(kind, K):
    # outside reference: SciPy's forward-difference gradient (scipy.optimize.approx_fprime)
    # of the value function; with K = 2 the second structure is another kind, so mixed
    # models are covered too. The value returned beside the gradient is the same number.
    kinds = (kind,) if K == 1 else (kind, "exponential" if kind != "exponential" else "cubic")
    for seed in (1, 2):
        p, Y, y, nbr = _gradient_case(seed + 10 * K, K)
        f, g = vecchia_negloglik_grad(p, Y, y, nbr, kinds)
        assert f == vecchia_negloglik(p, Y, y, nbr, kinds)
        ref = approx_fprime(p, vecchia_negloglik, 1e-6, Y, y, nbr, kinds)
        np.testing.assert_allclose(g, ref, rtol=1e-5, atol=1e-5 * np.max(np.abs(ref)))


def test_analytic_gradient_at_the_identity_frame():
    # the rotation vector 0 (a start frame along the coordinate axes) is where the
    # rotation-vector-to-matrix map's own series starts; same reference as above
    p, Y, y, nbr = _gradient_case(5, 1)
    p[:3] = 0.0
    f, g = vecchia_negloglik_grad(p, Y, y, nbr, ("spherical",))
    ref = approx_fprime(p, vecchia_negloglik, 1e-6, Y, y, nbr, ("spherical",))
    np.testing.assert_allclose(g, ref, rtol=1e-5, atol=1e-5 * np.max(np.abs(ref)))


def test_gradient_does_not_depend_on_the_threads():
    # the gradient sums are chunked like the value (fixed chunks, chunk order)
    import numba

    p, Y, y, nbr = _gradient_case(8, 2)
    before = numba.get_num_threads()
    try:
        numba.set_num_threads(1)
        one = vecchia_negloglik_grad(p, Y, y, nbr, ("spherical", "gaussian"))[1]
        numba.set_num_threads(max(1, min(2, numba.config.NUMBA_NUM_THREADS)))
        two = vecchia_negloglik_grad(p, Y, y, nbr, ("spherical", "gaussian"))[1]
    finally:
        numba.set_num_threads(before)
    assert np.array_equal(one, two)


def _simulated(n, seed):
    rng = np.random.default_rng(seed)
    X = rng.uniform([0, 0, 0], [160, 160, 80], size=(n, 3))
    truth = Rotation.from_euler("zyx", [30, 20, 5], degrees=True).as_matrix()
    ranges = np.array([90.0, 40.0, 15.0])
    y = cholesky(spherical_cov(X, truth, ranges, 0.1, 0.9), lower=True) @ rng.standard_normal(n)
    start = Rotation.from_rotvec([0.0, 0.0, np.radians(8.0)]).as_matrix() @ truth
    return X, y, start, ranges


def test_analytic_and_numeric_searches_agree():
    # the same search with SciPy's forward differences (the earlier path) must reach
    # the same frame: largest axis angle well under a degree, same likelihood
    X, y, start, ranges = _simulated(300, 4)
    args = (X, y, start, [ranges * [0.8, 1.2, 1.1]], 0.1, [0.9], ("spherical",))
    a = refine_frame_likelihood(*args, seed=1, ftol=1e-8, gradient="analytic")
    b = refine_frame_likelihood(*args, seed=1, ftol=1e-8, gradient="numeric")
    angles = [np.degrees(np.arccos(min(1.0, abs(a.frame[:, j] @ b.frame[:, j]))))
              for j in range(3)]
    assert max(angles) < 0.5
    assert a.negloglik == pytest.approx(b.negloglik, abs=1e-3)
    assert a.info["njev"] > 0 and a.info["nfev"] < b.info["nfev"]


def test_a_shared_setup_gives_the_same_fit():
    # a setup built once with the arguments refine_frame_likelihood would use itself
    # reproduces its fit exactly (same samples, order and neighbours)
    X, y, start, ranges = _simulated(200, 6)
    y[[3, 40]] = np.nan
    args = (X, y, start, [ranges], 0.1, [0.9], ("spherical",))
    own = refine_frame_likelihood(*args, seed=2, n_neighbours=12, max_samples=150)
    setup = vecchia_setup(X, y, frame=start, ranges=[ranges], seed=2, n_neighbours=12,
                          max_samples=150)
    shared = refine_frame_likelihood(*args, setup=setup)
    assert shared.negloglik == own.negloglik
    assert np.array_equal(shared.frame, own.frame)
    assert setup.to_dict() == {"n_samples": 150, "n_neighbours": 12, "n_input": 200,
                               "n_dropped": 2, "hole_aware": False}
    assert np.all(np.isfinite(y[setup.order]))
    with pytest.raises(ValueError):
        refine_frame_likelihood(X[:150], y[:150], start, [ranges], 0.1, [0.9],
                                ("spherical",), setup=setup)


def _three_holes(sizes):
    # vertical holes 10 m apart, samples every 2 m down each hole
    X, lab = [], []
    for h, n in enumerate(sizes):
        X.append(np.c_[np.full(n, 10.0 * h), np.zeros(n), -2.0 * np.arange(n)])
        lab += [f"DH{h}"] * n
    return np.vstack(X), np.array(lab)


def test_plain_neighbours_stay_in_their_own_hole():
    # by hand: with 2 m down-hole spacing and 10 m between holes, a sample whose four
    # nearest predecessors are within 8 m down its own hole never looks across
    X, lab = _three_holes([10, 10, 10])
    order, nbr = vecchia_neighbours(X, 4, seed=0)
    L = lab[order]
    deep = [i for i in range(30) if np.sum(L[:i] == L[i]) >= 8]
    assert deep
    for i in deep:
        assert np.all(L[nbr[i]] == L[i])


def _check_hole_rule(Y, L, nbr, m):
    """Brute-force check of every position; returns how often the own hole topped up."""
    filled = 0
    for i in range(len(Y)):
        d = np.linalg.norm(Y[:i] - Y[i], axis=1)
        own = np.sort(d[L[:i] == L[i]])
        oth = np.sort(d[L[:i] != L[i]])
        n_oth = min(len(oth), m - min(len(own), -(-m // 2)))
        n_own = min(len(own), m - n_oth)
        got = nbr[i][nbr[i] >= 0]
        assert np.all(nbr[i][len(got):] == -1)  # valid entries first
        assert np.all(got < i)
        is_own = L[got] == L[i]
        assert is_own.sum() == n_own and (~is_own).sum() == n_oth
        dg = np.linalg.norm(Y[got] - Y[i], axis=1)
        np.testing.assert_allclose(np.sort(dg[is_own]), own[:n_own])
        np.testing.assert_allclose(np.sort(dg[~is_own]), oth[:n_oth])
        filled += n_own > -(-m // 2)
    return filled


@pytest.mark.parametrize("m", [4, 5, 6])
def test_hole_aware_neighbours_follow_the_rule(m):
    # exact brute force with NumPy: for each position, the own-hole and other-hole
    # predecessors sorted by distance; the rule takes min(own, ceil(m/2)) from the own
    # hole, fills with other holes, then tops up from the own hole. Ties (regular
    # spacing) are compared by distance, not by index.
    X, lab = _three_holes([20, 5, 5])
    filled = 0
    for seed in range(12):
        order, nbr = vecchia_neighbours(X, m, seed=seed, holes=lab)
        filled += _check_hole_rule(X[order], lab[order], nbr, m)
    assert filled > 0  # the top-up branch was exercised
    # by hand: the last position has every other sample before it (at least 5 in
    # other holes), so exactly ceil(m/2) own-hole and m - ceil(m/2) other-hole ones
    L = lab[order]
    assert np.sum(L[nbr[-1]] == L[-1]) == -(-m // 2)


def test_setup_keeps_hole_labels_with_their_rows():
    # the labels must follow their rows through the dropped (non-finite) rows, the
    # subsample and the order: the same brute force as above, in the start model's
    # metric (frame / ranges of the longest structure), on the setup's own rows
    X, lab = _three_holes([20, 20, 20])
    y = np.random.default_rng(0).standard_normal(60)
    y[5] = np.inf
    R = np.array([[30.0, 20.0, 10.0]])
    setup = vecchia_setup(X, y, frame=np.eye(3), ranges=R, n_neighbours=5, max_samples=55,
                          seed=4, holes=lab)
    assert setup.to_dict()["hole_aware"] and setup.n_dropped == 1 and setup.n_samples == 55
    assert 5 not in setup.order
    _check_hole_rule(X[setup.order] / R[0], lab[setup.order], setup.neighbours, 5)
    np.testing.assert_allclose(setup.coords, X[setup.order] - X[setup.order].mean(axis=0))
