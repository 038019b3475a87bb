"""Reading and validating sample tables.

A sample table is a CSV file (comma, semicolon, tab or whitespace
separated; the separator is detected) or a Parquet file, with one row per
composite or blast hole: coordinates, a grade and, optionally, a domain and
a hole identifier. :func:`read_samples` turns it into a :class:`SampleSet`:
checked, cleaned, with every excluded or altered sample counted by reason,
and with the coordinates shifted to a local origin.

What happens to each row, in this order (a row left out is counted once,
under the first reason that applies):

1. Rows outside the selected domain are not read (they are not counted as
   dropped; ``n_read`` is the number of rows in the selected domain).
2. Cells that are neither numbers nor blank stop the run with a message
   naming the column, the first offending rows and their text.
3. A blank coordinate (empty cell or missing-value text such as ``NA``)
   leaves the row out: ``"blank coordinate"``.
4. A blank grade leaves the row out: ``"blank value"``; missing-value text
   (``NA``, ``N/A``, ``NaN``, ``null``, ``none``, ``#N/A``, ``-``, ``--``)
   likewise: ``"missing-value text (NA, N/A, ...)"``.
5. Grades ``<= -90`` (the usual -99, -999 codes) are missing-value codes:
   left out (``missing_codes="missing"``, the default) or kept as numbers
   (``"keep"``).
6. Other negative grades are below-detection codes ``-DL``: replaced by
   ``DL/2`` (``below_detection="half"``, the default, common practice),
   treated as missing (``"missing"``) or kept (``"keep"``).
7. Samples sharing a location (coordinates equal when rounded to the
   nearest millimetre, :data:`DUPLICATE_TOLERANCE`) are counted; policy
   ``"keep"`` (default) keeps them all, ``"average"`` keeps one sample per
   location with the mean grade, ``"drop"`` keeps the first sample (in table
   order) at each location.

Local origin: the minimum of each coordinate, rounded down to a whole metre,
is subtracted before any other arithmetic and kept in ``SampleSet.origin``.
For coordinates between the origin and twice the origin (any projected
easting or northing of a deposit) that subtraction is exact in float64
(Sterbenz lemma), so no precision is lost in the differences.

Planar data: when the root-mean-square distance of the samples from their
best-fitting plane (the smallest singular value of the centred coordinates
divided by sqrt(n)) is at most :data:`PLANAR_ABSOLUTE` metres or
:data:`PLANAR_RELATIVE` times the spread along the longest axis, the set is
flagged ``planar=True`` with a warning: the direction across that plane
cannot be studied.

Column names must differ: a table in which two columns share a name (after
stripping spaces) is refused, naming the positions of both columns; pandas
would otherwise rename the second (``Au.1``) and one of them would be used
without a word.

Two-dimensional tables: when no elevation column is given and no column is
named like one (``z``, ``elev``, ``rl``, ... or a near miss, which is
refused with the closest match instead), or with ``z="none"``
(``--z none``), the table is read as planar data at elevation 0 with a
warning saying so, and flagged ``planar=True``; ``columns["z"]`` is None.

Row numbers in messages are *data row numbers*: 1 for the first row under
the header line, so data row ``k`` is row ``k + 1`` in a spreadsheet that
shows the header on row 1.
"""

from __future__ import annotations

import csv
import difflib
import io
import os
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from anisotropy.errors import ColumnError, DataError, InputError, InsufficientDataError

__all__ = [
    "SampleSet",
    "read_table",
    "samples_from_frame",
    "read_samples",
    "domain_values",
    "detect_coordinate_columns",
    "find_column",
    "domain_codes",
    "check_unique_columns",
    "MISSING_CODE_THRESHOLD",
    "DUPLICATE_TOLERANCE",
    "PLANAR_ABSOLUTE",
    "PLANAR_RELATIVE",
    "NO_ELEVATION",
]

#: ``z=`` value (``--z none``) that reads a table without elevations as two-dimensional.
NO_ELEVATION = "none"
#: Grades at or below this are missing-value codes (-99, -999, ...).
MISSING_CODE_THRESHOLD = -90.0
#: Coordinates equal after rounding to this many metres share a location.
DUPLICATE_TOLERANCE = 1e-3
#: A set is planar if its rms distance from the best plane is at most this (m) ...
PLANAR_ABSOLUTE = 0.05
#: ... or at most this fraction of its rms spread along the longest axis.
PLANAR_RELATIVE = 0.005

_MISSING_TEXT = {"na", "n/a", "nan", "null", "none", "#n/a", "-", "--"}
_MAX_ROWS_SHOWN = 5

_POLICIES = {
    "missing_codes": ("missing", "keep"),
    "below_detection": ("half", "missing", "keep"),
    "duplicates": ("keep", "average", "drop"),
}

# reasons (keys of SampleSet.dropped / SampleSet.changed)
R_BLANK_COORD = "blank coordinate"
R_BLANK_VALUE = "blank value"
R_MISSING_TEXT = "missing-value text (NA, N/A, ...)"
R_MISSING_CODE = "missing-value code (<= -90)"
R_BDL_MISSING = "below-detection code (-DL), treated as missing"
R_BDL_HALF = "below-detection code (-DL) set to DL/2"
R_DUP_AVERAGED = "duplicate location, merged into the average"
R_DUP_AVERAGE_CHANGED = "duplicate location, grade set to the average"
R_DUP_DROPPED = "duplicate location, all but the first sample dropped"

_AXIS_WORDS = {
    "x": ("easting", ("x", "east", "easting", "eastings")),
    "y": ("northing", ("y", "north", "northing", "northings")),
    "z": ("elevation", ("z", "elev", "elevation", "rl", "elv")),
}
_DECORATIONS = ("mid", "midpoint", "centroid", "centre", "center", "coord", "coordinate")


