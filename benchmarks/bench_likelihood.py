"""Speed of the likelihood refinement: analytic gradient against forward differences (issue 16).

Two layouts, each with one Gaussian field simulated by Cholesky factorisation
(``scipy.linalg.cholesky``) of a covariance written here from the published
spherical formula (Journel & Huijbregts 1978, ch. II), independent of
``anisotropy.models`` and ``anisotropy.simulate``:

* ``holes``: about 1,800 drill-hole composites (36 inclined holes on a 30 m
  collar grid, 2 m composites);
* ``scattered``: 2,000 samples uniform in a box.

True model: nugget 0.1, one spherical structure 0.9 with ranges
120 / 60 / 20 m in a frame turned (azimuth 35, dip 25, rake 10 degrees); the
search starts 10 degrees off with ranges 20 % off. On each layout
``refine_frame_likelihood`` runs with the settings ``discover`` uses
(30 neighbours, 2,000 samples at most, ``ftol=1e-5``), once with
``gradient="numeric"`` (SciPy's forward differences: the code path of main at
8eefe90, same kernel and options) and once with ``gradient="analytic"``, for
the one-structure model and for the two-structure model discover tries next
(a shorter structure at 0.3 of the ranges). Both share one
``VecchiaSetup`` per layout (built once, timed separately). Reported: wall
time, function and gradient evaluations, the negative log-likelihood
reached, the largest angle between the two refined frames' axes, and each
frame's major/minor-axis error against the truth.

With ``--main DIR`` (a checkout of main at 8eefe90, e.g.
``git archive 8eefe90 | tar -x -C DIR``), the whole discovery (no
bootstrap) of the demo's shoot domain (1,764 composites, holes given) is
also timed for that tree and for this one, each in its own process, warm
(the second of two runs), with the largest angle between their frames.

Run:  python benchmarks/bench_likelihood.py [--seed 1] [--repeats 1] [--main DIR]
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import time

import numpy as np
from scipy.linalg import cholesky
from scipy.spatial.transform import Rotation

from anisotropy.fitting.likelihood import refine_frame_likelihood, vecchia_setup

TRUE_RANGES = np.array([120.0, 60.0, 20.0])
NUGGET = 0.1


def true_frame():
    return Rotation.from_euler("ZXY", [-35.0, -25.0, 10.0], degrees=True).as_matrix()


def spherical_cov(X, frame, ranges, nugget, sill):
    # sill * (1 - 1.5 h + 0.5 h^3) for h < 1 (Journel & Huijbregts 1978, ch. II)
    C = np.empty((len(X), len(X)))
    for s in range(0, len(X), 500):
        L = (X[s:s + 500, None, :] - X[None, :, :]) @ frame
        h = np.minimum(np.sqrt(np.sum((L / ranges) ** 2, axis=-1)), 1.0)
        C[s:s + 500] = sill * (1.0 - 1.5 * h + 0.5 * h ** 3)
    C[np.diag_indices_from(C)] += nugget
    return C


def hole_layout(rng):
    """36 holes on a 30 m grid, dipping 60 degrees, 50 composites of 2 m each."""
    gx, gy = np.meshgrid(np.arange(6) * 30.0, np.arange(6) * 30.0)
    collars = np.c_[gx.ravel(), gy.ravel(), np.zeros(36)] + rng.normal(0, 2.0, (36, 3))
    az, dip = np.radians(rng.uniform(80, 100, 36)), np.radians(60.0)
    d = np.c_[np.sin(az) * np.cos(dip), np.cos(az) * np.cos(dip), -np.full(36, np.sin(dip))]
    t = 1.0 + 2.0 * np.arange(50)
    X = (collars[:, None, :] + t[None, :, None] * d[:, None, :]).reshape(-1, 3)
    return X, np.repeat(np.arange(36), 50)


def scattered_layout(rng):
    return rng.uniform([0, 0, 0], [250, 250, 120], size=(2000, 3)), None


def simulate(X, rng):
    C = spherical_cov(X, true_frame(), TRUE_RANGES, NUGGET, 1.0 - NUGGET)
    return cholesky(C, lower=True) @ rng.standard_normal(len(X))


def axis_angle(a, b):
    return float(np.degrees(np.arccos(min(1.0, abs(float(a @ b))))))


def frame_angle(F, G):
    return max(axis_angle(F[:, j], G[:, j]) for j in range(3))


def one_run(X, y, setup, start, K, gradient):
    F0, R0 = start
    if K == 1:
        model = ([R0], NUGGET, [1.0 - NUGGET], ("spherical",))
    else:
        model = ([0.3 * R0, R0], NUGGET, [0.45, 0.45], ("spherical", "spherical"))
    t, c = time.perf_counter(), time.process_time()
    fit = refine_frame_likelihood(X, y, F0, *model, ftol=1e-5, setup=setup,
                                  gradient=gradient)
    return (time.perf_counter() - t, time.process_time() - c), fit


def eval_costs(setup, F0, R0, repeats=5):
    """Wall seconds of one value and of one value + gradient, interleaved (min of repeats)."""
    from anisotropy.fitting.likelihood import vecchia_negloglik, vecchia_negloglik_grad

    p = np.r_[Rotation.from_matrix(F0).as_rotvec(), np.log(R0), np.log(0.1 / 0.9)]
    args = (setup.coords, setup.values, setup.neighbours, ("spherical",))
    tv, tg = [], []
    for _ in range(repeats):
        t = time.perf_counter()
        vecchia_negloglik(p, *args)
        tv.append(time.perf_counter() - t)
        t = time.perf_counter()
        vecchia_negloglik_grad(p, *args)
        tg.append(time.perf_counter() - t)
    return min(tv), min(tg)


def bench_layout(name, X, y, holes, repeats):
    rng = np.random.default_rng(0)
    turn = Rotation.from_rotvec(np.radians(10.0) * np.array([0.6, 0.0, 0.8])).as_matrix()
    F0 = turn @ true_frame()
    R0 = TRUE_RANGES * np.array([0.8, 1.2, 1.2])
    t = time.perf_counter()
    setup = vecchia_setup(X, y, frame=F0, ranges=[R0], n_neighbours=30, max_samples=2000,
                          seed=int(rng.integers(1000)))
    t_setup = time.perf_counter() - t
    tv, tg = eval_costs(setup, F0, R0)
    print(f"\n{name}: {len(X)} samples, setup (order + 30 neighbours) {t_setup:.2f} s; "
          f"one value {1e3 * tv:.0f} ms, value + gradient {1e3 * tg:.0f} ms (K = 1)")
    print(f"{'K':>2} {'gradient':>9} {'wall s':>7} {'cpu s':>6} {'nfev':>5} {'njev':>5} "
          f"{'negloglik':>12} {'major err':>9} {'minor err':>9}")
    rows = []
    for K in (1, 2):
        fits = {}
        for gradient in ("numeric", "analytic"):
            secs, cpus = [], []
            for _ in range(repeats):
                (s, c), fit = one_run(X, y, setup, (F0, R0), K, gradient)
                secs.append(s)
                cpus.append(c)
            fits[gradient] = fit
            T = true_frame()
            print(f"{K:>2} {gradient:>9} {min(secs):7.2f} {min(cpus):6.2f} {fit.info['nfev']:5d} "
                  f"{fit.info['njev']:5d} {fit.negloglik:12.3f} "
                  f"{axis_angle(fit.frame[:, 0], T[:, 0]):9.2f} "
                  f"{axis_angle(fit.frame[:, 2], T[:, 2]):9.2f}")
            rows.append((name, K, gradient, min(secs), fit.info["nfev"]))
        print(f"   largest axis angle between the two refined frames: "
              f"{frame_angle(fits['numeric'].frame, fits['analytic'].frame):.3f} deg")
    return rows


_DISCOVER = """
import json, sys, time
from importlib.resources import files
import numpy as np
import anisotropy
path = str(files("anisotropy") / "data" / "fenwright_composites.csv")
for rep in range(2):
    t, c = time.perf_counter(), time.process_time()
    D = anisotropy.discover(path, value="au_gpt", domain="domain", domain_value="shoot",
                            hole="hole_id", seed=20261201)
    w, cc = time.perf_counter() - t, time.process_time() - c
