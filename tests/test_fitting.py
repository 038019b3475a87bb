"""Tests of the pure fitting pieces (anisotropy.fitting).

Every experimental point here is computed in the test from the published
model formulas (Journel & Huijbregts 1978, ch. II: spherical
``1.5 h - 0.5 h^3``; exponential with practical range ``1 - exp(-3 h)``), or
from an exact brute-force pass over all pairs; none comes from the code
under test.
"""

import numpy as np
import pytest
from scipy.spatial import cKDTree
from scipy.spatial.transform import Rotation

from anisotropy.fitting import (bins_from_sums, direction_ranges, ellipsoid_range,
                                fit_ellipsoid, fit_nested, inertia_frame, linear_ellipsoid,
                                rho, select_structures)
from anisotropy.fitting.bins import FitBins

CHANNELS = ("count", "dist", "sq", "abs", "sqrt", "head", "tail", "head2", "tail2",
            "cross", "rel", "rel_n", "dx", "dy", "dz")


# -- formulas written out here, independent of the package -------------------

def spherical_gamma(h):
    """Journel & Huijbregts (1978), ch. II: 1.5 h - 0.5 h^3 for h < 1, else 1."""
    h = np.minimum(np.abs(h), 1.0)
    return 1.5 * h - 0.5 * h ** 3


def exponential_gamma(h):
    """Exponential with practical range (95 % of the sill at h = 1): 1 - exp(-3h)."""
    return 1.0 - np.exp(-3.0 * np.abs(h))


def scaled(lags, R, ranges):
    """|diag(1/a) R^T h|: geometric anisotropy (Journel & Huijbregts 1978, ch. II)."""
    return np.linalg.norm((lags @ R) / np.asarray(ranges, float), axis=1)


def axis_err(a, b):
    """Angle between undirected axes, degrees (plain dot product)."""
    return float(np.degrees(np.arccos(min(1.0, abs(float(np.dot(a, b)))))))


def lower(v):
    v = np.asarray(v, float)
    return np.where(v[..., 2:3] > 0, -v, v)


def random_lags(rng, n_dir=120, n_lags=15, lag=10.0):
    d = lower(rng.normal(size=(n_dir, 3)))
    d /= np.linalg.norm(d, axis=1, keepdims=True)
    lags = np.concatenate([d * k * lag for k in range(1, n_lags + 1)])
    return lags, np.tile(np.arange(n_dir), n_lags), np.repeat(np.arange(1, n_lags + 1), n_dir)


def make_bins(lags, gamma, pairs, di, li):
    return FitBins(lags=lags, distance=np.linalg.norm(lags, axis=1), gamma=gamma,
                   pairs=pairs.astype(float), direction_index=di, lag_index=li)


# -- correlation functions -----------------------------------------------------

def test_rho_matches_the_published_formulas():
    h = np.linspace(0, 2, 41)
    # Journel & Huijbregts (1978), ch. II (spherical); practical-range exponential
    # and Gaussian: exp(-3h), exp(-3h^2) (Chiles & Delfiner 2012, sec. 2.5)
    assert np.allclose(1 - rho("spherical", h), spherical_gamma(h))
    assert np.allclose(1 - rho("exponential", h), exponential_gamma(h))
    assert np.allclose(rho("gaussian", h), np.exp(-3 * h * h))
    # cubic (Chiles & Delfiner 2012, sec. 2.5): 7h^2 - 35/4 h^3 + 7/2 h^5 - 3/4 h^7
    hc = np.minimum(h, 1)
    cub = 7 * hc**2 - 8.75 * hc**3 + 3.5 * hc**5 - 0.75 * hc**7
    assert np.allclose(1 - rho("cubic", h), cub)
    with pytest.raises(ValueError):
        rho("wave", h)


def test_rho_agrees_with_models_correlation():
    # the fit's fast copy must equal the package's model module (same conventions)
    from anisotropy.models import correlation

    h = np.linspace(0, 2.5, 51)
    for kind in ("spherical", "exponential", "gaussian", "cubic"):
        assert np.allclose(rho(kind, h), correlation(kind, h), atol=1e-12)


