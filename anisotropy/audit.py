"""The audit trail of a run: when, which version, which options, which input, which seed.

:func:`run_record` builds the ``run`` block of ``discovery.json`` (design:
``run{utc, version, options, command, input_sha256, seed}``); the command
line interface adds the command it was given.
"""

from __future__ import annotations

import datetime as _dt
import functools
import hashlib
import os
from pathlib import Path
from anisotropy import __version__

__all__ = ["run_record", "file_sha256"]


@functools.lru_cache(maxsize=16)
def _sha256_cached(path: str, size: int, mtime_ns: int) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _resolve(source) -> Path | None:
    if source is None:
        return None
    p = Path(str(source))
    if p.is_file():
        return p
    # the bundled demo table is recorded by its path inside the package
    here = Path(__file__).resolve().parent.parent
    q = here / p
    return q if q.is_file() else None


def file_sha256(source) -> str | None:
    """SHA-256 (hex) of the file at ``source``, or None when there is no such file.

    Hashes are cached per path, size and modification time, so that a batch
    over many domains of one file reads it once.
    """
    p = _resolve(source)
    if p is None:
        return None
    st = os.stat(p)
    return _sha256_cached(str(p.resolve()), st.st_size, st.st_mtime_ns)


def _plain(v):
    if isinstance(v, (str, int, float, bool)) or v is None:
        return v
    if isinstance(v, (list, tuple)):
        return [_plain(x) for x in v]
    if isinstance(v, dict):
        return {str(k): _plain(x) for k, x in v.items()}
    return repr(v) if not hasattr(v, "item") else v.item()


def run_record(source, options: dict, seed, command: str | None = None) -> dict:
    """The ``run`` block: UTC time, package version, options, command, input SHA-256, seed.

    Parameters
    ----------
    source : str or path-like or None
        The input file (as recorded in ``input.file``).
    options : dict
        The options of the run (values made plain: objects are written by
        their ``repr``).
    seed : int
    command : str, optional
        The command line, for command-line runs.

    Returns
    -------
    dict
    """

    sha = file_sha256(source)
    return {
        "utc": _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "version": __version__,
        "options": _plain(dict(options)),
        "command": command,
        "input_file": None if source is None else str(source),
        "input_sha256": sha,
        "input_sha256_note": None if sha is not None else
        "no file on disk to hash (the table was passed in memory)",
        "seed": _plain(seed),
    }
