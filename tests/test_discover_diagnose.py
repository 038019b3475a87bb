"""Tests of the ``diagnose`` stage: what the sampling resolves, the fit along the fan.

The lag bins are laid out by hand (exact positions on the coordinate axes), so
which bins are shorter than a range is counted by hand; the model values of
the residual rows are recomputed from the spherical formula (Journel &
Huijbregts 1978, ch. II), written here.
"""

import numpy as np
import pytest

from anisotropy.discovery.diagnose import residuals_by_direction, resolution
from anisotropy.models import NestedModel, Structure


def _lattice(step, n=12):
    """Lag vectors every ``step`` m along the three coordinate axes, 500 pairs each."""
    lags = np.concatenate([np.outer(np.arange(1, n + 1) * step, e) for e in np.eye(3)])
    return lags, np.full(len(lags), 500)


def _resolution(ranges, holes=False, nearest=9.0, step=9.0):
    lags, pairs = _lattice(step)
    return resolution(lags, pairs, ranges, np.eye(3), nearest=nearest,
                      across=60.0 if holes else None, min_pairs=30)


def test_a_range_under_one_lag_bin_is_said_without_a_false_comparison():
    # frame = coordinate axes, bins every 9 m: a 13 m minor range has exactly one bin
    # (9 m) shorter than it (counted by hand), so its rise rests on one point
    axes, unresolved, w = _resolution((150.0, 90.0, 13.0))
    assert unresolved == ["minor"] and len(w) == 1
    assert "rests on one lag bin" in w[0] and "9 m" in w[0]
    assert "shorter than the shortest lag" not in w[0]
    # the minor axis is square to the two resolved axes: its direction is not in doubt (blanket benchmark: minor errors 0.1-1.2 deg
    # on the realisations that had warned "minor axis not resolved", RESULTS.md)
    assert axes == [] and "direction is still fixed" in w[0]
    # samples 9 m apart against a 13 m range: closer samples are what would help
    assert "closer samples" in w[0]
    # samples 3 m apart: the lag bins, not the samples, are too coarse
    assert "shorter unit lag" in _resolution((150.0, 90.0, 13.0), nearest=3.0)[2][0]


def test_two_bins_shorter_than_every_range_resolve_them_all():
    # 20 m ranges against 9 m bins: bins at 9 and 18 m lie shorter on every axis
    axes, unresolved, w = _resolution((150.0, 90.0, 20.0))
    assert axes == unresolved == [] and w == []


def test_thin_bins_do_not_count():
    # the same lattice with 20 pairs per bin (under the 30 asked): nothing resolved
    lags, _ = _lattice(9.0)
    axes, unresolved, w = resolution(lags, np.full(len(lags), 20), (150.0, 90.0, 20.0),
                                     np.eye(3), min_pairs=30)
    assert unresolved == ["major", "semi_major", "minor"] == axes
    assert "whole frame is a guess" in w[-1]


def test_one_unresolved_range_on_drill_holes_keeps_its_direction():
    # on hole strings too, one unresolved range leaves its axis square to the two resolved
    # ones (a frame cannot have exactly one open axis); the across-hole spacing bounds the
    # range. Measured: the minor axes so flagged on the issue-15 drill-hole scenarios were
    # 1.5-8.0 deg off (benchmarks/RESULTS.md, Blast-hole benches)
    axes, unresolved, w = _resolution((150.0, 90.0, 13.0), holes=True)
    assert axes == [] and unresolved == ["minor"]
    assert "minor range is not resolved" in w[0] and "across-hole spacing is 60 m" in w[0]
    assert "treat its range as a guess" in w[0] and "direction is still fixed" in w[0]


def test_two_unresolved_ranges_leave_their_axes_free_to_turn():
    # 8 m and 6 m ranges against 9 m bins: no bin is shorter than either
    axes, unresolved, w = _resolution((150.0, 8.0, 6.0))
    assert axes == unresolved == ["semi_major", "minor"]
    assert any("turn about the major axis" in t for t in w)
    assert all("shorter than the shortest lag seen near that axis (9 m)" in t for t in w[:2])


