"""Old against new pair kernels in the same process: the split of the volume passes (issue 14).

Loads ``anisotropy/pairs/_kernels.py`` as it was at a git revision (default
``79156e1``, before the split) into a module in a temporary directory, and
times :func:`anisotropy.pairs.build_volume` with the package's ``_kernels``
swapped for it and with the current one, alternately (old, new, old, new, ...),
after one compiling run of each. It also checks that the sums, block sums and
map sums of the two are bit-identical.

Layouts: ``scattered`` (30,000 uniform random samples in 300 x 300 x 150 m,
lag 4.8 m x 12 classes: pairs to 60 m) and ``blastholes`` (about 89,000
points, 6 benches, 4 x 4 m pattern, jittered; ``bench_pairs.blast_holes``;
lag 4 m x 15: pairs to 62 m). Workloads (``build_volume`` options):
``default`` (all channels, block sums block by block, map), ``estimator``
(the semivariogram's channels everywhere, as ``discover`` builds) and
``per_pair_blocks`` (semivariogram fine sums, all-channel block sums: the
block of every pair is found per pair by ``volume_pass``).

Usage::

    python benchmarks/bench_kernel_split.py [--rev 79156e1] [--repeats 3] [--quick]
        [--layout scattered|blastholes] [--workload default|estimator|per_pair_blocks]

Prints, per layout and workload, the median wall seconds and wall ns per pair
(all threads) of each version, and new / old.
"""

from __future__ import annotations

import argparse
import importlib
import os
import subprocess
import sys
import tempfile
import time

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
from bench_pairs import blast_holes  # noqa: E402

import anisotropy.pairs as P  # noqa: E402

WORKLOADS = {
    "default": {},
    "estimator": dict(channels="semivariogram", block_channels="semivariogram",
                      map_channels="semivariogram"),
    "per_pair_blocks": dict(channels="semivariogram", block_channels=None,
                            map_channels="semivariogram"),
}


def old_kernels(rev):
    """The ``_kernels`` module of git revision ``rev``, imported from a temporary directory.

    The directory name is fixed per revision so that Numba's on-disk cache is reused; the
    module is imported by name (Numba's cache must be able to import it again).
    """
    root = os.path.dirname(HERE)
    src = subprocess.run(["git", "show", f"{rev}:anisotropy/pairs/_kernels.py"], cwd=root,
                         check=True, capture_output=True, text=True).stdout
    d = os.path.join(tempfile.gettempdir(), f"anisotropy_kernels_{rev}")
    os.makedirs(d, exist_ok=True)
    name = f"kernels_{rev}"
    path = os.path.join(d, name + ".py")
    if not os.path.exists(path) or open(path).read() != src:
        with open(path, "w") as fh:
            fh.write(src)
    sys.path.insert(0, d)
    return importlib.import_module(name)


def layouts(quick):
    rng = np.random.default_rng(2026)
    n = 3000 if quick else 30_000
    side = 300.0 * (0.1 ** (1 / 3) if quick else 1.0)
    c = rng.random((n, 3)) * [side, side, side / 2]
    yield "scattered", c, rng.lognormal(0.0, 1.0, n), 4.8, 12
    c, v = blast_holes(9_000 if quick else 89_000)
    yield "blastholes", c, v, 4.0, 15


def run(mod, c, v, lag, n_lags, kw):
    """Wall seconds of one build_volume with ``mod`` as the kernels, and the volume."""
    keep = P._kernels
    P._kernels = mod
    try:
        t0 = time.perf_counter()
        vol = P.build_volume(c, v, lag=lag, n_lags=n_lags, progress=False, **kw)
        return time.perf_counter() - t0, vol
    finally:
        P._kernels = keep


def same_bits(a, b):
    return all(getattr(a, k).tobytes() == getattr(b, k).tobytes()
               for k in ("sums", "block_sums", "map_sums"))


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rev", default="79156e1", help="git revision of the old kernels")
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--quick", action="store_true", help="small layouts (smoke test)")
    ap.add_argument("--layout", choices=("scattered", "blastholes"), help="only this layout")
    ap.add_argument("--workload", choices=tuple(WORKLOADS), help="only this workload")
    args = ap.parse_args(argv)
    old, new = old_kernels(args.rev), P._kernels
    print(f"old: {args.rev} ({old.__file__}); new: {new.__file__}")
    print(f"{'layout':11s} {'workload':16s} {'pairs':>12s} {'old s':>7s} {'new s':>7s} "
          f"{'old ns/pair':>11s} {'new ns/pair':>11s} {'new/old':>7s} identical")
    for name, c, v, lag, n_lags in layouts(args.quick):
        if args.layout not in (None, name):
            continue
        for wl, kw in WORKLOADS.items():
            if args.workload not in (None, wl):
                continue
            _, vo = run(old, c, v, lag, n_lags, kw)  # compile or load from cache, warm up
            _, vn = run(new, c, v, lag, n_lags, kw)
            t_old, t_new = [], []
            for _ in range(args.repeats):
                t_old.append(run(old, c, v, lag, n_lags, kw)[0])
                t_new.append(run(new, c, v, lag, n_lags, kw)[0])
            to, tn = float(np.median(t_old)), float(np.median(t_new))
            print(f"{name:11s} {wl:16s} {vo.n_pairs:12,d} {to:7.2f} {tn:7.2f} "
                  f"{1e9 * to / vo.n_pairs:11.2f} {1e9 * tn / vo.n_pairs:11.2f} "
                  f"{tn / to:7.3f} {same_bits(vo, vn)}", flush=True)


if __name__ == "__main__":
    main()