def _norm(name) -> str:
    """Column name folded for matching: lower case, letters and digits only.

    A unit in brackets (``Easting (m)``, ``RL [m]``) or a trailing ``_m`` /
    `` m`` is removed first.
    """
    t = str(name).lower().strip()
    t = re.sub(r"[\(\[\{].*?[\)\]\}]", "", t)
    t = re.sub(r"[_\s.-]m$", "", t.strip())
    return re.sub(r"[^a-z0-9]", "", t)


def _axis_names(axis: str) -> set[str]:
    """All folded names accepted for one coordinate axis."""
    names = set()
    for base in _AXIS_WORDS[axis][1]:
        names.add(base)
        for d in _DECORATIONS:
            names.add(d + base)
            names.add(base + d)
    return names


_AXIS_NAMES = {a: _axis_names(a) for a in "xyz"}


# ---------------------------------------------------------------------------
# the result
# ---------------------------------------------------------------------------

@dataclass
class SampleSet:
    """Validated samples of one domain, ready for exploration and variography.

    Attributes
    ----------
    coords : ndarray, shape (n, 3)
        East, north, up in metres, relative to ``origin`` (float64).
    values : ndarray, shape (n,)
        Grades after the assay-code and duplicate policies.
    origin : ndarray, shape (3,)
        The local origin that was subtracted (minimum of each axis rounded
        down to a whole metre). Add it back for real-world coordinates.
    holes : ndarray of object, shape (n,), or None
        Hole or string identifiers as text, when a hole column was given.
        Samples with a blank identifier get a unique placeholder
        ``"<no hole id, data row k>"`` so that they never join another hole.
    domain : str or None
        The selected domain value, or None when all rows were used.
    source : str
        The file (or ``"<table>"``) the samples came from.
    columns : dict
        Role (``"x"``, ``"y"``, ``"z"``, ``"value"``, ``"domain"``,
        ``"hole"``) to the column name used.
    n_read : int
        Rows in the selected domain before any exclusion.
    dropped : dict
        Reason to number of samples left out. ``n_read == n + sum(dropped)``.
    changed : dict
        Reason to number of samples whose grade was altered.
    duplicates : dict
        ``{"locations": int, "samples": int, "policy": str}``: locations
        holding more than one sample, and the samples at those locations
        (counted before the policy was applied).
    warnings : list of str
        Plain sentences for the geologist.
    planar : bool
        True when the samples lie (nearly) on one plane, such as one bench.
    rows : ndarray of int, shape (n,)
        Data row number (1 = first row under the header) of each sample in
        the table; for averaged duplicates, the first row at the location.
    policies : dict
        The assay-code and duplicate policies that were applied.
    table : dict
        How the file was read (format, separator, decimal mark), if known.
    dropped_rows, changed_rows : dict
        Reason to the data row numbers of the samples left out or altered,
        so that a reviewer can find each one in the table.
    """

    coords: np.ndarray
    values: np.ndarray
    origin: np.ndarray
    holes: np.ndarray | None
    domain: str | None
    source: str
    columns: dict
    n_read: int
    dropped: dict = field(default_factory=dict)
    changed: dict = field(default_factory=dict)
    duplicates: dict = field(default_factory=lambda: {"locations": 0, "samples": 0,
                                                      "policy": "keep"})
    warnings: list = field(default_factory=list)
    planar: bool = False
    rows: np.ndarray | None = None
    policies: dict = field(default_factory=dict)
    table: dict = field(default_factory=dict)
    dropped_rows: dict = field(default_factory=dict)
    changed_rows: dict = field(default_factory=dict)

    @property
    def n(self) -> int:
        """Number of samples kept."""
        return int(len(self.values))

    @property
    def world_coords(self) -> np.ndarray:
        """Coordinates with the origin added back, shape (n, 3)."""
        return self.coords + self.origin

    def to_dict(self, include_data: bool = False) -> dict:
        """The intake record as plain JSON-ready Python types.

        Parameters
        ----------
        include_data : bool, default False
            Also include the coordinates, grades and hole ids of every sample
            (large for big tables).

        Returns
        -------
        dict
        """
        d = {
            "source": str(self.source),
            "domain": None if self.domain is None else str(self.domain),
            "columns": {str(k): (None if v is None else str(v)) for k, v in self.columns.items()},
            "n_read": int(self.n_read),
            "n_used": self.n,
            "dropped": {str(k): int(v) for k, v in self.dropped.items()},
            "changed": {str(k): int(v) for k, v in self.changed.items()},
            "dropped_rows": {str(k): [int(r) for r in v] for k, v in self.dropped_rows.items()},
            "changed_rows": {str(k): [int(r) for r in v] for k, v in self.changed_rows.items()},
            "duplicates": {"locations": int(self.duplicates.get("locations", 0)),
                           "samples": int(self.duplicates.get("samples", 0)),
                           "policy": str(self.duplicates.get("policy", "keep"))},
            "warnings": [str(w) for w in self.warnings],
            "planar": bool(self.planar),
            "origin": [float(v) for v in np.asarray(self.origin, dtype=float)],
            "policies": {str(k): str(v) for k, v in self.policies.items()},
            "table": {str(k): (None if v is None else str(v)) for k, v in self.table.items()},
        }
        if self.n:
            lo = self.coords.min(axis=0)
            hi = self.coords.max(axis=0)
            d["extent"] = {a: [float(lo[i]), float(hi[i])] for i, a in enumerate("xyz")}
        else:
            d["extent"] = None
        if include_data:
            d["coords"] = [[float(c) for c in row] for row in self.coords]
            d["values"] = [float(v) for v in self.values]
            d["holes"] = None if self.holes is None else [str(h) for h in self.holes]
            d["rows"] = None if self.rows is None else [int(r) for r in self.rows]
        return d

    def summary(self) -> str:
        """A few readable lines: what was read, left out, changed and why.

        Returns
        -------
        str
        """
        lines = []
        where = f" (domain {self.domain!r})" if self.domain is not None else ""
        lines.append(f"Samples: {self.n_read} rows read from {self.source}{where}; "
                     f"{self.n} used.")
        cols = ", ".join(f"{k}={v}" for k, v in self.columns.items() if v is not None)
        lines.append(f"  columns: {cols}")
        if self.dropped:
            lines.append("  left out:")
            for k, v in self.dropped.items():
                lines.append(f"    {v:>8d}  {k}")
        else:
            lines.append("  left out: none")
        if self.changed:
            lines.append("  changed:")
            for k, v in self.changed.items():
                lines.append(f"    {v:>8d}  {k}")
        else:
            lines.append("  changed: none")
        dup = self.duplicates
        lines.append(f"  duplicate locations: {dup.get('locations', 0)} "
                     f"({dup.get('samples', 0)} samples), policy {dup.get('policy')!r}")
        lines.append("  local origin (subtracted from x, y, z): "
                     + ", ".join(f"{v:.3f}" for v in self.origin))
        if self.planar:
            lines.append("  planar: yes (see warnings)")
        return "\n".join(lines)


