"""How well can the axes be known at all?  Cramér-Rao bounds for issue 4.

For each scattered scenario of ``bench_discover.py`` and each seed, the
layout is drawn exactly as there and the Fisher information of the exact
Gaussian likelihood of the *true* model is computed:

    I_ij = 1/2 tr(S^-1 dS/dt_i S^-1 dS/dt_j)

(Mardia & Marshall 1984, Biometrika 71(1), eq. for the information of a
Gaussian random field with parametrised covariance; the unknown constant
mean costs one degree of freedom and is ignored).  The parameters are a
small rotation of the frame about its own three axes, the log ranges of each
structure, the nugget and the sills.  The inverse of the information is the
Cramér-Rao lower bound on the covariance of any unbiased estimate; the
angular error of the major axis is, to first order, the length of the
rotation's components about the semi-major and minor axes (about the major
and semi-major axes for the minor axis).  The distribution of those lengths
under the bound is drawn by Monte Carlo, which gives the median and the
worst of 12 realisations that an efficient estimator would have.

The bound is asymptotic (it ignores the finite-sample bias of the maximum
likelihood, and no estimator is promised to reach it), so it is a floor, not
a prediction; an estimator that beats it on a handful of seeds has been lucky
on those seeds.

Derivatives of the covariance with respect to ranges and rotation are
central differences of the spherical formula (Journel & Huijbregts 1978,
ch. II; the model is continuously differentiable, so the differences are
accurate to O(step^2)).  Sanity check printed at the start: for a
one-parameter sill, I = n / (2 sill^2) exactly.

The exact likelihood's own maximum on the same realisations (the referee of
issue 15, holes included) is ``benchmarks/exact_likelihood.py``.

Run:  python benchmarks/information_limit.py [--seeds 12] [--scenarios shoot]
"""

from __future__ import annotations

import argparse
import json
import sys
import time

import numpy as np
from scipy.linalg import cho_factor, cho_solve
from scipy.spatial.transform import Rotation

sys.path.insert(0, __file__.rsplit("/", 1)[0])
from bench_discover import SCENARIOS, covariance  # noqa: E402


def parameters(nugget, structures):
    """Vector of parameters: rotation (3, zero at the truth), log ranges, nugget, sills."""
    t = [0.0, 0.0, 0.0]
    for _, r in structures:
        t += list(np.log(r))
    t += [nugget] + [s for s, _ in structures]
    return np.array(t, float)


def model_of(theta, R0, K):
    Rw = R0 @ Rotation.from_rotvec(theta[:3]).as_matrix()  # body-frame rotation
    logr = theta[3:3 + 3 * K].reshape(K, 3)
    nug = theta[3 + 3 * K]
    sills = theta[4 + 3 * K:]
    return Rw, nug, [(sills[k], np.exp(logr[k])) for k in range(K)]


def fisher(coords, R0, nugget, structures, step=1e-4):
    K = len(structures)
    theta = parameters(nugget, structures)
    S = covariance(coords, R0, nugget, structures)
    cf = cho_factor(S, lower=True, check_finite=False)
    W = []
    for i in range(len(theta)):
        if i >= 3 + 3 * K:  # nugget and sills enter linearly
            e = np.zeros_like(theta)
            e[i] = 1.0
            dS = covariance(coords, *model_of(theta + e, R0, K)) - \
                covariance(coords, *model_of(theta, R0, K))
        else:
            e = np.zeros_like(theta)
            e[i] = step
            dS = (covariance(coords, *model_of(theta + e, R0, K))
                  - covariance(coords, *model_of(theta - e, R0, K))) / (2 * step)
        W.append(cho_solve(cf, dS, check_finite=False))
    p = len(theta)
    info = np.empty((p, p))
    for i in range(p):
        for j in range(i + 1):
            info[i, j] = info[j, i] = 0.5 * float(np.sum(W[i] * W[j].T))
    return info


def axis_errors(cov3, rng, n_draw=200_000):
    """Draws of the first-order major and minor axis errors (degrees)."""
    w = rng.multivariate_normal(np.zeros(3), cov3, size=n_draw)
    major = np.degrees(np.hypot(w[:, 1], w[:, 2]))
    minor = np.degrees(np.hypot(w[:, 0], w[:, 1]))
    return major, minor


def sanity():
    rng = np.random.default_rng(0)
    X = rng.uniform(0, 100, (200, 3))
    C = covariance(X, np.eye(3), 0.0, [(1.0, (30, 30, 30))]) + 0.1 * np.eye(200)
    sill = 2.0
    S = sill * C
    W = np.linalg.solve(S, C)
    return 0.5 * np.sum(W * W.T), len(X) / (2 * sill ** 2)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", "--realisations", type=int, default=12)
    ap.add_argument("--scenarios", nargs="*", default=["scattered"])
    ap.add_argument("--json", default=None)
    a = ap.parse_args(argv)
    got, want = sanity()
    print(f"sanity: sill information {got:.6g}, exact n/(2 s^2) = {want:.6g}", file=sys.stderr)
    rng = np.random.default_rng(12345)
    rows = []
    print("| scenario | major error median, one realisation (deg) | median of "
          f"{a.seeds} realisations [10th, 90th percentile] | worst of {a.seeds} "
          "[10th, 90th] | minor error median, one realisation |")
    print("|---|---|---|---|---|")
    for name, spec in SCENARIOS.items():
        if spec["layout"] != "scattered" or not any(s in name for s in a.scenarios):
            continue
        if not spec["structures"]:  # pure nugget: no orientation, no rotation information
            continue
        major_draws = []
        for k in range(a.seeds):
            seed = 100 + k
            coords = np.random.default_rng(seed).uniform([0, 0, 0], spec["box"],
                                                         size=(spec["n"], 3))
            t0 = time.perf_counter()
            info = fisher(coords, spec["R"], spec["nugget"], spec["structures"])
            crb = np.linalg.inv(info)
            maj, mi = axis_errors(crb[:3, :3], rng)
            rows.append({"scenario": name, "seed": seed,
                         "rotation_sd_deg": np.degrees(np.sqrt(np.diag(crb)[:3])).tolist(),
                         "major_median": float(np.median(maj)),
                         "minor_median": float(np.median(mi)),
                         "seconds": time.perf_counter() - t0})
            major_draws.append(maj)
            r = rows[-1]
            print(f"{name} seed {seed}: rotation sd (about major, semi, minor) "
                  f"{', '.join(f'{v:.2f}' for v in r['rotation_sd_deg'])} deg; "
                  f"major error median {r['major_median']:.2f}, minor {r['minor_median']:.2f} "
                  f"({r['seconds']:.0f} s)", file=sys.stderr, flush=True)
        # the median and worst over the seeds that an efficient estimator would show:
        # one draw per seed's layout, repeated many times
        rr = [r for r in rows if r["scenario"] == name]
        draws = np.stack([m[:20000] for m in major_draws])  # (seeds, draws)
        med12 = np.median(draws, axis=0)
        worst12 = draws.max(axis=0)
        print(f"| {name} | {np.median([r['major_median'] for r in rr]):.1f} | "
              f"{np.median(med12):.1f} [{np.percentile(med12, 10):.1f}, "
              f"{np.percentile(med12, 90):.1f}] | {np.median(worst12):.1f} "
              f"[{np.percentile(worst12, 10):.1f}, {np.percentile(worst12, 90):.1f}] | "
              f"{np.median([r['minor_median'] for r in rr]):.1f} |", flush=True)
    if a.json:
        with open(a.json, "w") as f:
            json.dump(rows, f, indent=1)


if __name__ == "__main__":
    main()
