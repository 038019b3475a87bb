"""Speed and memory of the pair engine against a plain cKDTree + NumPy reference.

Layout: an invented jittered blast-hole pattern (6 benches, 4 m pattern, 4 m
bench height, values lognormal), about 90,000 samples, lag 4 m x 15 lags
(pairs up to 62 m). Workloads (each is what the engine runs for that request):

* ``omni``: the omnidirectional semivariogram through the public
  ``anisotropy.experimental_variogram`` (the exact pass; it accumulates only
  the channels the estimator reads);
* ``fan``: a 400-direction fan of semivariograms (22.5 degree tolerance) read
  from a lag volume built for it: ``build_volume(channels="semivariogram",
  blocks=False, map_cell=False)`` then ``variogram_fan``;
* ``fan_all_channels``: the same with all 15 channels in the fine sums (what
  any estimator can be read from afterwards);
* ``discovery_pass``: ``build_volume`` with its defaults (all channels, block
  sums for the bootstrap, Cartesian map) and the fan read from it;
* ``discovery_pass_estimator``: the same keeping one estimator's channels
  everywhere (``channels = block_channels = map_channels =
  "semivariogram"``), which is what ``anisotropy.discover`` builds.

The reference is the plain way: ``scipy.spatial.cKDTree.query_ball_point``
per sample, pairs j > i, NumPy distances and ``bincount`` per class (and, for
the fan, a mask and bincount per direction). It runs on a random subset of
tail samples and is extrapolated by pairs (its cost is linear in pairs); the
output says so.

Every measurement runs in its own subprocess so that the peak resident memory
(``resource.getrusage(...).ru_maxrss``) is its own. Pairs per second = pairs
within the maximum distance / wall seconds. CPU seconds are reported too,
because the machine may be shared.

Usage::

    python benchmarks/bench_pairs.py            # everything, JSON to benchmarks/bench_pairs.json
    python benchmarks/bench_pairs.py --quick    # smaller layout, for a smoke test
    python benchmarks/bench_pairs.py --main     # workloads only (no cell sweep, no scaling)
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import resource
import subprocess
import sys
import time

import numpy as np

LAG, N_LAGS = 4.0, 15  # max distance (15.5 * 4) = 62 m
TOL_DEG = 22.5
N_DIRS = 400


def blast_holes(n_total, benches=6, pattern=4.0, bench_height=4.0, seed=2026):
    """Jittered blast-hole layout at fixed density; lognormal values."""
    rng = np.random.default_rng(seed)
    per = n_total / benches
    side = int(round(np.sqrt(per)))
    g = np.arange(side) * pattern
    X, Y = np.meshgrid(g, g, indexing="ij")
    out = []
    for b in range(benches):
        p = np.column_stack([X.ravel(), Y.ravel(), np.full(X.size, -b * bench_height)])
        p[:, :2] += rng.uniform(-0.5, 0.5, (len(p), 2)) * pattern * 0.25
        p[:, 2] += rng.uniform(-0.25, 0.25, len(p))
        out.append(p)
    c = np.vstack(out)
    v = rng.lognormal(0.0, 1.0, len(c))
    return c, v


def _peak_mb():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


VOLUME_WORKLOADS = {
    "fan": dict(channels="semivariogram", blocks=False, map_cell=False),
    "fan_all_channels": dict(blocks=False, map_cell=False),
    "discovery_pass": {},
    "discovery_pass_estimator": dict(channels="semivariogram", block_channels="semivariogram",
                                     map_channels="semivariogram"),
}


def run_engine(n, workload, divisions=None):
    from anisotropy import experimental_variogram
    from anisotropy.directional import variogram_fan
    from anisotropy.geometry import fibonacci_hemisphere
    from anisotropy.pairs import build_volume

    c, v = blast_holes(n)
    if workload == "omni":
        # compile (cached on disk after the first run) on a tiny problem first
        experimental_variogram(c[:500], v[:500], lag=LAG, n_lags=N_LAGS)
        base_mb = _peak_mb()
        t0, p0 = time.perf_counter(), time.process_time()
        df = experimental_variogram(c, v, lag=LAG, n_lags=N_LAGS)
        t2, p2 = time.perf_counter(), time.process_time()
        assert np.isfinite(df["value"]).any()
        n_pairs = int(df["pairs"].sum())
        return {"n": len(c), "pairs": n_pairs, "candidates": None, "cell": None,
                "build_s": t2 - t0, "readout_s": 0.0, "wall_s": t2 - t0, "cpu_s": p2 - p0,
                "pairs_per_s": n_pairs / (t2 - t0), "peak_mb": _peak_mb(), "before_mb": base_mb,
                "accumulator_mb": 0.0}
    kw = dict(VOLUME_WORKLOADS[workload])
    if divisions is not None:
        kw["cell_divisions"] = int(divisions)
    build_volume(c[:500], v[:500], lag=LAG, n_lags=N_LAGS, progress=False, **kw)
    base_mb = _peak_mb()
    t0, p0 = time.perf_counter(), time.process_time()
    vol = build_volume(c, v, lag=LAG, n_lags=N_LAGS, progress=False, **kw)
    t1 = time.perf_counter()
    out = variogram_fan(vol, fibonacci_hemisphere(N_DIRS), angular_tolerance=TOL_DEG).value
    t2, p2 = time.perf_counter(), time.process_time()
    assert np.isfinite(out).any()
    return {"n": len(c), "pairs": vol.n_pairs, "candidates": vol.stats["candidates"],
            "cell": vol.stats["cell"], "build_s": t1 - t0, "readout_s": t2 - t1,
            "wall_s": t2 - t0, "cpu_s": p2 - p0, "pairs_per_s": vol.n_pairs / (t2 - t0),
            "peak_mb": _peak_mb(), "before_mb": base_mb,
            "accumulator_mb": vol.memory_bytes / 2**20}


def run_reference(n, workload, subset):
    """Plain cKDTree.query_ball_point + NumPy on ``subset`` tail samples, extrapolated."""
    from scipy.spatial import cKDTree
    from anisotropy.geometry import fibonacci_hemisphere

    c, v = blast_holes(n)
    maxd = (N_LAGS + 0.5) * LAG
    rng = np.random.default_rng(0)
    tails = np.sort(rng.choice(len(c), size=min(subset, len(c)), replace=False))
    dirs = fibonacci_hemisphere(N_DIRS)
    cos_t = np.cos(np.radians(TOL_DEG))
    t0, p0 = time.perf_counter(), time.process_time()
    tree = cKDTree(c)
    cnt = np.zeros((N_DIRS if workload == "fan" else 1, N_LAGS + 1))
    sq = np.zeros_like(cnt)
    done = 0
    step = 256
    for s in range(0, len(tails), step):
        idx = tails[s:s + step]
        lists = tree.query_ball_point(c[idx], r=maxd)
        ii = np.concatenate([np.full(len(l), i) for i, l in zip(idx, lists)])
        jj = np.concatenate([np.asarray(l, dtype=np.int64) for l in lists])
        keep = jj > ii
        ii, jj = ii[keep], jj[keep]
        V = c[jj] - c[ii]
        d = np.sqrt((V * V).sum(axis=1))
        k = np.ceil(d / LAG - 0.5).astype(np.int64)
        ok = k <= N_LAGS
        V, d, k = V[ok], d[ok], k[ok]
        dv2 = (v[jj[ok]] - v[ii[ok]]) ** 2
        done += len(d)
        if workload == "omni":
            cnt[0] += np.bincount(k, minlength=N_LAGS + 1)
            sq[0] += np.bincount(k, weights=dv2, minlength=N_LAGS + 1)
        else:
            for di, u in enumerate(dirs):
                m = np.abs(V @ u) >= d * cos_t
                cnt[di] += np.bincount(k[m], minlength=N_LAGS + 1)
                sq[di] += np.bincount(k[m], weights=dv2[m], minlength=N_LAGS + 1)
    t1, p1 = time.perf_counter(), time.process_time()
    return {"n": len(c), "tails": len(tails), "pairs_done": int(done), "wall_s": t1 - t0,
            "cpu_s": p1 - p0, "pairs_per_s": done / (t1 - t0), "peak_mb": _peak_mb(),
            "extrapolated": len(tails) < len(c)}


def _child(args):
    if args.what == "engine":
        res = run_engine(args.n, args.workload, args.divisions)
    else:
        res = run_reference(args.n, args.workload, args.subset)
    print(json.dumps(res))


def _spawn(*argv):
    out = subprocess.run([sys.executable, __file__, "--child", *map(str, argv)],
                         capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def machine():
    model = "unknown"
    try:
        with open("/proc/cpuinfo") as fh:
            for line in fh:
                if line.startswith("model name"):
                    model = line.split(":", 1)[1].strip()
                    break
    except OSError:
        pass
    try:
        load = os.getloadavg()
    except OSError:
        load = None
    return {"nproc": os.cpu_count(), "cpu": model, "python": platform.python_version(),
            "date_utc": time.strftime("%Y-%m-%d %H:%M", time.gmtime()), "loadavg": load}


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--child", action="store_true", help=argparse.SUPPRESS)
    ap.add_argument("what", nargs="?", default=None)
    ap.add_argument("workload", nargs="?", default=None)
    ap.add_argument("n", nargs="?", type=int, default=None)
    ap.add_argument("extra", nargs="?", default=None)
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--main", action="store_true", help="workloads only: no cell sweep, no scaling")
    ap.add_argument("--out", default=os.path.join(os.path.dirname(__file__), "bench_pairs.json"))
    args = ap.parse_args(argv)
    if args.child:
        args.divisions = None if args.extra in (None, "None") else int(args.extra)
        args.subset = 2000 if args.extra in (None, "None") else int(args.extra)
        return _child(args)

    n_main = 20_000 if args.quick else 90_000
    res = {"machine": machine(), "layout": "6 benches, 4 m pattern, 4 m bench, lognormal",
           "lag": LAG, "n_lags": N_LAGS, "max_distance": (N_LAGS + 0.5) * LAG}
    print(json.dumps(res["machine"]), flush=True)
    refs = {}
    for wl in ("omni", "fan", "fan_all_channels", "discovery_pass", "discovery_pass_estimator"):
        e = _spawn("engine", wl, n_main, "None")
        kind = "omni" if wl == "omni" else "fan"
        if kind not in refs:  # one reference run per kind, in the same run as the engine
            refs[kind] = _spawn("reference", kind, n_main, 3000 if kind == "omni" else 200)
        r = refs[kind]
        res[wl] = {"engine": e, "reference": r, "speedup": e["pairs_per_s"] / r["pairs_per_s"]}
        print(f"{wl}: engine {e['pairs']:,} pairs {e['wall_s']:.2f} s "
              f"({e['pairs_per_s'] / 1e6:.1f} M pairs/s, cpu {e['cpu_s']:.2f} s, "
              f"peak {e['peak_mb']:.0f} MB); reference {r['pairs_per_s'] / 1e6:.2f} M pairs/s "
              f"on {r['tails']} tail samples (extrapolated); ratio {res[wl]['speedup']:.0f}x",
              flush=True)
    res["cells"] = []
    res["scaling"] = []
    if args.main:
        res["machine_end"] = machine()
        with open(args.out, "w") as fh:
            json.dump(res, fh, indent=1)
        print(f"written {args.out}")
        return
    for div in (4, 6, 8, 10):
        e = _spawn("engine", "fan", n_main, div)
        res["cells"].append({"divisions": div, **e})
        print(f"cell R/{div} = {e['cell']:.1f} m: candidates/pairs "
              f"{e['candidates'] / e['pairs']:.2f}, {e['wall_s']:.2f} s, cpu {e['cpu_s']:.2f} s",
              flush=True)
    for wl, n in [(wl, n) for wl in ("omni", "fan")
                  for n in ((5_000, 10_000, 20_000) if args.quick
                            else (20_000, 40_000, 80_000, 160_000))]:
        e = _spawn("engine", wl, n, "None")
        res["scaling"].append({"workload": wl, **e})
        print(f"scaling {wl} n={e['n']:,}: {e['pairs']:,} pairs, {e['wall_s']:.2f} s, cpu "
              f"{e['cpu_s']:.2f} s, {e['cpu_s'] / e['pairs'] * 1e9:.1f} cpu-ns/pair, "
              f"peak {e['peak_mb']:.0f} MB", flush=True)
    res["machine_end"] = machine()
    with open(args.out, "w") as fh:
        json.dump(res, fh, indent=1)
    print(f"written {args.out}")


if __name__ == "__main__":
    main()