# ---------------------------------------------------------------------------
# reading files
# ---------------------------------------------------------------------------

_SEPARATOR_NAMES = {"\t": "tab", ";": "semicolon", ",": "comma", r"\s+": "whitespace"}


def _sniff(text: str) -> tuple[str, str]:
    """Pick the separator and decimal mark from the first lines of a CSV.

    Tab, semicolon and comma are tried in that order; the first one that
    splits every sampled line into the same number (> 1) of fields wins.
    Otherwise runs of whitespace are tried. Semicolon-, tab- and
    whitespace-separated files whose numbers use a decimal comma
    (``1,25``) are read with ``decimal=","``.
    """
    lines = [ln for ln in text.splitlines() if ln.strip()]
    if len(lines) > 1 and not text.endswith(("\n", "\r")):
        lines = lines[:-1]  # the last line of a chunk may be cut short
    lines = lines[:200]
    sep = None
    for cand in ("\t", ";", ","):
        try:
            counts = {len(row) for row in csv.reader(lines, delimiter=cand)}
        except csv.Error:
            continue
        if len(counts) == 1 and counts.pop() > 1:
            sep = cand
            break
    if sep is None:
        counts = {len(ln.split()) for ln in lines}
        if len(counts) == 1 and counts.pop() > 1:
            sep = r"\s+"
    if sep is None:
        # nothing splits the lines evenly: take the commonest candidate in
        # the header; the reader will then say which line does not fit
        header = lines[0] if lines else ""
        sep = max(("\t", ";", ","), key=header.count)
        if header.count(sep) == 0:
            sep = "," if len(header.split()) <= 1 else r"\s+"
    decimal = "."
    if sep != ",":
        body = " ".join(lines[1:])
        n_comma = len(re.findall(r"(?<![\w.,])-?\d+,\d+(?![\w.,])", body))
        n_point = len(re.findall(r"(?<![\w.,])-?\d+\.\d+(?![\w.,])", body))
        if n_comma > n_point:
            decimal = ","
    return sep, decimal


