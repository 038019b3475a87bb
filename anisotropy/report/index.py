"""The batch index page: one line per domain, linking its report.

Every string that came from the input (file, column and domain names,
reasons, which may quote them) is escaped; links point only at the safe
folder names made by :func:`anisotropy._safety.folder_names`.
"""

from __future__ import annotations

from pathlib import Path
from typing import Mapping, Sequence
from urllib.parse import quote

from anisotropy import _safety as S
from anisotropy.report.style import CAUTION, page

__all__ = ["render_index", "domain_line"]


def _fmt(v, spec=".0f", missing="–"):
    if v is None:
        return missing
    try:
        return format(float(v), spec)
    except (TypeError, ValueError):
        return str(v)


def domain_line(row: Mapping) -> str:
    """The one-line view of a domain (plain text, not yet escaped)."""
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


def _warnings_html(row: Mapping) -> str:
    """The domain's flags (unresolved, ambiguous, extrapolated) and its warnings, escaped."""
    out = []
    if row.get("flags"):
        out.append(f"<div class='warn'>{S.escape(row['flags'])}</div>")
    warns = row.get("warning_list") or []
    if warns:
        items = "".join(f"<li>{S.escape(w)}</li>" for w in warns)
        out.append(f"<details><summary>{len(warns)} warning{'s' if len(warns) != 1 else ''}"
                   f"</summary><ul>{items}</ul></details>")
    return "".join(out)


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
        Shown in the header (escaped).
    notes : sequence of str
        Extra lines (escaped).

    Returns
    -------
    Path
    """
    path = Path(path)
    counts = {}
    for r in rows:
        counts[r.get("status")] = counts.get(r.get("status"), 0) + 1
    body = [f"<h1>Continuity batch: {S.escape(value)} by {S.escape(domain_column)}</h1>",
            f"<p class='meta'>Source: <code>{S.escape(source)}</code>. "
            f"{len(rows)} domains: " + ", ".join(f"{n} {S.escape(k)}" for k, n in counts.items())
            + ". Summary tables: <a href='summary.csv'>summary.csv</a>, "
              "<a href='summary.json'>summary.json</a>.</p>"]
    for note in notes:
        body.append(f"<p class='warn'>{S.escape(note)}</p>")
    body.append("<table class='grid'><thead><tr><th>domain</th><th>status</th>"
                "<th>at a glance</th><th>files</th></tr></thead><tbody>")
    for r in rows:
        folder = quote(str(r.get("folder") or ""), safe="")
        status = str(r.get("status"))
        files = []
        if status == "ok":
            files.append(f"<a href='{folder}/report.html'>report</a>")
            files.append(f"<a href='{folder}/discovery.json'>discovery.json</a>")
            files.append(f"<a href='{folder}/model.json'>model.json</a>")
            files.append(f"<a href='{folder}/model.csv'>model.csv</a>")
            if r.get("verdict"):
                files.append(f"<a href='{folder}/check.json'>check.json</a>")
        elif folder:
            files.append(f"<a href='{folder}/row.json'>row.json</a>")
        cls = {"ok": "ok", "skipped": "skip", "failed": "fail"}.get(status, "")
        body.append(f"<tr class='{cls}'><td>{S.escape(r.get('domain'))}</td>"
                    f"<td>{S.escape(status)}</td><td>{S.escape(domain_line(r))}"
                    f"{_warnings_html(r)}</td>"
                    f"<td>{' · '.join(files)}</td></tr>")
    body.append("</tbody></table>")
    body.append(f"<p class='caution'>{S.escape(CAUTION)}</p>")
    html = page(f"Continuity batch: {value}", "\n".join(body))
    return S.atomic_write_text(path, html)