# -- fit bins from sums: exact brute force ----------------------------------------

def brute_sums(coords, values, lag, n_lags, directions):
    """Sums per (class, nearest axis) over all pairs, by brute force (cKDTree pairs)."""
    pairs = cKDTree(coords).query_pairs((n_lags + 0.5) * lag, output_type="ndarray")
    i, j = pairs[:, 0], pairs[:, 1]
    v = coords[j] - coords[i]
    flip = (v[:, 2] > 0) | ((v[:, 2] == 0) & (v[:, 0] < 0))
    v[flip] *= -1
    head = np.where(flip, values[i], values[j])
    tail = np.where(flip, values[j], values[i])
    d = np.linalg.norm(v, axis=1)
    k = np.ceil(d / lag - 0.5).astype(int)
    cell = np.argmax(np.abs((v / d[:, None]) @ directions.T), axis=1)
    S = np.zeros((n_lags + 1, len(directions), len(CHANNELS)))
    delta = head - tail
    cols = {"count": np.ones_like(d), "dist": d, "sq": delta ** 2, "abs": np.abs(delta),
            "sqrt": np.sqrt(np.abs(delta)), "head": head, "tail": tail, "head2": head ** 2,
            "tail2": tail ** 2, "cross": head * tail, "rel": np.zeros_like(d),
            "rel_n": np.zeros_like(d), "dx": v[:, 0], "dy": v[:, 1], "dz": v[:, 2]}
    for c, name in enumerate(CHANNELS):
        np.add.at(S[..., c], (k, cell), cols[name])
    return S, (k, cell, d, delta, v)


def test_bins_from_sums_against_brute_force(rng):
    coords = rng.uniform(0, 100, size=(300, 3))
    values = rng.normal(size=300)
    dirs = lower(rng.normal(size=(40, 3)))
    dirs /= np.linalg.norm(dirs, axis=1, keepdims=True)
    S, (k, cell, d, delta, v) = brute_sums(coords, values, 10.0, 6, dirs)
    b = bins_from_sums(S, dirs, min_pairs=5)
    # every bin: gamma = mean(delta^2)/2 (Matheron 1963), mean distance, pair count,
    # lag vector along the mean vector with length = mean distance (exact brute force)
    for m in range(0, b.n, 7):
        sel = (k == b.lag_index[m]) & (cell == b.direction_index[m])
        assert b.pairs[m] == sel.sum()
        assert np.isclose(b.gamma[m], 0.5 * np.mean(delta[sel] ** 2))
        assert np.isclose(b.distance[m], d[sel].mean())
        mv = v[sel].mean(axis=0)
        if np.linalg.norm(mv) >= 0.9 * d[sel].mean():
            assert np.allclose(b.lags[m], mv / np.linalg.norm(mv) * d[sel].mean())
    # nothing silently dropped: kept + excluded = all non-empty bins
    counts = S[..., 0]
    assert b.n + sum(b.excluded.values()) == int((counts > 0).sum())
    assert b.excluded["class 0 (shortest pairs; nugget taken from classes >= 1)"] == \
        int((counts[0] > 0).sum())
    assert np.all(b.lag_index >= 1) and np.all(b.pairs >= 5)


# -- the joint nested fit ----------------------------------------------------------------

def noisy_bins(rng, R, nugget, sills, ranges, kinds, total_noise=True):
    lags, di, li = random_lags(rng)
    g = np.full(len(lags), nugget)
    for c, a, kind in zip(sills, ranges, kinds):
        h = scaled(lags, R, a)
        g = g + c * (spherical_gamma(h) if kind == "spherical" else exponential_gamma(h))
    pairs = rng.integers(200, 2000, len(g))
    # relative error of a semivariogram from N pairs ~ sqrt(2/N) (Cressie 1985, eq. 2.4,
    # for independent pairs)
    gh = g * (1 + rng.normal(size=len(g)) * np.sqrt(2.0 / pairs))
    return make_bins(lags, gh, pairs, di, li)