def test_an_axis_without_any_bin_near_it_cannot_be_checked():
    # bins only along x and y: nothing within 25 degrees of z
    lags, pairs = _lattice(9.0)
    keep = lags[:, 2] == 0
    axes, unresolved, w = resolution(lags[keep], pairs[keep], (150.0, 90.0, 20.0), np.eye(3),
                                     min_pairs=30)
    assert unresolved == ["minor"] and "no lag bin lies within 25 degrees" in w[0]


def _benches(tilts=(-10.0, 0.0, 10.0), gap=10.0):
    """Pairs of benches ``gap`` m apart: one distance class, cells tilted from the pole.

    Plus the 9 m lattice along x and y (within the benches), classes 1..12.
    """
    lags, _ = _lattice(9.0)
    flat = lags[lags[:, 2] == 0]
    t = np.radians(tilts)
    steep = gap * np.column_stack([np.sin(t), np.zeros_like(t), np.cos(t)]) / np.cos(t)[:, None]
    cls = np.r_[np.tile(np.arange(1, 13), 2), np.ones(len(tilts), int)]
    return np.vstack([flat, steep]), np.full(len(flat) + len(tilts), 500), cls


def test_bins_of_one_distance_are_one_point_on_the_rise():
    # benches 10 m apart: three cells within 25 degrees of the pole (z), at 10.0, 10.2 and
    # 10.2 m (10 / cos 10 deg, by hand), all in lag class 1; a 12 m minor range along z is
    # seen at that one distance only, so it is not resolved, and on benches this steep
    # axis is open, and with it the plunges of the two in the benches (pairs within a
    # bench are all horizontal): all three directions are open
    lags, pairs, cls = _benches()
    axes, unresolved, w = resolution(lags, pairs, (150.0, 90.0, 12.0), np.eye(3),
                                     min_pairs=30, lag_index=cls, bench=10.0)
    assert unresolved == ["minor"] and axes == ["major", "semi_major", "minor"]
    assert "one distance class" in w[0] and "3 bins" in w[0]
    assert "benches are 10 m apart" in w[0]
    assert "tilt of the whole frame" in w[1]
    # the same cells counted as separate classes (no class given) pass the old count of
    # two bins: the rule needs the classes to tell them apart
    assert resolution(lags, pairs, (150.0, 90.0, 12.0), np.eye(3),
                      min_pairs=30)[1] == []
    # a second bench gap (20 m, class 2) under a 25 m range: two distances, resolved
    more = np.vstack([lags, [[0.0, 0.0, 20.0]]])
    axes, unresolved, w = resolution(more, np.r_[pairs, 500], (150.0, 90.0, 25.0), np.eye(3),
                                     min_pairs=30, lag_index=np.r_[cls, 2],
                                     bench=10.0)
    assert unresolved == [] and w == []


def test_on_benches_an_axis_within_the_benches_keeps_its_direction():
    # the bench lattice with a second bench gap (20 m along z, class 2). Frame columns x,
    # z, y: the 25 m semi-major range along z (steep) is seen at 10 and 20 m, resolved; the
    # 5 m minor range along y (horizontal) has no bin under it (9 m lattice). Pairs in
    # every bench surround a horizontal axis, so, as on scattered samples, only its range
    # is in doubt; the same lags without benches keep it too (one open axis cannot be)
    lags, pairs, cls = _benches()
    lags, pairs, cls = np.vstack([lags, [[0.0, 0.0, 20.0]]]), np.r_[pairs, 500], np.r_[cls, 2]
    frame = np.eye(3)[:, [0, 2, 1]]
    axes, unresolved, w = resolution(lags, pairs, (150.0, 25.0, 5.0), frame,
                                     min_pairs=30, lag_index=cls, bench=10.0)
    assert unresolved == ["minor"] and axes == []
    assert "minor range is not resolved" in w[0] and "direction is still fixed" in w[0]
    axes, unresolved, w = resolution(lags, pairs, (150.0, 25.0, 5.0), frame,
                                     min_pairs=30, lag_index=cls)
    assert unresolved == ["minor"] and axes == []
    # an 8 m range on the horizontal y and a 25 m one on the steep z without the 20 m
    # gap: both unresolved; without benches two unresolved axes may turn about the
    # third, and on benches the steep one opens all three
    lags, pairs, cls = _benches()
    args = (lags, pairs, (150.0, 8.0, 25.0), np.eye(3))
    axes, unresolved, w = resolution(*args, min_pairs=30, lag_index=cls)
    assert unresolved == ["semi_major", "minor"] == axes
    axes, unresolved, w = resolution(*args, min_pairs=30, lag_index=cls, bench=10.0)
    assert unresolved == ["semi_major", "minor"] and axes == ["major", "semi_major", "minor"]


