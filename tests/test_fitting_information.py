"""Tests of the likelihood's information cones (anisotropy.fitting.information)."""

import numpy as np

from anisotropy.fitting.information import (axis_cones, information_cones, observed_information,
                                            share_logit_sd)
from anisotropy.fitting.likelihood import (LikelihoodFit, refine_frame_likelihood,
                                           vecchia_negloglik, vecchia_setup)


def _field(n=400, seed=0):
    """Scattered samples of an anisotropic exponential field, by a NumPy Cholesky
    factorisation (independent of the engine): practical ranges 60 / 30 / 10 m
    along x / y / z, correlation exp(-3 h)."""
    rng = np.random.default_rng(seed)
    X = rng.uniform(0, 120, (n, 3)) * [1.0, 1.0, 0.4]
    h = np.sqrt((((X[:, None, :] - X[None, :, :]) / [60.0, 30.0, 10.0]) ** 2).sum(axis=2))
    C = 0.9 * np.exp(-3.0 * h) + 0.1 * np.eye(n)
    return X, np.linalg.cholesky(C) @ rng.standard_normal(n)


def test_observed_information_matches_second_differences_of_the_value():
    # brute force: the Hessian by second central differences of the value alone (the
    # value kernel, not the gradient kernel) at a parameter vector off the maximum
    X, y = _field(300, 1)
    s = vecchia_setup(X, y, n_neighbours=10, seed=0)
    args = (s.coords, s.values, s.neighbours, ("exponential",))
    p = np.array([0.1, -0.2, 0.3, np.log(50.0), np.log(25.0), np.log(12.0), -1.5])
    H = observed_information(p, args)
    h = 1e-3
    f = lambda q: vecchia_negloglik(q, *args)   # noqa: E731
    E = np.eye(len(p)) * h
    B = np.array([[(f(p + E[i] + E[j]) - f(p + E[i] - E[j]) - f(p - E[i] + E[j])
                    + f(p - E[i] - E[j])) / (4 * h * h) for j in range(len(p))]
                  for i in range(len(p))])
    np.testing.assert_allclose(H, B, rtol=2e-3, atol=2e-3 * np.abs(B).max())


def test_axis_cones_of_an_isotropic_small_turn_follow_the_rayleigh_quantile():
    # a rotation vector N(0, s^2 I) with s small turns an axis by the norm of its two
    # components across the axis: a Rayleigh angle, whose 90 % quantile is
    # s sqrt(-2 ln 0.1) (the Rayleigh distribution's quantile function)
    # (about the identity: elsewhere a rotation vector's spread is not isotropic in space)
    s = np.radians(1.0)
    q = axis_cones(np.zeros(3), s * s * np.eye(3), 0.9, seed=1, draws=40000)
    np.testing.assert_allclose(q, np.sqrt(-2 * np.log(0.1)), rtol=0.03)


def test_axis_cones_of_a_turn_about_one_axis_leave_that_axis_in_place():
    # a rotation vector along the first column only turns the other two (by |N(0, s^2)|,
    # 90 % quantile 1.645 s: the normal distribution's two-sided quantile, SciPy's
    # norm.ppf(0.95))
    from scipy.stats import norm

    s = np.radians(2.0)
    rv = np.zeros(3)
    q = axis_cones(rv, np.diag([s * s, 1e-16, 1e-16]), 0.9, seed=2, draws=40000)
    assert q[0] < 1e-3
    np.testing.assert_allclose(q[1:], 2.0 * norm.ppf(0.95), rtol=0.03)


def test_information_cones_at_a_maximum_are_given_and_shrink_with_more_samples():
    # the Wald covariance scales as 1 / n (Pawitan 2001, ch. 9): eight times the
    # samples of the same field give cones about 1 / sqrt(8) = 0.35 as wide (loose
    # bounds on the geometric mean: one realisation each)
    out = []
    for n in (200, 1600):
        X, y = _field(n, 3)
        s = vecchia_setup(X, y, n_neighbours=15, seed=0)
        lk = refine_frame_likelihood(X, y, np.eye(3), [[60.0, 30.0, 10.0]], 0.1, [0.9],
                                     ("exponential",), setup=s)
        assert lk.kinds == ("exponential",)
        ic = information_cones(lk, s, 0.9)
        assert ic.cones is not None and ic.note == ""
        out.append(np.array(list(ic.cones.values())))
    ratio = out[1] / out[0]
    assert np.all(ratio < 1.0)
    assert 0.15 < np.exp(np.mean(np.log(ratio))) < 0.6


def test_no_cone_where_the_information_is_not_positive_definite():
    # equal ranges on all three axes: the model, and so the likelihood, does not change
    # when the frame turns (an isotropic covariance is invariant under rotation), so the
    # information along the rotation vector is zero and no cone may be claimed
    X, y = _field(200, 4)
    y = np.random.default_rng(5).standard_normal(len(y))    # no correlation at all
    s = vecchia_setup(X, y, n_neighbours=10, seed=0)
    fit = LikelihoodFit(frame=np.eye(3), ranges=np.array([[60.0, 60.0, 60.0]]),
                        nugget_share=0.5, shares=np.array([0.5]), negloglik=0.0,
                        negloglik_start=0.0, n_samples=len(y), n_neighbours=10,
                        kinds=("exponential",))
    ic = information_cones(fit, s, 0.9)
    assert ic.cones is None and "not positive definite" in ic.note


