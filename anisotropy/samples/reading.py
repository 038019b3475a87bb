"""Reading a table file: CSV with its separator detected, or Parquet; column names checked."""

from __future__ import annotations

import csv
import io
import re
from pathlib import Path

import pandas as pd

from anisotropy.errors import InputError


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
    _check_path(p)
    if p.suffix.lower() in (".parquet", ".pq"):
        return _read_parquet(p)
    text, encoding = _read_text(p)
    sep, decimal = _sniff(text[:262144])
    check_unique_columns(_header_names(text[:262144], sep), str(p))
    df = _parse_text(text, sep, decimal, p)
    df.columns = [str(c).strip() for c in df.columns]
    if len(df.columns) and all(_looks_numeric(c) for c in df.columns):
        raise InputError(f"The first line of '{p}' looks like data ({', '.join(df.columns[:4])}"
                         f"{', ...' if len(df.columns) > 4 else ''}), not column names. "
                         "Add a header line naming the columns.")
    df.attrs["table"] = {"format": "csv", "separator": _SEPARATOR_NAMES[sep],
                         "decimal": decimal, "encoding": encoding}
    return df


def _check_path(p: Path) -> None:
    """A file that exists, is not a folder and is not a spreadsheet workbook."""
    if not p.exists():
        raise InputError(f"File not found: '{p}'. Check the path and the current folder.")
    if p.is_dir():
        raise InputError(f"'{p}' is a folder, not a sample table. Give the path of a CSV "
                         "or Parquet file.")
    if p.suffix.lower() in (".xlsx", ".xls", ".xlsm", ".ods"):
        raise InputError(f"'{p}' is a spreadsheet workbook, which is not read directly. "
                         "Save the sheet as CSV (or Parquet) and give that file.")


def _read_parquet(p: Path) -> pd.DataFrame:
    """A Parquet table (needs pyarrow), its column names checked for repeats."""
    try:
        import pyarrow.parquet as pq
    except ImportError:
        raise InputError(f"Reading the Parquet file '{p}' needs the pyarrow package, "
                         "which is not installed. Install it with "
                         "pip install 'anisotropy[parquet]', or save the table as CSV."
                         ) from None
    try:
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


def _read_text(p: Path) -> tuple[str, str]:
    """The file's text and its encoding (UTF-8, else Latin-1); empty and binary files refused."""
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise InputError(f"Cannot read '{p}' ({exc.strerror or exc}). Check that the file is "
                         "readable by you and not locked by another program.") from None
    if not raw.strip():
        raise InputError(f"'{p}' is empty. Give a table with a header line and one "
                         "row per sample.")
    try:
        text, encoding = raw.decode("utf-8-sig"), "utf-8-sig"
    except UnicodeDecodeError:
        text, encoding = raw.decode("latin-1"), "latin-1"
    if "\x00" in text[:4096]:
        raise InputError(f"'{p}' looks like a binary file, not a text table. Give a CSV "
                         "file or a Parquet file (ending .parquet).")
    return text, encoding


def _parse_text(text: str, sep: str, decimal: str, p: Path) -> pd.DataFrame:
    """The text table parsed; a line with the wrong number of fields named in the error."""
    try:
        return pd.read_csv(
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