def test_fit_nested_recovers_one_structure(rng):
    R = Rotation.from_euler("zyx", [35, 40, -20], degrees=True).as_matrix()
    b = noisy_bins(rng, R, 0.2, [0.8], [(120, 60, 20)], ["spherical"])
    f = fit_nested(b, (np.eye(3), 0.3, [0.7], [[100, 50, 25]], ("spherical",)),
                   total_sill=1.0, make_model=False)
    order = np.argsort(-f.ranges[0])
    # tolerances: bins carry 2-7 % noise; 2 degrees and 5 % are several standard
    # errors of a 1800-point fit (checked against the exact truth computed above)
    for i, j in enumerate(order):
        assert axis_err(f.frame[:, j], R[:, i]) < 2.0
    assert np.allclose(f.ranges[0][order], [120, 60, 20], rtol=0.05)
    assert abs(f.nugget - 0.2) < 0.03
    assert np.isclose(f.nugget + f.sills.sum(), 1.0)  # total sill held


def test_fit_nested_recovers_two_structures(rng):
    R = Rotation.from_euler("zyx", [-60, 20, 70], degrees=True).as_matrix()
    b = noisy_bins(rng, R, 0.1, [0.4, 0.5], [(30, 20, 10), (140, 90, 35)],
                   ["spherical", "spherical"])
    f = fit_nested(b, (R @ Rotation.from_rotvec([0.1, -0.1, 0.1]).as_matrix(), 0.2, [0.8],
                       [[100, 60, 30]], ("spherical",)), n_structures=2, total_sill=1.0,
                   make_model=False)
    long_ = int(np.argmax(f.ranges.max(axis=1)))
    short = 1 - long_
    order = np.argsort(-f.ranges[long_])
    for i, j in enumerate(order):
        assert axis_err(f.frame[:, j], R[:, i]) < 3.0
    # nested structures trade sill and range: 12 % on ranges, 0.06 on sills
    assert np.allclose(f.ranges[long_][order], [140, 90, 35], rtol=0.12)
    assert np.allclose(f.ranges[short][order], [30, 20, 10], rtol=0.15)
    assert abs(f.sills[long_] - 0.5) < 0.06 and abs(f.nugget - 0.1) < 0.04


def test_fit_nested_fixed_frame_and_planar(rng):
    R = Rotation.from_euler("z", 30, degrees=True).as_matrix()
    b = noisy_bins(rng, R, 0.1, [0.9], [(100, 40, 40)], ["exponential"])
    F = Rotation.from_euler("z", 50, degrees=True).as_matrix()
    f = fit_nested(b, (F, 0.1, [0.9], [[80, 40, 40]], ("exponential",)), fixed_frame=F,
                   total_sill=1.0, make_model=False)
    assert np.allclose(f.frame, F)
    # planar mode: the frame may only turn about the vertical; its third column stays up
    b2 = b.subset(np.abs(b.lags[:, 2]) < 1e-9 + 0.05 * b.distance)
    lags = b2.lags.copy()
    lags[:, 2] = 0.0
    b2.lags = lags
    f2 = fit_nested(b2, (np.eye(3), 0.1, [0.9], [[80, 50, 50]], ("exponential",)),
                    total_sill=1.0, planar=True, make_model=False)
    assert abs(abs(f2.frame[2, 2]) - 1.0) < 1e-9


def test_fit_nested_evaluated_without_search_matches_scipys_cost(rng):
    # a fit with the direct Cressie weighting, then the same model evaluated without a
    # search: the objective must be scipy.optimize.least_squares' own cost at that point
    # (soft-L1 loss, its documented rho(z) = 2 (sqrt(1 + z) - 1)) and the model unchanged
    R = Rotation.from_euler("zyx", [35, 40, -20], degrees=True).as_matrix()
    b = noisy_bins(rng, R, 0.2, [0.8], [(120, 60, 20)], ["spherical"])
    f = fit_nested(b, (np.eye(3), 0.3, [0.7], [[100, 50, 25]], ("spherical",)),
                   total_sill=1.0, weighting="cressie", make_model=False)
    g = fit_nested(b, (f.frame, f.nugget, f.sills, f.ranges, f.kinds), total_sill=1.0,
                   weighting="cressie", make_model=False, optimise=False)
    assert g.objective == pytest.approx(f.objective, rel=1e-9)
    assert np.allclose(g.ranges, f.ranges) and np.allclose(g.frame, f.frame)
    assert g.wrss == pytest.approx(f.wrss, rel=1e-9)
    # somewhere else: the cost is higher than at the optimum and the start is kept as given
    h = fit_nested(b, (f.frame, 0.3, [0.7], [[100, 50, 25]], ("spherical",)),
                   total_sill=1.0, weighting="cressie", make_model=False, optimise=False)
    assert h.objective > f.objective
    assert np.allclose(h.ranges, [[100, 50, 25]]) and h.nugget == pytest.approx(0.3)