def test_residual_rows_against_the_spherical_formula():
    # one spherical structure, ranges 100/50/20 along the coordinate axes, nugget 0.1
    model = NestedModel(nugget=0.1, structures=[Structure("spherical", 0.9, (100.0, 50.0, 20.0))],
                        frame=np.eye(3))
    dirs = np.eye(3)
    dist = np.tile(np.arange(1, 6) * 10.0, (3, 1))
    pairs = np.array([[100, 100, 10, 100, 0]] * 3, float)

    def gamma(h):  # Journel & Huijbregts (1978), ch. II
        h = np.minimum(h, 1.0)
        return 0.1 + 0.9 * (1.5 * h - 0.5 * h ** 3)

    truth = np.array([gamma(dist[i] / a) for i, a in enumerate((100.0, 50.0, 20.0))])
    value = 1.1 * truth                      # every lag 10 % above the model
    rows = residuals_by_direction(model, dirs, dist, value, pairs, min_pairs=30,
                                  tolerance=np.full(3, 15.0), flags=["", "", "thin"])
    for i, r in enumerate(rows):
        assert r["lags"]["model"] == pytest.approx(truth[i][:4], rel=1e-5)
        assert r["lags"]["used"] == [True, True, False, True]     # 10 pairs < 30; 0: absent
        assert r["n_lags"] == 3 and r["pairs"] == 300
        assert r["mean_relative_residual"] == pytest.approx(0.1)
        assert r["rms_relative_residual"] == pytest.approx(0.1)
    assert rows[2]["flag"] == "thin" and rows[0]["plunge"] == 0.0 and rows[2]["plunge"] == 90.0


# --- issue 15: down-hole resolution, the bootstrap's exchanges -------------------

def test_an_axis_the_holes_resolve_is_never_called_unresolved():
    # the same lattice and ranges as the drill-hole test above (13 m minor, one 9 m bin
    # under it): with the minor axis resolved by down-hole lags it is not reported
    lags, pairs = _lattice(9.0)
    axes, unresolved, w = resolution(lags, pairs, (150.0, 90.0, 13.0), np.eye(3),
                                     across=60.0, min_pairs=30,
                                     resolved=("minor",))
    assert axes == unresolved == [] and w == []


def _diagnosis(**kw):
    from anisotropy.discovery.diagnose import Diagnostics

    base = dict(direction_ranges=None, residuals=[], unresolved_axes=[], unresolved_ranges=[])
    base.update(kw)
    return Diagnostics(**base)


def test_axes_the_bootstrap_exchanges_too_often_become_unresolved():
    from anisotropy.discovery.diagnose import with_bootstrap

    dg = _diagnosis(unresolved_axes=["minor"])
    # 12 % of replicates exchange major and semi-major: more than 1 - 0.9
    out = with_bootstrap(dg, {"major_semi_major": 0.12, "semi_major_minor": 0.0}, 0.9)
    assert out.unresolved_axes == ["major", "semi_major", "minor"]
    assert out.ambiguous_axes == ("major", "semi_major")
    assert "12%" in out.warnings[-1]
    # 8 % is inside the 10 % the confidence allows: nothing changes
    same = with_bootstrap(dg, {"major_semi_major": 0.08, "semi_major_minor": 0.05}, 0.9)
    assert same is dg



