"""Compare two ``bench_discover.py --json`` runs of the same scenarios and seeds.

Prints, per scenario, the engine's median and worst angle (degrees) between
the found and the true major and minor axes in each run, the worst major
error among realisations whose major axis was not flagged unresolved (a
confident answer), and the number with every axis flagged unresolved. Realisations are matched by
scenario and seed; a realisation missing from either run is skipped.

Run:  python benchmarks/compare_runs.py OLD.json NEW.json
"""

from __future__ import annotations

import argparse
import collections
import json

import numpy as np


def _rows(path):
    return {(r["scenario"], r["seed"]): r["engine"] for r in json.load(open(path))["accuracy"]}


def compare(old_path, new_path) -> list[str]:
    old, new = _rows(old_path), _rows(new_path)
    per = collections.defaultdict(list)
    for key in sorted(set(old) & set(new)):
        if old[key].get("major") is not None and new[key].get("major") is not None:
            per[key[0]].append((old[key], new[key]))
    lines = ["| scenario | n | major median / worst, old | new | minor median / worst, old "
             "| new | worst unflagged major, old | new | all axes flagged, old | new |",
             "|---|---|---|---|---|---|---|---|---|---|"]
    for name, pairs in per.items():
        def stat(which, axis):
            v = [p[which][axis] for p in pairs]
            return f"{np.median(v):.1f} / {max(v):.1f}"

        def flagged(which):
            return sum(len(p[which].get("unresolved") or []) == 3 for p in pairs)

        def confident(which):
            v = [p[which]["major"] for p in pairs
                 if "major" not in (p[which].get("unresolved") or [])]
            return f"{max(v):.1f}" if v else "-"
        lines.append(f"| {name} | {len(pairs)} | {stat(0, 'major')} | {stat(1, 'major')} | "
                     f"{stat(0, 'minor')} | {stat(1, 'minor')} | {confident(0)} | "
                     f"{confident(1)} | {flagged(0)} | {flagged(1)} |")
    return lines


if __name__ == "__main__":
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("old")
    ap.add_argument("new")
    a = ap.parse_args()
    print("\n".join(compare(a.old, a.new)))