def test_select_structures_prefers_the_true_count(rng):
    R = Rotation.from_euler("zyx", [10, 20, 30], degrees=True).as_matrix()
    b1 = noisy_bins(rng, R, 0.2, [0.8], [(120, 60, 20)], ["spherical"])
    s1 = select_structures(b1, (R, 0.2, [0.8], [[100, 50, 25]], ("spherical",)),
                           total_sill=1.0, make_model=False)
    assert len(s1.best.sills) == 1
    b2 = noisy_bins(rng, R, 0.05, [0.45, 0.5], [(20, 15, 8), (150, 90, 40)],
                    ["spherical", "spherical"])
    s2 = select_structures(b2, (R, 0.1, [0.9], [[100, 60, 30]], ("spherical",)),
                           total_sill=1.0, make_model=False)
    assert len(s2.best.sills) >= 2
    assert [row["chosen"] for row in s2.table].count(True) == 1


# -- directional ranges -------------------------------------------------------------------

def test_direction_ranges_recover_formula_ranges(rng):
    R = Rotation.from_euler("zyx", [20, 30, 10], degrees=True).as_matrix()
    dirs = lower(rng.normal(size=(60, 3)))
    dirs /= np.linalg.norm(dirs, axis=1, keepdims=True)
    truth = 1.0 / np.linalg.norm((dirs @ R) / [150, 70, 25], axis=1)  # range along u
    d = np.tile(np.arange(1, 21) * 8.0, (60, 1))
    g = 0.2 + 0.8 * spherical_gamma(d / truth[:, None])
    pairs = np.full(d.shape, 500)
    pairs[:3] = 5  # three thin directions
    dr = direction_ranges(dirs, d, g, pairs, nugget=0.2, sill=0.8, kind="spherical")
    ok = dr.usable
    assert [f for f in dr.flag[:3]] == ["thin"] * 3 and not ok[:3].any()
    inside = ok & (truth > 8) & (truth < 160)
    # exact points: the grid search with parabolic refinement lands within 2 %
    assert np.allclose(dr.range[inside], truth[inside], rtol=0.02)


# -- ellipsoids ---------------------------------------------------------------------------

def test_linear_ellipsoid_exact_on_exact_ranges(rng):
    R = Rotation.from_euler("zyx", [40, -25, 60], degrees=True).as_matrix()
    u = lower(rng.normal(size=(50, 3)))
    u /= np.linalg.norm(u, axis=1, keepdims=True)
    r = 1.0 / np.linalg.norm((u @ R) / [100, 50, 20], axis=1)
    e = linear_ellipsoid(u, r)
    assert np.allclose(e.ranges, [100, 50, 20], rtol=1e-8)
    for i in range(3):
        assert axis_err(e.frame[:, i], R[:, i]) < 1e-4
    assert np.allclose(ellipsoid_range(u, e.frame, e.ranges), r)


