"""Tests of anisotropy.samples.reading: table files, separators, Parquet, repeated names.

Outside references: the table written by the test and read back, pandas and
pyarrow (Parquet writing).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from anisotropy.errors import InputError
from anisotropy.samples import (
    read_samples,
    read_table,
    samples_from_frame,
)

from samples_helpers import GOOD, as_text, write


# separators and formats

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
    with pytest.raises(InputError, match="needs the pyarrow package") as info:
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


# repeated column names (issue 17)

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
