"""Study: would the likelihood's cones hold the truth on drill holes with a sandwich variance?

The cones from the nearest-neighbour likelihood's observed information ``H``
(:mod:`anisotropy.fitting.information`) under-cover on drill-hole layouts
(``benchmarks/RESULTS.md``, *Cones from the likelihood's information*), so
drill holes keep the bootstrap replicates' cones. One explanation would be
that the Vecchia approximation, whose conditioning sets follow the strings,
overstates its information. For an approximate likelihood the right large-
sample covariance is the sandwich ``H^-1 J H^-1`` (Godambe information; for
composite and approximate likelihoods see Varin, Reid & Firth 2011,
*Statistica Sinica* 21, sec. 2.3, recalled from memory), with ``J`` the
covariance of the score. Here ``J`` is estimated by a parametric bootstrap
of the score: fields are simulated from the fitted model at the
likelihood's own samples (exact Cholesky factor of the model's covariance
matrix, NumPy), and the approximate likelihood's analytic gradient at the
fitted parameters is evaluated on each. Nothing of this enters the engine.

For each realisation of the issue-15 drill-hole scenarios of
``bench_discover.py``: ``discover`` (no bootstrap), then the 90 % cones of
the reported axes from ``H^-1`` and from the sandwich, against the true
axes.

    NUMBA_NUM_THREADS=1 python benchmarks/godambe_cones.py --first-seed 100 \
        --realisations 12 --sims 100 --json out.json
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
from numba import njit

sys.path.insert(0, str(Path(__file__).resolve().parent))
import anisotropy  # noqa: E402
from anisotropy.fitting._vecchia_kernels import cov  # noqa: E402
from anisotropy.fitting.information import axis_cones, observed_information  # noqa: E402
from anisotropy.fitting.likelihood import _model_arrays, vecchia_negloglik_grad  # noqa: E402
from bench_discover import SCENARIOS, axis_err, realisation  # noqa: E402

DRILL_HOLE_SCENARIOS = ("lode, minor-axis holes", "lode, oblique holes (45 deg), exponential",
                        "lode, near-major holes (18 deg)", "lode, underground fans")
AXIS_NAMES = ("major", "semi_major", "minor")


@njit(cache=True)
def model_covariance(S, codes, shares, nugget):
    """The fitted model's covariance matrix at the likelihood's samples (unit total sill)."""
    n = S.shape[1]
    C = np.empty((n, n))
    for a in range(n):
        for b in range(a + 1):
            c = cov(S, codes, shares, a, b)
            C[a, b] = c
            C[b, a] = c
        C[a, a] += nugget
    return C


def sandwich(lk, setup, sims, seed):
    """``H^-1``, ``H^-1 J H^-1`` and the parameters of a likelihood fit."""
    p = lk.parameters()
    kinds = tuple(lk.kinds)
    H = observed_information(p, (setup.coords, setup.values, setup.neighbours, kinds))
    codes, _, _, nugget, shares, S = _model_arrays(p, setup.coords, kinds)
    L = np.linalg.cholesky(model_covariance(S, codes, shares, nugget))
    Z = L @ np.random.default_rng(seed).standard_normal((L.shape[0], sims))
    G = np.array([vecchia_negloglik_grad(p, setup.coords, z - z.mean(), setup.neighbours,
                                         kinds)[1] for z in Z.T])
    Hi = np.linalg.inv(H)
    return p, Hi, Hi @ np.cov(G.T) @ Hi


def one(name, seed, sims):
    spec = SCENARIOS[name]
    real = realisation(spec, seed)
    c, v = real["coords"], real["values"]
    df = pd.DataFrame({"x": c[:, 0], "y": c[:, 1], "z": c[:, 2], "grade": v + 10.0,
                       "hole": real["holes"]})
    D = anisotropy.discover(df, value="grade", hole="hole", transform="raw", seed=seed)
    fr = D.refinement.frame_refinement
    rec = {"scenario": name, "seed": seed}
    if fr is None or fr.likelihood is None:
        return {**rec, "skipped": "no likelihood refinement"}
    lk, setup = fr.likelihood
    t0 = time.perf_counter()
    p, Ci, Cs = sandwich(lk, setup, sims, seed)
    rec["seconds"] = time.perf_counter() - t0
    if np.linalg.eigvalsh(Ci[:3, :3])[0] <= 0:
        return {**rec, "skipped": "information not positive definite"}
    cones = {"info": axis_cones(p[:3], Ci[:3, :3], 0.9, seed),
             "sandwich": axis_cones(p[:3], Cs[:3, :3], 0.9, seed)}
    match = np.abs(D.frame.T @ np.asarray(lk.frame, float)).argmax(axis=1)
    rec["trace_ratio"] = float(np.trace(Cs[:3, :3]) / np.trace(Ci[:3, :3]))
    for i, ax in enumerate(AXIS_NAMES):
        rec[ax] = axis_err(D.frame[:, i], spec["R"][:, i])
        for k, q in cones.items():
            rec[f"{ax}_{k}"] = float(q[match[i]])
    return rec


def summarise(rows):
    """Per scenario: cones (info / sandwich) holding the true major and minor axes."""
    df = pd.DataFrame([r for r in rows if "skipped" not in r])
    out = []
    for name, g in df.groupby("scenario", sort=False):
        line = {"scenario": name, "n": len(g), "median trace ratio": g["trace_ratio"].median()}
        for k in ("info", "sandwich"):
            held = np.r_[g["major"] <= g[f"major_{k}"], g["minor"] <= g[f"minor_{k}"]]
            line[f"{k} cones hold (%)"] = 100.0 * held.mean()
            line[f"{k} median major cone"] = g[f"major_{k}"].median()
        out.append(line)
    return pd.DataFrame(out)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--first-seed", type=int, default=100)
    ap.add_argument("--realisations", type=int, default=12)
    ap.add_argument("--sims", type=int, default=100, help="simulated fields for J")
    ap.add_argument("--scenarios", nargs="*", default=list(DRILL_HOLE_SCENARIOS))
    ap.add_argument("--json", help="write every realisation's record here")
    a = ap.parse_args(argv)
    rows = []
    for name in a.scenarios:
        for seed in range(a.first_seed, a.first_seed + a.realisations):
            rows.append(one(name, seed, a.sims))
            print(json.dumps(rows[-1]), file=sys.stderr, flush=True)
    if a.json:
        Path(a.json).write_text(json.dumps(rows, indent=1))
    skipped = sum("skipped" in r for r in rows)
    print(f"{len(rows)} realisations, {skipped} without an information cone")
    with pd.option_context("display.width", 200, "display.max_columns", 20):
        print(summarise(rows).round(1).to_string(index=False))


if __name__ == "__main__":
    main()
