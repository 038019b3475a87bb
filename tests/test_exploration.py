"""Tests of anisotropy.explore against outside references.

References: NumPy (mean, std, quantile, lstsq), SciPy (stats.skew),
scikit-learn is what the module uses, so trend R^2 is checked against
numpy.linalg.lstsq written out here; cell-declustering weights against the
formula 1/(occupied cells x samples in the cell) of Isaaks & Srivastava
(1989), ch. 10, computed by hand or by a brute-force loop; spacing against
synthetic layouts whose spacing is known by construction.
"""

import json

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from anisotropy.errors import InputError, InsufficientDataError
from anisotropy.exploration import (
    DEFAULT_QUANTILES,
    cell_declustering,
    detect_logprob_break,
    explore,
    nominal_spacing,
    topcut_candidates,
    trend_check,
)


# ---------------------------------------------------------------------------
# layouts
# ---------------------------------------------------------------------------

def drill_layout(dx=25.0, dy=40.0, nx=6, ny=5, n_comp=30, comp=2.0, dip=60.0, shuffle_rng=None):
    """Parallel holes dipping east from a collar grid, composites every ``comp`` m."""
    d = np.array([np.cos(np.radians(dip)), 0.0, -np.sin(np.radians(dip))])
    coords, holes = [], []
    for i in range(nx):
        for j in range(ny):
            collar = np.array([dx * i, dy * j, 300.0])
            t = comp / 2 + comp * np.arange(n_comp)
            coords.append(collar + t[:, None] * d)
            holes += [f"FH{i:02d}{j:02d}"] * n_comp
    c, h = np.vstack(coords), np.array(holes, dtype=object)
    if shuffle_rng is not None:
        order = shuffle_rng.permutation(len(c))
        c, h = c[order], h[order]
    return c, h


def blast_layout(rng, burden=4.0, spacing=5.0, bench=10.0, n_bench=4, jitter=0.3):
    pts = []
    for k in range(n_bench):
        xx, yy = np.meshgrid(np.arange(0, 120, spacing), np.arange(0, 80, burden))
        z = np.full(xx.size, bench * k) + rng.uniform(-jitter, jitter, xx.size)
        pts.append(np.column_stack([xx.ravel(), yy.ravel(), z]))
    return np.vstack(pts)


# ---------------------------------------------------------------------------
# statistics
# ---------------------------------------------------------------------------

def test_statistics_and_quantiles_match_numpy_and_scipy(rng):
    c = rng.uniform(0, 200, (400, 3))
    v = rng.lognormal(0.0, 1.0, 400)
    e = explore(c, v)
    assert e.count == 400
    assert e.mean == pytest.approx(np.mean(v))                     # numpy
    assert e.std == pytest.approx(np.std(v))                       # numpy, divisor n
    assert e.cv == pytest.approx(np.std(v) / np.mean(v))
    assert e.skewness == pytest.approx(stats.skew(v))              # scipy.stats.skew
    assert e.min == v.min() and e.max == v.max()
    assert set(e.quantiles) == {f"{q:g}" for q in DEFAULT_QUANTILES}
    assert "0.975" in e.quantiles and "0.995" in e.quantiles
    assert e.quantiles["0.975"] == pytest.approx(np.quantile(v, 0.975))  # numpy linear
    d = e.to_dict()
    json.dumps(d)  # JSON-ready
    for key in ("count", "mean", "std", "cv", "min", "max", "skewness", "quantiles",
                "declustered", "spacing", "topcut", "trend", "dropped", "changed", "warnings"):
        assert key in d
    for key in ("mean", "std", "cell_size"):
        assert key in d["declustered"]
    for key in ("across_hole", "down_hole", "suggested_lag"):
        assert key in d["spacing"]
    assert "candidates" in d["topcut"]


def test_explore_takes_a_sampleset_and_carries_its_counts():
    from anisotropy.samples import samples_from_frame

    c, h = drill_layout(nx=4, ny=4, n_comp=10)
    r = np.random.default_rng(3)
    v = r.lognormal(0, 1, len(c))
    v[:3] = -99.0    # missing code, dropped and counted by samples.py
    v[3:5] = -0.02   # below-detection code, replaced and counted
    df = pd.DataFrame({"EAST": c[:, 0] + 500000, "NORTH": c[:, 1] + 7e6, "RL": c[:, 2],
                       "AU": v, "HOLE": h})
    s = samples_from_frame(df, value="AU", hole="HOLE", source="fenwright.csv")
    e = explore(s)
    d = e.to_dict()
    assert d["count"] == len(c) - 3
    assert sum(d["dropped"].values()) == 3 and sum(d["changed"].values()) == 2
    assert d["value"] == "AU" and d["source"] == "fenwright.csv"
    assert d["spacing"]["across_hole"] == pytest.approx(25.0)
    assert "AU" in e.summary()


