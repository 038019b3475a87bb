"""Tests of what the down-hole lags resolve (anisotropy.fitting.resolution)."""

import numpy as np
import pytest

from anisotropy.fitting.resolution import downhole_resolved_axes, hole_axes
from anisotropy.geometry import line_to_vector


def _holes(direction, n_holes=10, per=20, step=2.0, spread=30.0):
    """Straight holes along ``direction`` with composites every ``step`` metres."""
    rng = np.random.default_rng(0)
    u = np.asarray(direction, float)
    X, lab = [], []
    for h in range(n_holes):
        collar = rng.uniform(0, spread, 3)
        X.append(collar + step * np.arange(per)[:, None] * u)
        lab += [f"H{h}"] * per
    return np.vstack(X), np.array(lab)


def test_hole_axes_recover_direction_count_and_spacing():
    u = line_to_vector(135.0, 55.0)
    X, lab = _holes(u, n_holes=4, per=7, step=2.5)
    ha = hole_axes(X, lab)
    assert list(ha.counts) == [7, 7, 7, 7]
    # the exact direction (lower hemisphere: u points down already) and spacing
    assert np.allclose(ha.directions, np.tile(u, (4, 1)), atol=1e-9)
    assert np.allclose(ha.spacing, 2.5)


def test_axis_along_the_holes_is_resolved_by_down_hole_lags():
    # holes drilled along the minor axis (the pole of the lode): 10 holes of 20 composites
    # at 2 m give 190 pairs at 2 m and 180 at 4 m, two lag classes under a 10 m range
    frame = np.column_stack([line_to_vector(60.0, 0.0), line_to_vector(330.0, 30.0),
                             line_to_vector(150.0, 60.0)])
    X, lab = _holes(frame[:, 2])
    ha = hole_axes(X, lab)
    assert downhole_resolved_axes(frame, [120.0, 60.0, 10.0], ha) == ["minor"]
    # a range of 3 m is shorter than two composites: not resolved
    assert downhole_resolved_axes(frame, [120.0, 60.0, 3.0], ha) == []


def test_holes_outside_the_tolerance_do_not_resolve_an_axis():
    frame = np.eye(3)[:, [0, 1, 2]] * np.array([1, 1, -1])  # east, north, down
    frame[:, 1] *= -1  # keep it right-handed
    tilted = line_to_vector(0.0, 70.0)  # 20 degrees off the vertical (minor) axis
    X, lab = _holes(tilted)
    ha = hole_axes(X, lab)
    assert downhole_resolved_axes(frame, [100.0, 50.0, 20.0], ha, tolerance=15.0) == []
    assert downhole_resolved_axes(frame, [100.0, 50.0, 20.0], ha, tolerance=25.0) == ["minor"]


@pytest.mark.parametrize("n_holes,per,expect", [(2, 10, []), (10, 5, ["minor"])])
def test_pair_counts_per_class_are_required(n_holes, per, expect):
    # by hand: 2 holes x 10 samples give 18 pairs at one step (< 30); 10 holes x 5 give
    # 40 at one step and 30 at two steps
    frame = np.column_stack([[1.0, 0, 0], [0, 1.0, 0], [0, 0, -1.0]])
    frame[:, 1] *= -1
    X, lab = _holes(frame[:, 2], n_holes=n_holes, per=per)
    assert downhole_resolved_axes(frame, [100.0, 50.0, 20.0], hole_axes(X, lab)) == expect
