"""Tests of anisotropy.samples.numbers: text in a numeric column named by column, row and text.

Outside reference: the table written by the test (its rows and texts by hand).
"""

from __future__ import annotations

import pytest

from anisotropy.errors import DataError
from anisotropy.samples import (
    read_samples,
)

from samples_helpers import write


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
