"""Tests of anisotropy.samples.columns: coordinate columns by name, the closest match, domains.

Outside reference: difflib from the standard library (closest column name).
"""

from __future__ import annotations

import difflib

import numpy as np
import pandas as pd
import pytest

from anisotropy.errors import ColumnError
from anisotropy.samples import (
    detect_coordinate_columns,
    read_samples,
    samples_from_frame,
)

from samples_helpers import GOOD, as_text, write


# column detection and overrides

@pytest.mark.parametrize("names", [
    ("X", "Y", "Z"),
    ("East", "North", "Elev"),
    ("EASTING", "NORTHING", "RL"),
    ("easting", "northing", "elevation"),
    ("MIDX", "MIDY", "MIDZ"),
    ("mid_x", "mid_y", "mid_z"),
    ("xmid", "ymid", "zmid"),
    ("X_MID", "Y_MID", "Z_MID"),
    ("midpoint_x", "midpoint_y", "midpoint_z"),
    ("centroid_x", "centroid_y", "centroid_z"),
    ("Mid East", "Mid North", "Mid RL"),
    ("Easting (m)", "Northing (m)", "RL [m]"),
    ("x_m", "y_m", "z_m"),
])
def test_coordinate_names_geologists_use(names):
    df = pd.DataFrame({names[0]: [1.0, 2.0], "HoleID": ["a", "b"], names[1]: [3.0, 4.0],
                       names[2]: [5.0, 6.0], "Au_ppm": [1.0, 2.0]})
    # expected by construction: the names issue 2 lists as the ones geologists use
    assert detect_coordinate_columns(df) == {"x": names[0], "y": names[1], "z": names[2]}


def test_overrides_win_over_detection():
    df = pd.DataFrame({"x": [0.0, 1.0], "y": [0.0, 1.0], "z": [0.0, 1.0],
                       "e_local": [5.0, 6.0], "n_local": [7.0, 8.0], "lvl": [9.0, 10.0],
                       "au": [1.0, 2.0]})
    s = samples_from_frame(df, value="au", x="e_local", y="n_local", z="lvl")
    # the numbers written in the frame above (exact)
    np.testing.assert_array_equal(s.world_coords, [[5, 7, 9], [6, 8, 10]])
    assert s.columns["x"] == "e_local" and s.columns["z"] == "lvl"
    # one override, the other two detected
    s = samples_from_frame(df, value="au", z="lvl")
    assert (s.columns["x"], s.columns["y"], s.columns["z"]) == ("x", "y", "lvl")


def test_ambiguous_detection_names_the_candidates():
    df = pd.DataFrame({"X": [1.0], "MIDX": [1.0], "Y": [2.0], "Z": [3.0], "au": [1.0]})
    with pytest.raises(ColumnError) as info:
        detect_coordinate_columns(df, source="holes.csv")
    msg = str(info.value)
    # both candidates written in the frame above must be named
    assert "'X'" in msg and "'MIDX'" in msg and "--x" in msg and "holes.csv" in msg


def test_missing_coordinate_column_lists_columns_and_closest(tmp_path):
    p = write(tmp_path, "hole,Easting,Northing,Elevaton,au\nA,1,2,3,4\n")
    with pytest.raises(ColumnError) as info:
        read_samples(p, value="au")
    msg = str(info.value)
    assert str(p) in msg and "elevation (z)" in msg
    for c in ("hole", "Easting", "Northing", "Elevaton", "au"):
        assert repr(c) in msg
    # reference for the closest match: difflib against the accepted names
    assert difflib.get_close_matches("elevaton", ["elevation"], n=1)  # the typo is close
    assert "closest match is 'Elevaton'" in msg


def test_misspelt_value_column_suggests_closest_by_difflib(tmp_path):
    p = write(tmp_path, as_text(GOOD, ","))
    with pytest.raises(ColumnError) as info:
        read_samples(p, value="Aux")
    msg = str(info.value)
    # reference: difflib.get_close_matches over the column names, case-folded
    ref = difflib.get_close_matches("aux", [c.lower() for c in GOOD.columns], n=1, cutoff=0.5)
    assert ref == ["au"]
    assert "closest match is 'au'" in msg
    assert all(repr(c) in msg for c in GOOD.columns)
    assert "--value" in msg


def test_value_column_found_case_insensitively():
    s = samples_from_frame(GOOD, value="AU", hole="HOLE")
    assert s.columns["value"] == "au" and s.columns["hole"] == "hole"


def test_public_helpers_for_other_modules():
    from anisotropy.samples import domain_codes, find_column

    assert find_column(GOOD, "DOMAIN") == "domain"
    with pytest.raises(ColumnError, match="closest match is 'domain'"):
        find_column(GOOD, "domian", role="domain", option="--domain")
    # by hand: 1.0 -> "1", " a " -> "a", NaN -> None
    assert domain_codes(pd.Series([1.0, " a ", np.nan])).tolist() == ["1", "a", None]
