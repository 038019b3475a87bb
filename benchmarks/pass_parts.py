"""What the pair pass on 89k blast holes spends on fine sums, the map and the blocks.

Builds the volume of ``bench_discover.speed_tables()["blast holes"]`` (log
grades, lag 4 m, 15 lags, the semivariogram's channels, the default coarse
lattice) four ways: fine sums only; with the variogram map; with block sums
sized for the bootstrap; with both (what ``discover`` builds when a block
bootstrap is asked for). One call of each compiles; then ``--rounds`` rounds,
the four in turn, so drift touches all alike.

Run:  python benchmarks/pass_parts.py [--rounds 2]
"""

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

from anisotropy.geometry import fan_for_spacing  # noqa: E402
from anisotropy.pairs import DEFAULT_COARSE_SPACING, build_volume  # noqa: E402
from anisotropy.uncertainty import engine_block_side  # noqa: E402
from bench_discover import speed_tables  # noqa: E402


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rounds", type=int, default=2)
    a = ap.parse_args(argv)
    t = speed_tables()["blast holes"]
    c = t[["x", "y", "z"]].to_numpy()
    v = np.log(t["au"].to_numpy())
    lag, n_lags = 4.0, 15
    side = float(engine_block_side(c, max_side=(n_lags + 0.5) * lag))
    est = "semivariogram"
    cases = {"fine sums only": dict(blocks=False, map_cell=False),
             "with the map": dict(blocks=False, map_channels=est),
             "with the blocks": dict(blocks=side, block_channels=est, map_cell=False),
             "with both": dict(blocks=side, block_channels=est, map_channels=est)}
    kw = dict(lag=lag, n_lags=n_lags, coarse_directions=fan_for_spacing(DEFAULT_COARSE_SPACING),
              progress=False, channels=est)
    times = {k: [] for k in cases}
    for r in range(a.rounds + 1):
        for name, extra in cases.items():
            t0 = time.perf_counter()
            vol = build_volume(c, v, **kw, **extra)
            if r:
                times[name].append(time.perf_counter() - t0)
    print(f"{vol.n_pairs:,} pairs, block side {side:.3g} m")
    print("| pass | seconds |\n|---|---|")
    for name, ts in times.items():
        print(f"| {name} | {', '.join(f'{x:.2f}' for x in ts)} |")


if __name__ == "__main__":
    main()
