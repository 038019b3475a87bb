"""The batch index page: one line per domain, linking its report.

The markup is the template ``templates/index.html.j2``; every string that
came from the input (file, column and domain names, reasons, which may
quote them) is escaped there by Jinja2's autoescape. Links point only at
the safe folder names made by :func:`anisotropy.safe_io.folder_names`.
"""

from __future__ import annotations

from pathlib import Path
from typing import Mapping, Sequence
from urllib.parse import quote

from anisotropy import safe_io as S
from anisotropy.report.style import CAUTION
from anisotropy.report.templating import render

__all__ = ["render_index", "domain_line"]


def _fmt(v, spec=".0f", missing="–"):
    if v is None:
        return missing
    try:
        return format(float(v), spec)
    except (TypeError, ValueError):
        return str(v)


def domain_line(row: Mapping) -> str:
    """The one-line view of a domain (plain text; the template escapes it)."""
    if row.get("status") != "ok":
        return f"{row.get('status')}: {row.get('reason') or ''}"
    parts = [f"{row.get('n_used') or row.get('n_samples') or '?'} samples"]
    if row.get("plane_dip_direction") is not None:
        parts.append(f"plane {_fmt(row['plane_dip_direction'], '03.0f')}/{_fmt(row['plane_dip'], '02.0f')}"
                     + (f" pitch {_fmt(row['plane_pitch'])}" if row.get("plane_pitch") is not None else ""))
    if row.get("major_trend") is not None:
        parts.append(f"major {_fmt(row['major_trend'], '03.0f')}/{_fmt(row['major_plunge'], '02.0f')}")
    if row.get("range_major") is not None:
        parts.append(f"ranges {_fmt(row['range_major'])} / {_fmt(row.get('range_semi_major'))} / "
                     f"{_fmt(row.get('range_minor'))} m")
    if row.get("nugget") is not None:
        parts.append(f"nugget {_fmt(row['nugget'], '.2f')}")
    if row.get("cone_major") is not None:
        parts.append(f"major cone {_fmt(row['cone_major'])}°")
    if row.get("verdict"):
        parts.append(f"interpretation {row['verdict']}")
    return ", ".join(parts)


def _files(row: Mapping) -> list:
    """``(href, label)`` links of a domain's files, inside its safe folder."""
    folder = quote(str(row.get("folder") or ""), safe="")
    if str(row.get("status")) == "ok":
        names = ["report.html", "discovery.json", "model.json", "model.csv"]
        if row.get("verdict"):
            names.append("check.json")
        return [(f"{folder}/{n}", "report" if n == "report.html" else n) for n in names]
    return [(f"{folder}/row.json", "row.json")] if folder else []


def render_index(rows: Sequence[Mapping], path, *, source="", value="", domain_column="",
                 notes=()) -> Path:
    """Write ``index.html`` for a batch.

    Parameters
    ----------
    rows : sequence of mapping
        Summary rows (keys of :data:`anisotropy.batch.SUMMARY_COLUMNS`).
    path : path-like
        Where to write (atomically).
    source, value, domain_column : str
        Shown in the header (as text).
    notes : sequence of str
        Extra lines (as text).

    Returns
    -------
    Path
    """
    counts = {}
    for r in rows:
        counts[r.get("status")] = counts.get(r.get("status"), 0) + 1
    shown = [{"css": {"ok": "ok", "skipped": "skip", "failed": "fail"}.get(str(r.get("status")), ""),
              "domain": r.get("domain"), "status": str(r.get("status")), "line": domain_line(r),
              "flags": r.get("flags") or "", "warnings": list(r.get("warning_list") or []),
              "files": _files(r)} for r in rows]
    html = render("index.html.j2", title=f"Continuity batch: {value}", value=value,
                  domain_column=domain_column, source=source, n_domains=len(rows),
                  counts=list(counts.items()), notes=list(notes), rows=shown, caution=CAUTION)
    return S.atomic_write_text(Path(path), html)