def test_robust_ellipsoid_beats_linear_baseline(rng):
    errs_fit, errs_lin = [], []
    for rep in range(6):
        R = Rotation.random(random_state=rep).as_matrix()
        u = lower(rng.normal(size=(120, 3)))
        u /= np.linalg.norm(u, axis=1, keepdims=True)
        r = 1.0 / np.linalg.norm((u @ R) / [120, 60, 15], axis=1)
        r = r * np.exp(rng.normal(size=len(r)) * 0.15)  # 15 % scatter
        bad = rng.choice(len(r), 10, replace=False)
        r[bad] *= rng.uniform(2, 4, 10)  # a few wild ranges (thin directions)
        e = fit_ellipsoid(u, r, seed=rep)
        lin = linear_ellipsoid(u, r)
        errs_fit.append(max(axis_err(e.frame[:, i], R[:, i]) for i in (0, 2)))
        errs_lin.append(max(axis_err(lin.frame[:, i], R[:, i]) for i in (0, 2)))
        assert np.all(e.ranges > 0) and np.all(np.diff(e.ranges) <= 0)
        assert np.isclose(np.linalg.det(e.frame), 1.0)
        # the semi-axes themselves are loosely pinned where few directions lie near an
        # axis; what the data determine is the range along the sampled directions
        truth = 1.0 / np.linalg.norm((u @ R) / [120, 60, 15], axis=1)
        assert np.median(np.abs(ellipsoid_range(u, e.frame, e.ranges) / truth - 1)) < 0.08
        assert np.isclose(e.ranges[2], 15, rtol=0.2)
    # the point of the robust fit: better than the quadric baseline on the same data
    assert np.median(errs_fit) < np.median(errs_lin)
    assert np.median(errs_fit) < 5.0


def test_fit_ellipsoid_is_seed_stable(rng):
    R = Rotation.random(random_state=4).as_matrix()
    u = lower(rng.normal(size=(80, 3)))
    u /= np.linalg.norm(u, axis=1, keepdims=True)
    r = 1.0 / np.linalg.norm((u @ R) / [90, 45, 30], axis=1) * np.exp(rng.normal(size=80) * .1)
    a = fit_ellipsoid(u, r, seed=11)
    b = fit_ellipsoid(u, r, seed=11)
    assert np.array_equal(a.frame, b.frame) and np.array_equal(a.ranges, b.ranges)


def test_inertia_frame_finds_the_axes(rng):
    R = Rotation.from_euler("zyx", [70, 35, -15], degrees=True).as_matrix()
    lags, _, _ = random_lags(rng, n_dir=400, n_lags=20, lag=8.0)
    g = spherical_gamma(scaled(lags, R, (150, 60, 20)))
    F, ext = inertia_frame(lags, g, 1.0, fraction=0.6)
    # an even cover of directions: the low region is an ellipsoid with these axes;
    # 8 degrees allows for the lattice's unevenness at 400 random directions
    for i in range(3):
        assert axis_err(F[:, i], R[:, i]) < 8.0
    assert ext[0] > ext[1] > ext[2]


def test_fit_needs_points():
    from anisotropy.errors import FitError

    b = make_bins(np.ones((2, 3)), np.ones(2), np.ones(2) * 100, np.zeros(2, int),
                  np.ones(2, int))
    with pytest.raises(FitError, match="experimental points"):
        fit_nested(b, (np.eye(3), 0.1, [0.9], [[10, 10, 10]], ("spherical",)))


def test_shared_ratios_option(rng):
    # two structures with the same shape (ratios 1 : 0.5 : 0.2), scales 1 and 4
    R = Rotation.from_euler("zyx", [15, -30, 50], degrees=True).as_matrix()
    b = noisy_bins(rng, R, 0.1, [0.4, 0.5], [(40, 20, 8), (160, 80, 32)],
                   ["spherical", "spherical"])
    start = (R, 0.1, [0.4, 0.5], [[50, 25, 10], [150, 75, 30]], ("spherical", "spherical"))
    f = fit_nested(b, start, total_sill=1.0, shared_ratios=True, make_model=False)
    free = fit_nested(b, start, total_sill=1.0, make_model=False)
    # shape held exactly; two fewer parameters than free ranges (2 x 3 vs 3 + 1)
    assert np.allclose(f.ranges[1] / f.ranges[0], (f.ranges[1] / f.ranges[0])[0])
    assert free.n_params - f.n_params == 2
    long_ = int(np.argmax(f.ranges[:, 0]))
    assert np.allclose(np.sort(f.ranges[long_])[::-1], [160, 80, 32], rtol=0.12)


# -- the analytic Jacobian of the joint fit --------------------------------------