def read_table(path) -> pd.DataFrame:
    """Read a sample table from CSV or Parquet.

    Parameters
    ----------
    path : str or path-like
        A ``.parquet``/``.pq`` file (needs pyarrow), or a text table whose
        separator (tab, semicolon, comma or whitespace) is detected from its
        first lines. The first line must hold the column names. Empty cells
        become NaN; other text (``NA``, ``<0.01``, ...) is kept as text so
        that :func:`samples_from_frame` can report or classify it.

    Returns
    -------
    pandas.DataFrame
        Column names stripped of surrounding spaces. ``df.attrs["table"]``
        records the format, separator and decimal mark that were used.

    Raises
    ------
    InputError
        The file is missing, empty, unreadable or not a table.
    """
    p = Path(path)
    if not p.exists():
        raise InputError(f"File not found: '{p}'. Check the path and the current folder.")
    if p.is_dir():
        raise InputError(f"'{p}' is a folder, not a sample table. Give the path of a CSV "
                         "or Parquet file.")
    suffix = p.suffix.lower()
    if suffix in (".xlsx", ".xls", ".xlsm", ".ods"):
        raise InputError(f"'{p}' is a spreadsheet workbook, which is not read directly. "
                         "Save the sheet as CSV (or Parquet) and give that file.")
    if suffix in (".parquet", ".pq"):
        try:
            import pyarrow  # noqa: F401
        except ImportError:
            raise InputError(f"Reading the Parquet file '{p}' needs the pyarrow package, "
                             "which is not installed. Install it with "
                             "pip install 'anisotropy[parquet]', or save the table as CSV."
                             ) from None
        try:
            import pyarrow.parquet as pq

            names = pq.read_schema(p).names
        except Exception:  # noqa: BLE001 - an unreadable file is reported just below
            names = []
        check_unique_columns(names, str(p))
        try:
            df = pd.read_parquet(p)
        except Exception as exc:  # noqa: BLE001 - any reader failure is bad input
            raise InputError(f"Could not read '{p}' as Parquet ({exc}). Check that the "
                             "file is a complete Parquet file, or save the table as CSV."
                             ) from None
        check_unique_columns(df.columns, str(p))
        df.columns = [str(c).strip() for c in df.columns]
        df.attrs["table"] = {"format": "parquet", "separator": None, "decimal": None}
        return df

    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise InputError(f"Cannot read '{p}' ({exc.strerror or exc}). Check that the file is "
                         "readable by you and not locked by another program.") from None
    if not raw.strip():
        raise InputError(f"'{p}' is empty. Give a table with a header line and one "
                         "row per sample.")
    try:
        text = raw.decode("utf-8-sig")
        encoding = "utf-8-sig"
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
        encoding = "latin-1"
    if "\x00" in text[:4096]:
        raise InputError(f"'{p}' looks like a binary file, not a text table. Give a CSV "
                         "file or a Parquet file (ending .parquet).")
    sep, decimal = _sniff(text[:262144])
    check_unique_columns(_header_names(text[:262144], sep), str(p))
    try:
        df = pd.read_csv(
            io.StringIO(text), sep=sep, decimal=decimal,
            engine="python" if sep == r"\s+" else "c",
            keep_default_na=False, na_values=[""], skipinitialspace=sep != r"\s+",
        )
    except pd.errors.EmptyDataError:
        raise InputError(f"'{p}' holds no table. Give a table with a header line and "
                         "one row per sample.") from None
    except (pd.errors.ParserError, csv.Error, ValueError) as exc:
        text_exc = " ".join(str(exc).split())
        m = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", text_exc)
        what = (f"line {m.group(2)} of the file has {m.group(3)} fields where the header line "
                f"has {m.group(1)}" if m else text_exc)
        raise InputError(
            f"Could not read '{p}' as a table separated by {_SEPARATOR_NAMES[sep]}s: "
            f"{what}. Every line must have as many fields as the header line; look for a "
            "stray separator, an unquoted separator inside a text cell, or a missing field."
            ) from None
    df.columns = [str(c).strip() for c in df.columns]
    if len(df.columns) and all(_looks_numeric(c) for c in df.columns):
        raise InputError(f"The first line of '{p}' looks like data ({', '.join(df.columns[:4])}"
                         f"{', ...' if len(df.columns) > 4 else ''}), not column names. "
                         "Add a header line naming the columns.")
    df.attrs["table"] = {"format": "csv", "separator": _SEPARATOR_NAMES[sep],
                         "decimal": decimal, "encoding": encoding}
    return df


def _looks_numeric(s) -> bool:
    try:
        float(str(s))
        return True
    except ValueError:
        return False


def _header_names(text: str, sep: str) -> list[str]:
    """The column names on the header line of a CSV text, as written (stripped).

    pandas renames a repeated name (``Au``, ``Au`` becomes ``Au``, ``Au.1``),
    so repeats are found here, on the header line itself.
    """
    for line in text.splitlines():
        if not line.strip():
            continue
        if sep == r"\s+":
            return line.split()
        try:
            return [c.strip() for c in next(csv.reader([line], delimiter=sep))]
        except (csv.Error, StopIteration):
            return []
    return []


def check_unique_columns(names, source: str) -> None:
    """Refuse a table in which two columns share a name.

    Parameters
    ----------
    names : sequence
        Column names in table order (compared after stripping spaces).
    source : str
        File name for the message.

    Raises
    ------
    InputError
        A name occurs more than once; the message gives the 1-based
        positions of the columns that share it.
    """
    where: dict[str, list[int]] = {}
    for i, c in enumerate(names, start=1):
        where.setdefault(str(c).strip(), []).append(i)
    repeated = {c: pos for c, pos in where.items() if len(pos) > 1}
    if not repeated:
        return
    parts = [f"{c!r} is the name of columns {', '.join(map(str, pos[:-1]))} and {pos[-1]}"
             for c, pos in repeated.items()]
    raise InputError(
        f"In '{source}': {'; '.join(parts)} (counting from 1 at the left). A repeated name "
        "leaves it unclear which column is meant, so the table is not read. Rename the "
        "columns in the header line so that each has its own name (for example Au_1 and "
        "Au_2), or delete the column that is not wanted.")


# ---------------------------------------------------------------------------
# columns
# ---------------------------------------------------------------------------

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


# ---------------------------------------------------------------------------
# cells to numbers
# ---------------------------------------------------------------------------

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


# ---------------------------------------------------------------------------
# the intake
# ---------------------------------------------------------------------------

def _check_policy(name, value):
    allowed = _POLICIES[name]
    if value not in allowed:
        raise InputError(f"{name}={value!r} is not a known policy; use one of "
                         f"{', '.join(repr(a) for a in allowed)}.")


def _plural(n, one, many=None):
    return one if n == 1 else (many or one + "s")


