"""Time ``bench_discover.speed()`` of one source tree: one compiling call, then timed calls.

Run it once per tree, one after the other on the same machine, to compare two
versions on the same inputs (this machine's absolute times drift)::

    git worktree add --detach /tmp/old 8eefe90
    python benchmarks/speed_against.py /tmp/old
    python benchmarks/speed_against.py .

With ``--demo-domains`` the calls are ``discover`` on each demo domain
instead (the 2-3k drill-hole domains of issue 16). With ``--scenario NAME
--seeds S ...`` they are ``discover`` on those realisations of that
``bench_discover.py`` scenario (the tree's own generator; the same layouts
and values in every tree that has the scenario), for changes that touch
only some layouts.

Each tree's own ``anisotropy`` package and ``benchmarks/bench_discover.py``
are imported (the inputs of ``speed()`` are the same in both as long as its
layouts are). Printed per call: (case, discover seconds, pair-pass seconds),
then, where the tree's ``speed()`` returns them, the seconds of each stage
(``diagnostics.seconds``) of every case.
"""

import argparse
import importlib.util
import os
import sys


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("tree", help="root of the source tree to time")
    ap.add_argument("--calls", type=int, default=3, help="calls; the first compiles")
    ap.add_argument("--demo-domains", action="store_true",
                    help="time discover on each demo domain instead (see demo_domains)")
    ap.add_argument("--scenario", default=None,
                    help="time discover on realisations of this bench_discover scenario")
    ap.add_argument("--seeds", type=int, nargs="*", default=[100],
                    help="the realisations of --scenario")
    args = ap.parse_args(argv)
    tree = os.path.abspath(args.tree)
    sys.path.insert(0, tree)
    if args.demo_domains:
        return demo_domains(tree, args.calls)
    bench = _bench_of(tree)
    if args.scenario:
        return scenario_realisations(tree, bench, args.scenario, args.seeds, args.calls)
    import anisotropy

    if not os.path.abspath(anisotropy.__file__).startswith(tree):
        sys.exit(f"imported {anisotropy.__file__}, not the package of {tree}")
    for k in range(args.calls):
        rows = bench.speed()
        print(k, [(r["case"], round(r["seconds"], 2), round(float(r["pair_pass"]), 2))
                  for r in rows], flush=True)
        for r in rows:
            if "stages" in r:
                print("   ", r["case"], {s: round(float(t), 2) for s, t in r["stages"].items()},
                      flush=True)


def _bench_of(tree):
    """The tree's own ``benchmarks/bench_discover.py``, imported."""
    spec = importlib.util.spec_from_file_location("bench_discover_of_tree",
                                                  os.path.join(tree, "benchmarks",
                                                               "bench_discover.py"))
    bench = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(bench)
    return bench


def scenario_realisations(tree, bench, name, seeds, calls):
    """``discover`` (no bootstrap, the benchmark's settings) on realisations of a scenario.

    Printed per realisation: the tree, the scenario, the seed, its samples
    and the seconds of each call (the first call of the first seed also
    compiles the kernels).
    """
    import time

    import pandas as pd

    import anisotropy

    if not os.path.abspath(anisotropy.__file__).startswith(tree):
        sys.exit(f"imported {anisotropy.__file__}, not the package of {tree}")
    spec = bench.SCENARIOS[name]
    for seed in seeds:
        real = bench.realisation(spec, seed)
        X = real["coords"]
        df = pd.DataFrame({"x": X[:, 0], "y": X[:, 1], "z": X[:, 2], "grade": real["values"] + 10})
        holes = real["holes"]
        if holes is not None:
            df["hole"] = holes
        ts = []
        for _ in range(calls):
            t0 = time.perf_counter()
            anisotropy.discover(df, value="grade", hole="hole" if holes is not None else None,
                                transform="raw", seed=seed)
            ts.append(time.perf_counter() - t0)
        print(tree, name, seed, len(df), [round(t, 2) for t in ts], flush=True)


def demo_domains(tree, calls):
    """``discover`` (no bootstrap, the demo's seed) on each demo domain of ``tree``.

    The tree's own package and bundled composites (the same data in every
    tree since the demo was added). Printed per domain: the tree, the domain,
    its composites and the seconds of each call; the first call compiles or
    warms the kernels.
    """
    import time

    import pandas as pd

    import anisotropy

    if not os.path.abspath(anisotropy.__file__).startswith(tree):
        sys.exit(f"imported {anisotropy.__file__}, not the package of {tree}")
    df = pd.read_csv(os.path.join(tree, "anisotropy", "data", "fenwright_composites.csv"))
    kw = dict(value="au_gpt", x="mid_x", y="mid_y", z="mid_z", hole="hole_id",
              seed=20261201)
    for dom in ("shoot", "vein_corridor", "blanket"):
        d = df[df["domain"] == dom]
        ts = []
        for _ in range(calls):
            t0 = time.perf_counter()
            anisotropy.discover(d, **kw)
            ts.append(time.perf_counter() - t0)
        print(tree, dom, len(d), [round(t, 2) for t in ts], flush=True)


if __name__ == "__main__":
    main()
