"""Safety of everything the engine writes to disk.

Strings that come from the input (file names, column names, domain names,
free text in a config) end up in HTML pages, folder names and CSV files.
This module keeps each of those uses harmless (the HTML pages escape every
value through their Jinja2 templates, see :mod:`anisotropy.report.templating`):

* :func:`safe_folder_name` / :func:`folder_names` turn domain names into
  folder names that stay inside the output folder, are distinct from one
  another (also on case-insensitive file systems) and are valid on Windows;
* :func:`neutralise_cell` stops a spreadsheet from running a CSV cell as a
  formula;
* :func:`atomic_write_bytes` and friends write through a temporary file in
  the same folder and :func:`os.replace`, so an interrupted run never leaves
  a half-written file behind;
* :func:`json_ready` is the package's one conversion to JSON types (NumPy
  values, tuples, paths; NaN and infinity become ``null``).

Nothing here unpickles or evaluates any input.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import math
import os
import re
import tempfile
import unicodedata
from pathlib import Path
from collections.abc import Mapping
from typing import Any, Callable, Iterable, Sequence

import numpy as np

from anisotropy.errors import InputError

__all__ = [
    "safe_folder_name",
    "folder_names",
    "inside",
    "neutralise_cell",
    "csv_text",
    "atomic_write_bytes",
    "atomic_write_text",
    "atomic_write_json",
    "atomic_write_csv",
    "json_ready",
    "finite_or_none",
]

# ---------------------------------------------------------------------------
# folder names
# ---------------------------------------------------------------------------

# Names Windows reserves for devices, with or without an extension.
_RESERVED = {"CON", "PRN", "AUX", "NUL"} | {f"COM{i}" for i in range(10)} | {
    f"LPT{i}" for i in range(10)}
_ALLOWED = re.compile(r"[^A-Za-z0-9._-]+")
_MAX_LEN = 60


def _digest(name: str) -> str:
    return hashlib.sha1(name.encode("utf-8", "surrogatepass")).hexdigest()[:8]


def safe_folder_name(name: Any) -> str:
    """A folder name derived from a domain name, safe on every file system.

    Letters are reduced to ASCII (accents are dropped, other characters become
    ``_``), only ``A-Z a-z 0-9 . _ -`` remain, leading dots and dashes and
    trailing dots are removed, Windows device names (``CON``, ``NUL``,
    ``COM1`` ...) are prefixed, and the length is capped. Whenever the result
    differs from the name itself, a short hash of the original name is
    appended so that two different names that look alike after cleaning
    (``a/b`` and ``a\\b``) still get different folders.

    Parameters
    ----------
    name : object
        The domain name (converted with ``str``).

    Returns
    -------
    str
        Never empty, never ``.`` or ``..``, free of path separators.
    """
    text = "" if name is None else str(name)
    ascii_text = unicodedata.normalize("NFKD", text).encode("ascii", "ignore").decode("ascii")
    clean = _ALLOWED.sub("_", ascii_text)
    clean = re.sub(r"\.{2,}", "_", clean)  # no ".." anywhere, even inside a name
    clean = clean.lstrip("._-").rstrip(". ")
    clean = re.sub(r"_+", "_", clean)
    if clean.split(".")[0].upper() in _RESERVED:
        clean = "_" + clean
    if len(clean) > _MAX_LEN:
        clean = clean[:_MAX_LEN].rstrip(". ")
    if not clean.strip("_"):
        clean = "domain"
    if clean != text:
        clean = f"{clean}-{_digest(text)}"
    return clean


def folder_names(names: Iterable[Any]) -> dict[str, str]:
    """Distinct safe folder names for a collection of domain names.

    Parameters
    ----------
    names : iterable
        Domain names (converted with ``str``); duplicates are ignored.

    Returns
    -------
    dict
        ``{name: folder}``; folders are distinct even when compared without
        regard to case (Windows and macOS file systems).
    """
    out: dict[str, str] = {}
    used: set[str] = set()
    for raw in names:
        name = "" if raw is None else str(raw)
        if name in out:
            continue
        folder = safe_folder_name(name)
        candidate, k = folder, 1
        while candidate.casefold() in used:
            k += 1
            candidate = f"{folder}-{k}"
        used.add(candidate.casefold())
        out[name] = candidate
    return out


def inside(root: str | os.PathLike, *parts: str) -> Path:
    """Join ``parts`` under ``root`` and prove the result stays inside it.

    Parameters
    ----------
    root : path-like
        The output folder.
    *parts : str
        Path components (for example a folder from :func:`safe_folder_name`
        and a file name).

    Returns
    -------
    Path
        The joined path.

    Raises
    ------
    InputError
        If the joined path would leave ``root``.
    """
    base = Path(root).resolve()
    path = base.joinpath(*parts).resolve()
    if os.path.commonpath([str(base), str(path)]) != str(base):
        raise InputError(
            f"refusing to write {path}: it is outside the output folder {base}; "
            "rename the domain or choose another --out folder")
    return path


# ---------------------------------------------------------------------------
# CSV
# ---------------------------------------------------------------------------

def _current_umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


# files are created readable by others as an ordinary open() would make them
# (mkstemp alone gives 0600, unreadable for a web server or a colleague)
_FILE_MODE = 0o666 & ~_current_umask()

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\n", "\uff1d", "\uff0b", "\uff0d", "\uff20")
_PLAIN_NUMBER = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")


def neutralise_cell(value: Any) -> Any:
    """Stop a spreadsheet from running a CSV cell as a formula.

    Text starting with ``= + - @``, a tab or a carriage return (or their
    full-width forms) is prefixed with a single quote, common practice for
    CSV injection; text that is a plain number such as ``-1.5`` is left as it
    is, and non-text values are returned unchanged.

    Parameters
    ----------
    value : object

    Returns
    -------
    object
    """
    if not isinstance(value, str) or not value:
        return value
    if value.startswith(_FORMULA_START) and not _PLAIN_NUMBER.match(value):
        return "'" + value
    return value


def _cell(value: Any) -> Any:
    if value is None:
        return ""
    if isinstance(value, float) and not math.isfinite(value):
        return "" if math.isnan(value) else str(value)
    return neutralise_cell(value)


def csv_text(rows: Sequence[Mapping[str, Any]], columns: Sequence[str]) -> str:
    """CSV text for ``rows`` with the given columns, every text cell neutralised.

    Parameters
    ----------
    rows : sequence of mapping
        One mapping per row; missing keys become empty cells.
    columns : sequence of str
        Column order (the header is neutralised too).

    Returns
    -------
    str
    """
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow([_cell(c) for c in columns])
    for row in rows:
        writer.writerow([_cell(row.get(c)) for c in columns])
    return buf.getvalue()


# ---------------------------------------------------------------------------
# JSON
# ---------------------------------------------------------------------------


def finite_or_none(x: Any) -> float | None:
    """``float(x)``, or None when ``x`` is None, NaN or infinite (JSON has no NaN)."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _to_text(obj: Any) -> str:
    return str(obj)