def test_strong_skew_flag_and_warning():
    r = np.random.default_rng(11)
    c = r.uniform(0, 100, (500, 3))
    v = r.lognormal(0, 2.0, 500)  # lognormal sigma 2: CV = sqrt(exp(4)-1) ~ 7.3 (arithmetic)
    e = explore(c, v)
    assert e.cv > 2 and e.strongly_skewed
    assert any("strongly skewed" in w for w in e.warnings)
    v2 = r.lognormal(0, 0.5, 500)  # CV ~ 0.53
    assert not explore(c, v2).strongly_skewed


def test_too_few_samples_is_an_input_error():
    with pytest.raises(InsufficientDataError):
        explore(np.zeros((2, 3)), [1.0, 2.0])
    with pytest.raises(InputError):
        explore(np.zeros((3, 3)), [1.0, 2.0])


# ---------------------------------------------------------------------------
# declustering
# ---------------------------------------------------------------------------

def clustered_grid():
    """10 x 10 grid at 10 m plus nine extra samples inside the cell of node (50, 50)."""
    xx, yy = np.meshgrid(np.arange(0, 100, 10.0), np.arange(0, 100, 10.0))
    grid = np.column_stack([xx.ravel(), yy.ravel(), np.zeros(xx.size)])
    off = np.linspace(0.05, 0.45, 9)
    cluster = np.column_stack([50 + off, 50 + off[::-1], np.zeros(9)])
    coords = np.vstack([grid, cluster])
    values = np.concatenate([np.ones(100), np.full(9, 10.0)])
    return coords, values


@pytest.mark.parametrize("n_offsets", [1, 5])
def test_cell_declustering_hand_built(n_offsets):
    coords, values = clustered_grid()
    dec = cell_declustering(coords, values, cell_sizes=[10.0], n_offsets=n_offsets)
    # by hand (Isaaks & Srivastava 1989 ch. 10, w = 1/(L n_c)): 100 occupied cells;
    # 99 cells hold one grid node (w = 1/100), the cell at (50, 50) holds the node and
    # the nine cluster samples (w = 1/1000 each); the cluster stays in that cell for
    # every origin shift (shifts < 10 m, cluster within 0.5 m of the node)
    expected = np.full(109, 1 / 100)
    at = (coords[:, 0] >= 50) & (coords[:, 0] < 51) & (coords[:, 1] >= 50) & (coords[:, 1] < 51)
    expected[at] = 1 / 1000
    np.testing.assert_allclose(dec.weights, expected, rtol=1e-12)
    assert dec.mean == pytest.approx(0.99 * 1 + (1 * 1 + 9 * 10) / 1000)  # 1.081
    assert dec.std == pytest.approx(np.sqrt(np.sum(expected * (values - 1.081) ** 2)))
    assert dec.naive_mean == pytest.approx(190 / 109)
    assert dec.criterion == "given"


def brute_force_weights(coords, size, n_offsets):
    """Dictionary-of-cells version of the Isaaks & Srivastava (1989, ch. 10) weights."""
    c0 = coords - coords.min(axis=0)
    w = np.zeros(len(coords))
    for k in range(n_offsets):
        cells = {}
        for i, p in enumerate(c0):
            key = tuple(int(np.floor((p[a] + size * k / n_offsets) / size)) for a in range(3))
            cells.setdefault(key, []).append(i)
        for members in cells.values():
            for i in members:
                w[i] += 1.0 / (len(cells) * len(members))
    return w / n_offsets


def test_cell_weights_against_brute_force(rng):
    coords = np.vstack([rng.uniform(0, 100, (80, 3)), rng.normal(30, 3, (40, 3))])
    values = rng.lognormal(0, 1, 120)
    for size in (7.0, 19.0, 40.0):
        dec = cell_declustering(coords, values, cell_sizes=[size], n_offsets=4)
        np.testing.assert_allclose(dec.weights, brute_force_weights(coords, size, 4), rtol=1e-12)
        assert dec.weights.sum() == pytest.approx(1.0)


