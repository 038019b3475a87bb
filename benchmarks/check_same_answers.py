"""Same answers before and after a refactor of the discovery chain (issue 14).

``record OUT.json`` runs :func:`anisotropy.discover` on a few fixed inputs and
saves each result's ``to_dict()`` (and its summary text); ``compare A.json
B.json`` reports every value that differs between two records.

Inputs (all seeded):

* the bundled demo composites (``anisotropy/data``), domains ``vein_corridor``
  (no bootstrap) and ``shoot`` (20 block-bootstrap replicates);
* the demo blast holes, domain ``blanket`` (benches; no bootstrap);
* the scattered "steep vein" scenario of ``benchmarks/bench_discover.py`` at
  seed 100 (Cholesky-simulated field, no bootstrap).

Floats are compared to printed precision: equal when they agree to
``--digits`` significant digits (default 6, the precision of the per-lag
lists in ``discovery.json``).  Run times (any key named ``seconds``, and the
summary's run time) are not compared.  Choice rows are matched by name and
the summaries by line (a unified diff), so one added row counts once.

Run from the repository root::

    python benchmarks/check_same_answers.py record before.json
    python benchmarks/check_same_answers.py record after.json
    python benchmarks/check_same_answers.py compare before.json after.json
"""

from __future__ import annotations

import argparse
import difflib
import json
import math
import re
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

import anisotropy

DATA = Path(anisotropy.__file__).parent / "data"


def _composites(domain, bootstrap):
    df = pd.read_csv(DATA / "fenwright_composites.csv")
    return anisotropy.discover(df, value="au_gpt", x="mid_x", y="mid_y", z="mid_z",
                               hole="hole_id", domain="domain", domain_value=domain,
                               bootstrap=bootstrap, seed=20261201)


def _blastholes():
    df = pd.read_csv(DATA / "fenwright_blastholes.csv")
    return anisotropy.discover(df, value="au_gpt", x="x", y="y", z="z", domain="domain",
                               domain_value="blanket", seed=20261201)


def _scattered(seed=100):
    sys.path.insert(0, str(Path(__file__).parent))
    import bench_discover as bd

    spec = bd.SCENARIOS["steep vein, scattered"]
    rng = np.random.default_rng(seed)
    coords = rng.uniform([0, 0, 0], spec["box"], size=(spec["n"], 3))
    v = bd.simulate(coords, spec["R"], spec["nugget"], spec["structures"], seed + 1000)
    df = pd.DataFrame({"x": coords[:, 0], "y": coords[:, 1], "z": coords[:, 2],
                       "grade": v + 10.0})
    return anisotropy.discover(df, value="grade", transform="raw", seed=seed)


CASES = {
    "composites vein_corridor, bootstrap 0": lambda: _composites("vein_corridor", 0),
    "composites shoot, bootstrap 20": lambda: _composites("shoot", 20),
    "blast holes blanket, bootstrap 0": _blastholes,
    "scattered steep vein seed 100, bootstrap 0": _scattered,
}


def record(path):
    out = {}
    for name, run in CASES.items():
        t0 = time.perf_counter()
        D = run()
        summary = re.sub(r"run time [0-9.]+ s", "run time - s", D.summary())
        out[name] = {"result": D.to_dict(), "summary": summary.splitlines()}
        print(f"{name}: {time.perf_counter() - t0:.1f} s", flush=True)
    Path(path).write_text(json.dumps(out, indent=1))


def _same(a, b, digits):
    if isinstance(a, float) or isinstance(b, float):
        if not isinstance(a, (int, float)) or not isinstance(b, (int, float)):
            return False
        if math.isnan(a) or math.isnan(b):
            return math.isnan(a) and math.isnan(b)
        return f"{a:.{digits}g}" == f"{b:.{digits}g}"
    return a == b


def _walk(a, b, where, digits, diffs):
    if isinstance(a, dict) and isinstance(b, dict):
        for k in sorted(set(a) | set(b)):
            if k == "seconds":
                continue
            if k not in a or k not in b:
                diffs.append((f"{where}.{k}", a.get(k, "<absent>"), b.get(k, "<absent>")))
            else:
                _walk(a[k], b[k], f"{where}.{k}", digits, diffs)
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            diffs.append((f"{where} (length)", len(a), len(b)))
        for i, (x, y) in enumerate(zip(a, b)):
            _walk(x, y, f"{where}[{i}]", digits, diffs)
    elif not _same(a, b, digits):
        diffs.append((where, a, b))


def _keyed(case):
    """Choice rows keyed by their name, summary lines as a diff: an added row is one change."""
    if not case:
        return case
    case = json.loads(json.dumps(case))
    diag = case["result"]["diagnostics"]
    rows = {}
    for row in diag.get("choices", []):
        key = row["choice"]
        while key in rows:
            key += "'"
        rows[key] = row
    diag["choices"] = rows
    return case


def _summary_diff(a, b):
    return [(".summary", line, "") for line in difflib.unified_diff(a or [], b or [], n=0,
                                                                     lineterm="")
            if line[:1] in "+-" and not line.startswith(("+++", "---"))]


def compare(path_a, path_b, digits=6):
    A = json.loads(Path(path_a).read_text())
    B = json.loads(Path(path_b).read_text())
    n = 0
    for name in sorted(set(A) | set(B)):
        a, b = _keyed(A.get(name)), _keyed(B.get(name))
        diffs = _summary_diff((a or {}).pop("summary", None), (b or {}).pop("summary", None))
        _walk(a, b, "", digits, diffs)
        n += len(diffs)
        print(f"{name}: {len(diffs)} difference(s) at {digits} significant digits")
        for where, x, y in diffs[:40]:
            print(f"  {where}: {str(x)[:150]!s}  ->  {str(y)[:150]!s}")
    return n


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    sub = p.add_subparsers(dest="cmd", required=True)
    r = sub.add_parser("record")
    r.add_argument("out")
    c = sub.add_parser("compare")
    c.add_argument("a")
    c.add_argument("b")
    c.add_argument("--digits", type=int, default=6)
    args = p.parse_args(argv)
    if args.cmd == "record":
        record(args.out)
        return 0
    return 1 if compare(args.a, args.b, args.digits) else 0


if __name__ == "__main__":
    sys.exit(main())
