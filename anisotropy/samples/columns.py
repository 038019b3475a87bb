"""Finding columns: coordinates by name, a named column with the closest match offered, domains."""

from __future__ import annotations

import difflib
import re

import numpy as np
import pandas as pd

from anisotropy.errors import ColumnError
from anisotropy.samples.conventions import NO_ELEVATION, _AXIS_NAMES, _AXIS_WORDS, _norm


def _available(df) -> str:
    cols = [str(c) for c in df.columns]
    shown = ", ".join(repr(c) for c in cols[:40])
    if len(cols) > 40:
        shown += f", ... ({len(cols)} in all)"
    return shown


def _closest(name: str, df) -> str | None:
    cols = [str(c) for c in df.columns]
    folded = {c.lower(): c for c in cols}
    m = difflib.get_close_matches(str(name).lower(), list(folded), n=1, cutoff=0.5)
    return folded[m[0]] if m else None


def _find_column(df, name, role: str, option: str, source: str) -> str:
    """The column called ``name`` (exactly, or case-insensitively if unique)."""
    cols = [str(c) for c in df.columns]
    name = str(name)
    if name in cols:
        return name
    folded = [c for c in cols if c.strip().lower() == name.strip().lower()]
    if len(folded) == 1:
        return folded[0]
    close = _closest(name, df)
    hint = f" The closest match is {close!r}." if close else ""
    sep_hint = (" The table has a single column: check that the file uses a comma, "
                "semicolon, tab or spaces between fields." if len(cols) == 1 else "")
    raise ColumnError(
        f"In '{source}': there is no column {name!r} for the {role}.{hint} "
        f"Available columns: {_available(df)}. Give the right name with {option}.{sep_hint}")


def detect_coordinate_columns(df, *, x=None, y=None, z=None, exclude=(), source="<table>") -> dict:
    """Find the easting, northing and elevation columns.

    Parameters
    ----------
    df : pandas.DataFrame
    x, y, z : str, optional
        Column names given by the user; these are used as they are.
    exclude : iterable of str
        Columns already used for another role (grade, domain, hole).
    source : str
        File name for messages.

    Returns
    -------
    dict
        ``{"x": name, "y": name, "z": name}``; ``"z"`` is None for a
        two-dimensional table: no elevation column was given and no column
        name is like one (a near miss such as ``Elevaton`` is refused with
        the closest match instead), or ``z="none"`` was given.

    Raises
    ------
    ColumnError
        A named column does not exist, no candidate was found, or several
        candidates were found for one axis (the message lists them).

    Notes
    -----
    Names are matched case-insensitively after removing everything but
    letters and digits: x / east / easting, y / north / northing,
    z / elev / elevation / rl, each alone or with mid, midpoint, centroid,
    centre, center or coord before or after (``MIDX``, ``mid_x``, ``X_MID``,
    ``midpoint_x``, ``centroid_x``, ``XCOORD`` ...).
    """
    given = {"x": x, "y": y, "z": z}
    out = {}
    excluded = {str(c) for c in exclude if c is not None}
    cols = {str(c) for c in df.columns}
    for axis in "xyz":
        option = f"--{axis} ({axis}= in Python)"
        word = _AXIS_WORDS[axis][0]
        if axis == "z" and isinstance(z, str) and z.strip().lower() == NO_ELEVATION \
                and z not in cols:
            out["z"] = None   # asked for: a two-dimensional table
            continue
        if given[axis] is not None:
            out[axis] = _find_column(df, given[axis], f"{word} ({axis})", option, source)
            continue
        used = set(out.values()) | {v for v in given.values() if v is not None} | excluded
        cands = [str(c) for c in df.columns
                 if str(c) not in used and _norm(c) in _AXIS_NAMES[axis]]
        if len(cands) == 1:
            out[axis] = cands[0]
            continue
        if len(cands) > 1:
            raise ColumnError(
                f"In '{source}': several columns could be the {word} ({axis}): "
                f"{', '.join(repr(c) for c in cands)}. Say which one to use with {option}.")
        # nothing found: closest column to any accepted name
        best, best_score = None, 0.0
        for c in df.columns:
            if str(c) in used:
                continue
            for nm in _AXIS_NAMES[axis]:
                s = difflib.SequenceMatcher(None, _norm(c), nm).ratio()
                if s > best_score:
                    best, best_score = str(c), s
        close = best is not None and best_score >= 0.6
        if axis == "z" and not close:
            out["z"] = None   # no elevation column and nothing like one: a 2D table
            continue
        hint = f" The closest match is {best!r}." if close else ""
        examples = {"x": "x, east, easting, mid_x", "y": "y, north, northing, mid_y",
                    "z": "z, elev, elevation, rl, mid_z"}[axis]
        extra = (f" If the table is two-dimensional (no elevation), give --z {NO_ELEVATION} "
                 f"(z='{NO_ELEVATION}' in Python) to read it on one plane."
                 if axis == "z" else "")
        raise ColumnError(
            f"In '{source}': no {word} ({axis}) column was found (looked for names like "
            f"{examples}).{hint} Available columns: {_available(df)}. Name it with "
            f"{option}.{extra}")
    return out


def _domain_strings(s: pd.Series) -> pd.Series:
    """Domain codes as text (integral floats without '.0'); None where blank."""
    def one(v):
        if v is None or v is pd.NA or (isinstance(v, (float, np.floating)) and np.isnan(v)):
            return None
        if isinstance(v, (float, np.floating)) and float(v).is_integer():
            return str(int(v))
        t = str(v).strip()
        return t if t else None
    codes, uniques = pd.factorize(s.to_numpy(dtype=object), use_na_sentinel=True)
    mapped = np.array([one(v) for v in uniques] + [None], dtype=object)
    return pd.Series(mapped[codes], index=s.index, dtype=object)


def domain_values(df, domain) -> list[str]:
    """The distinct values of a domain column, as text, sorted.

    Parameters
    ----------
    df : pandas.DataFrame
    domain : str
        Domain column name (matched case-insensitively if unique).

    Returns
    -------
    list of str
        Blank cells are not listed. Numbers are compared as text, with
        whole numbers written without a decimal point (``1.0`` -> ``"1"``).

    Raises
    ------
    ColumnError
        No such column.
    """
    col = _find_column(df, domain, "domain", "--domain", df.attrs.get("source", "<table>"))
    vals = _domain_strings(df[col]).dropna().unique().tolist()
    return sorted(vals, key=_natural_key)


def _natural_key(s: str):
    return [int(t) if t.isdigit() else t.lower() for t in re.split(r"(\d+)", s)]


def find_column(df, name, *, role: str = "column", option: str = "",
                source: str = "<table>") -> str:
    """The column called ``name``: exactly, or case-insensitively when that is unique.

    Parameters
    ----------
    df : pandas.DataFrame
    name : str
    role : str
        What the column is for, for the message (``"grade"``, ``"domain"``).
    option : str
        The option that names it, for the message (``"--domain"``).
    source : str
        File name for the message.

    Returns
    -------
    str
        The column name as it is in ``df``.

    Raises
    ------
    ColumnError
        No such column; the message lists the columns and the closest match.
    """
    return _find_column(df, name, role, option or "the column option", source)


def domain_codes(series) -> pd.Series:
    """Domain (or hole) codes as text, the way :func:`domain_values` lists them.

    Whole numbers lose their decimal point (``1.0`` -> ``"1"``), text is
    stripped, blank cells become None.

    Parameters
    ----------
    series : pandas.Series

    Returns
    -------
    pandas.Series of object
    """
    return _domain_strings(pd.Series(series))