def samples_from_frame(df, *, value, x=None, y=None, z=None, domain=None, domain_value=None,
                       hole=None, missing_codes="missing", below_detection="half",
                       duplicates="keep", source="<table>") -> SampleSet:
    """Validate a table of samples and return a :class:`SampleSet`.

    Parameters
    ----------
    df : pandas.DataFrame
        One row per sample.
    value : str
        The grade column.
    x, y, z : str, optional
        Coordinate columns; detected from their names when omitted (see
        :func:`detect_coordinate_columns`).
    domain : str, optional
        Domain column.
    domain_value : str, optional
        Keep only the rows whose domain is this value (compared as text;
        case-insensitively if that is unique). Needs ``domain``.
    hole : str, optional
        Hole or string identifier column (for down-hole spacing).
    missing_codes : {"missing", "keep"}
        Grades <= -90 (-99, -999, ...): leave the sample out, or keep the
        number as it is.
    below_detection : {"half", "missing", "keep"}
        Other negative grades, read as below-detection codes -DL: replace by
        DL/2 (common practice), leave the sample out, or keep as is.
    duplicates : {"keep", "average", "drop"}
        Samples sharing a location (to the nearest millimetre): keep all,
        keep one with the mean grade, or keep the first only.
    source : str
        Name of the file, for messages and the record.

    Returns
    -------
    SampleSet

    Raises
    ------
    ColumnError
        A column is missing, or coordinate detection found none or several.
    DataError
        Cells that are not numbers in a numeric column; a domain value that
        does not exist.
    InsufficientDataError
        No samples left.
    InputError
        Unknown policy, or ``domain_value`` without ``domain``.

    Notes
    -----
    The order of the checks, the reasons used in ``dropped`` and
    ``changed``, the local origin and the planarity test are described in
    the module docstring. Each step is one helper below, called in that
    order; every warning is appended to one list, so their order is the
    order of the steps.
    """
    policies = {"missing_codes": missing_codes, "below_detection": below_detection,
                "duplicates": duplicates}
    df, source, table_info = _checked_frame(df, policies, source)
    cols = _resolve_columns(df, value=value, x=x, y=y, z=z, domain=domain, hole=hole,
                            source=source)
    warnings: list[str] = []
    if cols["hole"] is None:
        _warn_unnamed_hole(df, cols, warnings)
    df, data_rows, selected_domain = _select_domain(df, cols["domain"], domain_value,
                                                    source, warnings)
    n_read = int(len(df))
    if n_read == 0:
        raise InsufficientDataError(f"'{source}' has no data rows"
                                    + (f" in domain {selected_domain!r}." if selected_domain
                                       else ". Give a table with one row per sample."))
    parsed, v, v_blank, v_text = _parse_numbers(
        df, cols, z=z, source=source, data_rows=data_rows,
        decimal=table_info.get("decimal") or ".", warnings=warnings)

    tally = _Tally(data_rows)
    _drop_blanks(tally, parsed, v_blank, v_text, warnings)
    _apply_missing_codes(tally, v, missing_codes, warnings)
    v = _apply_below_detection(tally, v, below_detection, warnings)

    idx = np.flatnonzero(tally.alive)
    world = np.column_stack([parsed[a][0][idx] for a in "xyz"]).astype(np.float64)
    values = v[idx].astype(np.float64)
    rows = data_rows[idx]
    holes = _hole_ids(df, cols["hole"], idx, rows, warnings)
    if len(values) == 0:
        raise InsufficientDataError(
            f"In '{source}': no samples are left to study"
            + (f" in domain {selected_domain!r}" if selected_domain else "")
            + f" after leaving out {', '.join(f'{c} ({r})' for r, c in tally.dropped.items())}. "
            "Check the grade column and the assay-code options.")

    # local origin, before any other arithmetic
    origin = np.floor(world.min(axis=0))
    coords = world - origin
    coords, values, rows, holes, dup = _apply_duplicates(
        tally, coords, values, rows, holes, duplicates, warnings)

    planar = True if cols["z"] is None else _planarity(coords, warnings)
    if len(values) > 1 and np.ptp(values) == 0:
        warnings.append(f"All {len(values)} grades are equal ({values[0]:g}); there is no "
                        "variability to study.")

    return SampleSet(
        coords=np.ascontiguousarray(coords, dtype=np.float64),
        values=np.ascontiguousarray(values, dtype=np.float64),
        origin=origin.astype(np.float64),
        holes=holes,
        domain=selected_domain,
        source=source,
        columns=cols,
        n_read=n_read,
        dropped=tally.dropped,
        changed=tally.changed,
        duplicates=dup,
        warnings=warnings,
        planar=planar,
        rows=np.asarray(rows, dtype=np.int64),
        policies=policies,
        table=table_info,
        dropped_rows=tally.dropped_rows,
        changed_rows=tally.changed_rows,
    )


def _checked_frame(df, policies: dict, source) -> tuple[pd.DataFrame, str, dict]:
    """Refuse unknown policies and unusable tables; a shallow copy with text column names.

    Returns the copy, ``source`` as text and how the file was read
    (``df.attrs["table"]``).
    """
    for name, val in policies.items():
        _check_policy(name, val)
    if not isinstance(df, pd.DataFrame):
        raise InputError("samples_from_frame needs a pandas DataFrame.")
    source = str(source)
    if len(df.columns) == 0:
        raise InputError(f"'{source}' has no columns.")
    table_info = dict(df.attrs.get("table", {}))
    check_unique_columns(df.columns, source)
    df = df.copy(deep=False)
    df.columns = [str(c) for c in df.columns]
    return df, source, table_info


def _resolve_columns(df, *, value, x, y, z, domain, hole, source: str) -> dict:
    """The column used for each role, in the order ``x, y, z, value, domain, hole``.

    ``z`` is None for a two-dimensional table; ``domain`` and ``hole`` are
    None when not given. A column given for two roles is refused.
    """
    if value is None:
        raise InputError("Name the grade column (--value COL, value= in Python). Available "
                         f"columns: {_available(df)}.")
    vcol = _find_column(df, value, "grade", "--value (value= in Python)", source)
    dcol = _find_column(df, domain, "domain", "--domain (domain= in Python)", source) \
        if domain is not None else None
    hcol = _find_column(df, hole, "hole id", "--hole (hole= in Python)", source) \
        if hole is not None else None
    xyz = detect_coordinate_columns(df, x=x, y=y, z=z, exclude=(vcol, dcol, hcol), source=source)
    roles = {"x": xyz["x"], "y": xyz["y"], "z": xyz["z"], "value": vcol}
    seen = {}
    for r, c in roles.items():
        if c is None:
            continue
        if c in seen:
            raise ColumnError(f"In '{source}': column {c!r} is given both as {seen[c]} and as "
                              f"{r}. Give a different column for each.")
        seen[c] = r
    return {**roles, "domain": dcol, "hole": hcol}


