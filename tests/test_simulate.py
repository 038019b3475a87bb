"""Tests of anisotropy.simulate: Cholesky and spectral Gaussian random fields.

Outside references:
- scipy.linalg.cholesky and scipy.spatial.distance.cdist (reference numerics);
- the covariance formulas of Journel & Huijbregts (1978) ch. II and
  Chiles & Delfiner (2012) ch. 2, written out here independently of
  anisotropy.models;
- the spectral method: Shinozuka (1971); for a frequency w drawn from the
  normalised spectral density, E[cos(w . h)] = rho(h) (Bochner's theorem).
Statistical checks use fixed seeds and tolerances of several standard errors.
"""

import numpy as np
import pytest
import scipy.linalg
from scipy.spatial.distance import cdist
from scipy.spatial.transform import Rotation

from anisotropy.errors import InputError
from anisotropy.geometry import frame_from_angles
from anisotropy.models import NestedModel, Structure
from anisotropy.simulate import CHOLESKY_JITTER, sample_frequencies, simulate_field


def published_rho(kind, h):
    # formulas written out from the sources (J&H 1978 ch. II; C&D 2012 ch. 2,
    # cubic recalled from memory), practical range for exponential/Gaussian
    h = np.asarray(h, float)
    if kind == "spherical":
        return np.where(h < 1, 1 - 1.5 * h + 0.5 * h**3, 0.0)
    if kind == "exponential":
        return np.exp(-3 * h)
    if kind == "gaussian":
        return np.exp(-3 * h**2)
    if kind == "cubic":
        return np.where(h < 1, 1 - (7 * h**2 - 8.75 * h**3 + 3.5 * h**5 - 0.75 * h**7), 0.0)
    raise ValueError(kind)


def test_cholesky_matches_scipy():
    rng = np.random.default_rng(42)
    pts = rng.uniform(0, 100, size=(40, 3))
    m = NestedModel(0.2, [Structure("exponential", 0.8, (60, 60, 60))])
    # reference covariance: isotropic exponential + nugget on the diagonal
    C = 0.8 * np.exp(-3 * cdist(pts, pts) / 60) + 0.2 * np.eye(40)
    L = scipy.linalg.cholesky(C + CHOLESKY_JITTER * 1.0 * np.eye(40), lower=True)
    # same seed -> same standard normals -> realisations are L @ z
    z = np.random.default_rng(7).standard_normal((3, 40))
    sims = simulate_field(pts, m, n_realisations=3, seed=7, method="cholesky")
    np.testing.assert_allclose(sims, z @ L.T, rtol=1e-9, atol=1e-12)
    one = simulate_field(pts, m, seed=7, method="cholesky")
    assert one.shape == (40,)
    np.testing.assert_allclose(one, z[0] @ L.T, rtol=1e-9, atol=1e-12)


def test_cholesky_anisotropic_reference():
    # anisotropic spherical model: covariance from scipy Rotation (body
    # coordinates) and the published formula, factorised with scipy.linalg
    rng = np.random.default_rng(3)
    pts = rng.uniform(0, 80, size=(30, 3))
    rot = Rotation.from_euler("ZXY", [-40, -25, 10], degrees=True) * Rotation.from_matrix(
        [[0, 1, 0], [1, 0, 0], [0, 0, -1]])
    ranges = np.array([90.0, 40.0, 15.0])
    local = rot.inv().apply(pts) / ranges
    C = 1.5 * published_rho("spherical", cdist(local, local))
    L = scipy.linalg.cholesky(C + CHOLESKY_JITTER * 1.5 * np.eye(30), lower=True)
    m = NestedModel(0.0, [Structure("spherical", 1.5, tuple(ranges))], frame_from_angles(40, 25, 10))
    z = np.random.default_rng(11).standard_normal((2, 30))
    np.testing.assert_allclose(simulate_field(pts, m, n_realisations=2, seed=11), z @ L.T,
                               rtol=1e-8, atol=1e-10)


def test_cholesky_survives_smooth_models():
    # Gaussian model at close points: numerically singular, jitter raised
    pts = np.stack([np.linspace(0, 1, 60), np.zeros(60), np.zeros(60)], 1)
    m = NestedModel(0.0, [Structure("gaussian", 1.0, 200.0)])
    out = simulate_field(pts, m, n_realisations=2, seed=0, method="cholesky")
    assert np.all(np.isfinite(out))


@pytest.mark.parametrize("stratified", [False, True])
@pytest.mark.parametrize("kind", ["spherical", "exponential", "gaussian", "cubic"])
def test_spectral_frequencies_reproduce_correlation(kind, stratified):
    # Bochner: E[cos(w.h)] = rho(|h|) for w from the normalised spectral density.
    # Monte Carlo standard error <= 1/sqrt(2N) ~ 0.0016; tolerance 0.008.
    # Stratified sets (400 sets of 500) must keep the same expectation.
    rng = np.random.default_rng(2024)
    size = (400, 500) if stratified else 200_000
    w = sample_frequencies(kind, size, rng, stratified=stratified).reshape(-1, 3)
    dirs = rng.normal(size=(4, 3))
    dirs /= np.linalg.norm(dirs, axis=1, keepdims=True)
    for h in (0.02, 0.15, 0.4, 0.7, 0.95, 1.3):
        for u in dirs:
            assert np.cos(w @ (h * u)).mean() == pytest.approx(float(published_rho(kind, h)), abs=8e-3)


