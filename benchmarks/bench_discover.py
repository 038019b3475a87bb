"""Accuracy and speed of ``anisotropy.discover`` (issue 4).

Accuracy: for each scenario, ``--realisations`` seeded Gaussian fields are
simulated by Cholesky factorisation (``scipy.linalg.cholesky``) of the
covariance built here from the model formulas (spherical: Journel &
Huijbregts 1978, ch. II), independent of ``anisotropy.models`` and
``anisotropy.simulate``.  Each realisation is passed through

* the engine: ``anisotropy.discover`` (joint nested fit over the volume);
* the naive baseline: a fixed fan (about 15 degrees apart, 22.5 degree
  tolerance, common practice), the range of each direction picked as the
  first lag where the experimental variogram reaches 95 % of the variance,
  and the linear least-squares ellipsoid through those ranges
  (``anisotropy.fitting.linear_ellipsoid``) — read from the same lag volume.

Reported: median and worst angular error of the major and minor axes
(undirected), median absolute relative error of the three ranges of the
longest structure, and the share of realisations where the engine warned
that an axis is not resolved.

Speed: discovery without bootstrap on a jittered blast-hole layout of about
90,000 samples (6 benches, 4 m pattern, 4 m benches, lognormal grades) and
on 5,000 drill-hole composites.

Run:  python benchmarks/bench_discover.py [--realisations 12] [--skip-speed]
"""

from __future__ import annotations

import argparse
import json
import sys
import time

import numpy as np
import pandas as pd
from scipy.linalg import cholesky

import anisotropy
from anisotropy.fitting import linear_ellipsoid


def frame(trend, plunge, rotation):
    t, p, r = np.radians([trend, plunge, rotation])
    a = np.array([np.sin(t) * np.cos(p), np.cos(t) * np.cos(p), -np.sin(p)])
    s0 = np.array([np.cos(t), -np.sin(t), 0.0])
    m0 = np.cross(a, s0)
    s = np.cos(r) * s0 + np.sin(r) * m0
    return np.column_stack([a, s, np.cross(a, s)])


def covariance(coords, R, nugget, structures):
    """Covariance matrix of nested spherical structures sharing the frame R."""
    local = (coords[:, None, :] - coords[None, :, :]) @ R
    C = np.zeros((len(coords), len(coords)))
    for sill, ranges in structures:
        h = np.sqrt(np.sum((local / np.asarray(ranges, float)) ** 2, axis=-1))
        hc = np.minimum(h, 1.0)
        C += sill * (1.0 - 1.5 * hc + 0.5 * hc ** 3)
    del local
    C[np.diag_indices_from(C)] += nugget
    return C


def simulate(coords, R, nugget, structures, seed):
    C = covariance(coords, R, nugget, structures)
    L = cholesky(C, lower=True, overwrite_a=True, check_finite=False)
    return L @ np.random.default_rng(seed).standard_normal(len(coords))


def drill_holes(rng, spacing, n, length, composite, trend, plunge):
    t, p = np.radians([trend, plunge])
    d = np.array([np.sin(t) * np.cos(p), np.cos(t) * np.cos(p), -np.sin(p)])
    pts, ids = [], []
    for i in range(n[0]):
        for j in range(n[1]):
            dd = d + rng.normal(0, 0.02, 3)
            dd /= np.linalg.norm(dd)
            c = np.array([i * spacing, j * spacing, 0.0]) + np.r_[rng.normal(0, 2.0, 2), 0.0]
            s = np.arange(composite / 2, length, composite)
            pts.append(c + s[:, None] * dd)
            ids += [f"FH{i:02d}{j:02d}"] * len(s)
    return np.concatenate(pts), np.array(ids)


SCENARIOS = {
    # name: (layout, truth frame, nugget, [(sill, ranges)], layout parameters)
    "steep vein, scattered": dict(
        layout="scattered", R=frame(45, 60, 20), nugget=0.1,
        structures=[(0.9, (140, 70, 22))], box=(250, 250, 250), n=1500),
    "flat blanket, scattered": dict(
        layout="scattered", R=frame(30, 5, 3), nugget=0.15,
        structures=[(0.85, (150, 90, 12))], box=(320, 320, 80), n=2000),
    "plunging shoot (2 structures), scattered": dict(
        layout="scattered", R=frame(135, 35, -15), nugget=0.05,
        structures=[(0.45, (35, 25, 10)), (0.5, (160, 70, 30))], box=(260, 260, 200), n=2000),
    "steep vein, scattered dense": dict(
        layout="scattered", R=frame(45, 60, 20), nugget=0.1,
        structures=[(0.9, (140, 70, 22))], box=(250, 250, 250), n=3000),
    "plunging shoot, drill holes": dict(
        layout="holes", R=frame(120, 30, 0), nugget=0.15, structures=[(0.85, (110, 60, 20))],
        holes=dict(spacing=25.0, n=(8, 8), length=80.0, composite=2.0, trend=300.0,
                   plunge=60.0)),
    "steep vein, drill holes": dict(
        layout="holes", R=frame(45, 60, 20), nugget=0.1, structures=[(0.9, (140, 70, 22))],
        holes=dict(spacing=30.0, n=(8, 7), length=120.0, composite=2.5, trend=225.0,
                   plunge=45.0)),
}


