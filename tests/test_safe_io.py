"""Tests of anisotropy.safe_io: folder names, CSV cells, atomic writes.

(The HTML escaping is the templates' autoescape, tested in test_report.py.)
The references are the standard library: ``os.path.commonpath``
(containment), the ``csv`` module (round trip), ``os.replace`` semantics.
"""

import csv
import json
import os

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from anisotropy import safe_io as S
from anisotropy.errors import InputError

HOSTILE = ["../../x", "..", ".", "", "<script>alert(1)</script>", "CON", "con.txt", "NUL",
           "a/b", "a\\b", "a:b", "Zoné-Ünïcode", "北区", "   ", "-rf", "a" * 300,
           "x\x00y", "COM1", "lpt9.log", "A", "a"]


def test_folder_names_stay_inside_and_are_distinct(tmp_path):
    names = S.folder_names(HOSTILE)
    assert set(names) == set(HOSTILE)
    folders = list(names.values())
    # distinct, also without regard to case (case-insensitive file systems)
    assert len({f.casefold() for f in folders}) == len(folders)
    root = tmp_path / "out"
    root.mkdir()
    for name, folder in names.items():
        assert folder and folder not in (".", "..")
        assert "/" not in folder and "\\" not in folder and "\x00" not in folder
        assert folder.split(".")[0].upper() not in S._RESERVED
        assert len(folder) <= 80
        d = root / folder
        d.mkdir()
        # reference: os.path.commonpath proves the folder is under root
        assert os.path.commonpath([str(root.resolve()), str(d.resolve())]) == str(root.resolve())
    # every folder is a direct child of root: nothing was created elsewhere
    assert sorted(p.name for p in root.iterdir()) == sorted(folders)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_plain_names_kept_and_lookalikes_separated():
    assert S.safe_folder_name("oxide_1") == "oxide_1"
    assert S.safe_folder_name("a/b") != S.safe_folder_name("a\\b")
    names = S.folder_names(["a_b", "a/b"])
    assert names["a_b"] == "a_b" and names["a/b"] != "a_b"


@settings(max_examples=200, deadline=None)
@given(st.lists(st.text(max_size=40), min_size=1, max_size=8))
def test_folder_names_property(names):
    out = S.folder_names(names)
    folders = list(out.values())
    assert len({f.casefold() for f in folders}) == len(folders)
    for f in folders:
        # os.path.basename/normpath leave a single safe component unchanged
        assert os.path.basename(f) == f and os.path.normpath(f) == f
        assert f not in ("", ".", "..")


def test_inside_refuses_escape(tmp_path):
    assert S.inside(tmp_path, "a", "b.txt") == (tmp_path / "a" / "b.txt").resolve()
    with pytest.raises(InputError):
        S.inside(tmp_path, "..", "x")
    with pytest.raises(InputError):
        S.inside(tmp_path, "/etc/passwd")


@pytest.mark.parametrize("cell", ["=1+1", "+1+2", "-2+3", "@SUM(A1)", "\tx", "\rx",
                                  "=HYPERLINK(\"http://x\")", "\uff1d1"])
def test_formula_cells_neutralised(cell):
    out = S.neutralise_cell(cell)
    # OWASP CSV-injection guidance (common practice): the cell must not start with a trigger
    assert not out.startswith(S._FORMULA_START)
    assert out == "'" + cell


def test_plain_cells_kept():
    for cell in ["-1.5", "+2", "3e-4", "oxide", "", 7, 2.5, None]:
        assert S.neutralise_cell(cell) == cell


def test_csv_round_trip(tmp_path):
    rows = [{"domain": "=cmd|' /C calc'!A0", "n": 12, "x": float("nan")},
            {"domain": 'has "quotes", commas\nand newline', "n": 3, "x": -1.5},
            {"domain": "-rf", "n": None}]
    path = S.atomic_write_csv(tmp_path / "s.csv", rows, ["domain", "n", "x"])
    # reference: the csv module of the standard library reads back what we wrote
    with open(path, newline="", encoding="utf-8") as fh:
        back = list(csv.DictReader(fh))
    assert back[0]["domain"] == "'=cmd|' /C calc'!A0"
    assert back[0]["x"] == ""
    assert back[1]["domain"] == 'has "quotes", commas\nand newline'
    assert back[1]["x"] == "-1.5"
    assert back[2]["domain"] == "'-rf" and back[2]["n"] == ""
    assert [r["n"] for r in back[:2]] == ["12", "3"]


