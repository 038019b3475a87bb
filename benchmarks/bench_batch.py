"""Batch speed: many domains of simulated drill-hole composites, with bootstrap.

The target of issue 6 is 20 domains of 5,000 composites each with 100
bootstrap replicates in under 10 minutes on 2 cores. Every domain is a
simulated Gaussian field (spectral simulation, anisotropy.simulate) sampled
along inclined drill-hole strings, exponentiated to a skewed grade; the
batch runs discover + bootstrap + report for every domain.

Usage::

    python benchmarks/bench_batch.py [--domains 20] [--samples 5000]
                                     [--replicates 100] [--jobs 2] [--no-report]

Prints one line per domain and the wall time; results go in
benchmarks/RESULTS.md (batch section).
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time

import numpy as np
import pandas as pd


def make_table(n_domains: int, n_samples: int, seed: int = 0) -> pd.DataFrame:
    from anisotropy.geometry import frame_from_angles, line_to_vector
    from anisotropy.models import NestedModel, Structure
    from anisotropy.simulate import simulate_field

    rng = np.random.default_rng(seed)
    per_hole = 50
    n_holes = max(1, n_samples // per_hole)
    parts = []
    for k in range(n_domains):
        frame = frame_from_angles(rng.uniform(0, 360), rng.uniform(0, 40), rng.uniform(0, 90))
        model = NestedModel(0.15, [Structure("spherical", 0.85, (150.0, 70.0, 20.0))], frame)
        side = np.sqrt(n_holes) * 30.0
        cx, cy = rng.uniform(0, side, n_holes), rng.uniform(0, side, n_holes)
        d = line_to_vector(rng.uniform(0, 360, n_holes), rng.uniform(55, 75, n_holes))
        j = np.arange(per_hole) * 2.0 + 1.0
        pts = (np.stack([cx, cy, np.full(n_holes, 500.0)], 1)[:, None, :]
               + j[None, :, None] * d[:, None, :]).reshape(-1, 3)
        z = simulate_field(pts, model, seed=seed + k, method="spectral")
        parts.append(pd.DataFrame({
            "hole": np.repeat([f"D{k}H{h}" for h in range(n_holes)], per_hole),
            "x": pts[:, 0] + 5000.0 * k, "y": pts[:, 1], "z": pts[:, 2],
            "au": np.round(np.exp(0.2 + 0.9 * z), 3), "domain": f"zone_{k:02d}"}))
    return pd.concat(parts, ignore_index=True)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--domains", type=int, default=20)
    ap.add_argument("--samples", type=int, default=5000)
    ap.add_argument("--replicates", type=int, default=100)
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--no-report", action="store_true")
    ap.add_argument("--out", default=None)
    args = ap.parse_args(argv)

    from anisotropy.batch import run_batch

    t0 = time.perf_counter()
    df = make_table(args.domains, args.samples)
    t_sim = time.perf_counter() - t0
    out = args.out or tempfile.mkdtemp(prefix="bench_batch_")
    print(f"{args.domains} domains x {len(df) // args.domains} composites, "
          f"{args.replicates} replicates, jobs {args.jobs}, cores {os.cpu_count()}; "
          f"simulation {t_sim:.1f} s; out {out}", flush=True)
    t1 = time.perf_counter()
    res = run_batch(df, value="au", domain="domain", hole="hole", out=out, jobs=args.jobs,
                    bootstrap=args.replicates, report=not args.no_report, progress=True)
    wall = time.perf_counter() - t1
    per = [r["seconds"] for r in res.rows if r["seconds"] is not None]
    print(res.summary())
    print(f"batch wall time {wall:.1f} s ({wall / 60:.2f} min); per domain median "
          f"{np.median(per):.1f} s, max {max(per):.1f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