print(json.dumps({"wall": w, "cpu": cc, "frame": np.asarray(D.frame).tolist(),
                  "file": anisotropy.__file__}))
"""


def discover_demo(root):
    env = dict(os.environ, PYTHONPATH=str(root))
    out = subprocess.run([sys.executable, "-c", _DISCOVER], cwd=root, env=env, check=True,
                         capture_output=True, text=True).stdout
    return json.loads(out.strip().splitlines()[-1])


def compare_discover(main_root):
    here = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    print("\nwhole discovery of the demo shoot (no bootstrap), warm:")
    runs = {"main": discover_demo(main_root), "this": discover_demo(here)}
    for k, r in runs.items():
        print(f"  {k:>5}: wall {r['wall']:6.1f} s  cpu {r['cpu']:6.1f} s  ({r['file']})")
    print(f"  largest axis angle between the two frames: "
          f"{frame_angle(np.array(runs['main']['frame']), np.array(runs['this']['frame'])):.3f} deg")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--repeats", type=int, default=1)
    ap.add_argument("--main", default=None, help="checkout of main to time discovery against")
    ap.add_argument("--skip-refine", action="store_true")
    a = ap.parse_args()
    if a.main:
        compare_discover(a.main)
    if a.skip_refine:
        return
    rng = np.random.default_rng(a.seed)
    # compile (or load from the cache) outside the timings
    Xw = rng.uniform(0, 50, (120, 3))
    for g in ("numeric", "analytic"):
        for K in (1, 2):
            one_run(Xw, rng.standard_normal(120), None, (np.eye(3), TRUE_RANGES), K, g)
    for name, layout in (("holes", hole_layout), ("scattered", scattered_layout)):
        X, holes = layout(rng)
        y = simulate(X, rng)
        bench_layout(name, X, y, holes, a.repeats)


if __name__ == "__main__":
    main()