def axis_err(a, b):
    return float(np.degrees(np.arccos(min(1.0, abs(float(np.dot(a, b)))))))


def baseline(D, variance):
    """Fixed fan + range picking at 95 % of the variance + linear ellipsoid."""
    from anisotropy.directional import variogram_fan
    from anisotropy.geometry import fan_for_spacing

    dirs = fan_for_spacing(15.0)
    fan = variogram_fan(D.volume_, dirs, angular_tolerance=22.5)
    ranges = np.full(len(dirs), np.nan)
    for i in range(len(dirs)):
        ok = (fan.pairs[i] >= 30) & np.isfinite(fan.value[i])
        d, g = fan.distance[i][ok], fan.value[i][ok]
        hit = np.flatnonzero(g >= 0.95 * variance)
        if hit.size:
            ranges[i] = d[hit[0]]
        elif d.size:
            ranges[i] = d[-1]  # never reached: censored at the longest lag
    e = linear_ellipsoid(dirs, ranges)
    return e.frame, e.ranges


def one(name, spec, seed):
    rng = np.random.default_rng(seed)
    holes = None
    if spec["layout"] == "scattered":
        coords = rng.uniform([0, 0, 0], spec["box"], size=(spec["n"], 3))
    else:
        coords, holes = drill_holes(rng, **spec["holes"])
    t0 = time.perf_counter()
    v = simulate(coords, spec["R"], spec["nugget"], spec["structures"], seed + 1000)
    t_sim = time.perf_counter() - t0
    df = pd.DataFrame({"x": coords[:, 0], "y": coords[:, 1], "z": coords[:, 2],
                       "grade": v + 10.0})
    if holes is not None:
        df["hole"] = holes
    t0 = time.perf_counter()
    D = anisotropy.discover(df, value="grade", hole="hole" if holes is not None else None,
                            transform="raw", seed=seed)
    t_eng = time.perf_counter() - t0
    R = spec["R"]
    true_r = np.array(max(spec["structures"], key=lambda s: s[1][0])[1], float)
    longest = max(D.model.structures, key=lambda s: s.ranges[0])
    out = {"scenario": name, "seed": seed, "n": len(coords), "seconds": t_eng,
           "sim_seconds": t_sim,
           "engine": {"major": axis_err(D.frame[:, 0], R[:, 0]),
                      "minor": axis_err(D.frame[:, 2], R[:, 2]),
                      "range_err": list(np.abs(np.array(longest.ranges) / true_r - 1)),
                      "structures": len(D.model.structures),
                      "unresolved": list(D.diagnostics.get("unresolved_axes", []))}}
    Fb, rb = baseline(D, float(np.var(df["grade"])))
    out["baseline"] = {"major": axis_err(Fb[:, 0], R[:, 0]), "minor": axis_err(Fb[:, 2], R[:, 2]),
                       "range_err": list(np.abs(rb / true_r - 1))}
    return out


def summarise(rows):
    lines = ["| scenario | n | method | major median / worst (deg) | minor median / worst (deg) "
             "| range error median (major, semi, minor) | unresolved warned | discover s (median) |",
             "|---|---|---|---|---|---|---|---|"]
    for name in dict.fromkeys(r["scenario"] for r in rows):
        rr = [r for r in rows if r["scenario"] == name]
        for method in ("engine", "baseline"):
            maj = np.array([r[method]["major"] for r in rr])
            mi = np.array([r[method]["minor"] for r in rr])
            re = np.median(np.array([r[method]["range_err"] for r in rr]), axis=0)
            unres = (f"{sum(bool(r['engine']['unresolved']) for r in rr)}/{len(rr)}"
                     if method == "engine" else "")
            secs = f"{np.median([r['seconds'] for r in rr]):.1f}" if method == "engine" else ""
            lines.append(f"| {name} | {rr[0]['n']} | {method} | {np.median(maj):.1f} / "
                         f"{maj.max():.1f} | {np.median(mi):.1f} / {mi.max():.1f} | "
                         f"{re[0]:.0%}, {re[1]:.0%}, {re[2]:.0%} | {unres} | {secs} |")
    return "\n".join(lines)


