"""Tests of anisotropy.exploration.trend: the trend check.

Reference: R^2 from numpy.linalg.lstsq written out here; the trend axis in
the geometry module's angle convention.
"""


import numpy as np
import pytest

from anisotropy.exploration import trend_check


# trend

def r2_lstsq(A, y):
    coef, *_ = np.linalg.lstsq(A, y, rcond=None)
    res = y - A @ coef
    return 1 - res @ res / np.sum((y - y.mean()) ** 2)


def test_trend_r2_against_numpy_lstsq(rng):
    c = rng.uniform(0, 500, (600, 3))
    v = 2.0 + 0.01 * c[:, 0] - 0.005 * c[:, 2] + rng.normal(0, 1.0, 600)
    t = trend_check(c, v)
    A1 = np.column_stack([np.ones(600), c])
    assert t.r2_linear == pytest.approx(r2_lstsq(A1, v), abs=1e-10)   # numpy.linalg.lstsq
    x, y, z = (c - c.mean(axis=0)).T
    A2 = np.column_stack([A1, x * x, y * y, z * z, x * y, x * z, y * z])
    assert t.r2_quadratic == pytest.approx(r2_lstsq(A2, v), abs=1e-10)
    # gradient ~ (0.01, 0, -0.005) per metre: rising toward east and upward
    np.testing.assert_allclose(t.gradient, [0.01, 0.0, -0.005], atol=1.5e-3)
    assert t.rising_azimuth == pytest.approx(90, abs=10)
    assert t.rising_inclination > 0  # gz < 0: grade rises downward (inclination below horizontal)
    assert t.material and "residuals" in t.warning
    noise = trend_check(c, rng.normal(0, 1, 600))
    assert not noise.material and noise.warning is None


def test_trend_axis_uses_geometry_convention():
    from anisotropy.geometry import vector_to_line

    r = np.random.default_rng(5)
    c = r.uniform(0, 100, (300, 3))
    v = 0.03 * c[:, 1] + 0.03 * c[:, 2]  # rises north and up, exact
    t = trend_check(c, v)
    tr, pl = vector_to_line([0.0, 0.03, 0.03])
    assert t.gradient_trend == pytest.approx(tr) and t.gradient_plunge == pytest.approx(pl)
    assert t.rising_azimuth == pytest.approx(0.0, abs=1e-6) or t.rising_azimuth == pytest.approx(360.0)
    assert t.rising_inclination == pytest.approx(-45.0)  # upward
    assert t.r2_linear == pytest.approx(1.0)
