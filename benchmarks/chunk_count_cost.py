"""What a fixed number of work chunks in the pair pass would cost.

The pair passes add into ``max(4, threads)`` chunk slices
(``pairs.planning._n_chunks``), so a machine with more than four Numba
threads adds the same pairs in another order and its sums differ in the
last bits from a smaller machine's. A fixed count would make every machine
agree; this script measures what counts of 4, 8 and 16 cost on this
machine: the pass's time (best of ``--repeats``) and its accumulator memory
on the two speed data sets of ``bench_discover.py``, with the lags and
channels ``discover`` uses there, and how far the sums of each count lie
from those of 4 (the last-bit differences a fixed count would remove).
It cannot show what a count below the thread count costs on a larger
machine (this one has two cores).

Run:  python benchmarks/chunk_count_cost.py [--counts 4 8 16] [--repeats 3]
"""

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

import anisotropy  # noqa: E402
from anisotropy.pairs import build  # noqa: E402
from bench_discover import speed_tables  # noqa: E402


def one_case(table, hole, counts, repeats):
    """Rows (count, best seconds, MB, largest relative difference from the first count);
    the lags are those ``discover`` chooses on the table."""
    D = anisotropy.discover(table, value="au", seed=0, **({"hole": hole} if hole else {}))
    coords = np.column_stack([table[c].to_numpy(float) for c in "xyz"])
    values = table["au"].to_numpy(float)   # the pass's cost does not depend on the values
    lag, n_lags = D.lags["unit_lag"], D.lags["n_lags"]
    shipped = build._n_chunks
    rows, first = [], None
    try:
        for n in counts:
            build._n_chunks = lambda n=n: n
            best, vol = np.inf, None
            for _ in range(repeats):
                t = time.perf_counter()
                vol = build.build_volume(coords, values, lag=lag, n_lags=n_lags,
                                         channels="semivariogram", map_channels="semivariogram",
                                         blocks=False, progress=False)
                best = min(best, time.perf_counter() - t)
            s = vol.sums[..., [0, 2]]   # pair counts and squared differences
            if first is None:
                first = s
            ok = np.isfinite(s) & (np.abs(first) > 0)
            diff = float(np.max(np.abs(s[ok] / first[ok] - 1.0))) if ok.any() else 0.0
            rows.append((n, best, vol.memory_bytes / 2**20, diff))
    finally:
        build._n_chunks = shipped
    return rows


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--counts", type=int, nargs="+", default=[4, 8, 16])
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args(argv)
    tables = speed_tables()
    print("| case | chunks | pass s (best) | accumulators MB | largest relative difference "
          "of the sums from the first count |")
    print("|---|---|---|---|---|")
    for case, hole in (("blast holes", None), ("composites", "hole")):
        for n, sec, mb, diff in one_case(tables[case], hole, args.counts, args.repeats):
            print(f"| {case} | {n} | {sec:.2f} | {mb:.0f} | {diff:.1e} |", flush=True)


if __name__ == "__main__":
    main()
