"""Tests of the sample intake (anisotropy.samples).

The outside references used here: plain arithmetic on the table written by
the test (brute-force counts), NumPy float64 arithmetic, difflib from the
standard library (closest column name), pandas groupby (duplicate averages),
numpy.linalg.svd (planarity), pyarrow (Parquet writing).
"""

from __future__ import annotations

import difflib
import json

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from anisotropy.errors import ColumnError, DataError, InputError, InsufficientDataError
from anisotropy.samples import (
    SampleSet,
    detect_coordinate_columns,
    domain_values,
    read_samples,
    read_table,
    samples_from_frame,
)

# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------

GOOD = pd.DataFrame({
    "hole": ["FH001"] * 4 + ["FH002"] * 4,
    "x": [1000.0, 1000.5, 1001.0, 1001.5, 1050.0, 1050.0, 1050.0, 1050.0],
    "y": [2000.0, 2000.0, 2000.0, 2000.0, 2040.0, 2041.0, 2042.0, 2043.0],
    "z": [300.0, 298.0, 296.0, 294.0, 310.0, 308.0, 306.0, 304.0],
    "au": [0.5, 1.25, 3.0, 0.75, 2.5, 0.125, 4.0, 1.5],
    "domain": ["vein", "vein", "vein", "blanket", "vein", "vein", "blanket", "vein"],
})