def test_spectral_empirical_covariance_matches_model():
    # nested anisotropic model with a structure in its own frame, at a handful
    # of points placed along the axes; 20000 realisations, so the standard error
    # of each covariance estimate is sqrt((Cii Cjj + Cij^2)/N) <= 0.011; tolerance
    # 5 standard errors. The expectation is exact for any number of features.
    R = frame_from_angles(30, 20, 15)
    m = NestedModel(0.15, [
        Structure("spherical", 0.45, (80, 40, 10)),
        Structure("exponential", 0.4, (200, 90, 30), frame=frame_from_angles(120, 60, 0)),
    ], R)
    origin = np.array([1000.0, 5000.0, 200.0])
    pts = origin + np.array([
        [0, 0, 0],
        40 * R[:, 0],           # half the major range along the major axis
        20 * R[:, 1],
        5 * R[:, 2],
        30 * R[:, 0] + 15 * R[:, 1],
        [0, 0, 0],              # coincident with the first point: shares the nugget
        70 * R[:, 2],
    ])
    n_real = 20000
    sims = simulate_field(pts, m, n_realisations=n_real, seed=99, method="spectral", n_features=64)
    assert sims.shape == (n_real, len(pts))
    np.testing.assert_array_equal(sims[:, 0], sims[:, 5])
    emp = sims.T @ sims / n_real  # the mean is known to be zero
    C = m.covariance_matrix(pts)
    se = np.sqrt((np.outer(np.diag(C), np.diag(C)) + C**2) / n_real)
    assert np.all(np.abs(emp - C) < 5 * se), np.max(np.abs(emp - C) / se)
    assert np.abs(sims.mean(0)).max() < 5 * np.sqrt(m.total_sill / n_real)


@pytest.mark.parametrize("method", ["cholesky", "spectral"])
def test_seed_stability(method):
    rng = np.random.default_rng(0)
    pts = rng.uniform(0, 50, size=(20, 3))
    m = NestedModel(0.1, [Structure("cubic", 0.9, (30, 20, 10))], frame_from_angles(10, 10, 10))
    a = simulate_field(pts, m, n_realisations=2, seed=5, method=method)
    b = simulate_field(pts, m, n_realisations=2, seed=5, method=method)
    c = simulate_field(pts, m, n_realisations=2, seed=6, method=method)
    np.testing.assert_array_equal(a, b)
    assert not np.allclose(a, c)
    g1 = simulate_field(pts, m, seed=np.random.default_rng(5), method=method)
    g2 = simulate_field(pts, m, seed=np.random.default_rng(5), method=method)
    np.testing.assert_array_equal(g1, g2)


def test_auto_uses_cholesky_for_small_sets():
    rng = np.random.default_rng(1)
    pts = rng.uniform(0, 50, size=(50, 3))
    m = NestedModel(0.0, [Structure("spherical", 1.0, 40.0)])
    np.testing.assert_array_equal(simulate_field(pts, m, seed=3),
                                  simulate_field(pts, m, seed=3, method="cholesky"))


def test_spectral_large_set_runs():
    # a large set runs in memory-bounded chunks and has about the model variance
    # (spatial average over a domain many ranges wide; loose, common practice)
    rng = np.random.default_rng(8)
    pts = rng.uniform(0, 2000, size=(20000, 3))
    m = NestedModel(0.2, [Structure("exponential", 0.8, (150, 100, 50))])
    z = simulate_field(pts, m, seed=4)
    assert z.shape == (20000,) and np.all(np.isfinite(z))
    assert 0.6 < z.var() < 1.4


@pytest.mark.parametrize("kwargs,text", [
    (dict(coords=np.zeros((5, 2))), "shape"),
    (dict(coords=np.array([[0, 0, np.nan]])), "NaN"),
    (dict(method="fast"), "method"),
    (dict(n_realisations=0), "n_realisations"),
    (dict(model="spherical"), "NestedModel"),
])
def test_bad_input(kwargs, text):
    args = dict(coords=np.zeros((3, 3)), model=NestedModel(0.0, [Structure("gaussian", 1.0, 10.0)]))
    args.update(kwargs)
    coords, model = args.pop("coords"), args.pop("model")
    with pytest.raises(InputError, match=text):
        simulate_field(coords, model, **args)


@pytest.mark.slow
def test_spectral_realisations_vary_like_exact_gaussian_fields():
    # finite-feature spectral fields are only approximately Gaussian; check that
    # single-realisation variograms along two axes scatter as much as those of
    # exact (Cholesky, scipy.linalg) Gaussian fields: means agree within 4
    # standard errors, spreads within 20 % (our tolerance; the standard error
    # of a spread from 300 realisations is about 4 %)
    R = frame_from_angles(30, 20, 10)
    m = NestedModel(0.1, [Structure("spherical", 0.9, (60, 30, 10))], R)
    t = np.arange(400.0)[:, None]
    pts = np.concatenate([t * R[:, 0], t * R[:, 2] + [500.0, 0.0, 0.0]])

    def gammas(z):
        out = []
        for off in (0, 400):
            seg = z[:, off:off + 400]
            out.append([0.5 * np.mean((seg[:, k:] - seg[:, :-k]) ** 2, axis=1) for k in (5, 20, 40)])
        return np.array(out)  # (2 lines, 3 lags, realisations)

    exact = gammas(simulate_field(pts, m, n_realisations=300, seed=1, method="cholesky"))
    spec = gammas(simulate_field(pts, m, n_realisations=300, seed=2, method="spectral"))
    se = np.hypot(exact.std(-1), spec.std(-1)) / np.sqrt(300)
    assert np.all(np.abs(exact.mean(-1) - spec.mean(-1)) < 4 * se)
    np.testing.assert_allclose(spec.std(-1), exact.std(-1), rtol=0.2)
