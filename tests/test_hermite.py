"""Tests of anisotropy.hermite: Hermite coefficients and the grade-unit model.

Outside references used here:
- numpy.polynomial.hermite_e (probabilists' Hermite series and Gauss-Hermite
  quadrature) as the reference for the coefficients;
- the generating function of the probabilists' Hermite polynomials,
  exp(t y - t^2/2) = sum_n He_n(y) t^n / n!, which at t = 1 gives
  exp(y) = e^{1/2} sum_n He_n(y) / n!, i.e. phi_n = e^{1/2} / sqrt(n!) on the
  normalised polynomials He_n / sqrt(n!) (derived here), and
  Var exp(Y) = e (e - 1) (lognormal variance, Johnson, Kotz & Balakrishnan
  1994, recalled from memory);
- a Monte Carlo of the Gaussian model: bivariate normal scores with
  correlation rho, both sent through the anamorphosis, sample covariance
  (Rivoirard 1994; Chiles & Delfiner 2012, ch. 6 for the formula checked);
- an exact computation: a linear anamorphosis z = a + b y scales every
  covariance by b^2.
"""

import math

import numpy as np
import pytest
from numpy.polynomial import hermite_e as He

from anisotropy.geometry import frame_from_angles
from anisotropy.hermite import grade_model, hermite_coefficients, hermite_covariance
from anisotropy.models import NestedModel, Structure
from anisotropy.transform import NormalScore


def test_coefficients_of_exp_match_the_generating_function_and_numpy():
    n = 30
    phi, var = hermite_coefficients(np.exp, n)
    fact = np.array([math.factorial(k) for k in range(n + 1)], float)
    # derived from the generating function (module docstring)
    np.testing.assert_allclose(phi, math.exp(0.5) / np.sqrt(fact), rtol=1e-7, atol=1e-12)
    # reference: numpy.polynomial.hermite_e Gauss-Hermite quadrature,
    # c_n = E[exp(Y) He_n(Y)] / n!  (weight exp(-y^2/2), total sqrt(2 pi))
    x, w = He.hermegauss(120)
    c_ref = np.array([np.sum(w * np.exp(x) * He.hermeval(x, np.eye(n + 1)[k]))
                      for k in range(n + 1)]) / math.sqrt(2 * math.pi) / fact
    np.testing.assert_allclose(phi / np.sqrt(fact), c_ref, rtol=1e-7, atol=1e-14)
    # the series rebuilds exp(y) (numpy.polynomial.hermite_e.hermeval)
    y = np.linspace(-3, 3, 13)
    np.testing.assert_allclose(He.hermeval(y, phi / np.sqrt(fact)), np.exp(y), rtol=1e-9)
    # lognormal variance e(e-1)
    assert var == pytest.approx(math.e * (math.e - 1), rel=1e-7)
    assert hermite_covariance(phi, 1.0) == pytest.approx(var, rel=1e-9)


@pytest.mark.parametrize("rho", [0.25, 0.6, 0.9])
def test_hermite_covariance_matches_a_monte_carlo_of_the_gaussian_model(rho):
    # an empirical anamorphosis: normal scores of a skewed (lognormal) sample
    rng = np.random.default_rng(11)
    grades = np.exp(rng.normal(0.0, 0.8, 3000))
    ns = NormalScore().fit(grades)
    phi, var = hermite_coefficients(ns.back_transform)
    # Monte Carlo: bivariate normals with correlation rho through the anamorphosis
    m = 400_000
    y1 = rng.standard_normal(m)
    y2 = rho * y1 + math.sqrt(1 - rho * rho) * rng.standard_normal(m)
    z1, z2 = ns.back_transform(y1), ns.back_transform(y2)
    prod = (z1 - z1.mean()) * (z2 - z2.mean())
    se = prod.std() / math.sqrt(m)
    assert hermite_covariance(phi, rho) == pytest.approx(prod.mean(), abs=4 * se)
    # and the variance of the anamorphosis against the simulated grades
    assert var == pytest.approx(z1.var(), rel=0.03)