def write(tmp_path, text, name="t.csv"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def as_text(df, sep):
    return df.to_csv(sep=sep, index=False)


# ---------------------------------------------------------------------------
# separators and formats
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("sep,name", [(",", "comma"), (";", "semicolon"), ("\t", "tab")])
def test_each_separator_reads_the_same_numbers(tmp_path, sep, name):
    p = write(tmp_path, as_text(GOOD, sep))
    s = read_samples(p, value="au", hole="hole")
    # reference: the numbers the test itself wrote (exact brute force)
    np.testing.assert_array_equal(s.values, GOOD["au"].to_numpy())
    np.testing.assert_array_equal(s.world_coords, GOOD[["x", "y", "z"]].to_numpy())
    assert s.table["separator"] == name
    assert list(s.holes) == list(GOOD["hole"])


def test_whitespace_separated(tmp_path):
    lines = ["hole   x      y      z     au"]
    for r in GOOD.itertuples():
        lines.append(f"{r.hole}  {r.x:8.2f}   {r.y:9.2f} {r.z:7.2f}  {r.au}")
    p = write(tmp_path, "\n".join(lines) + "\n", "t.txt")
    s = read_samples(p, value="au")
    np.testing.assert_array_equal(s.values, GOOD["au"].to_numpy())  # exact: written by the test
    np.testing.assert_array_equal(s.world_coords, GOOD[["x", "y", "z"]].to_numpy())
    assert s.table["separator"] == "whitespace"


def test_semicolon_with_decimal_comma(tmp_path):
    text = "x;y;z;au\n1000,5;2000,25;300;1,5\n1001,5;2001,25;298;-0,02\n1003;2004;297;2\n1005;2000;290;0,5\n"
    s = read_samples(write(tmp_path, text), value="au")
    # arithmetic on the written cells; -0.02 -> 0.01 is DL/2 (common practice)
    np.testing.assert_array_equal(s.values, [1.5, 0.01, 2.0, 0.5])
    np.testing.assert_array_equal(s.world_coords[:, 0], [1000.5, 1001.5, 1003.0, 1005.0])
    assert s.table["decimal"] == ","


def test_parquet_round_trip(tmp_path):
    pytest.importorskip("pyarrow")
    p = tmp_path / "t.parquet"
    GOOD.to_parquet(p)  # written by pyarrow, the reference Parquet writer
    s = read_samples(p, value="au", domain="domain", domain_value="vein")
    ref = GOOD[GOOD.domain == "vein"]
    np.testing.assert_array_equal(s.values, ref["au"].to_numpy())
    np.testing.assert_array_equal(s.world_coords, ref[["x", "y", "z"]].to_numpy())
    assert s.table["format"] == "parquet"


def test_parquet_without_pyarrow_says_what_to_install(tmp_path, monkeypatch):
    import builtins

    p = tmp_path / "t.parquet"
    p.write_bytes(b"PAR1")
    real_import = builtins.__import__

    def fake_import(name, *args, **kwargs):
        if name == "pyarrow" or name.startswith("pyarrow."):
            raise ImportError("no pyarrow")
        return real_import(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", fake_import)
    with pytest.raises(InputError, match="pyarrow") as info:
        read_table(p)
    assert "t.parquet" in str(info.value) and "CSV" in str(info.value)


@pytest.mark.parametrize("text,needle", [
    ("", "empty"),
    ("1,2,3\n4,5,6\n", "header"),
    ("x,y,z,au\n1,2,3,4\n1,2,3,4,5,6\n", "line"),
])
def test_unreadable_tables_give_input_errors(tmp_path, text, needle):
    p = write(tmp_path, text)
    with pytest.raises(InputError, match=needle) as info:
        read_table(p)
    if needle == "line":  # counted by hand: line 3 has 6 fields, the header 4
        assert "line 3 of the file has 6 fields where the header line has 4" in str(info.value)


def test_missing_file_and_workbook(tmp_path):
    with pytest.raises(InputError, match="not found"):
        read_table(tmp_path / "nope.csv")
    (tmp_path / "book.xlsx").write_bytes(b"PK")
    with pytest.raises(InputError, match="CSV"):
        read_table(tmp_path / "book.xlsx")


# ---------------------------------------------------------------------------
# column detection and overrides
# ---------------------------------------------------------------------------

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


# ---------------------------------------------------------------------------
# blanks, codes, text
# ---------------------------------------------------------------------------

CODES = """hole,x,y,z,au
A,0,0,0,1.0
A,0,0,2,
A,0,0,4,-99
A,0,0,6,-999
A,0,0,8,-0.01
B,10,0,0,-0.5
B,10,0,2,NA
B,,0,4,2.0
B,10,0,6,4.0
C,20,5,1,0
"""


def test_blanks_codes_and_below_detection_are_counted(tmp_path):
    s = read_samples(write(tmp_path, CODES), value="au", hole="hole")
    # brute force from the table above: 10 rows; blank grade row 2, -99 row 3,
    # -999 row 4, NA row 7, blank x row 8
    assert s.n_read == 10
    assert s.dropped == {"blank coordinate": 1, "blank value": 1,
                         "missing-value text (NA, N/A, ...)": 1,
                         "missing-value code (<= -90)": 2}
    assert s.n == 5 and s.n_read == s.n + sum(s.dropped.values())
    # DL/2 for -DL codes (common practice): -0.01 -> 0.005, -0.5 -> 0.25, by arithmetic
    np.testing.assert_array_equal(s.values, [1.0, 0.01 / 2, 0.5 / 2, 4.0, 0.0])
    assert s.changed == {"below-detection code (-DL) set to DL/2": 2}
    np.testing.assert_array_equal(s.rows, [1, 5, 6, 9, 10])
    # which rows, by hand from the table above
    assert s.dropped_rows == {"blank coordinate": [8], "blank value": [2],
                              "missing-value text (NA, N/A, ...)": [7],
                              "missing-value code (<= -90)": [3, 4]}
    assert s.changed_rows == {"below-detection code (-DL) set to DL/2": [5, 6]}
    text = " ".join(s.warnings)
    assert "blank coordinate" in text and "data row 8" in text
    assert "-999" in text and "-99" in text


def test_code_and_detection_warnings_name_their_rows(tmp_path):
    s = read_samples(write(tmp_path, CODES), value="au", hole="hole")
    # rows by hand from the CODES table: -99 and -999 in data rows 3 and 4,
    # -0.01 and -0.5 in data rows 5 and 6
    code = next(w for w in s.warnings if "missing-value code" in w)
    assert "data rows 3, 4" in code
    bdl = next(w for w in s.warnings if "below-detection" in w)
    assert "data rows 5, 6" in bdl


def test_unnamed_hole_column_is_flagged_not_used(tmp_path):
    # CODES has a column 'hole' whose ids repeat (by hand: A x5, B x4, C x1)
    s = read_samples(write(tmp_path, CODES), value="au")
    assert s.holes is None
    assert any("'hole' looks like a hole identifier" in w and "--hole hole" in w
               for w in s.warnings)
    # named: no such warning
    s = read_samples(write(tmp_path, CODES), value="au", hole="hole")
    assert not any("looks like a hole identifier" in w for w in s.warnings)
    # one id per row (blast holes): not flagged
    df = GOOD.assign(blast_hole=[f"B{i}" for i in range(len(GOOD))]).drop(columns="hole")
    s = samples_from_frame(df, value="au")
    assert not any("looks like a hole identifier" in w for w in s.warnings)


def test_code_policies(tmp_path):
    p = write(tmp_path, CODES)
    s = read_samples(p, value="au", missing_codes="keep", below_detection="keep")
    # kept as written in the table
    np.testing.assert_array_equal(s.values, [1.0, -99.0, -999.0, -0.01, -0.5, 4.0, 0.0])
    assert s.changed == {}
    s = read_samples(p, value="au", below_detection="missing")
    assert s.dropped["below-detection code (-DL), treated as missing"] == 2
    np.testing.assert_array_equal(s.values, [1.0, 4.0, 0.0])
    with pytest.raises(InputError, match="policy"):
        read_samples(p, value="au", duplicates="median")


def test_kept_missing_codes_are_not_halved_as_detection_limits(tmp_path):
    # CODES by hand: -99 and -999 kept as written; only -0.01 and -0.5 are -DL codes
    # (DL/2 is common practice), so -99 must not become 49.5
    s = read_samples(write(tmp_path, CODES), value="au", missing_codes="keep")
    np.testing.assert_array_equal(s.values, [1.0, -99.0, -999.0, 0.005, 0.25, 4.0, 0.0])
    assert s.changed == {"below-detection code (-DL) set to DL/2": 2}
    assert s.changed_rows == {"below-detection code (-DL) set to DL/2": [5, 6]}


def test_text_in_grade_column_names_column_rows_and_text(tmp_path):
    text = "x,y,z,Au_gpt\n0,0,0,1\n1,0,0,<0.01\n2,0,0,3\n3,0,0,NS\n4,0,0,2\n"
    p = write(tmp_path, text)
    with pytest.raises(DataError) as info:
        read_samples(p, value="Au_gpt")
    msg = str(info.value)
    # data row 2 is line 3 of the file (header on line 1): counted by hand
    assert "'Au_gpt'" in msg and str(p) in msg
    assert "2 ('<0.01')" in msg and "4 ('NS')" in msg
    assert "first row under the header" in msg
    assert "(-0.01)" in msg  # the '<0.01' text gets the hint to write -DL codes


def test_text_in_coordinate_column(tmp_path):
    p = write(tmp_path, "x,y,z,au\n0,0,0,1\n1,zz,0,1\n")
    with pytest.raises(DataError, match=r"'y'.*data row 2 \('zz'\)"):
        read_samples(p, value="au")


def test_thousands_separators_get_a_hint(tmp_path):
    # semicolon table with decimal commas and '.' digit grouping, as some spreadsheets
    # export it: the coordinates cannot be read, and the message says why
    p = write(tmp_path, "x;y;z;au\n412.903,82;7.318.344,05;299,73;2,01\n"
                        "412.905,10;7.318.346,00;297,70;1,50\n")
    with pytest.raises(DataError) as info:
        read_samples(p, value="au")
    msg = str(info.value)
    assert "'412.903,82'" in msg and "thousands separator" in msg
    # a plain text cell gets no such hint
    with pytest.raises(DataError) as info:
        read_samples(write(tmp_path, "x,y,z,au\n0,0,0,1\n1,zz,0,1\n"), value="au")
    assert "thousands separator" not in str(info.value)


def test_all_values_missing_is_insufficient(tmp_path):
    p = write(tmp_path, "x,y,z,au\n0,0,0,-99\n1,0,0,\n")
    with pytest.raises(InsufficientDataError, match="no samples"):
        read_samples(p, value="au")


@settings(max_examples=40, deadline=None)
@given(st.lists(st.one_of(st.none(), st.sampled_from([-999.0, -99.0, -90.0, -0.02, -0.5, 0.0]),
                          st.floats(-1000, 1000, allow_nan=False).map(lambda v: round(v, 3))),
                min_size=1, max_size=30))
def test_counts_match_brute_force(vals):
    n = len(vals)
    df = pd.DataFrame({"x": np.arange(n, dtype=float), "y": np.zeros(n),
                       "z": np.arange(n) * 0.5, "v": [np.nan if v is None else v for v in vals]})
    # brute force classification of each cell, rules from the docstring
    # (-90 and below: missing code; other negatives: -DL -> DL/2, common practice)
    blank = sum(v is None for v in vals)
    code = sum(v is not None and v <= -90 for v in vals)
    bdl = [v for v in vals if v is not None and -90 < v < 0]
    kept = [(-v / 2 if v < 0 else v) for v in vals if v is not None and v > -90]
    if not kept:
        with pytest.raises(InsufficientDataError):
            samples_from_frame(df, value="v")
        return
    s = samples_from_frame(df, value="v")
    assert s.dropped.get("blank value", 0) == blank
    assert s.dropped.get("missing-value code (<= -90)", 0) == code
    assert s.changed.get("below-detection code (-DL) set to DL/2", 0) == len(bdl)
    assert s.n_read == n == s.n + sum(s.dropped.values())
    np.testing.assert_array_equal(s.values, kept)
    # every row is accounted for exactly once: kept, or listed under one reason
    listed = sorted([r for rs in s.dropped_rows.values() for r in rs] + list(s.rows))
    assert listed == list(range(1, n + 1))


# ---------------------------------------------------------------------------
# domains and holes
# ---------------------------------------------------------------------------

def test_domain_selection_and_values():
    assert domain_values(GOOD, "domain") == ["blanket", "vein"]
    s = samples_from_frame(GOOD, value="au", domain="domain", domain_value="blanket")
    ref = GOOD[GOOD.domain == "blanket"]  # pandas boolean selection as reference
    np.testing.assert_array_equal(s.values, ref["au"].to_numpy())
    assert s.domain == "blanket" and s.n_read == len(ref)
    np.testing.assert_array_equal(s.rows, ref.index.to_numpy() + 1)


def test_domain_matched_ignoring_case_is_said():
    s = samples_from_frame(GOOD, value="au", domain="domain", domain_value="Blanket")
    ref = GOOD[GOOD.domain == "blanket"]  # pandas boolean selection as reference
    assert s.domain == "blanket" and s.n_read == len(ref)
    assert any("'Blanket' does not occur" in w and "'blanket'" in w for w in s.warnings)
    exact = samples_from_frame(GOOD, value="au", domain="domain", domain_value="blanket")
    assert not any("ignoring upper and lower case" in w for w in exact.warnings)


def test_nonexistent_domain_lists_the_existing_ones():
    with pytest.raises(DataError) as info:
        samples_from_frame(GOOD, value="au", domain="domain", domain_value="shoot",
                           source="fh.csv")
    msg = str(info.value)
    # the domains written in GOOD, by hand
    assert "'shoot'" in msg and "'blanket'" in msg and "'vein'" in msg and "fh.csv" in msg


def test_numeric_domain_codes_compare_as_text():
    df = GOOD.assign(domain=[1, 1, 2, 2, np.nan, 1, 2, 1])
    assert domain_values(df, "domain") == ["1", "2"]
    s = samples_from_frame(df, value="au", domain="domain", domain_value="2")
    assert s.n == 3  # counted by hand in the list above
    assert samples_from_frame(df, value="au", domain="domain", domain_value="2.0").n == 3


def test_pooled_domains_warn():
    s = samples_from_frame(GOOD, value="au", domain="domain")
    assert s.domain is None and s.n == len(GOOD)
    assert any("domain-value" in w for w in s.warnings)


def test_blank_hole_ids_become_their_own_holes():
    df = GOOD.assign(hole=["A", None, "A", "", "B", "B", "B", "B"])
    s = samples_from_frame(df, value="au", hole="hole")
    assert s.holes[1] != s.holes[3] and s.holes[1].startswith("<no hole id")
    assert any("blank hole id" in w for w in s.warnings)


# ---------------------------------------------------------------------------
# duplicates
# ---------------------------------------------------------------------------

DUPS = pd.DataFrame({
    "x": [0.0, 0.0, 5.0, 5.0, 5.0, 9.0, 0.0],
    "y": [0.0, 0.0, 1.0, 1.0, 1.0, 3.0, 0.0],
    "z": [0.0, 0.0, 2.0, 2.0, 2.0, 7.0, 4.0],
    "v": [1.0, 3.0, 2.0, 4.0, 9.0, 5.0, 6.0],
})


def test_duplicates_keep():
    s = samples_from_frame(DUPS, value="v")
    # by hand: rows 1-2 share (0,0,0), rows 3-5 share (5,1,2)
    assert s.duplicates == {"locations": 2, "samples": 5, "policy": "keep"}
    assert s.n == 7 and s.dropped == {}
    assert any("more than one sample" in w for w in s.warnings)


def test_duplicates_average_matches_pandas_groupby():
    s = samples_from_frame(DUPS, value="v", duplicates="average")
    # reference: pandas groupby mean over the location, in first-appearance order
    ref = DUPS.groupby(["x", "y", "z"], sort=False)["v"].mean()
    np.testing.assert_allclose(s.values, ref.to_numpy(), rtol=0, atol=1e-12)
    np.testing.assert_array_equal(s.world_coords, np.array(ref.index.tolist()))
    assert s.dropped == {"duplicate location, merged into the average": 3}
    # by hand: rows 2, 4, 5 merge into rows 1 and 3
    assert s.dropped_rows == {"duplicate location, merged into the average": [2, 4, 5]}
    assert s.changed_rows == {"duplicate location, grade set to the average": [1, 3]}
    assert s.changed == {"duplicate location, grade set to the average": 2}
    assert s.n_read == s.n + sum(s.dropped.values())


def test_duplicates_drop_keeps_the_first():
    s = samples_from_frame(DUPS, value="v", duplicates="drop")
    ref = DUPS.drop_duplicates(["x", "y", "z"], keep="first")  # pandas as reference
    np.testing.assert_array_equal(s.values, ref["v"].to_numpy())
    np.testing.assert_array_equal(s.rows, ref.index.to_numpy() + 1)
    assert s.dropped == {"duplicate location, all but the first sample dropped": 3}


def test_locations_a_tenth_of_a_millimetre_apart_are_duplicates():
    df = DUPS.copy()
    df.loc[1, "x"] = 0.0001
    s = samples_from_frame(df, value="v")
    assert s.duplicates["locations"] == 2  # 0.1 mm rounds to the same millimetre


# ---------------------------------------------------------------------------
# origin shift and planarity
# ---------------------------------------------------------------------------

def test_origin_shift_keeps_full_precision(rng):
    n = 200
    e = 512_345.0 + rng.uniform(0, 800, n).round(3)
    nn = 7_012_345.0 + rng.uniform(0, 800, n).round(3)
    z = 1200.0 + rng.uniform(-300, 0, n).round(3)
    df = pd.DataFrame({"Easting": e, "Northing": nn, "RL": z, "cu": rng.lognormal(size=n)})
    s = samples_from_frame(df, value="cu")
    world = df[["Easting", "Northing", "RL"]].to_numpy()
    np.testing.assert_array_equal(s.origin, np.floor(world.min(axis=0)))
    # float64 differences computed by NumPy on the raw coordinates are exact here
    # (Sterbenz lemma), and the local coordinates must reproduce them bit for bit
    i, j = rng.integers(0, n, 500), rng.integers(0, n, 500)
    np.testing.assert_array_equal(s.coords[i] - s.coords[j], world[i] - world[j])
    np.testing.assert_array_equal(s.coords, world - s.origin)
    assert s.coords.min() >= 0 and s.coords.max() < 1000
    # squared distances agree with NumPy's on the raw coordinates
    d_ref = ((world[i] - world[j]) ** 2).sum(axis=1)
    np.testing.assert_allclose(((s.coords[i] - s.coords[j]) ** 2).sum(axis=1), d_ref,
                               rtol=1e-15, atol=0)


def test_single_bench_is_planar(rng):
    n = 100
    df = pd.DataFrame({"x": rng.uniform(0, 100, n), "y": rng.uniform(0, 100, n),
                       "z": np.full(n, 415.0), "v": rng.lognormal(size=n)})
    s = samples_from_frame(df, value="v")
    assert s.planar  # by construction: every z is 415
    assert any("one elevation" in w for w in s.warnings)


def test_inclined_plane_is_planar_with_its_attitude(rng):
    n = 300
    dip, dipdir = 30.0, 120.0
    # plane through the origin: points u*strike + v*dip-vector (design.md conventions)
    sd = np.radians(dipdir - 90.0)
    strike = np.array([np.sin(sd), np.cos(sd), 0.0])
    dd = np.radians(dipdir)
    dvec = np.array([np.sin(dd) * np.cos(np.radians(dip)), np.cos(dd) * np.cos(np.radians(dip)),
                     -np.sin(np.radians(dip))])
    pts = (rng.uniform(-100, 100, (n, 1)) * strike + rng.uniform(-100, 100, (n, 1)) * dvec
           + np.array([1000.0, 2000.0, 500.0]))
    df = pd.DataFrame(pts, columns=["x", "y", "z"]).assign(v=rng.lognormal(size=n))
    s = samples_from_frame(df, value="v")
    # reference: smallest singular value of the centred coordinates (numpy.linalg.svd)
    sv = np.linalg.svd(pts - pts.mean(axis=0), compute_uv=False)
    assert sv[2] / np.sqrt(n) < 1e-9
    assert s.planar
    w = [w for w in s.warnings if "one plane" in w][0]
    assert "dip 30 degrees towards 120" in w


def test_three_dimensional_cloud_is_not_planar(rng):
    n = 300
    pts = rng.uniform(0, 100, (n, 3))
    df = pd.DataFrame(pts, columns=["x", "y", "z"]).assign(v=rng.lognormal(size=n))
    s = samples_from_frame(df, value="v")
    sv = np.linalg.svd(pts - pts.mean(axis=0), compute_uv=False)
    assert sv[2] / sv[0] > 0.3  # reference: numpy.linalg.svd shows a full 3D cloud
    assert not s.planar
    assert not any("plane" in w or "elevation" in w for w in s.warnings)


def test_to_dict_is_json_ready():
    s = samples_from_frame(DUPS, value="v", duplicates="average")
    d = s.to_dict()
    json.dumps(d, allow_nan=False)  # must not raise
    assert d["n_read"] == 7 and d["n_used"] == 4
    assert {"dropped", "changed", "duplicates", "warnings", "origin", "planar"} <= set(d)
    full = s.to_dict(include_data=True)
    json.dumps(full, allow_nan=False)
    assert len(full["values"]) == 4
    assert isinstance(s, SampleSet) and "used" in s.summary()


# ---------------------------------------------------------------------------
# robustness: any text gives a SampleSet or one of our errors, never a crash
# ---------------------------------------------------------------------------

@settings(max_examples=150, deadline=None)
@given(st.text(alphabet=list("xyzau,;\t \n0123456789.-eNA\"#"), max_size=200))
def test_any_text_gives_samples_or_an_input_error(tmp_path_factory, text):
    from anisotropy.errors import AnisotropyError

    p = tmp_path_factory.mktemp("fuzz") / "t.csv"
    p.write_text("x,y,z,au\n" + text, encoding="utf-8")
    try:
        s = read_samples(p, value="au")
    except AnisotropyError as exc:
        assert isinstance(exc, InputError) and str(exc)
    else:
        # brute-force invariant from the module docstring
        assert s.n_read == s.n + sum(s.dropped.values())
        assert np.all(np.isfinite(s.coords)) and np.all(np.isfinite(s.values))


def test_public_helpers_for_other_modules():
    from anisotropy.samples import domain_codes, find_column

    assert find_column(GOOD, "DOMAIN") == "domain"
    with pytest.raises(ColumnError, match="closest match is 'domain'"):
        find_column(GOOD, "domian", role="domain", option="--domain")
    # by hand: 1.0 -> "1", " a " -> "a", NaN -> None
    assert domain_codes(pd.Series([1.0, " a ", np.nan])).tolist() == ["1", "a", None]


# ---------------------------------------------------------------------------
# repeated column names (issue 17)
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("sep", [",", ";", "\t", " "])
def test_a_repeated_column_name_is_refused_with_both_positions(tmp_path, sep):
    # reference: the header line written by the test; positions counted by hand
    # (x=1, y=2, z=3, Au=4, Au=5). pandas.read_csv alone would rename the second
    # to 'Au.1' and read the table silently.
    head = sep.join(["x", "y", "z", "Au", "Au"])
    body = "\n".join(sep.join(str(v) for v in (i, 2 * i, 3, 0.5 + i, 9)) for i in range(6))
    p = write(tmp_path, head + "\n" + body + "\n")
    assert "Au.1" in pd.read_csv(p, sep=sep if sep != " " else r"\s+").columns  # the silent way
    with pytest.raises(InputError) as e:
        read_table(p)
    msg = str(e.value)
    assert str(p) in msg and "'Au'" in msg and "columns 4 and 5" in msg
    assert "Rename" in msg


def test_a_repeated_name_among_spaces_is_caught(tmp_path):
    # 'Au' and ' Au ' are the same column name once the spaces are stripped
    p = write(tmp_path, "x,y,z,Au, Au \n1,2,3,4,5\n2,3,4,5,6\n")
    with pytest.raises(InputError, match="columns 4 and 5"):
        read_table(p)


def test_a_repeated_name_in_a_dataframe_is_refused():
    # a DataFrame may hold two columns of one name (pandas allows it)
    df = pd.DataFrame(np.arange(12.0).reshape(3, 4), columns=["x", "au", "y", "au"])
    df["z"] = 1.0
    with pytest.raises(InputError, match=r"'au' is the name of columns 2 and 4"):
        samples_from_frame(df, value="au", source="frame")


def test_a_repeated_name_in_parquet_is_refused(tmp_path):
    pa = pytest.importorskip("pyarrow")
    import pyarrow.parquet as pq

    # pyarrow keeps repeated field names, so a Parquet file can hold them
    cols = [pa.array([1.0, 2.0, 3.0]) for _ in range(5)]
    table = pa.Table.from_arrays(cols, names=["x", "y", "z", "Au", "Au"])
    p = tmp_path / "t.parquet"
    pq.write_table(table, p)
    with pytest.raises(InputError, match="columns 4 and 5"):
        read_table(p)


# ---------------------------------------------------------------------------
# two-dimensional tables (issue 17)
# ---------------------------------------------------------------------------

def _plan_table(n=30, seed=3):
    rng = np.random.default_rng(seed)
    return pd.DataFrame({"Easting": 500.0 + rng.uniform(0, 100, n),
                         "Northing": 7000.0 + rng.uniform(0, 100, n),
                         "Cu_pct": rng.lognormal(0, 0.5, n)})


def test_a_table_without_elevation_is_read_on_one_plane(tmp_path):
    df = _plan_table()
    p = write(tmp_path, df.to_csv(index=False))
    s = read_samples(p, value="Cu_pct")
    # reference: the old advice, the same table with a constant elevation column added,
    # read by the unchanged 3D path
    with_z = df.assign(RL=0.0)
    q = read_samples(write(tmp_path, with_z.to_csv(index=False), "z.csv"), value="Cu_pct")
    np.testing.assert_array_equal(s.coords, q.coords)
    np.testing.assert_array_equal(s.values, q.values)
    assert s.planar and q.planar
    assert s.columns["z"] is None and s.to_dict()["columns"]["z"] is None
    assert any("two-dimensional" in w and "--z" in w for w in s.warnings)
    assert s.n == len(df) and not s.dropped


def test_z_none_reads_a_table_as_two_dimensional_on_request():
    df = _plan_table().assign(Elev=np.linspace(100, 130, 30))
    s = samples_from_frame(df, value="Cu_pct", z="none")
    assert s.columns["z"] is None and s.planar
    np.testing.assert_array_equal(s.coords[:, 2], np.zeros(len(df)))
    assert any("as asked" in w for w in s.warnings)


def test_a_near_miss_elevation_is_still_refused_not_read_as_2d():
    # 'Elevaton' is one letter off 'elevation' (difflib ratio >= 0.6): a typo, not a 2D table
    df = _plan_table().assign(Elevaton=1.0)
    with pytest.raises(ColumnError, match="closest match is 'Elevaton'") as e:
        samples_from_frame(df, value="Cu_pct")
    assert "--z none" in str(e.value)
