"""Compare a demo batch run with the generating truth of the invented deposit.

Usage::

    python examples/compare_truth.py [SUMMARY_JSON] [TRUTH_JSON]

Defaults: ``reports/demo/summary.json`` and ``anisotropy/data/truth.json``.
Prints a Markdown table (the one shown in README.md): for each domain the
plane and major axis found and true, the angles between the found and the
true axes (as undirected lines), the ranges of the longest-range structure
found and true, the 90 % cone of the major axis and the check verdict.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np

from anisotropy.geometry import axis_angle, line_to_vector

ROOT = Path(__file__).resolve().parents[1]


def comparison_rows(summary: dict, truth: dict) -> list[dict]:
    """One dict per domain holding found and true orientations and ranges."""
    rows = []
    for row in summary["domains"]:
        name = row["domain"]
        if row.get("status") != "ok" or name not in truth["domains"]:
            continue
        true = truth["domains"][name]
        angles = {}
        for axis in ("major", "semi_major", "minor"):
            found = line_to_vector(row[f"{axis}_trend"], row[f"{axis}_plunge"])
            angles[axis] = float(axis_angle(found, np.asarray(true["axes"][axis]["vector"])))
        rows.append({
            "domain": name,
            "plane_found": (row["plane_dip_direction"], row["plane_dip"], row["plane_pitch"]),
            "plane_true": (true["plane"]["dip_direction"], true["plane"]["dip"], true["plane"]["pitch"]),
            "major_found": (row["major_trend"], row["major_plunge"]),
            "major_true": (true["axes"]["major"]["trend"], true["axes"]["major"]["plunge"]),
            "angles": angles,
            "ranges_found": (row["range_major"], row["range_semi_major"], row["range_minor"]),
            "ranges_true": tuple(true["axes"][a]["range"] for a in ("major", "semi_major", "minor")),
            "cone_major": row.get("cone_major"),
            "verdict": row.get("verdict") or "(none stated)",
        })
    return rows


def markdown(rows: list[dict]) -> str:
    lines = [
        "| domain | plane found (dip dir/dip, pitch) | true | major found | true "
        "| angle to true major / semi-major / minor | ranges found (m) | true (m) "
        "| 90 % cone of major | check of the stated interpretation |",
        "|---|---|---|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        pf, pt = r["plane_found"], r["plane_true"]
        mf, mt = r["major_found"], r["major_true"]
        a = r["angles"]
        cone = "–" if r["cone_major"] is None else f"{r['cone_major']:.0f}°"
        lines.append(
            f"| {r['domain']} | {pf[0]:03.0f}/{pf[1]:02.0f}, {pf[2]:.0f} | {pt[0]:03.0f}/{pt[1]:02.0f}, {pt[2]:.0f} "
            f"| {mf[0]:03.0f}/{mf[1]:02.0f} | {mt[0]:03.0f}/{mt[1]:02.0f} "
            f"| {a['major']:.0f}° / {a['semi_major']:.0f}° / {a['minor']:.0f}° "
            f"| {' / '.join(f'{v:.0f}' for v in r['ranges_found'])} "
            f"| {' / '.join(f'{v:.0f}' for v in r['ranges_true'])} | {cone} | {r['verdict']} |"
        )
    return "\n".join(lines)


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    summary = Path(argv[0]) if argv else ROOT / "reports" / "demo" / "summary.json"
    truth = Path(argv[1]) if len(argv) > 1 else ROOT / "anisotropy" / "data" / "truth.json"
    print(markdown(comparison_rows(json.loads(summary.read_text()), json.loads(truth.read_text()))))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