def test_cell_size_chosen_by_smallest_declustered_mean():
    coords, values = clustered_grid()
    sizes = [0.01, 2.0, 5.0, 10.0, 20.0, 50.0, 1000.0]
    dec = cell_declustering(coords, values, cell_sizes=sizes)
    table = dec.table
    assert list(table["cell_size"]) == sizes
    assert dec.mean == pytest.approx(table["mean"].min())
    assert dec.cell_size == table["cell_size"][table["mean"].idxmin()]
    # very small cells (0.01 m, below the 0.05 m gaps in the cluster) or very large
    # ones (1000 m: all in one cell for every origin shift) give back the naive mean:
    # arithmetic from the weight formula
    assert table["mean"].iloc[0] == pytest.approx(190 / 109)
    assert table["mean"].iloc[-1] == pytest.approx(190 / 109)
    assert dec.mean < 190 / 109
    json.dumps(dec.to_dict())


# ---------------------------------------------------------------------------
# spacing
# ---------------------------------------------------------------------------

def test_spacing_drill_holes_known_collars_and_composites(rng):
    coords, holes = drill_layout(dx=25.0, dy=40.0, comp=2.0, shuffle_rng=rng)
    s = nominal_spacing(coords, holes)
    assert s.layout == "drill_holes" and s.n_holes == 30
    assert s.across_hole == pytest.approx(25.0)   # collar grid 25 x 40 m, by construction
    assert s.across_hole_plan == pytest.approx(25.0)
    assert s.down_hole == pytest.approx(2.0)      # 2 m composites, by construction
    assert s.suggested_lag["along_hole"] == pytest.approx(2.0)
    assert s.suggested_lag["across_hole"] == pytest.approx(25.0)
    assert s.lag_tolerance["across_hole"] == pytest.approx(12.5)  # half the lag, common practice
    assert set(s.suggested_lag) == {"along_hole", "across_hole", "vertical", "omni"}
    assert all(s.reasons[k] for k in s.suggested_lag)


def test_spacing_steep_body_measured_in_3d(rng):
    # holes dipping 60 east from collar rows 30 m apart (x) and 40 m apart (y, jittered
    # +-1 m), keeping only the samples inside a vertical slab 10 m wide: successive rows
    # pierce the slab 30 tan 60 = 52 m apart in depth at nearly the same plan position
    c, h = drill_layout(dx=30.0, dy=40.0, nx=5, ny=5, n_comp=120, comp=2.0, dip=60.0)
    codes = np.unique(h, return_inverse=True)[1]
    c[:, 1] += rng.uniform(-1, 1, codes.max() + 1)[codes]
    keep = np.abs(c[:, 0] - 130.0) <= 5.0
    s = nominal_spacing(c[keep], h[keep])
    # by construction: nearest other pierce point is the next hole along y, 40 m (+-2 m)
    assert s.across_hole == pytest.approx(40.0, abs=2.0)
    assert s.across_hole_plan < 5.0   # plan distance understates it
    assert s.down_hole == pytest.approx(2.0)


def test_spacing_blast_holes_known_bench(rng):
    coords = blast_layout(rng, burden=4.0, spacing=5.0, bench=10.0)
    s = nominal_spacing(coords)
    assert s.layout == "benches" and s.n_levels == 4
    assert s.bench == pytest.approx(10.0, abs=0.3)     # bench height by construction (+-jitter)
    # pattern 4 x 5 m by construction: area per hole 20 m2, equivalent square spacing
    # sqrt(20) m (issue 17); the in-bench nearest neighbour, the burden, is reported beside it
    assert s.across_hole == pytest.approx(np.sqrt(4.0 * 5.0), rel=0.02)
    assert s.plan_nearest == pytest.approx(4.0)        # burden 4 m < spacing 5 m
    assert s.down_hole is None
    assert s.suggested_lag["vertical"] == pytest.approx(10.0)
    # a single bench is one level, no vertical lag
    one = nominal_spacing(coords[np.abs(coords[:, 2]) < 1])
    assert one.layout == "single_level" and one.suggested_lag["vertical"] is None


def test_spacing_scattered_cloud_is_not_a_single_bench(rng):
    # uniform 3D cloud: the sorted elevations never jump by more than the 1 m
    # bench tolerance, yet they spread over 80 m; it is not one bench, so the
    # spacing is the 3D nearest-neighbour median, checked here by brute force
    # over all pairs (numpy), not the much shorter plan spacing of a bench
    coords = rng.uniform([0, 0, 0], [320, 320, 80], size=(800, 3))
    s = nominal_spacing(coords)
    d = np.linalg.norm(coords[:, None, :] - coords[None, :, :], axis=-1)
    np.fill_diagonal(d, np.inf)
    nn3 = float(np.median(d.min(axis=1)))
    dp = np.linalg.norm(coords[:, None, :2] - coords[None, :, :2], axis=-1)
    np.fill_diagonal(dp, np.inf)
    assert s.layout == "scattered"
    assert s.nearest == pytest.approx(nn3)
    assert s.suggested_lag["omni"] == pytest.approx(nn3, rel=0.05)   # rounded
    assert s.suggested_lag["vertical"] is not None
    assert np.median(dp.min(axis=1)) < 0.6 * nn3   # what the old label used instead


