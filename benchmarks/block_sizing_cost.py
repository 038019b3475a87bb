"""Cost of the bootstrap-sized blocks on the 89k blast holes of ``bench_discover.speed()``.

``discover`` builds its pair volume with blocks sized for the block bootstrap
whether or not a bootstrap follows. This times three ``discover`` calls (the
first compiles) and their pair passes with those blocks (``sized``) or with
the pair engine's default blocks (``default``)::

    python benchmarks/block_sizing_cost.py default
    python benchmarks/block_sizing_cost.py sized

Run the two one after the other on the same machine.
"""

import argparse
import time

import numpy as np
import pandas as pd

import anisotropy
import anisotropy.discovery.lags as stage
from anisotropy.models import NestedModel, Structure
from anisotropy.simulate import simulate_field
from bench_discover import frame


def blast_holes():
    """The blast-hole table of ``bench_discover.speed()`` (same seeds, same field)."""
    rng = np.random.default_rng(1)
    gx, gy = np.meshgrid(np.arange(122) * 4.0, np.arange(122) * 4.0)
    pts = []
    for b in range(6):
        p = np.column_stack([gx.ravel(), gy.ravel(), np.full(gx.size, -4.0 * b)])
        p[:, :2] += rng.normal(0, 0.4, (len(p), 2))
        pts.append(p)
    c = np.concatenate(pts)
    model = NestedModel(0.2, [Structure("spherical", 0.8, (80, 40, 15))], frame(60, 10, 0))
    y = simulate_field(c, model, seed=2, method="spectral")
    return pd.DataFrame({"x": c[:, 0], "y": c[:, 1], "z": c[:, 2], "au": np.exp(0.8 * y)})


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("blocks", choices=["default", "sized"])
    ap.add_argument("--calls", type=int, default=3)
    mode = ap.parse_args(argv).blocks
    build = stage._build_volume

    def timed_build(*args, **kw):
        if mode == "default":
            kw["blocks"] = None
        t = time.perf_counter()
        volume = build(*args, **kw)
        print(f"{mode}: pair pass {time.perf_counter() - t:.2f} s (blocks {kw['blocks']})",
              flush=True)
        return volume

    stage._build_volume = timed_build
    table = blast_holes()
    for _ in range(ap.parse_args(argv).calls):
        t = time.perf_counter()
        anisotropy.discover(table, value="au", seed=0)
        print(f"{mode}: discover {time.perf_counter() - t:.2f} s", flush=True)


if __name__ == "__main__":
    main()
