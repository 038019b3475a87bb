"""Tests of the ``fan_ranges`` stage.

The fan is compared with :func:`anisotropy.directional.variogram_fan` called
directly, and the pair counts of widened directions with the same cones
counted at 30 degrees (a wider cone holds every pair of the narrower one).
"""

import numpy as np
import pytest

from anisotropy.directional import variogram_fan
from anisotropy.discovery.bins import weighted_bins
from anisotropy.discovery.fan import fan_ranges
from anisotropy.discovery.lags import LagChoice, build_volume
from anisotropy.discovery.params import WIDE_ANGULAR_TOLERANCE
from anisotropy.exploration import nominal_spacing
from anisotropy.geometry import fan_for_spacing


@pytest.fixture(scope="module")
def volume_and_bins():
    rng = np.random.default_rng(5)
    coords = rng.uniform([0, 0, 0], [200, 200, 40], (500, 3))
    values = np.sin(coords[:, 0] / 30.0) + 0.3 * rng.normal(size=500)
    lc = LagChoice(unit_lag=10.0, n_lags=10)
    pv = build_volume(coords, values, lc)
    wb = weighted_bins(pv, coords, values, holes=None, spacing=nominal_spacing(coords), lags=lc,
                       total=float(np.var(values)))
    return pv.volume, wb.bins, float(np.var(values))


def test_the_fan_at_the_stated_tolerance_and_thin_directions_widened(volume_and_bins):
    volume, bins, total = volume_and_bins
    fr = fan_ranges(volume, bins, total=total, fan_spacing=10.0, min_pairs=30)
    dirs = fan_for_spacing(10.0)
    assert np.array_equal(fr.directions, dirs)
    ref = variogram_fan(volume, dirs, angular_tolerance=15.0)
    assert np.array_equal(np.asarray(fr.fan.pairs), np.asarray(ref.pairs))
    # a flat domain (40 m thick): steep directions are thin at 15 degrees and re-read at 30
    assert fr.widened.any()
    assert np.all(fr.tolerances[fr.widened] == WIDE_ANGULAR_TOLERANCE)
    assert np.all(fr.tolerances[~fr.widened] == 15.0)
    assert np.all(fr.pairs[fr.widened] >= np.asarray(ref.pairs, float)[fr.widened])
    assert np.array_equal(fr.pairs[~fr.widened], np.asarray(ref.pairs, float)[~fr.widened])
    # the isotropic nugget and sill respect the total sill
    assert fr.nugget + fr.sill == pytest.approx(total, rel=1e-6)
    assert [c["choice"] for c in fr.choices] == ["direction fan", "angular tolerance"]


def test_a_stated_tolerance_is_not_widened(volume_and_bins):
    volume, bins, total = volume_and_bins
    fr = fan_ranges(volume, bins, total=total, fan_spacing=10.0, angular_tolerance=20.0)
    assert not fr.widened.any() and np.all(fr.tolerances == 20.0)
    assert fr.choices[1]["reason"] == "as requested"


def test_a_held_nugget_is_kept(volume_and_bins):
    volume, bins, total = volume_and_bins
    fr = fan_ranges(volume, bins, total=total, fixed_nugget=0.05, fan_spacing=15.0)
    assert fr.nugget == 0.05