def _array_ready(a: np.ndarray, default) -> list:
    """A NumPy array as nested lists: numbers converted in one call, NaN/inf as None."""
    if a.dtype.kind in "biu":
        return a.tolist()
    if a.dtype.kind == "f":
        if np.isfinite(a).all():
            return a.tolist()
        return np.where(np.isfinite(a), a, None).tolist()
    return [json_ready(v, default=default) for v in a.tolist()]


def json_ready(obj: Any, *, default: Callable[[Any], Any] | None = _to_text) -> Any:
    """Plain JSON types from NumPy values, containers, paths and non-finite floats.

    Mappings become dicts with text keys; lists, tuples, sets and arrays
    become lists; NumPy scalars become Python ones; non-finite floats become
    ``None`` (JSON has no NaN); paths become text.

    Parameters
    ----------
    obj : any
    default : callable or None
        Applied to any other object (default: ``str``). None leaves such
        objects as they are, for a caller whose JSON encoder handles them.

    Returns
    -------
    Plain dicts, lists, str, int, float, bool and None (and, with
    ``default=None``, the unconverted objects).
    """
    t = type(obj)
    if t is float:  # the common cases first, by exact type: records hold ~10^5 values
        return obj if math.isfinite(obj) else None
    if t is str or t is int or t is bool or obj is None:
        return obj
    if t is dict or isinstance(obj, Mapping):
        return {str(k): json_ready(v, default=default) for k, v in obj.items()}
    if t is np.ndarray:
        return _array_ready(obj, default)
    if isinstance(obj, (list, tuple, set)):
        return [json_ready(v, default=default) for v in obj]
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float):
        return finite_or_none(obj)
    if isinstance(obj, (str, int, bool)):
        return obj
    if isinstance(obj, os.PathLike):
        return os.fspath(obj)
    return obj if default is None else default(obj)


# ---------------------------------------------------------------------------
# atomic writes
# ---------------------------------------------------------------------------


def atomic_write_bytes(path: str | os.PathLike, data: bytes) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder.

    The temporary file is flushed to disk and then moved over ``path`` with
    :func:`os.replace`, which is atomic on POSIX and Windows: a reader sees
    either the old file or the complete new one, never a partial write.

    Parameters
    ----------
    path : path-like
    data : bytes

    Returns
    -------
    Path
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    try:
        os.chmod(tmp, _FILE_MODE)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    return path


def atomic_write_text(path: str | os.PathLike, text: str) -> Path:
    """UTF-8 text version of :func:`atomic_write_bytes`."""
    return atomic_write_bytes(path, text.encode("utf-8"))


#: A JSON array holding only numbers, true, false and null (no strings, no nesting).
_SCALAR_ARRAY = re.compile(r"\[\s*((?:-?[0-9][0-9.eE+-]*|true|false|null)"
                           r"(?:\s*,\s*(?:-?[0-9][0-9.eE+-]*|true|false|null))*)\s*\]")


def _one_line_arrays(text: str) -> str:
    """Put each indented array of plain numbers/booleans/nulls on one line.

    ``json.dumps(indent=2)`` writes every list element on its own line, which
    made per-lag records (e.g. residuals per fan direction) several times
    larger than their content and hard to read. Only arrays with no strings
    and no nested containers are joined, so no string content is touched.
    """
    return _SCALAR_ARRAY.sub(lambda m: "[" + re.sub(r"\s*,\s*", ", ", m.group(1)) + "]", text)


def atomic_write_json(path: str | os.PathLike, obj: Any) -> Path:
    """Write ``obj`` (made JSON-ready by :func:`json_ready`) atomically, indented, with
    arrays of plain numbers on one line each."""
    text = json.dumps(json_ready(obj), indent=2, ensure_ascii=False, allow_nan=False)
    return atomic_write_text(path, _one_line_arrays(text) + "\n")


def atomic_write_csv(path: str | os.PathLike, rows: Sequence[Mapping[str, Any]],
                     columns: Sequence[str]) -> Path:
    """Write a neutralised CSV (see :func:`csv_text`) atomically."""
    return atomic_write_text(path, csv_text(rows, columns))
