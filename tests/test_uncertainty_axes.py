"""Tests of anisotropy.uncertainty.axes: mean axis, cones, frame matching, trend and plunge.

Outside references used below:
* exact brute force (all 6 axis permutations; a dense direction grid for the
  orientation-tensor mean, which maximises sum cos^2: Fisher, Lewis &
  Embleton 1987, sec. 3.2 - recalled from memory)
* numpy.quantile
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from anisotropy import uncertainty as U
from anisotropy.geometry import fibonacci_hemisphere, line_to_vector


def _scatter_axes(rng, centre, sd_deg, n):
    """Axes scattered around a centre (random small rotations), random signs."""
    rv = rng.normal(scale=np.radians(sd_deg), size=(n, 3))
    v = Rotation.from_rotvec(rv).apply(centre)
    return v * rng.choice([-1.0, 1.0], size=(n, 1))


def test_mean_axis_maximises_sum_cos2_brute_force(rng):
    centre = line_to_vector(40.0, 30.0)
    axes = _scatter_axes(rng, centre, 12.0, 200)
    m, ev = U.mean_axis(axes)
    grid = fibonacci_hemisphere(40000)
    score = ((grid @ axes.T) ** 2).sum(axis=1)
    best = grid[np.argmax(score)]
    # exact brute force over a dense grid (~0.7 deg spacing)
    assert np.degrees(np.arccos(min(1.0, abs(best @ m)))) < 1.0
    assert m[2] <= 0  # lower hemisphere
    assert ev.sum() == pytest.approx(1.0)
    # eigenvalues against numpy.linalg.eigvalsh of the tensor built by hand
    T = sum(np.outer(a, a) for a in axes / np.linalg.norm(axes, axis=1)[:, None]) / len(axes)
    assert np.allclose(np.sort(ev), np.linalg.eigvalsh(T))


def test_axis_cone_brute_force(rng):
    ref = line_to_vector(200.0, 10.0)
    axes = _scatter_axes(rng, ref, 8.0, 301)
    _, cone = U.axis_cone(axes, ref, 0.9)
    ang = [np.degrees(np.arccos(min(1.0, abs(float(a @ ref)) / np.linalg.norm(a))))
           for a in axes]
    # brute-force angles, numpy.quantile
    assert cone == pytest.approx(np.quantile(ang, 0.9), abs=1e-6)
    inside = np.mean(np.array(ang) <= cone + 1e-9)
    assert 0.89 <= inside <= 0.91


def _random_frame(rng):
    return Rotation.random(random_state=rng.integers(1 << 31)).as_matrix()


def test_match_frame_against_all_permutations(rng):
    for _ in range(50):
        ref = _random_frame(rng)
        fr = _random_frame(rng)
        matched, perm = U.match_frame(ref, fr)
        best = max(itertools.permutations(range(3)),
                   key=lambda p: sum(abs(ref[:, i] @ fr[:, p[i]]) for i in range(3)))
        # exact brute force over the 6 permutations
        assert tuple(perm) == best
        assert np.all(np.sum(matched * ref, axis=0) >= 0)
        assert np.allclose(np.abs(matched), np.abs(fr[:, list(best)]))


def test_match_frame_recovers_swapped_axes(rng):
    ref = _random_frame(rng)
    small = Rotation.from_rotvec([0.02, -0.01, 0.03]).as_matrix()
    fr = (small @ ref)[:, [1, 0, 2]] * np.array([1.0, -1.0, 1.0])
    matched, perm = U.match_frame(ref, fr)
    assert list(perm) == [1, 0, 2]
    assert np.allclose(matched, small @ ref, atol=1e-12)


def test_trend_interval_wraps_through_north(rng):
    ref = line_to_vector(358.0, 20.0)
    axes = _scatter_axes(rng, ref, 4.0, 400)
    trend, plunge, note = U.trend_plunge_intervals(axes, ref, 0.9)
    assert note is None
    lo, hi = trend
    assert lo > hi  # read clockwise from lo to hi through north
    # brute force: signed trend differences from 358, numpy.quantile
    a = axes * np.sign(axes @ ref)[:, None]
    t = np.degrees(np.arctan2(a[:, 0], a[:, 1]))
    d = (t - 358.0 + 180) % 360 - 180
    assert lo == pytest.approx((358.0 + np.quantile(d, 0.05)) % 360, abs=1e-6)
    assert hi == pytest.approx((358.0 + np.quantile(d, 0.95)) % 360, abs=1e-6)
    assert 0 <= plunge[0] < 20 < plunge[1] <= 90


def test_horizontal_axis_keeps_its_trend(rng):
    # replicates tipping slightly up must not jump 180 degrees in trend
    ref = line_to_vector(90.0, 0.0)
    axes = _scatter_axes(rng, ref, 3.0, 300)
    trend, plunge, _ = U.trend_plunge_intervals(axes, ref, 0.9)
    assert 80 < trend[0] < 90 < trend[1] < 100
    assert plunge[0] >= 0 and plunge[1] < 10


def test_vertical_axis_has_no_trend(rng):
    ref = line_to_vector(0.0, 88.0)
    axes = _scatter_axes(rng, ref, 5.0, 200)
    trend, plunge, note = U.trend_plunge_intervals(axes, ref, 0.9)
    assert trend is None and "undefined" in note
    assert plunge[1] <= 90


@pytest.mark.parametrize("trend, plunge, cone", [(40.0, 20.0, 30.0), (300.0, 0.0, 10.0),
                                                 (120.0, 55.0, 30.0), (10.0, 70.0, 25.0)])
def test_cone_extents_against_the_small_circle_brute_force(trend, plunge, cone):
    # exact brute force: 20,000 axes on the cone's boundary (the small circle at angle
    # `cone` from the axis), signed to agree with it as trend_plunge_intervals signs its
    # replicates; their largest trend difference and their plunge span
    from anisotropy.uncertainty.axes import cone_extents
    ref = line_to_vector(trend, plunge)
    a = np.cross(ref, [0.0, 0.0, 1.0])
    a /= np.linalg.norm(a)
    b = np.cross(ref, a)
    phi = np.linspace(0.0, 2.0 * np.pi, 20000, endpoint=False)
    c = np.radians(cone)
    v = np.cos(c) * ref + np.sin(c) * (np.cos(phi)[:, None] * a + np.sin(phi)[:, None] * b)
    t = np.degrees(np.arctan2(v[:, 0], v[:, 1]))
    dt = (t - trend + 180.0) % 360.0 - 180.0
    p = np.degrees(np.arcsin(np.abs(v[:, 2])))
    half, (lo, hi) = cone_extents(ref, cone)
    if plunge + cone >= 90.0:
        assert half is None
    else:
        assert half == pytest.approx(np.abs(dt).max(), abs=1e-3)
    # a cone reaching past the vertical holds it (its inside, not its boundary)
    assert hi == pytest.approx(90.0 if plunge + cone >= 90.0 else p.max(), abs=1e-3)
    # below the horizontal the span starts at 0 (an axis has no upward half)
    assert lo == pytest.approx(0.0 if plunge < cone else p.min(), abs=1e-3)


def test_intervals_reach_a_widened_cone(rng):
    # replicates all within 2 degrees give narrow intervals; reach=True widens them to
    # every axis inside the cone (cone_extents, tested above against brute force)
    from anisotropy.uncertainty.axes import cone_extents
    ref = line_to_vector(200.0, 25.0)
    reps = _scatter_axes(rng, ref, 1.0, 200)
    t0, p0, _ = U.trend_plunge_intervals(reps, ref, 0.9, cone_deg=30.0)
    t1, p1, _ = U.trend_plunge_intervals(reps, ref, 0.9, cone_deg=30.0, reach=True)
    half, (plo, phi) = cone_extents(ref, 30.0)
    assert p0[1] - p0[0] < 5.0 and t0 is not None
    assert p1 == pytest.approx([plo, phi])
    assert t1 == pytest.approx([(200.0 - half) % 360.0, (200.0 + half) % 360.0])