def test_rotation_sd_is_the_inverse_information_of_the_rotation():
    # the Wald covariance is the inverse of the observed information (Pawitan 2001,
    # ch. 9): here its rotation diagonal against NumPy's inverse of the Hessian taken by
    # second differences of the value kernel alone (a different code path)
    X, y = _field(300, 6)
    s = vecchia_setup(X, y, n_neighbours=10, seed=0)
    lk = refine_frame_likelihood(X, y, np.eye(3), [[60.0, 30.0, 10.0]], 0.1, [0.9],
                                 ("exponential",), setup=s)
    ic = information_cones(lk, s, 0.9)
    assert ic.rotation_sd is not None and ic.rotation_sd.shape == (3,)
    p = lk.parameters()
    f = lambda q: vecchia_negloglik(q, s.coords, s.values, s.neighbours,  # noqa: E731
                                    ("exponential",))
    h = 1e-3
    E = np.eye(len(p)) * h
    B = np.array([[(f(p + E[i] + E[j]) - f(p + E[i] - E[j]) - f(p - E[i] + E[j])
                    + f(p - E[i] - E[j])) / (4 * h * h) for j in range(len(p))]
                  for i in range(len(p))])
    expected = np.degrees(np.sqrt(np.diag(np.linalg.inv(0.5 * (B + B.T)))[:3]))
    np.testing.assert_allclose(ic.rotation_sd, expected, rtol=0.02)
    assert ic.to_dict()["rotation_sd_deg"] == [float(x) for x in ic.rotation_sd]
    # one structure: the nugget share is the logistic of the one free logit, so both
    # shares' logits are +-that logit and share its standard deviation
    logit_sd = np.sqrt(np.linalg.inv(0.5 * (B + B.T))[6, 6])
    np.testing.assert_allclose(ic.logit_share_sd, [logit_sd, logit_sd], rtol=0.02)


def test_share_logit_sd_is_the_delta_method_through_the_softmax():
    # against a central-difference Jacobian (NumPy) of logit(softmax(z, 0)) at random
    # logits, and the closed form of one structure (the logistic: sd unchanged)
    rng = np.random.default_rng(5)
    z = rng.normal(size=2)
    A = rng.normal(size=(2, 2))
    C = A @ A.T + 0.1 * np.eye(2)

    def logit_shares(v):
        e = np.exp(np.r_[v, 0.0])
        f = e / e.sum()
        return np.log(f / (1.0 - f))

    h = 1e-6
    J = np.stack([(logit_shares(z + h * e) - logit_shares(z - h * e)) / (2 * h)
                  for e in np.eye(2)], axis=1)
    e = np.exp(np.r_[z, 0.0])
    got = share_logit_sd(C, e / e.sum())
    np.testing.assert_allclose(got, np.sqrt(np.diag(J @ C @ J.T)), rtol=1e-6)
    np.testing.assert_allclose(share_logit_sd([[0.09]], [0.2, 0.8]), [0.3, 0.3])


def test_a_range_beyond_the_limit_is_held_and_the_rest_conditioned_on_it():
    # a range run out far beyond what the samples reach (here 1e7 m along x): the
    # likelihood is flat along its log, so the full information is singular. Held, the
    # other parameters' covariance is the inverse of the information of the free
    # parameters alone (the conditional covariance of a Gaussian; Pawitan 2001, ch. 9),
    # checked against NumPy's inverse of that block of the Hessian taken by second
    # differences of the value kernel alone
    X, y = _field(300, 7)
    s = vecchia_setup(X, y, n_neighbours=10, seed=0)
    # searched from there: the long range stays out (the likelihood does not change along
    # it), the other parameters go to their maximum given it
    fit = refine_frame_likelihood(X, y, np.eye(3), [[1e7, 30.0, 10.0]], 0.1, [0.9],
                                  ("exponential",), setup=s)
    assert fit.ranges[0][0] > 1e6
    assert information_cones(fit, s, 0.9).cones is None
    ic = information_cones(fit, s, 0.9, range_limit=5000.0)
    assert ic.cones is not None
    p = fit.parameters()
    f = lambda q: vecchia_negloglik(q, s.coords, s.values, s.neighbours,  # noqa: E731
                                    ("exponential",))
    h = 3e-4   # the rotation is loosely held here: at 1e-3 the differences were 3 % off
    E = np.eye(len(p)) * h
    B = np.array([[(f(p + E[i] + E[j]) - f(p + E[i] - E[j]) - f(p - E[i] + E[j])
                    + f(p - E[i] - E[j])) / (4 * h * h) for j in range(len(p))]
                  for i in range(len(p))])
    free = [0, 1, 2, 4, 5, 6]
    C = np.linalg.inv(0.5 * (B + B.T)[np.ix_(free, free)])
    np.testing.assert_allclose(ic.rotation_sd, np.degrees(np.sqrt(np.diag(C)[:3])), rtol=0.02)
    # one structure: both share logits are +-the one free logit (its variance C[5, 5])
    np.testing.assert_allclose(ic.logit_share_sd, [np.sqrt(C[5, 5])] * 2, rtol=0.02)
    # a limit the ranges stay inside holds nothing: the full inverse, as without one
    within = information_cones(fit, s, 0.9, range_limit=1e8)
    assert within.cones is None