def _warn_unnamed_hole(df, cols: dict, warnings: list) -> None:
    """Warn when no hole column was named but one column looks like it."""
    like = _hole_like_column(df, exclude=(cols["value"], cols["domain"],
                                          cols["x"], cols["y"], cols["z"]))
    if like is not None:
        warnings.append(
            f"Column {like!r} looks like a hole identifier (its values repeat over "
            "several rows) but no hole column was given: down-hole spacing, the down-hole "
            "nugget and the drill-hole pair weights are then unavailable, which can change "
            f"the answer a great deal. Name it with --hole {like} (hole= in Python) if it "
            "is one.")


def _select_domain(df, dcol, domain_value, source: str, warnings: list):
    """Keep the rows of the selected domain.

    Returns the rows kept, their data row numbers (1 = first row under the
    header) and the selected domain (None when all rows are studied).
    """
    data_rows = np.arange(1, len(df) + 1)
    if domain_value is not None and dcol is None:
        raise InputError("A domain value was given without a domain column; name the column "
                         "with --domain (domain= in Python).")
    if dcol is None:
        return df, data_rows, None
    dstr = _domain_strings(df[dcol])
    present = sorted(dstr.dropna().unique().tolist(), key=_natural_key)
    if domain_value is not None:
        want = _domain_wanted(domain_value, present, dcol, source, warnings)
        keep = (dstr == want).to_numpy()
        return df.loc[keep], data_rows[keep], want
    if len(present) == 1:
        keep = (dstr == present[0]).to_numpy()
        n_blank = int((~keep).sum())
        if n_blank:
            warnings.append(f"{n_blank} {_plural(n_blank, 'row has', 'rows have')} a blank "
                            f"domain and {_plural(n_blank, 'was', 'were')} not read; the only "
                            f"domain present, {present[0]!r}, was used.")
        return df.loc[keep], data_rows[keep], present[0]
    if not present:
        warnings.append(f"The domain column {dcol!r} is blank in every row; all rows are "
                        "studied together.")
    else:
        warnings.append(
            f"No domain was selected, so all {len(present)} domains in column {dcol!r} "
            f"({', '.join(repr(v) for v in present[:10])}{', ...' if len(present) > 10 else ''})"
            " are studied together; continuity usually differs between domains, so pick "
            "one with --domain-value.")
    return df, data_rows, None


def _domain_wanted(domain_value, present: list, dcol: str, source: str, warnings: list) -> str:
    """The domain code (as written in the column) that ``domain_value`` names.

    ``1.0`` names code ``1``; a unique match ignoring case is used with a
    warning; anything else is refused with the closest code and the list.
    """
    want = str(domain_value).strip()
    if isinstance(domain_value, float) and float(domain_value).is_integer():
        want = str(int(domain_value))
    if want not in present and _looks_numeric(want) and float(want).is_integer() \
            and str(int(float(want))) in present:
        want = str(int(float(want)))  # "1.0" names domain code 1
    if want in present:
        return want
    ci = [v for v in present if v.lower() == want.lower()]
    if len(ci) == 1:
        warnings.append(f"Domain {want!r} does not occur in column {dcol!r} as "
                        f"written; {ci[0]!r}, its only match ignoring upper and "
                        "lower case, was used.")
        return ci[0]
    close = difflib.get_close_matches(want, present, n=1, cutoff=0.5)
    hint = f" The closest is {close[0]!r}." if close else ""
    shown = ", ".join(repr(v) for v in present[:50])
    if len(present) > 50:
        shown += f", ... ({len(present)} in all)"
    raise DataError(
        f"In '{source}': domain {want!r} does not occur in column {dcol!r}."
        f"{hint} The domains present are: {shown or '(none: the column is blank)'}."
        " Give one of these with --domain-value.")


def _parse_numbers(df, cols: dict, *, z, source: str, data_rows, decimal: str, warnings: list):
    """Coordinates and grades as numbers.

    Returns ``parsed`` (axis to ``(values, blank, missing_text)``, see
    :func:`_numeric`; a two-dimensional table gets ``z = 0`` everywhere,
    with a warning) and the grade's ``values, blank, missing_text``.
    """
    n_read = len(df)
    parsed = {}
    two_d = cols["z"] is None
    if two_d:   # no elevation: every sample on the plane z = 0
        none = np.zeros(n_read, dtype=bool)
        parsed["z"] = (np.zeros(n_read), none, none)
        warnings.append(_two_d_warning(z))
    for axis in ("xy" if two_d else "xyz"):
        parsed[axis] = _numeric(df[cols[axis]], column=cols[axis],
                                role=f"{_AXIS_WORDS[axis][0]} ({axis})",
                                option=f"--{axis}", source=source, data_rows=data_rows,
                                decimal=decimal)
    vcol = cols["value"]
    v, v_blank, v_text = _numeric(df[vcol], column=vcol, role="grade", option="--value",
                                  source=source, data_rows=data_rows, decimal=decimal)
    return parsed, v, v_blank, v_text