# ---------------------------------------------------------------------------
# trend
# ---------------------------------------------------------------------------

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


# ---------------------------------------------------------------------------
# top-cut
# ---------------------------------------------------------------------------

def test_topcut_quantiles_and_metal_by_direct_arithmetic(rng):
    v = rng.lognormal(0, 1.2, 1000)
    cands = topcut_candidates(v)
    byname = {c["method"]: c for c in cands}
    for q in (0.975, 0.99, 0.995):
        c = byname[f"quantile_{q:g}"]
        cap = np.quantile(v, q)                         # numpy
        assert c["value"] == pytest.approx(cap)
        assert c["n_capped"] == int(np.sum(v > cap))
        # metal removed: direct arithmetic
        assert c["metal_removed_pct"] == pytest.approx(100 * np.sum(v[v > cap] - cap) / np.sum(v))
        assert c["mean_after"] == pytest.approx(np.minimum(v, cap).mean())
    assert [c["value"] for c in cands] == sorted(c["value"] for c in cands)


def test_logprob_break_found_in_a_mixture_and_not_in_a_lognormal():
    r = np.random.default_rng(101)
    main = r.lognormal(0, 0.8, 2000)
    high = r.lognormal(np.log(30), 0.7, 40)   # sparse high-grade population
    brk = detect_logprob_break(np.concatenate([main, high]))
    assert brk is not None
    # the break sits where the high population takes over: above most of the main
    # population (its 95 % quantile exp(0.8*1.645) ~ 3.7) and below the high one
    assert 3.0 < brk["value"] < 10.0
    assert brk["slope_upper"] > 1.5 * brk["slope_lower"]
    assert detect_logprob_break(np.random.default_rng(0).lognormal(0, 1.2, 1000)) is None
    cands = topcut_candidates(np.concatenate([main, high]))
    assert any(c["method"] == "logprob_break" for c in cands)


def test_blast_holes_with_one_sample_per_id_are_unstrung(rng):
    coords = blast_layout(rng, bench=10.0)
    ids = np.array([f"GC-{i:05d}" for i in range(len(coords))], dtype=object)
    s = nominal_spacing(coords, ids)
    # one sample per id: no strings to follow, benches found as without ids
    assert s.layout == "benches" and s.bench == pytest.approx(10.0, abs=0.3)


def test_constant_grades_do_not_break_exploration():
    c = np.random.default_rng(2).uniform(0, 50, (60, 3))
    e = explore(c, np.full(60, 1.5))
    assert e.std == 0 and e.skewness is None and e.cv == 0
    assert not e.trend.material and e.trend.r2_linear is None
    assert all(cand["n_capped"] == 0 for cand in e.topcut)
    json.dumps(e.to_dict())


def test_summary_wording_units_and_trend_direction():
    # drill holes (no benches): the bench spacing is n/a and carries no unit
    c, h = drill_layout(nx=4, ny=4, n_comp=10)
    # grade rising straight up (by construction: value = 1 + z/10), so the gradient
    # points up: azimuth undefined-ish but inclination 90 degrees above horizontal
    r = np.random.default_rng(4)
    v = 1.0 + c[:, 2] / 10.0 + r.normal(0, 0.01, len(c)) - c[:, 2].min() / 10.0
    text = explore(c, v, holes=h).summary()
    assert "bench n/a," in text and "n/a m" not in text
    assert "along_hole" not in text and "suggested unit lag along hole" in text
    line = next(ln for ln in text.splitlines() if ln.startswith("Trend:"))
    assert "above the horizontal" in line and "inclination" not in line

    # one level (a bench, exact z = 0): the vertical lag is n/a, with no unit after it
    r = np.random.default_rng(5)
    flat = np.c_[r.uniform(0, 100, (200, 2)), np.zeros(200)]
    text = explore(flat, r.lognormal(0, 1, 200)).summary()
    vertical = next(ln for ln in text.splitlines() if "suggested unit lag vertical" in ln)
    assert "n/a m" not in vertical and "(tolerance n/a)" in vertical



# ---------------------------------------------------------------------------
# blast-hole pattern spacing from the area per hole (issue 17)
# ---------------------------------------------------------------------------

