"""What each figure of a domain's report costs to draw, and the report in all.

Runs ``discover`` (60 block-bootstrap replicates, as the demo does) on one
domain of the bundled demo composites, then renders its report ``--rounds``
times into a temporary folder, timing every ``Figure.savefig`` call (each
figure is drawn and encoded as PNG there; the layout engine runs inside it)
and the whole ``render_report``. Printed: the median seconds per figure, in
the report's order, and of the whole report.

Run:  python benchmarks/report_figure_cost.py [--domain vein_corridor] [--rounds 3]
"""

from __future__ import annotations

import argparse
import collections
import tempfile
import time

import numpy as np
from matplotlib.figure import Figure

import anisotropy
from anisotropy.constants import demo_paths
from anisotropy.report.html import render_report


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--domain", default="vein_corridor")
    ap.add_argument("--rounds", type=int, default=3)
    args = ap.parse_args(argv)
    D = anisotropy.discover(str(demo_paths()["composites"]), value="au_gpt", x="mid_x",
                            y="mid_y", z="mid_z", hole="hole_id", domain="domain",
                            domain_value=args.domain, bootstrap=60, seed=20261201)
    calls = collections.defaultdict(list)
    original = Figure.savefig

    def timed(self, fname, *a, **kw):
        t0 = time.perf_counter()
        out = original(self, fname, *a, **kw)
        title = (self.axes[0].get_title() if self.axes else "(no axes)").replace("\n", " ")
        calls[title[:60] or "(untitled)"].append(time.perf_counter() - t0)
        return out

    totals = []
    Figure.savefig = timed
    try:
        for _ in range(args.rounds):
            with tempfile.TemporaryDirectory() as tmp:
                t0 = time.perf_counter()
                render_report(D, tmp)
                totals.append(time.perf_counter() - t0)
    finally:
        Figure.savefig = original
    print(f"| figure (its first axes' title) | median s of {args.rounds} |")
    print("|---|---|")
    for name, t in calls.items():
        print(f"| {name} | {np.median(t):.2f} |")
    print(f"| all figures | {sum(np.median(t) for t in calls.values()):.2f} |")
    print(f"| the whole report (render_report) | {np.median(totals):.2f} |")


if __name__ == "__main__":
    main()