class _Tally:
    """The samples still in, and those left out or altered, counted by reason.

    ``alive`` marks the rows still in; ``dropped``/``changed`` map a reason
    to a count and ``dropped_rows``/``changed_rows`` to the data row numbers,
    in the order the reasons first occurred.
    """

    def __init__(self, data_rows: np.ndarray):
        self.data_rows = data_rows
        self.alive = np.ones(len(data_rows), dtype=bool)
        self.dropped: dict[str, int] = {}
        self.changed: dict[str, int] = {}
        self.dropped_rows: dict[str, list] = {}
        self.changed_rows: dict[str, list] = {}

    def drop(self, mask, reason):
        """Leave out the rows of ``mask`` still in; their mask and count."""
        m = mask & self.alive
        k = int(m.sum())
        if k:
            self.dropped[reason] = self.dropped.get(reason, 0) + k
            self.dropped_rows.setdefault(reason, []).extend(int(r) for r in self.data_rows[m])
            self.alive[m] = False
        return m, k


def _drop_blanks(tally: _Tally, parsed: dict, v_blank, v_text, warnings: list) -> None:
    """Leave out rows with a blank coordinate, a blank grade or missing-value text."""
    data_rows = tally.data_rows
    coord_blank = parsed["x"][1] | parsed["x"][2] | parsed["y"][1] | parsed["y"][2] \
        | parsed["z"][1] | parsed["z"][2]
    m, k = tally.drop(coord_blank, R_BLANK_COORD)
    if k:
        warnings.append(f"{k} {_plural(k, 'sample has', 'samples have')} a blank coordinate and "
                        f"{_plural(k, 'was', 'were')} left out ({_rows_phrase(data_rows[m])}).")
    m, k = tally.drop(v_blank, R_BLANK_VALUE)
    if k:
        warnings.append(f"{k} {_plural(k, 'sample has', 'samples have')} no grade (blank cell) "
                        f"and {_plural(k, 'was', 'were')} left out ({_rows_phrase(data_rows[m])}).")
    m, k = tally.drop(v_text, R_MISSING_TEXT)
    if k:
        warnings.append(f"{k} {_plural(k, 'grade is', 'grades are')} missing-value text such as "
                        f"NA and {_plural(k, 'was', 'were')} left out ({_rows_phrase(data_rows[m])}).")


def _apply_missing_codes(tally: _Tally, v, missing_codes: str, warnings: list) -> None:
    """Grades <= -90: leave them out (``"missing"``) or keep them with a warning."""
    codes = tally.alive & (v <= MISSING_CODE_THRESHOLD)
    kc = int(codes.sum())
    if not kc:
        return
    if missing_codes == "missing":
        tally.drop(codes, R_MISSING_CODE)
        shown = ", ".join(f"{c:g}" for c in np.unique(v[codes])[:5])
        warnings.append(f"{kc} {_plural(kc, 'grade is a', 'grades are')} missing-value "
                        f"{_plural(kc, 'code', 'codes')} (<= -90: {shown}) and "
                        f"{_plural(kc, 'was', 'were')} left out "
                        f"({_rows_phrase(tally.data_rows[codes])}).")
    else:
        warnings.append(f"{kc} {_plural(kc, 'grade', 'grades')} at or below -90 "
                        f"{_plural(kc, 'was', 'were')} kept as real values (missing_codes="
                        "'keep'); if they are missing-value codes they will distort every "
                        "statistic.")


def _apply_below_detection(tally: _Tally, v, below_detection: str, warnings: list):
    """Negative grades above -90 (-DL codes): halve, leave out or keep; the grades after."""
    # codes at or below -90 kept on request stay as they are (not halved as -DL codes)
    bdl = tally.alive & (v < 0) & (v > MISSING_CODE_THRESHOLD)
    kb = int(bdl.sum())
    if not kb:
        return v
    if below_detection == "half":
        v = v.copy()
        example = float(v[bdl][0])
        v[bdl] = -v[bdl] / 2.0
        tally.changed[R_BDL_HALF] = kb
        tally.changed_rows[R_BDL_HALF] = [int(r) for r in tally.data_rows[bdl]]
        warnings.append(f"{kb} below-detection {_plural(kb, 'code', 'codes')} (negative "
                        f"grades -DL) {_plural(kb, 'was', 'were')} replaced by half the "
                        f"detection limit, DL/2 (common practice; {example:g} became "
                        f"{-example / 2:g}; {_rows_phrase(tally.data_rows[bdl])}).")
    elif below_detection == "missing":
        tally.drop(bdl, R_BDL_MISSING)
        warnings.append(f"{kb} below-detection {_plural(kb, 'code', 'codes')} (negative "
                        f"grades) {_plural(kb, 'was', 'were')} left out as missing.")
    else:
        warnings.append(f"{kb} negative {_plural(kb, 'grade', 'grades')} "
                        f"{_plural(kb, 'was', 'were')} kept as they are "
                        "(below_detection='keep'); a log transform cannot use them.")
    return v


def _hole_ids(df, hcol, idx, rows, warnings: list):
    """Hole ids of the kept rows as text, or None without a hole column.

    A blank id becomes ``"<no hole id, data row k>"`` (a hole of its own),
    with a warning.
    """
    if hcol is None:
        return None
    hraw = df[hcol].to_numpy(dtype=object)[idx]
    hstr = _domain_strings(pd.Series(hraw, dtype=object)).to_numpy(dtype=object)
    no_id = np.array([h is None for h in hstr], dtype=bool)
    if no_id.any():
        k = int(no_id.sum())
        hstr = hstr.copy()
        for i in np.flatnonzero(no_id):
            hstr[i] = f"<no hole id, data row {rows[i]}>"
        warnings.append(f"{k} {_plural(k, 'sample has', 'samples have')} a blank hole id "
                        f"({_rows_phrase(rows[no_id])}); each is treated as a hole "
                        "of its own.")
    return hstr.astype(object)


