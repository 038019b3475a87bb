"""Cost of the bootstrap-sized blocks on the 89k blast holes of ``bench_discover.speed()``.

``discover`` builds its pair volume with blocks sized for the block bootstrap
(:func:`anisotropy.uncertainty.blocks.engine_block_side`) whether or not a bootstrap
follows. This runs ``discover`` once for its lag classes, then builds the
same volume (the semivariogram's channels, the default coarse fan) with the
pair engine's default blocks and with the sized ones, alternately, in one
process::

    python benchmarks/block_sizing_cost.py [--repeats 3]

The first build of each kind compiles; it is printed but not in the medians.
"""

import argparse
import time

import numpy as np

import anisotropy
from anisotropy.geometry import fan_for_spacing
from anisotropy.pairs import DEFAULT_COARSE_SPACING, build_volume
from anisotropy.uncertainty import engine_block_side
from bench_discover import speed_tables


def _timed_build(coords, values, lags, blocks):
    t = time.perf_counter()
    build_volume(coords, values, lag=lags.unit_lag, n_lags=lags.n_lags,
                 coarse_directions=fan_for_spacing(DEFAULT_COARSE_SPACING), progress=False,
                 channels="semivariogram", block_channels="semivariogram",
                 map_channels="semivariogram", blocks=blocks)
    return time.perf_counter() - t


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args(argv)
    table = speed_tables()["blast holes"]
    t = time.perf_counter()
    D = anisotropy.discover(table, value="au", seed=0)
    print(f"discover {time.perf_counter() - t:.2f} s (compiling; sized blocks)", flush=True)
    coords = np.asarray(D.samples.coords, float)
    values = np.asarray(D.prepared.values, float)
    lags = D.lag_choice
    sized = float(engine_block_side(coords, max_side=lags.max_distance))
    times = {"default": [], "sized": []}
    for k in range(args.repeats + 1):
        for name, blocks in (("default", None), ("sized", sized)):
            s = _timed_build(coords, values, lags, blocks)
            print(f"{name} blocks: pair pass {s:.2f} s", flush=True)
            if k:
                times[name].append(s)
    for name, ts in times.items():
        print(f"{name}: median {np.median(ts):.2f} s over {len(ts)} "
              f"({', '.join(f'{x:.2f}' for x in ts)})")


if __name__ == "__main__":
    main()
