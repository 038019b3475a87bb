"""Cells to numbers: a column parsed as numbers, with every cell that is not one named by row."""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

from anisotropy.errors import DataError
from anisotropy.samples.conventions import _MAX_ROWS_SHOWN, _MISSING_TEXT


def _rows_text(rows, texts=None) -> str:
    rows = list(rows)
    shown = rows[:_MAX_ROWS_SHOWN]
    if texts is None:
        parts = [str(r) for r in shown]
    else:
        parts = [f"{r} ({t!r})" for r, t in zip(shown, texts)]
    more = f" and {len(rows) - len(shown)} more" if len(rows) > len(shown) else ""
    return ", ".join(parts) + more


def _hole_like_column(df: pd.DataFrame, *, exclude=()) -> str | None:
    """A column whose name says "hole" and whose values repeat, or None.

    Used only to warn when no hole column was named: composites of the same
    hole share its identifier, while blast holes (one sample per id) do not
    repeat and are not flagged.
    """
    for c in df.columns:
        if c in exclude or "hole" not in re.sub(r"[^a-z]", "", str(c).lower()):
            continue
        codes = df[c].dropna()
        if len(codes) >= 2 and codes.nunique() <= 0.8 * len(codes):
            return str(c)
    return None


def _rows_phrase(rows) -> str:
    """``"data row 4"`` or ``"data rows 4, 9 and 3 more"``."""
    rows = list(rows)
    return f"data {'row' if len(rows) == 1 else 'rows'} {_rows_text(rows)}"


#: A number written with digit grouping: 412.903,82 / 412,903.82 / 7 318 344,05.
_GROUPED_NUMBER = re.compile(r"^-?\d{1,3}([., \u00a0']\d{3})+([.,]\d+)?$")


def _numeric(series: pd.Series, *, column: str, role: str, option: str, source: str,
             data_rows: np.ndarray, decimal: str = "."):
    """Parse one column to float64.

    Returns
    -------
    values : ndarray float64 (NaN where blank or missing text)
    blank : ndarray bool (empty cell / NaN)
    text_missing : ndarray bool (missing-value text such as NA)
    """
    n = len(series)
    if pd.api.types.is_bool_dtype(series.dtype):
        raise DataError(f"In '{source}': column {column!r} ({role}) holds true/false values, "
                        f"not numbers. Check that {option} names the right column.")
    if pd.api.types.is_numeric_dtype(series.dtype):
        vals = series.to_numpy(dtype=float, na_value=np.nan)
        blank = np.isnan(vals)
        text_missing = np.zeros(n, dtype=bool)
        bad = np.isinf(vals)
        texts = [str(v) for v in vals[bad]]
    else:
        obj = series.to_numpy(dtype=object)
        isnull = pd.isna(series).to_numpy()
        strs = np.array(["" if isnull[i] else str(obj[i]).strip() for i in range(n)],
                        dtype=object)
        blank = isnull | (strs == "")
        text_missing = ~blank & np.array([s.lower() in _MISSING_TEXT for s in strs], dtype=bool)
        candidates = ~blank & ~text_missing
        vals = np.full(n, np.nan)
        if candidates.any():
            cells = pd.Series(strs[candidates], dtype=object)
            if decimal == ",":
                cells = cells.str.replace(",", ".", regex=False)
            parsed = pd.to_numeric(cells, errors="coerce").to_numpy(
                dtype=float, na_value=np.nan)
            vals[candidates] = parsed
        bad = candidates & ~np.isfinite(vals)
        texts = [str(t) for t in strs[bad]]
        vals[text_missing] = np.nan
    if bad.any():
        rows = data_rows[bad]
        k = int(bad.sum())
        lt = (" Results written as text such as '<0.01' must be entered as negative numbers "
              "(-0.01) to be read as below-detection codes."
              if any(t.lstrip().startswith("<") for t in texts) else "")
        if any(_GROUPED_NUMBER.match(t.strip()) for t in texts):
            lt += (" Some cells look like numbers with a thousands separator (e.g. "
                   f"{next(t for t in texts if _GROUPED_NUMBER.match(t.strip()))!r}); save the "
                   "table without thousands separators (only a decimal mark).")
        raise DataError(
            f"In '{source}': column {column!r} ({role}) has {k} "
            f"{_plural(k, 'cell that is not a number', 'cells that are not numbers')}, in data "
            f"{_plural(k, 'row', 'rows')} {_rows_text(rows, texts[:_MAX_ROWS_SHOWN])} (data row "
            "1 is the first row under the header, row 2 in a spreadsheet). Correct these cells, "
            "or blank them to have those samples left out and counted; check also that "
            f"{option} names the right column.{lt}")
    return vals, blank, text_missing

def _plural(n, one, many=None):
    return one if n == 1 else (many or one + "s")
