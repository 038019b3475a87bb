"""Time ``discover`` (no bootstrap) on each demo domain with one source tree.

Run it once per tree, alternately, on the same machine (its absolute times
drift)::

    git worktree add --detach /tmp/ref 8eefe90
    python benchmarks/domain_speed.py /tmp/ref
    python benchmarks/domain_speed.py .

The tree's own package and bundled composites are used (the same data in
every tree since the demo was added). Printed per domain: the tree, the
domain, its composites and the seconds of each call; the first call of a
process compiles or warms the kernels.
"""

import argparse
import os
import sys
import time


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("tree", help="root of the source tree to time")
    ap.add_argument("--calls", type=int, default=3, help="calls per domain")
    args = ap.parse_args(argv)
    tree = os.path.abspath(args.tree)
    sys.path.insert(0, tree)
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
        for _ in range(args.calls):
            t0 = time.perf_counter()
            anisotropy.discover(d, **kw)
            ts.append(time.perf_counter() - t0)
        print(tree, dom, len(d), [round(t, 2) for t in ts], flush=True)


if __name__ == "__main__":
    main()
