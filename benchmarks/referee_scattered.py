"""The exact likelihood's answer and its own 90 % cones on scattered coverage simulations.

Where the engine's axis on a simulation of ``bench_uncertainty.py
discover-coverage`` lies far from the truth, this says whether the data
themselves point there: the maximum of the exact Gaussian likelihood of the
true model family (``exact_likelihood.ProfileLikelihood``, every sample, one
Cholesky factorisation per evaluation; Mardia & Marshall 1984), started at
the truth, and the 90 % cone of each of its axes from its observed
information (the Hessian by central differences of the analytic gradient
``exact_likelihood.loglik_and_gradient``, inverted; the cone is the 0.9
quantile of the first-order turn of each axis over 200,000 normal draws of
the rotation, as in ``information_limit.axis_errors``; Pawitan 2001, ch. 9,
recalled from memory).  If the exact maximum is as far from the truth as the
engine's answer and its cone misses too, no estimator reading these data
could have done better: the realisation lies in the tail the cone leaves
out.

Run:  python benchmarks/referee_scattered.py B_flat_sheet 112 [C_steep_shoot 7 ...]
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
import bench_uncertainty as BU  # noqa: E402
import exact_likelihood as EX  # noqa: E402

from anisotropy.geometry import axis_angle  # noqa: E402


def observed_cones(L, theta, R0, conf=0.9, step=1e-4, seed=0):
    """90 % cones (degrees) of the three axes from the observed information at ``theta``.

    ``theta``'s rotation is a body-frame rotation vector applied to ``R0``
    (zero at the maximum), so a turn about axis k moves the other two axes.
    """
    p = len(theta)
    H = np.empty((p, p))
    for i in range(p):
        e = np.zeros(p)
        e[i] = step
        H[:, i] = (EX.loglik_and_gradient(L, theta + e, R0)[1]
                   - EX.loglik_and_gradient(L, theta - e, R0)[1]) / (2 * step)
    cov = np.linalg.inv(-0.5 * (H + H.T))[:3, :3]
    w = np.random.default_rng(seed).multivariate_normal(np.zeros(3), cov, 200_000)
    turns = [np.hypot(w[:, 1], w[:, 2]), np.hypot(w[:, 0], w[:, 2]), np.hypot(w[:, 0], w[:, 1])]
    return [float(np.degrees(np.quantile(t, conf))) for t in turns]


def referee(name, sim):
    """The exact maximum's axis errors, ranges, nugget and own cones on one simulation."""
    sc = BU.SCENARIOS[name]
    coords, v, F = BU.scenario_field(name, sim)
    L = EX.ProfileLikelihood(coords, v, [sc["kind"]], nugget=True)
    theta = np.r_[0.0, 0.0, 0.0, np.log(sc["ranges"]),
                  np.log((1.0 - sc["nugget"]) / sc["nugget"])]
    bnds = EX.bounds(float(np.max(np.ptp(coords, axis=0))), 1)
    first = EX.maximise(L, theta, F, bnds, 200)
    # polish again about the maximum's own frame, so its rotation vector is zero there
    R0 = L.unpack(first["theta"], F)[0]
    start = first["theta"].copy()
    start[:3] = 0.0
    fit = EX.maximise(L, start, R0, bnds, 200)
    R, ranges, nug, _ = L.unpack(fit["theta"], R0)
    return {"scenario": name, "sim": sim, "loglik": fit["loglik"],
            "errors": [float(axis_angle(R[:, i], F[:, i])) for i in range(3)],
            "ranges": ranges[0].tolist(), "nugget": nug,
            "cones": observed_cones(L, fit["theta"], R0)}


def main(argv=None):
    args = sys.argv[1:] if argv is None else argv
    if not args or len(args) % 2:
        raise SystemExit(__doc__.split("Run:")[1].strip())
    print("| scenario | sim | exact maximum's error major / semi / minor (deg) "
          "| its 90 % cones (deg) | ranges (m) | nugget |")
    print("|---|---|---|---|---|---|")
    for name, sim in zip(args[::2], args[1::2]):
        r = referee(name, int(sim))
        print(f"| {name} | {sim} | " + " / ".join(f"{e:.1f}" for e in r["errors"])
              + " | " + " / ".join(f"{c:.1f}" for c in r["cones"])
              + " | " + " / ".join(f"{x:.0f}" for x in r["ranges"])
              + f" | {r['nugget']:.2f} |", flush=True)


if __name__ == "__main__":
    main()