def test_a_lone_range_keeps_its_direction_only_while_the_other_two_are_fixed():
    # the 13 m minor range of the first test: alone, its direction is fixed by the two
    # resolved axes; once the bootstrap opens those two (they trade places in 30 % of the
    # replicates), nothing fixes the minor either, and its warning says so
    from anisotropy.discovery.diagnose import (KEPT, REOPENED, with_bootstrap,
                                               with_open_ranges)
    axes, unresolved, w = _resolution((150.0, 90.0, 13.0), holes=True)
    assert axes == [] and KEPT in w[0]
    dg = _diagnosis(unresolved_axes=axes, unresolved_ranges=unresolved, warnings=tuple(w))
    out = with_bootstrap(dg, {"major_semi_major": 0.3, "semi_major_minor": 0.0}, 0.9)
    assert out.unresolved_axes == ["major", "semi_major", "minor"]
    assert REOPENED in out.warnings[0] and KEPT not in out.warnings[0]
    # the rule by itself: no open axis, nothing to add; the assumed pole of one level
    # (planar) opens nothing, while an open in-plane axis opens the other in-plane range
    assert with_open_ranges([], ["minor"]) == []
    assert with_open_ranges(["minor"], ["semi_major", "minor"], planar=True) == ["minor"]
    assert with_open_ranges(["major", "minor"], ["semi_major", "minor"], planar=True) == \
        ["major", "semi_major", "minor"]


def test_an_axis_whose_cone_exceeds_twice_the_tolerance_becomes_unresolved():
    from anisotropy.discovery.diagnose import with_bootstrap

    dg = _diagnosis(unresolved_axes=["semi_major"])
    none = {"major_semi_major": 0.0, "semi_major_minor": 0.0}
    cones = {"major": 12.0, "semi_major": 50.0, "minor": 31.0}
    out = with_bootstrap(dg, none, 0.9, cones=cones, tolerance=15.0)
    # 31 > 2 x 15: the minor joins; 12 does not; the semi-major was already unresolved
    assert out.unresolved_axes == ["semi_major", "minor"]
    assert out.ambiguous_axes == ()
    assert len(out.warnings) == 1 and "31 degrees" in out.warnings[0]
    assert with_bootstrap(dg, none, 0.9, cones=cones, tolerance=16.0) is dg


def test_tolerance_cones_more_than_twice_the_tolerance_apart_share_no_direction():
    # the reason given for the rule above, by brute force with NumPy: unit vectors within
    # 15 degrees of one axis are never within 15 degrees of an axis 30.5 degrees away
    # (undirected), while at 29.5 degrees some are
    rng = np.random.default_rng(5)
    v = rng.standard_normal((400_000, 3))
    v /= np.linalg.norm(v, axis=1, keepdims=True)
    a = np.array([1.0, 0.0, 0.0])
    near_a = v[np.degrees(np.arccos(np.minimum(np.abs(v @ a), 1))) <= 15.0]
    for gap, shared in ((30.5, False), (29.5, True)):
        g = np.radians(gap)
        b = np.array([np.cos(g), np.sin(g), 0.0])
        within_b = np.degrees(np.arccos(np.minimum(np.abs(near_a @ b), 1))) <= 15.0
        assert within_b.any() == shared

# ------------------------------------------------ issue 17: planar data (one bench)

def _bench(step=3.0, n=12):
    """Lag vectors every ``step`` m along east and north only (one level), 500 pairs each."""
    lags = np.concatenate([np.outer(np.arange(1, n + 1) * step, e) for e in np.eye(3)[:2]])
    return lags, np.full(len(lags), 500)


LAG_ADVICE = ("--lag", "shorter unit lag", "closer samples", "Closer holes")


