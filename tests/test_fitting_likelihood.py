"""Tests of the nearest-neighbour likelihood refinement (anisotropy.fitting.likelihood)."""

import numpy as np
import pytest
from scipy.linalg import cholesky
from scipy.spatial.transform import Rotation
from scipy.stats import multivariate_normal

from anisotropy.errors import FitError
from anisotropy.fitting.likelihood import (refine_frame_likelihood, vecchia_negloglik,
                                           vecchia_neighbours)


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