def test_correlation_slope_matches_central_differences_of_the_correlation():
    # NumPy central differences of anisotropy.models.correlation, away from h = 1 (where
    # the bounded kinds have a kink in their second derivative only)
    from anisotropy.models import STRUCTURE_KINDS, correlation, correlation_slope

    h = np.r_[np.linspace(0.01, 0.98, 60), np.linspace(1.02, 2.0, 20)]
    e = 1e-6
    for kind in STRUCTURE_KINDS:
        fd = (correlation(kind, h + e) - correlation(kind, h - e)) / (2 * e)
        np.testing.assert_allclose(correlation_slope(kind, h), fd, atol=1e-8)


_CONFIGS = [dict(), dict(total_sill=1.0), dict(fixed_nugget=0.1), dict(total_sill=1.0,
            fixed_nugget=0.15), dict(fixed_frame=True), dict(planar=True),
            dict(shared_ratios=True), dict(shared_ratios=True, planar=True, total_sill=1.0)]


@pytest.mark.parametrize("config", range(len(_CONFIGS)))
@pytest.mark.parametrize("kinds", [("spherical",), ("exponential", "gaussian"),
                                   ("cubic", "spherical", "exponential")])
def test_nested_jacobian_matches_scipy_finite_differences(config, kinds):
    # the analytic Jacobian of the residuals against scipy.optimize.approx_fprime
    # (forward differences) at a random parameter vector, for every parametrisation
    from scipy.optimize import approx_fprime
    from scipy.spatial.transform import Rotation

    from anisotropy.fitting.nested import _Problem

    rng = np.random.default_rng(config + 10 * len(kinds))
    lags, di, li = random_lags(rng, n_dir=40, n_lags=8)
    gamma = rng.uniform(0.2, 1.2, len(lags))
    bins = make_bins(lags, gamma, rng.integers(30, 300, len(lags)), di, li)
    kw = dict(_CONFIGS[config])
    frame = Rotation.from_rotvec(rng.normal(0, 0.6, 3)).as_matrix()
    if kw.pop("fixed_frame", False):
        kw["fixed_frame"] = frame
    if kw.get("planar"):
        frame = np.eye(3)
    prob = _Problem(bins, kinds, **kw)
    K = len(kinds)
    p = prob.pack(frame, 0.1, rng.uniform(0.2, 0.6, K),
                  rng.uniform(15, 90, (K, 3)))
    p = p + rng.normal(0, 0.05, len(p))
    for gw in (None, rng.uniform(0.3, 1.0, len(lags))):
        prob.gw = gw
        J = prob.jacobian(p)
        ref = approx_fprime(p, prob.residuals, 1e-7)
        np.testing.assert_allclose(J, ref, rtol=1e-4, atol=1e-5 * np.abs(ref).max())


def test_share_sd_only_where_the_reported_nugget_is_the_likelihoods_share():
    # FrameRefinement.likelihood_information gives the shares' logit standard deviations
    # (named nugget, sill0, sill1, ... by hand) only where the reported model is the
    # likelihood's and its nugget was not held (the down-hole nugget on drill holes)
    from types import SimpleNamespace

    from anisotropy.fitting.refine import FrameRefinement

    fit = SimpleNamespace(nugget=0.25, sills=[0.5, 0.25])
    rec = {"likelihood_model_reported": "the likelihood's ranges ...", "nugget_held": False}
    ok = FrameRefinement(fit=fit, record=rec)
    assert ok._share_sd([0.1, 0.2, 0.3]) == {"nugget": 0.1, "sill0": 0.2, "sill1": 0.3}
    held = FrameRefinement(fit=fit, record=dict(rec, nugget_held=True))
    assert held._share_sd([0.1, 0.2, 0.3]) is None
    refit = FrameRefinement(fit=fit, record={"nugget_held": False})
    assert refit._share_sd([0.1, 0.2, 0.3]) is None
    # the likelihood's own shares are named whether or not they are reported
    from anisotropy.fitting.refine import _share_names
    assert _share_names([0.1, 0.2, 0.3]) == {"nugget": 0.1, "sill0": 0.2, "sill1": 0.3}
    assert _share_names(None) is None