def _jittered_benches(rng, a, b, n=(18, 18), benches=(0.0, 10.0, 20.0), jitter=0.2):
    """Patterns a x b m (x by y) on exact bench elevations, each hole moved up to
    jitter * a (x) and jitter * b (y) at random, as drilled holes stray from the plan."""
    pts = []
    for zb in benches:
        xx, yy = np.meshgrid(np.arange(n[0]) * a, np.arange(n[1]) * b)
        p = np.column_stack([xx.ravel(), yy.ravel()]).astype(float)
        p += rng.uniform(-jitter, jitter, p.shape) * [a, b]
        pts.append(np.column_stack([p, np.full(len(p), zb)]))
    return np.vstack(pts)


@pytest.mark.parametrize("a,b", [(4.0, 4.0), (5.0, 5.0), (6.0, 3.0)])
def test_pattern_spacing_of_jittered_blast_holes(rng, a, b):
    # known pattern a x b: area per hole a b, equivalent square spacing sqrt(a b)
    coords = _jittered_benches(rng, a, b)
    s = nominal_spacing(coords)
    assert s.layout == "benches" and s.n_levels == 3
    assert s.pattern == pytest.approx(np.sqrt(a * b), rel=0.04)
    assert s.across_hole == s.pattern
    assert s.suggested_lag["omni"] == pytest.approx(np.sqrt(a * b), rel=0.05)  # 2 sig. figs
    # the nearest-neighbour figure, reported beside it, understates the jittered pattern
    # (reference: scipy's cKDTree over each bench, brute force)
    from scipy.spatial import cKDTree
    nn = np.concatenate([cKDTree(coords[coords[:, 2] == z, :2]).query(
        coords[coords[:, 2] == z, :2], k=2)[0][:, 1] for z in (0.0, 10.0, 20.0)])
    assert s.plan_nearest == pytest.approx(np.median(nn))
    assert s.plan_nearest < 0.85 * np.sqrt(a * b)
    d = s.to_dict()
    assert d["pattern"] == s.pattern and d["plan_nearest"] == s.plan_nearest
    assert "area per sample" in d["pattern_method"]


def test_footprint_spacing_on_a_regular_grid_by_hand():
    # 12 x 9 positions 5 m by 3 m apart: hull 55 x 24 m, perimeter 158 m, n = 108.
    # Solving 108 s^2 = 1320 + 79 s + pi s^2 / 4 by hand (quadratic formula):
    from anisotropy.exploration import footprint_spacing

    xx, yy = np.meshgrid(np.arange(12) * 5.0, np.arange(9) * 3.0)
    p = np.column_stack([xx.ravel(), yy.ravel()])
    a = 108 - np.pi / 4
    want = (79.0 + np.sqrt(79.0 ** 2 + 4 * a * 1320.0)) / (2 * a)
    assert footprint_spacing(p) == pytest.approx(want, rel=1e-12)
    assert want == pytest.approx(np.sqrt(15.0), rel=0.02)   # the pattern's own sqrt(a b)
    # a repeated position counts once; a line or two positions have no area
    assert footprint_spacing(np.vstack([p, p[:5]])) == pytest.approx(want, rel=1e-12)
    assert footprint_spacing(p[:12]) is None and footprint_spacing(p[:2]) is None


def test_one_level_reads_the_pattern_too(rng):
    coords = _jittered_benches(rng, 5.0, 5.0, benches=(0.0,))
    s = nominal_spacing(coords)
    assert s.layout == "single_level"
    assert s.across_hole == pytest.approx(5.0, rel=0.04)
    assert s.plan_nearest < 4.5


def test_explore_reports_the_lag_discover_starts_from():
    # one rule: the lag explore reports is the one discover's lag stage takes (with a pair
    # budget too large to shorten it); checked by hand for scattered samples: 20 lags out
    # to half the extent, but not under half the median nearest-neighbour distance, and
    # never fewer than 12 lags
    from anisotropy.discovery.lags import choose_lags
    from anisotropy.exploration import discovery_lags

    rng = np.random.default_rng(5)
    coords = rng.uniform(0, 200, (300, 3))
    sp = nominal_spacing(coords)
    half = 0.5 * float(np.max(coords.max(axis=0) - coords.min(axis=0)))
    lag, n_lags, _ = discovery_lags(sp)
    assert lag == float(f"{min(max(half / 20, 0.5 * sp.nearest), half / 12):.3g}")
    assert n_lags == round(half / lag)
    lc = choose_lags(coords, sp, pair_budget=1e12)
    assert (lc.unit_lag, lc.n_lags) == (lag, n_lags)
    assert sp.to_dict()["discovery_lag"]["unit_lag"] == lag
