"""Tests of anisotropy.samples.intake: the row rules, in order, every sample counted.

Outside references: plain arithmetic on the table written by the test
(brute-force counts), NumPy float64 arithmetic, pandas groupby (duplicate
averages), numpy.linalg.svd (planarity).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from anisotropy.errors import ColumnError, DataError, InputError, InsufficientDataError
from anisotropy.samples import (
    domain_values,
    read_samples,
    samples_from_frame,
)

from samples_helpers import DUPS, GOOD, write


# blanks, codes, text

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


# domains and holes

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


# duplicates


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


# origin shift and planarity

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


# robustness: any text gives a SampleSet or one of our errors, never a crash

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


# two-dimensional tables (issue 17)

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