def speed():
    from anisotropy.simulate import simulate_field
    from anisotropy.models import NestedModel, Structure

    rows = []
    # blast holes: 6 benches, 4 m pattern, 4 m benches, jittered, lognormal grades
    rng = np.random.default_rng(1)
    nx = 122
    gx, gy = np.meshgrid(np.arange(nx) * 4.0, np.arange(nx) * 4.0)
    pts = []
    for b in range(6):
        p = np.column_stack([gx.ravel(), gy.ravel(), np.full(gx.size, -4.0 * b)])
        p[:, :2] += rng.normal(0, 0.4, (len(p), 2))
        pts.append(p)
    coords = np.concatenate(pts)
    model = NestedModel(0.2, [Structure("spherical", 0.8, (80, 40, 15))], frame(60, 10, 0))
    y = simulate_field(coords, model, seed=2, method="spectral")
    grades = np.exp(0.8 * y)
    df = pd.DataFrame({"x": coords[:, 0], "y": coords[:, 1], "z": coords[:, 2], "au": grades})
    t0 = time.perf_counter()
    D = anisotropy.discover(df, value="au", seed=0)
    rows.append({"case": f"blast holes, {len(coords):,} samples", "seconds":
                 time.perf_counter() - t0, "pairs": D.diagnostics["pairs"],
                 "pair_pass": D.diagnostics["volume"]["seconds"], "lags": D.lags})
    # 5,000 composites: 100 holes x 50 composites of 2 m
    rng = np.random.default_rng(3)
    coords, holes = drill_holes(rng, spacing=20.0, n=(10, 10), length=100.0, composite=2.0,
                                trend=300.0, plunge=60.0)
    model = NestedModel(0.15, [Structure("spherical", 0.85, (110, 60, 20))], frame(120, 30, 0))
    y = simulate_field(coords, model, seed=4, method="spectral")
    df = pd.DataFrame({"x": coords[:, 0], "y": coords[:, 1], "z": coords[:, 2],
                       "au": np.exp(0.8 * y), "hole": holes})
    t0 = time.perf_counter()
    D = anisotropy.discover(df, value="au", hole="hole", seed=0)
    rows.append({"case": f"drill-hole composites, {len(coords):,} samples", "seconds":
                 time.perf_counter() - t0, "pairs": D.diagnostics["pairs"],
                 "pair_pass": D.diagnostics["volume"]["seconds"], "lags": D.lags})
    return rows


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--realisations", type=int, default=12)
    ap.add_argument("--scenarios", nargs="*", default=None)
    ap.add_argument("--skip-speed", action="store_true")
    ap.add_argument("--skip-accuracy", action="store_true")
    ap.add_argument("--json", default=None, help="write all rows to this JSON file")
    a = ap.parse_args(argv)
    rows = []
    if not a.skip_accuracy:
        for name, spec in SCENARIOS.items():
            if a.scenarios and not any(s in name for s in a.scenarios):
                continue
            for k in range(a.realisations):
                r = one(name, spec, seed=100 + k)
                rows.append(r)
                print(f"{name} seed {r['seed']}: engine major {r['engine']['major']:.1f} "
                      f"minor {r['engine']['minor']:.1f} | baseline major "
                      f"{r['baseline']['major']:.1f} minor {r['baseline']['minor']:.1f} | "
                      f"{r['seconds']:.1f} s", file=sys.stderr, flush=True)
        print(summarise(rows))
    sp = []
    if not a.skip_speed:
        sp = speed()
        print("\n| case | discover s (no bootstrap) | pairs | pair pass s | lag / n_lags |")
        print("|---|---|---|---|---|")
        for r in sp:
            print(f"| {r['case']} | {r['seconds']:.1f} | {r['pairs']:,} | {r['pair_pass']:.1f} "
                  f"| {r['lags']['unit_lag']:.3g} m / {r['lags']['n_lags']} |")
    if a.json:
        with open(a.json, "w") as f:
            json.dump({"accuracy": rows, "speed": sp}, f, indent=1, default=float)


if __name__ == "__main__":
    main()
