"""The second structure decided at the screening tolerance, against the finished search.

``fitting.refine`` first runs the likelihood search of a second, shorter
structure to ``LIKELIHOOD_NESTED_SCREEN_FTOL`` and finishes it to
``LIKELIHOOD_NESTED_FTOL`` only when its gain lies within the likelihood
margin of the BIC penalty (or past it).  This script runs ``discover`` twice
on each data set, once as shipped and once with the screening tolerance set
to the finished one (every search finished), and prints the gain, the
decision and the time of the structures stage of each.

Data sets: the three domains of the bundled demo, the two speed sets of
``bench_discover.py`` and two realisations each of its two-structure
scenarios (where a second structure should be kept).

Run:  python benchmarks/nested_screening.py
"""

import sys
import time
from pathlib import Path

import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))

import anisotropy  # noqa: E402
from anisotropy.fitting import refine  # noqa: E402
from bench_discover import SCENARIOS, realisation, speed_tables  # noqa: E402

DEMO = Path(anisotropy.__file__).parent / "data" / "fenwright_composites.csv"


def data_sets():
    """(label, table, discover keywords) of every data set."""
    t = pd.read_csv(DEMO)
    demo = dict(x="mid_x", y="mid_y", z="mid_z", value="au_gpt", hole="hole_id",
                seed=20261201)
    for name in ("blanket", "shoot", "vein_corridor"):
        yield f"demo {name}", t[t.domain == name], demo
    sp = speed_tables()
    yield "speed: 5,000 composites", sp["composites"], dict(value="au", seed=0, hole="hole")
    yield "speed: 89k blast holes", sp["blast holes"], dict(value="au", seed=0)
    for name in ("plunging shoot (2 structures), scattered",
                 "two structures + nugget 0.2, holes"):
        for seed in (100, 101):
            r = realisation(SCENARIOS[name], seed)
            c = r["coords"]
            df = pd.DataFrame({"x": c[:, 0], "y": c[:, 1], "z": c[:, 2],
                               "g": r["values"] + 10.0})
            kw = dict(value="g", seed=0)
            if r["holes"] is not None:
                df["hole"] = r["holes"]
                kw["hole"] = "hole"
            yield f"{name} seed {seed}", df, kw


def one(table, kw):
    D = anisotropy.discover(table, **kw)
    nest = (D.diagnostics.get("frame_refinement") or {}).get("nested")
    return nest, D.diagnostics["seconds"]["structures"]


def main():
    shipped = refine.LIKELIHOOD_NESTED_SCREEN_FTOL
    print("| data set | screened gain | finished? | gain as shipped | gain, every search "
          "finished | BIC penalty | same decision | structures s (shipped / finished) |")
    print("|---|---|---|---|---|---|---|---|")
    for label, table, kw in data_sets():
        refine.LIKELIHOOD_NESTED_SCREEN_FTOL = shipped
        a, ta = one(table, kw)
        refine.LIKELIHOOD_NESTED_SCREEN_FTOL = refine.LIKELIHOOD_NESTED_FTOL
        b, tb = one(table, kw)
        refine.LIKELIHOOD_NESTED_SCREEN_FTOL = shipped
        if a is None or b is None:
            print(f"| {label} | (no second-structure search: the variogram kept more than "
                  "one structure) | | | | | | |", flush=True)
            continue
        print(f"| {label} | {a['screened_gain']:.2f} | {'yes' if a['search_finished'] else 'no'} "
              f"| {a['gain']:.2f} | {b['gain']:.2f} | {a['bic_penalty']:.1f} "
              f"| {'yes' if a['kept'] == b['kept'] else 'NO'} | {ta:.2f} / {tb:.2f} |",
              flush=True)


if __name__ == "__main__":
    t0 = time.perf_counter()
    main()
    print(f"\n{time.perf_counter() - t0:.0f} s", file=sys.stderr)