def _apply_duplicates(tally: _Tally, coords, values, rows, holes, duplicates: str,
                      warnings: list):
    """Count samples sharing a location and apply the duplicates policy.

    Returns ``coords, values, rows, holes`` after the policy and the record
    ``{"locations", "samples", "policy"}`` (counted before the policy).
    """
    key = np.round(coords / DUPLICATE_TOLERANCE).astype(np.int64)
    _, first, inverse, counts = np.unique(key, axis=0, return_index=True, return_inverse=True,
                                          return_counts=True)
    inverse = inverse.reshape(-1)
    multi = counts > 1
    dup_locations = int(multi.sum())
    dup_samples = int(counts[multi].sum())
    record = {"locations": dup_locations, "samples": dup_samples, "policy": duplicates}
    if not dup_locations:
        return coords, values, rows, holes, record
    where = f"{dup_locations} {_plural(dup_locations, 'location holds', 'locations hold')}"
    if duplicates == "keep":
        warnings.append(
            f"{where} more than one sample ({dup_samples} samples in all); all were kept, which "
            "adds pairs at zero distance. Use --duplicates average or drop to change this.")
        return coords, values, rows, holes, record
    keep_idx = np.sort(first)
    n_lost = len(values) - len(keep_idx)
    lost = np.ones(len(values), dtype=bool)
    lost[keep_idx] = False
    lost_rows = [int(r) for r in rows[lost]]
    if duplicates == "average":
        means = np.bincount(inverse, weights=values) / counts
        group_of_kept = inverse[keep_idx]
        new_values = means[group_of_kept]
        tally.changed[R_DUP_AVERAGE_CHANGED] = dup_locations
        tally.changed_rows[R_DUP_AVERAGE_CHANGED] = [
            int(r) for r in rows[keep_idx][counts[group_of_kept] > 1]]
        tally.dropped[R_DUP_AVERAGED] = n_lost
        tally.dropped_rows[R_DUP_AVERAGED] = lost_rows
        warnings.append(
            f"{where} more than one sample ({dup_samples} samples); each was replaced by one "
            "sample with the mean grade.")
    else:
        new_values = values[keep_idx]
        tally.dropped[R_DUP_DROPPED] = n_lost
        tally.dropped_rows[R_DUP_DROPPED] = lost_rows
        warnings.append(
            f"{where} more than one sample ({dup_samples} samples); only the first in table "
            f"order was kept at each, {n_lost} left out.")
    holes = holes[keep_idx] if holes is not None else None
    return (coords[keep_idx], np.asarray(new_values, dtype=np.float64), rows[keep_idx],
            holes, record)


def _two_d_warning(z) -> str:
    """The sentence saying a table was read as two-dimensional, and why."""
    why = (f"as asked (z={z!r})" if z is not None else
           "because it has no elevation column and no column named like one (z, elev, "
           "elevation, rl, mid_z, ...)")
    return (f"The table was read as two-dimensional {why}: every sample is placed at "
            "elevation 0 m, on one horizontal plane, and is studied as a single level. Only "
            "directions in the horizontal plane are meaningful; nothing can be said about "
            "continuity across it. If the table does have an elevation column, name it with "
            "--z COL (z= in Python).")


def _planarity(coords: np.ndarray, warnings: list) -> bool:
    """Flag samples lying on one plane (or one line); append a warning."""
    n = len(coords)
    if n < 4:
        warnings.append(f"Only {n} {_plural(n, 'sample', 'samples')}: far too few to study "
                        "continuity in three dimensions.")
        return n < 3 or bool(np.linalg.matrix_rank(coords - coords.mean(axis=0)) < 3)
    z = coords[:, 2]
    if np.ptp(z) <= PLANAR_ABSOLUTE:
        warnings.append(
            f"All samples lie at one elevation (they span {np.ptp(z):.2f} m vertically, within "
            f"the {PLANAR_ABSOLUTE:g} m tolerance), as on a single bench: the vertical "
            "direction cannot be studied, and only directions in the horizontal plane are "
            "meaningful.")
        return True
    centred = coords - coords.mean(axis=0)
    _, s, vt = np.linalg.svd(centred, full_matrices=False)
    rms = s / np.sqrt(n)
    if rms[1] <= max(PLANAR_ABSOLUTE, PLANAR_RELATIVE * rms[0]):
        warnings.append(
            f"All samples lie close to one line (rms distance {rms[1]:.2f} m from it), as in a "
            "single straight hole: only the direction along it can be studied.")
        return True
    if rms[2] <= max(PLANAR_ABSOLUTE, PLANAR_RELATIVE * rms[0]):
        nvec = vt[2]
        if nvec[2] < 0:
            nvec = -nvec  # upward normal: its horizontal part points down-dip
        dip = float(np.degrees(np.arccos(np.clip(abs(nvec[2]), 0.0, 1.0))))
        dipdir = float(np.degrees(np.arctan2(nvec[0], nvec[1])) % 360.0)
        warnings.append(
            f"All samples lie close to one plane (rms distance {rms[2]:.2f} m from it; dip "
            f"{dip:.0f} degrees towards {dipdir:.0f}): the direction across that plane cannot "
            "be studied, and only directions within it are meaningful.")
        return True
    return False


def find_column(df, name, *, role: str = "column", option: str = "", source: str = "<table>") -> str:
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


def read_samples(path, **kwargs) -> SampleSet:
    """Read a sample table and validate it.

    Parameters
    ----------
    path : str or path-like
        CSV or Parquet file (see :func:`read_table`).
    **kwargs
        As for :func:`samples_from_frame` (``value`` is required); ``source``
        defaults to the path.

    Returns
    -------
    SampleSet
    """
    df = read_table(path)
    kwargs.setdefault("source", os.fspath(path))
    return samples_from_frame(df, **kwargs)