@pytest.mark.parametrize("across", [None, 60.0])
def test_planar_minor_axis_is_never_sent_to_a_shorter_lag(across):
    # one bench: every lag bin is horizontal, so nothing lies within 25 degrees of the
    # vertical minor axis (counted by hand); samples 3 m apart against a 20 m range is
    # where the text for 3D data advises a shorter unit lag
    lags, pairs = _bench()
    args = (lags, pairs, (150.0, 90.0, 20.0), np.eye(3))
    kw = dict(across=across, nearest=3.0, min_pairs=30)
    # control: read as 3D data, the minor axis is sent to the lag or the spacing
    _, _, w3 = resolution(*args, **kw)
    assert any(a in w3[0] for a in LAG_ADVICE)
    axes, unresolved, w = resolution(*args, planar=True, **kw)
    assert axes == ["minor"] and unresolved == ["minor"] and len(w) == 1
    assert "one level cannot resolve the axis across it" in w[0]
    assert "20 m" in w[0] and "no lag bin lies within 25 degrees" in w[0]   # exact: all z = 0
    assert not any(a in w[0] for a in LAG_ADVICE)


def test_planar_in_plane_axes_keep_their_own_advice():
    # a 4 m semi-major range against 3 m bins: one bin shorter (counted by hand), so the
    # semi-major range is unresolved in the plane, where a shorter lag does help; the
    # minor axis gets the one-level text, and nothing is said twice
    lags, pairs = _bench()
    axes, unresolved, w = resolution(lags, pairs, (150.0, 4.0, 4.0), np.eye(3),
                                     nearest=1.0, min_pairs=30, planar=True)
    assert unresolved == ["semi_major", "minor"]
    assert axes == ["minor"]            # the semi-major is fixed by the plane and the major
    assert "semi-major range" in w[0] and "shorter unit lag" in w[0]
    assert "square to the other axis in that plane" in w[0]
    assert "one level cannot resolve" in w[1] and not any(a in w[1] for a in LAG_ADVICE)
    assert len(w) == 2


def test_diagnose_on_one_bench_says_one_level_cannot_resolve_the_minor_axis():
    # the stages run on one bench of blast holes (a jittered 3 m pattern, one level): every
    # lag bin is horizontal, so nothing can resolve the vertical minor axis
    from anisotropy import simulate_field
    from anisotropy.discovery import (build_volume, choose_lags, diagnose, fan_ranges,
                                      weighted_bins)
    from anisotropy.exploration import nominal_spacing

    rng = np.random.default_rng(4)
    g = np.stack(np.meshgrid(np.arange(30) * 3.0, np.arange(30) * 3.0), -1).reshape(-1, 2)
    coords = np.c_[g + rng.normal(0, 0.3, g.shape), np.zeros(len(g))]
    # a bench model: spherical ranges 60/30/30 m (the minor a placeholder), vertical minor
    model = NestedModel(nugget=0.1, structures=[Structure("spherical", 0.9, (60.0, 30.0, 30.0))],
                        frame=np.eye(3))
    values = simulate_field(coords, model, seed=5) + 10.0
    spacing = nominal_spacing(coords)
    lags = choose_lags(coords, spacing)
    pv = build_volume(coords, values, lags)
    total = float(np.var(values))
    wb = weighted_bins(pv, coords, values, holes=None, spacing=spacing, lags=lags, total=total)
    fan = fan_ranges(pv.volume, wb.bins, total=total, planar=True)
    D = diagnose(model, fan, wb.bins, spacing=spacing, has_holes=False, planar=True,
                 max_distance=lags.max_distance, max_range=720.0, min_pairs=30,
                 transform_kind="raw")
    assert spacing.layout == "single_level"
    assert "minor" in D.unresolved_axes and "minor" in D.unresolved_ranges
    minor = [t for t in D.warnings if t.startswith("the minor")]
    assert len(minor) == 1 and "one level cannot resolve the axis across it" in minor[0]
    assert not any(a in t for t in D.warnings for a in LAG_ADVICE)
