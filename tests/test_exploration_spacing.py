"""Tests of anisotropy.exploration.spacing: nominal spacing and the suggested unit lag.

Reference: synthetic layouts whose spacing is known by construction (drill
strings, blast-hole benches, jittered patterns, a regular grid by hand).
"""


import numpy as np
import pytest

from anisotropy.exploration import footprint_spacing, nominal_spacing
from exploration_layouts import blast_layout, drill_layout


# spacing

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


def test_blast_holes_with_one_sample_per_id_are_unstrung(rng):
    coords = blast_layout(rng, bench=10.0)
    ids = np.array([f"GC-{i:05d}" for i in range(len(coords))], dtype=object)
    s = nominal_spacing(coords, ids)
    # one sample per id: no strings to follow, benches found as without ids
    assert s.layout == "benches" and s.bench == pytest.approx(10.0, abs=0.3)


# blast-hole pattern spacing from the area per hole (issue 17)

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
