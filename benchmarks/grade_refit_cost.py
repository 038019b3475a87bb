"""Time of the grade-unit refit (``Discovery.grade_refit``) on the two speed data sets.

``discover`` with ``transform="log"`` (so that ``model.json`` needs the refit),
then ``D.grade_refit()`` timed: one more pass over the pairs with the grades
themselves, the fit bins and the fit with the frame held. Run it on two
trees to compare them (``PYTHONPATH=TREE python benchmarks/grade_refit_cost.py``);
each tree's first call compiles, so ``--calls`` (default 2) calls are timed
after one untimed call.

Run:  python benchmarks/grade_refit_cost.py [--calls 2]
"""

import argparse
import dataclasses
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

import anisotropy  # noqa: E402
from bench_discover import speed_tables  # noqa: E402


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--calls", type=int, default=2)
    a = ap.parse_args(argv)
    tables = speed_tables()
    print(f"anisotropy from {Path(anisotropy.__file__).parent}")
    for case, kw in (("5,000 composites", {"hole": "hole"}), ("89k blast holes", {})):
        t = tables["composites" if "composites" in case else "blast holes"]
        D = anisotropy.discover(t, value="au", seed=0, transform="log", **kw)
        times = []
        for k in range(a.calls + 1):
            fresh = dataclasses.replace(D)  # the refit is cached per result: a fresh one
            t0 = time.perf_counter()
            g = fresh.grade_refit()
            if k:
                times.append(time.perf_counter() - t0)
        print(f"| {case} | {', '.join(f'{x:.2f}' for x in times)} | {g.volume.n_pairs:,} |",
              flush=True)


if __name__ == "__main__":
    main()