def test_atomic_write_replaces_and_leaves_no_temp(tmp_path):
    p = tmp_path / "sub" / "f.json"
    S.atomic_write_json(p, {"a": np.float64(1.5), "b": np.arange(3), "c": float("nan")})
    assert json.loads(p.read_text()) == {"a": 1.5, "b": [0, 1, 2], "c": None}
    S.atomic_write_text(p, "second")
    assert p.read_text() == "second"
    assert [q.name for q in p.parent.iterdir()] == ["f.json"]


def test_atomic_write_failure_keeps_old_file(tmp_path, monkeypatch):
    p = tmp_path / "f.txt"
    p.write_text("old")

    def boom(src, dst):
        raise OSError("disk full")

    monkeypatch.setattr(S.os, "replace", boom)
    with pytest.raises(OSError):
        S.atomic_write_text(p, "new")
    assert p.read_text() == "old"
    assert [q.name for q in tmp_path.iterdir()] == ["f.txt"]


def test_json_arrays_of_numbers_on_one_line_round_trip(tmp_path):
    # json.loads (Python's standard-library RFC 8259 parser) must read back exactly what was
    # written; only arrays of plain numbers/booleans/nulls are joined onto one line, strings
    # that look like arrays and arrays holding strings or containers are left as they are.
    from anisotropy.safe_io import atomic_write_json

    obj = {"lags": [1, 2.5, -3e-05, None, True, False], "names": ["a , b", "[1, 2]"],
           "nested": [[1, 2], [3.25, None]], "empty": [], "text": "[4,\n 5]",
           "rows": [{"d": [0.5, 1.5], "s": "x ]"}]}
    p = atomic_write_json(tmp_path / "r.json", obj)
    text = p.read_text(encoding="utf-8")
    assert json.loads(text) == obj
    assert '"lags": [1, 2.5, -3e-05, null, true, false]' in text
    assert '"d": [0.5, 1.5]' in text
    assert '"a , b",\n' in text  # string arrays keep one element per line


# ---------------------------------------------------------------------------
# the one JSON conversion
# ---------------------------------------------------------------------------


def test_json_ready_gives_what_the_json_module_accepts_strictly():
    from pathlib import Path

    obj = {1: np.float32(0.5), "a": (np.int64(3), np.bool_(True), None),
           "arr": np.array([[1.0, np.nan], [np.inf, -2.0]]), "set": {np.int16(4)},
           "path": Path("out") / "x.json", "nan": float("nan"), "f": np.float64(-np.inf)}
    out = S.json_ready(obj)
    # the standard library's encoder with allow_nan=False refuses NaN/inf and NumPy types
    text = json.dumps(out, allow_nan=False)
    assert json.loads(text) == {"1": 0.5, "a": [3, True, None],
                                "arr": [[1.0, None], [None, -2.0]], "set": [4],
                                "path": os.path.join("out", "x.json"), "nan": None, "f": None}
    assert type(out["a"][0]) is int and type(out["a"][1]) is bool


def test_json_ready_arrays_of_every_kind_match_the_element_by_element_rule():
    # reference: the standard library's strict encoder and the element-wise rule written
    # out here (NumPy scalars to Python ones, non-finite floats to None)
    from pathlib import Path

    arrays = {"f32": np.array([0.25, np.nan], np.float32), "i": np.arange(3, dtype=np.int16),
              "u": np.array([7], np.uint8), "b": np.array([True, False]),
              "zero_d": np.array(np.inf), "zero_d_int": np.array(5),
              "obj": np.array([Path("p"), np.float64(1.5), None], dtype=object),
              "empty": np.empty((0, 3))}
    out = S.json_ready(arrays)
    json.dumps(out, allow_nan=False)
    assert out == {"f32": [0.25, None], "i": [0, 1, 2], "u": [7], "b": [True, False],
                   "zero_d": None, "zero_d_int": 5, "obj": ["p", 1.5, None], "empty": []}
    assert all(type(v) is int for v in out["i"]) and type(out["b"][0]) is bool


def test_json_ready_other_objects_as_text_or_kept():
    class Thing:
        def __str__(self):
            return "a thing"

    t = Thing()
    assert S.json_ready({"k": t}) == {"k": "a thing"}
    kept = S.json_ready({"k": [t, np.float64(1.5)]}, default=None)
    assert kept["k"][0] is t and kept["k"][1] == 1.5


def test_finite_or_none():
    assert S.finite_or_none(None) is None
    assert S.finite_or_none(float("nan")) is None and S.finite_or_none(np.inf) is None
    assert S.finite_or_none(np.float32(2.5)) == 2.5 and type(S.finite_or_none(3)) is float