def test_grade_model_of_a_linear_anamorphosis_is_the_scaled_model():
    # exact: z = 2 + 3 y has phi_1 = 3 and no other term, so C_Z = 9 C_Y
    F = frame_from_angles(40.0, 20.0, 10.0)
    ym = NestedModel(0.2, [Structure("spherical", 0.5, (80, 40, 10)),
                           Structure("exponential", 0.3, (200, 90, 30))], F)
    g = grade_model(ym, lambda y: 2.0 + 3.0 * np.asarray(y))
    assert g.variance == pytest.approx(9.0, rel=1e-9)
    assert g.model.nugget == pytest.approx(9 * 0.2, abs=1e-6)
    for s, t in zip(g.model.structures, ym.structures):
        assert s.sill == pytest.approx(9 * t.sill, rel=1e-6)
        assert s.ranges == t.ranges and s.kind == t.kind
    np.testing.assert_allclose(g.model.frame, F)
    assert g.max_misfit < 1e-9 and g.captured == pytest.approx(1.0, rel=1e-9)


def test_grade_model_of_a_skewed_anamorphosis_keeps_the_variance():
    # exp(y): the total grade sill is the lognormal variance e(e-1); the
    # structure sills fall below the scaled score sills (high grades lose
    # continuity: C_Z(0+) = sum phi_n^2 (1 - c0)^n < (1 - c0) Var Z)
    F = frame_from_angles(0.0, 0.0, 0.0)
    ym = NestedModel(0.1, [Structure("spherical", 0.9, (100, 50, 20))], F)
    g = grade_model(ym, np.exp)
    var = math.e * (math.e - 1)
    assert g.model.total_sill == pytest.approx(var, rel=1e-6)
    assert g.model.nugget > 0.1 * var
    # the sill is the ordinary least-squares fit to the Hermite covariance at
    # the fitting lags (normal equation b = <a, t> / <a, a>, exact algebra)
    from anisotropy.hermite import _fit_lags

    lags = _fit_lags(ym)
    t = hermite_covariance(g.phi, ym.covariance(lags) / ym.total_sill)
    a = ym.structures[0].correlation(lags, F)
    b = float(a @ t / (a @ a))
    assert g.model.structures[0].sill == pytest.approx(b, rel=1e-6)
    assert g.max_misfit == pytest.approx(np.max(np.abs(b * a - t)) / var, rel=1e-6)
    d = g.to_dict()
    assert d["method"] == "hermite" and "Hermite" in d["reason"]


def test_downhole_check_experimental_matches_the_hermite_variogram_by_monte_carlo():
    # Monte Carlo of the Gaussian model: normal scores simulated along holes
    # (anisotropy.simulate, itself checked against its covariance in
    # test_simulate), grades z = exp(0.5 y); the direct down-hole grade
    # variogram is compared with Var Z - sum phi_n^2 rho^n (the Hermite
    # back-transform, Rivoirard 1994), rho from the score model at each pair
    from anisotropy.hermite import downhole_check
    from anisotropy.simulate import simulate_field

    rng = np.random.default_rng(2)
    n_holes, per, comp = 150, 15, 2.0
    xy = rng.uniform(0, 2000, (n_holes, 2))
    pts = np.array([[x, y, -comp * j] for x, y in xy for j in range(per)])
    holes = np.repeat(np.arange(n_holes), per)
    ym = NestedModel(0.1, [Structure("spherical", 0.9, (40.0, 40.0, 12.0))],
                     frame_from_angles(0.0, 0.0, 0.0))
    ana = lambda y: np.exp(0.5 * np.asarray(y))  # noqa: E731
    g = grade_model(ym, ana)
    exp_rows = []
    for seed in range(4):
        z = ana(simulate_field(pts, ym, seed=seed))
        exp_rows.append(downhole_check(g.model, pts, z, holes, comp))
    phi, var = hermite_coefficients(ana)
    for k in range(3):
        vals = np.array([r[k]["experimental"] for r in exp_rows])
        lag = np.array([0.0, 0.0, (k + 1) * comp])
        rho = float(ym.covariance(lag[None])[0]) / ym.total_sill
        want = var - float(hermite_covariance(phi, rho))
        se = vals.std(ddof=1) / np.sqrt(len(vals))
        assert vals.mean() == pytest.approx(want, abs=4 * se + 0.02 * want)
        # the model column is the grade model's variogram at those lags (vertical holes)
        assert exp_rows[0][k]["model"] == pytest.approx(float(g.model.variogram(lag[None])[0]),
                                                        rel=1e-9)
        assert exp_rows[0][k]["pairs"] == n_holes * (per - k - 1)
