"""Small sample tables and file helpers shared by the sample tests (not a test module)."""

from __future__ import annotations

import pandas as pd

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


DUPS = pd.DataFrame({
    "x": [0.0, 0.0, 5.0, 5.0, 5.0, 9.0, 0.0],
    "y": [0.0, 0.0, 1.0, 1.0, 1.0, 3.0, 0.0],
    "z": [0.0, 0.0, 2.0, 2.0, 2.0, 7.0, 4.0],
    "v": [1.0, 3.0, 2.0, 4.0, 9.0, 5.0, 6.0],
})
