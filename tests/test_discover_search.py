"""Tests of the ``starting_frames`` and ``search_orientation`` stages.

The fit bins are exact values of a spherical model (Journel & Huijbregts 1978,
ch. II, written here) with geometric anisotropy in a known frame, so the
search must find that frame; the seeded random starts are compared with
``scipy.spatial.transform.Rotation.random``.
"""

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from anisotropy.discovery.fan import fan_ranges
from anisotropy.discovery.lags import LagChoice, build_volume
from anisotropy.discovery.params import N_RANDOM_STARTS
from anisotropy.discovery.bins import weighted_bins
from anisotropy.discovery.search import (FitSettings, Start, search_orientation,
                                         starting_frames)
from anisotropy.exploration import nominal_spacing
from anisotropy.fitting import FitBins
from anisotropy.geometry import fan_for_spacing


def _frame(trend, plunge, rotation):
    """Columns major, semi-major, minor from the line convention of design.md."""
    t, p, r = np.radians([trend, plunge, rotation])
    a = np.array([np.sin(t) * np.cos(p), np.cos(t) * np.cos(p), -np.sin(p)])
    s0 = np.array([np.cos(t), -np.sin(t), 0.0])
    s = np.cos(r) * s0 + np.sin(r) * np.cross(a, s0)
    return np.column_stack([a, s, np.cross(a, s)])


def _angle(a, b):
    return float(np.degrees(np.arccos(min(1.0, abs(float(a @ b))))))


def _exact_bins(F, ranges, nugget=0.1, sill=0.9):
    """Spherical model values at lag vectors on a 15-degree fan, 10..150 m."""
    dirs = fan_for_spacing(15.0)
    dist = np.arange(1, 16) * 10.0
    lags = (dist[None, :, None] * dirs[:, None, :]).reshape(-1, 3)
    h = np.sqrt(np.sum((lags @ F / np.asarray(ranges)) ** 2, axis=1))
    hc = np.minimum(h, 1.0)
    gamma = nugget + sill * (1.5 * hc - 0.5 * hc ** 3)
    n = len(lags)
    return FitBins(lags=lags, distance=np.linalg.norm(lags, axis=1), gamma=gamma,
                   pairs=np.full(n, 1000.0),
                   direction_index=np.repeat(np.arange(len(dirs)), len(dist)),
                   lag_index=np.tile(np.arange(1, len(dist) + 1), len(dirs)))


def test_the_search_finds_the_frame_of_exact_model_bins():
    F = _frame(60.0, 30.0, 20.0)
    bins = _exact_bins(F, (120.0, 60.0, 25.0))
    bins.weight = bins.pairs / bins.distance
    settings = FitSettings.for_lags(10.0, 155.0, fixed_nugget=None, total_sill=1.0, planar=False)
    rng = np.random.default_rng(0)
    starts = [Start("identity", np.eye(3), np.full(3, 60.0))] + [
        Start("seeded random rotation", R, np.full(3, 60.0))
        for R in Rotation.random(4, random_state=rng).as_matrix()]
    s = search_orientation(bins, starts, settings, nugget=0.2, sill=0.8)
    # the fit's columns in its own order: matched to the truth's by their ranges
    order = np.argsort(-np.asarray(s.best.ranges)[0])
    for i in range(3):
        assert _angle(s.best.frame[:, order[i]], F[:, i]) < 1.0
    assert np.asarray(s.best.ranges)[0][order] == pytest.approx([120.0, 60.0, 25.0], rel=0.02)
    # one row per start, then the three swapped-axis restarts
    assert len(s.tried) == len(starts) + 3
    assert [k["kind"] for k in s.kinds] == ["spherical", "exponential"]
    assert s.best.kinds == ("spherical",)     # the kind the bins were made from fits best


def _small_fan(planar=False):
    rng = np.random.default_rng(5)
    coords = rng.uniform(0, 200, (600, 3))
    if planar:
        coords[:, 2] = 0.0
    values = np.sin(coords[:, 0] / 30.0) + 0.3 * rng.normal(size=600)
    lc = LagChoice(unit_lag=10.0, n_lags=10)
    pv = build_volume(coords, values, lc)
    wb = weighted_bins(pv, coords, values, holes=None, spacing=nominal_spacing(coords), lags=lc,
                       total=float(np.var(values)))
    fr = fan_ranges(pv.volume, wb.bins, total=float(np.var(values)), fan_spacing=15.0,
                    planar=planar)
    return lc, wb, fr


@pytest.mark.parametrize("planar", [False, True])
def test_starting_frames(planar):
    lc, wb, fr = _small_fan(planar)
    starts = starting_frames(fr, wb.bins, unit_lag=lc.unit_lag, max_distance=lc.max_distance,
                             seed=7, planar=planar)
    names = [s.name for s in starts]
    assert names[-N_RANDOM_STARTS:] == ["seeded random rotation"] * N_RANDOM_STARTS
    assert "inertia axes of the low-variability region" in names
    for s in starts:
        assert np.allclose(s.frame.T @ s.frame, np.eye(3), atol=1e-9)
        assert np.all(s.ranges >= 0.5 * lc.unit_lag) and np.all(s.ranges <= 3 * lc.max_distance)
        if planar:  # minor axis vertical
            assert abs(s.frame[2, 2]) == pytest.approx(1.0)
    if not planar:  # the seeded rotations are SciPy's, from numpy's generator at the seed
        want = Rotation.random(N_RANDOM_STARTS, random_state=np.random.default_rng(7)).as_matrix()
        got = np.array([s.frame for s in starts[-N_RANDOM_STARTS:]])
        assert np.array_equal(got, want)
