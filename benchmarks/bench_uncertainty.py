"""Coverage and speed of the block bootstrap (issue 5).

Coverage study: seeded Gaussian fields with a known anisotropic model
(invented "Fenwright Hollow"-style scenarios, three of them) are simulated
at scattered sample locations; for each, the lag volume is built, the model
is fitted (from truth-blind starts: an isotropic frame and seeded random
rotations, the best objective kept) and block-bootstrapped. We count the
share of 90 % cones that contain the true major and minor axes, and of 90 %
range intervals that contain the true ranges. Target 85-95 %.

The fit here is a lean stand-in for ``discover`` (``build_volume`` +
``fitting.fit_nested`` with a fixed lag, one structure of the true kind and
a total sill fixed at the sample variance) because the full ``discover``
chain is too slow on this shared machine to repeat 60 times; the bootstrap
code under test (:func:`anisotropy.uncertainty.replicates.block_bootstrap`) is the one
``discover`` calls.

Speed: 200 replicates with the refit of the real ``discover`` chain on
5,000 composites and on the 90k blast-hole set (``--speed``).

Usage::

    python benchmarks/bench_uncertainty.py coverage [--sims 20] [--reps 60] [--jobs 2]
    python benchmarks/bench_uncertainty.py model [--sims 3] [--reps 30]   # model vs block
    python benchmarks/bench_uncertainty.py speed [--reps 200] [--jobs 2] [--only composites]
    python benchmarks/bench_uncertainty.py discover-coverage [--sims 8] [--reps 100] [--jobs 1]

``discover-coverage`` scores the bands of the real chain instead of the lean
stand-in: the same scenarios and seeds, then ``anisotropy.discover`` on a
table of x, y, z, value (no hole column, so the likelihood refinement of the
frame runs; raw values, one structure of the true kind) with
``bootstrap=--reps``; the cones and range intervals are read from
``D.uncertainty.to_dict()`` (default calibration) and scored against the
truth, with the axis errors before and after the refinement.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

import numpy as np

from anisotropy import uncertainty as U
from anisotropy.fitting import bins_from_sums, fit_nested
from anisotropy.geometry import axis_angle, fan_for_spacing, frame_from_angles
from anisotropy.models import NestedModel, Structure
from anisotropy.pairs import build_volume
from anisotropy.simulate import simulate_field
from anisotropy.uncertainty.blocks import _occupied_blocks

SCENARIOS = {
    # name: box (m), n samples, kind, ranges, frame angles (azimuth, plunge, rotation), lag, n_lags
    "A_gentle_lens": dict(box=(300, 300, 120), n=1500, kind="spherical",
                          ranges=(150.0, 80.0, 40.0), angles=(60.0, 20.0, 10.0),
                          nugget=0.1, lag=10.0, n_lags=12),
    "B_flat_sheet": dict(box=(400, 400, 60), n=1500, kind="exponential",
                         ranges=(180.0, 90.0, 25.0), angles=(130.0, 5.0, 0.0),
                         nugget=0.2, lag=12.0, n_lags=20),
    "C_steep_shoot": dict(box=(250, 250, 200), n=1500, kind="spherical",
                          ranges=(140.0, 70.0, 35.0), angles=(300.0, 55.0, -20.0),
                          nugget=0.15, lag=10.0, n_lags=12),
}



def _holds(lo, hi, t):
    """The interval holds ``t``; a bound beyond the lags (``None`` in the record) is open."""
    return bool((lo is None or lo <= t) and (hi is None or t <= hi))

def lean_refit(total):
    def refit(sums, *, fixed_frame=None, start=None, block_weights=None):
        b = bins_from_sums(sums, min_pairs=10)
        f = fit_nested(b, start, fixed_frame=fixed_frame, total_sill=total, max_nfev=200)
        m = f.model
        # order the frame by range (longest first), right-handed, as discover does
        r = np.asarray(m.structures[0].ranges)
        o = np.argsort(-r, kind="stable")
        F = np.asarray(m.frame)[:, o]
        if np.linalg.det(F) < 0:
            F[:, 2] *= -1
        m = NestedModel(nugget=m.nugget, structures=[Structure(s.kind, s.sill,
                        tuple(np.asarray(s.ranges)[o])) for s in m.structures], frame=F)
        return m, float(f.objective)
    return refit


def one(name, sim, reps, cone_cal=1.0, range_cal=1.0):
    sc = SCENARIOS[name]
    rng = np.random.default_rng(1000 * sim + 7)
    coords = rng.uniform(0, sc["box"], size=(sc["n"], 3))
    F = frame_from_angles(*sc["angles"])
    truth = NestedModel(nugget=sc["nugget"], structures=[
        Structure(sc["kind"], 1.0 - sc["nugget"], sc["ranges"])], frame=F)
    v = simulate_field(coords, truth, seed=int(rng.integers(1 << 31)))
    t0 = time.perf_counter()
    vol = build_volume(coords, v, lag=sc["lag"], n_lags=sc["n_lags"],
                       coarse_directions=fan_for_spacing(20.0),
                       blocks=U.engine_block_side(coords), progress=False, map_cell=False)
    total = float(np.var(v))
    refit = lean_refit(total)
    sums = vol.coarse_sums()
    # truth-blind starts: identity frame and 3 seeded random rotations
    from scipy.spatial.transform import Rotation
    starts = [np.eye(3)] + list(Rotation.random(3, random_state=sim).as_matrix())
    r0 = float(np.mean(sc["ranges"]))
    best = None
    for S in starts:
        st = NestedModel(nugget=0.3 * total, structures=[Structure(sc["kind"], 0.7 * total,
                         (r0, r0 * 0.8, r0 * 0.6))], frame=S)
        try:
            m, obj = refit(sums, start=st)
        except Exception:  # noqa: BLE001
            continue
        if best is None or obj < best[1]:
            best = (m, obj)
    ref = best[0]
    res = U.block_bootstrap(vol, refit, ref, n_replicates=reps, seed=sim, n_jobs=1,
                            cone_calibration=cone_cal, range_calibration=range_cal)
    secs = time.perf_counter() - t0
    d = res.to_dict()
    out = {"scenario": name, "sim": sim, "seconds": secs, "n_blocks": d["blocks"]["n_blocks"],
           "swap": d["swap_rate"]["major_semi_major"]}
    Rf = np.asarray(ref.frame)
    ang_all = res.angles_to_reference()
    for i, ax in enumerate(U.AXIS_NAMES):
        err = float(axis_angle(Rf[:, i], F[:, i]))
        cone = d[ax]["cone_deg"]
        out[f"{ax}_err"] = err
        out[f"{ax}_cone"] = cone
        # the factor the cone would need to contain the truth
        out[f"{ax}_need"] = err / max(cone, 1e-9)
        lo, hi = d[ax]["range"]
        out[f"{ax}_range_in"] = _holds(lo, hi, sc["ranges"][i])
        # BCa too, for comparison with the percentile default
        est = float(res.reference_ranges[i])
        blo, bhi = U.bca_interval(res.ranges[:, i], est, 0.9, acceleration=U.influence_acceleration(
            res.ranges[:, i], res.counts))
        out[f"{ax}_range_bca_in"] = bool(blo <= sc["ranges"][i] <= bhi)
        out[f"{ax}_range_est"] = est
        out[f"{ax}_range_lo"], out[f"{ax}_range_hi"] = (None if lo is None else float(lo),
                                                         None if hi is None else float(hi))
        t = sc["ranges"][i]
        bound = lo if t < est else hi
        with np.errstate(all="ignore"):
            out[f"{ax}_range_need"] = float(abs(np.log(t / est)) / max(abs(np.log(bound / est)),
                                                                       1e-12))
        # share of replicate axes closer than the truth (for calibration curves)
        out[f"{ax}_rank"] = float(np.mean(ang_all[:, i] <= err))
    return out


def one_model(name, sim, reps):
    """Block and model-based bootstrap side by side on one simulation."""
    sc = SCENARIOS[name]
    rng = np.random.default_rng(1000 * sim + 7)
    coords = rng.uniform(0, sc["box"], size=(sc["n"], 3))
    F = frame_from_angles(*sc["angles"])
    truth = NestedModel(nugget=sc["nugget"], structures=[
        Structure(sc["kind"], 1.0 - sc["nugget"], sc["ranges"])], frame=F)
    v = simulate_field(coords, truth, seed=int(rng.integers(1 << 31)))
    vol = build_volume(coords, v, lag=sc["lag"], n_lags=sc["n_lags"],
                       coarse_directions=fan_for_spacing(20.0),
                       blocks=U.engine_block_side(coords), progress=False, map_cell=False)
    total = float(np.var(v))
    refit = lean_refit(total)
    from scipy.spatial.transform import Rotation
    best = None
    r0 = float(np.mean(sc["ranges"]))
    for S in [np.eye(3)] + list(Rotation.random(3, random_state=sim).as_matrix()):
        st = NestedModel(nugget=0.3 * total, structures=[Structure(sc["kind"], 0.7 * total,
                         (r0, r0 * 0.8, r0 * 0.6))], frame=S)
        try:
            m, obj = refit(vol.coarse_sums(), start=st)
        except Exception:  # noqa: BLE001
            continue
        if best is None or obj < best[1]:
            best = (m, obj)
    ref = best[0]
    out = {"scenario": name, "sim": sim}
    for label, res in (("block", U.block_bootstrap(vol, refit, ref, n_replicates=reps, seed=sim,
                                                   cone_calibration=1.0, range_calibration=1.0)),
                       ("model", U.model_bootstrap(coords, ref, refit, volume=vol,
                                                   n_replicates=reps, seed=sim))):
        d = res.to_dict()
        for i, ax in enumerate(U.AXIS_NAMES):
            err = float(axis_angle(np.asarray(ref.frame)[:, i], F[:, i]))
            out[f"{label}_{ax}_cone"] = d[ax]["cone_deg"]
            out[f"{label}_{ax}_in"] = bool(err <= d[ax]["cone_deg"])
            lo, hi = d[ax]["range"]
            out[f"{label}_{ax}_range_in"] = _holds(lo, hi, sc["ranges"][i])
        out[f"{label}_failed"] = res.n_failed
    return out


def model_check(args):
    import pandas as pd
    from joblib import Parallel, delayed

    tasks = [(name, s) for name in SCENARIOS for s in range(args.offset, args.offset + args.sims)]
    rows = Parallel(n_jobs=args.jobs, verbose=5)(delayed(one_model)(n, s, args.reps)
                                                 for n, s in tasks)
    Path(args.out).write_text(json.dumps(rows, indent=1))
    df = pd.DataFrame(rows)
    for label in ("block", "model"):
        print(label, {ax: (round(float(df[f"{label}_{ax}_cone"].median()), 1),
                           round(float(df[f"{label}_{ax}_in"].mean()), 2),
                           round(float(df[f"{label}_{ax}_range_in"].mean()), 2))
                      for ax in U.AXIS_NAMES}, "failed", int(df[f"{label}_failed"].sum()))


def coverage(args):
    from joblib import Parallel, delayed

    tasks = [(name, s) for name in SCENARIOS for s in range(args.offset, args.offset + args.sims)]
    t0 = time.perf_counter()
    rows = Parallel(n_jobs=args.jobs, verbose=5)(delayed(one)(n, s, args.reps, args.cone_cal,
                                                              args.range_cal)
                                                 for n, s in tasks)
    wall = time.perf_counter() - t0
    Path(args.out).write_text(json.dumps(rows, indent=1))
    print(f"{len(rows)} simulations, {args.reps} replicates each, wall {wall:.0f} s")
    summarise(rows)


def summarise(rows):
    import pandas as pd

    df = pd.DataFrame(rows)
    lines = []
    for name, g in list(df.groupby("scenario")) + [("all", df)]:
        r = {"scenario": name, "n": len(g)}
        for ax in U.AXIS_NAMES:
            r[f"cone_{ax}"] = float(np.mean(g[f"{ax}_need"] <= 1.0))
            r[f"range_{ax}"] = float(np.mean(g[f"{ax}_range_in"]))
            r[f"rbca_{ax}"] = float(np.mean(g[f"{ax}_range_bca_in"]))
        r["median_cone_major"] = float(g["major_cone"].median())
        r["median_err_major"] = float(g["major_err"].median())
        r["swap"] = float(g["swap"].mean())
        lines.append(r)
    out = pd.DataFrame(lines)
    with pd.option_context("display.width", 200, "display.max_columns", 50):
        print(out.round(3).to_string(index=False))
    # calibration factor: the 90th percentile of err/cone over all sims and axes
    need = np.concatenate([df[f"{ax}_need"].to_numpy() for ax in ("major", "minor")])
    print(f"cone factor for 90 % coverage (major+minor): {np.quantile(need, 0.9):.2f}")
    rneed = np.concatenate([df[f"{ax}_range_need"].to_numpy() for ax in U.AXIS_NAMES])
    print(f"range factor (log scale) for 90 % coverage (3 axes): "
          f"{np.nanquantile(rneed, 0.9):.2f}")
    return out


def scenario_field(name, sim):
    """Sample coordinates, simulated values and true frame of one coverage simulation.

    The same seeds and simulation as :func:`one` (``coverage`` mode).
    """
    sc = SCENARIOS[name]
    rng = np.random.default_rng(1000 * sim + 7)
    coords = rng.uniform(0, sc["box"], size=(sc["n"], 3))
    F = frame_from_angles(*sc["angles"])
    truth = NestedModel(nugget=sc["nugget"], structures=[
        Structure(sc["kind"], 1.0 - sc["nugget"], sc["ranges"])], frame=F)
    v = simulate_field(coords, truth, seed=int(rng.integers(1 << 31)))
    return coords, v, F


def one_discover(name, sim, reps, refine=True, information=False):
    """The real ``discover`` chain with its block bootstrap on one simulation, scored.

    ``refine=False`` switches the likelihood refinement of the frame off (for
    comparison: the bands as they were before it); ``information=True`` also
    scores the likelihood's information cones (``fitting.refine.INFORMATION_CONES``).
    """
    import pandas as pd

    from anisotropy.pipeline import discover
    from anisotropy.discovery import params
    from anisotropy.fitting import refine as refine_module

    # read by the structures stage at run time
    params.LIKELIHOOD_REFINEMENT = bool(refine)
    refine_module.INFORMATION_CONES = bool(information)

    sc = SCENARIOS[name]
    coords, v, F = scenario_field(name, sim)
    df = pd.DataFrame({"x": coords[:, 0], "y": coords[:, 1], "z": coords[:, 2], "value": v})
    t0 = time.perf_counter()
    # Gaussian values are half negative: keep them (the reader would otherwise read
    # negatives as below-detection codes); raw values so the truth's units hold
    D = discover(df, value="value", x="x", y="y", z="z", transform="raw", structures=1,
                 kinds=(sc["kind"],), bootstrap=reps, seed=sim, n_jobs=1,
                 below_detection="keep", missing_codes="keep")
    secs = time.perf_counter() - t0
    res = D.uncertainty
    d = res.to_dict()
    ref = np.asarray(D.model.frame, float)
    lk = D.diagnostics.get("frame_refinement")
    Q = D.refit.frame_correction
    # the variogram fit's own frame (before the likelihood turn), same axis order
    Fv = ref if Q is None else np.asarray(Q, float).T @ ref
    out = {"scenario": name, "sim": sim, "seconds": secs, "replicates": int(res.n_replicates),
           "failed": int(res.n_failed), "n_blocks": d["blocks"]["n_blocks"],
           "swap": d["swap_rate"]["major_semi_major"], "refined": lk is not None,
           "turn_deg": None if lk is None else float(lk["turn_degrees"]),
           "lag": float(D.lags.get("unit_lag", np.nan)), "n_lags": int(D.lags.get("n_lags", 0)),
           "cone_calibration": float(res.cone_calibration),
           "range_calibration": float(res.range_calibration),
           "warnings": list(D.warnings),
           "unresolved": list(D.diagnostics.get("unresolved_axes") or []),
           "ambiguous": list(D.diagnostics.get("ambiguous_axes") or []),
           # the nugget in the model's units (the simulated field has unit variance)
           "nugget_est": float(D.model.nugget), "nugget_true": float(sc["nugget"]),
           "nugget_interval": d.get("nugget"),
           "nugget_in": _holds(*(d.get("nugget") or (None, None)), sc["nugget"])
           if d.get("nugget") is not None else None}
    for i, ax in enumerate(U.AXIS_NAMES):
        err = float(axis_angle(ref[:, i], F[:, i]))
        cone = float(d[ax]["cone_deg"])
        out[f"{ax}_err"] = err
        out[f"{ax}_err_variogram"] = float(axis_angle(Fv[:, i], F[:, i]))
        out[f"{ax}_cone"] = cone
        out[f"{ax}_in"] = bool(err <= cone)
        if lk is not None and (lk.get("information") or {}).get("cones_deg"):
            out[f"{ax}_info_cone"] = float(lk["information"]["cones_deg"][ax])
            out[f"{ax}_info_in"] = bool(err <= out[f"{ax}_info_cone"])
        # widened to hold a rival frame of the likelihood (then not the bootstrap's width)
        out[f"{ax}_widened"] = "cone_rival_deg" in d[ax]
        lo, hi = d[ax]["range"]
        t = sc["ranges"][i]
        out[f"{ax}_range_in"] = _holds(lo, hi, t)
        out[f"{ax}_range_est"] = float(res.reference_ranges[i])
        out[f"{ax}_range_lo"], out[f"{ax}_range_hi"] = (None if lo is None else float(lo),
                                                         None if hi is None else float(hi))
        out[f"{ax}_range_how"] = d[ax].get("range_interval")
    return out


def discover_coverage(args):
    from joblib import Parallel, delayed

    names = [n for n in SCENARIOS if not args.only or args.only in n]
    # seed-major order, so that a run cut short keeps the scenarios balanced
    tasks = [(name, s) for s in range(args.offset, args.offset + args.sims) for name in names]
    t0 = time.perf_counter()
    rows = []
    if args.jobs == 1:
        for n, s in tasks:  # one at a time, each row written as it comes
            rows.append(one_discover(n, s, args.reps, not args.no_refinement, args.information))
            r = rows[-1]
            print(f"{n} sim {s}: {r['seconds']:.0f} s, refined {r['refined']}, errors "
                  + " / ".join(f"{r[f'{ax}_err']:.1f}" for ax in U.AXIS_NAMES)
                  + ", cones " + " / ".join(f"{r[f'{ax}_cone']:.1f}" for ax in U.AXIS_NAMES),
                  flush=True)
            Path(args.out).write_text(json.dumps(rows, indent=1))
    else:
        rows = Parallel(n_jobs=args.jobs, verbose=5)(delayed(one_discover)(
            n, s, args.reps, not args.no_refinement, args.information) for n, s in tasks)
    wall = time.perf_counter() - t0
    Path(args.out).write_text(json.dumps(rows, indent=1))
    print(f"{len(rows)} simulations, {args.reps} replicates each, wall {wall:.0f} s")
    summarise_discover(rows)


def summarise_discover(rows):
    """Coverage table of ``discover-coverage`` rows, per scenario and overall."""
    import pandas as pd

    df = pd.DataFrame(rows)
    lines = []
    for name, g in list(df.groupby("scenario")) + [("all", df)]:
        r = {"scenario": name, "n": len(g)}
        for ax in U.AXIS_NAMES:
            r[f"cone_{ax}"] = float(np.mean(g[f"{ax}_in"]))
        for ax in U.AXIS_NAMES:
            r[f"range_{ax}"] = float(np.mean(g[f"{ax}_range_in"]))
        for ax in U.AXIS_NAMES:
            r[f"med_err_{ax}"] = float(g[f"{ax}_err"].median())
        for i, ax in enumerate(U.AXIS_NAMES):   # median |log(reported / true range)|
            true = np.array([SCENARIOS[n]["ranges"][i] for n in g["scenario"]])
            r[f"med_range_logerr_{ax}"] = float(np.median(np.abs(np.log(
                g[f"{ax}_range_est"].to_numpy(float) / true))))
        for ax in U.AXIS_NAMES:   # median width of the range interval, log(hi / lo)
            lo = pd.to_numeric(g[f"{ax}_range_lo"], errors="coerce")
            hi = pd.to_numeric(g[f"{ax}_range_hi"], errors="coerce")
            r[f"med_range_logwidth_{ax}"] = float(np.nanmedian(np.log(hi / lo)))
        r["med_err_major_vario"] = float(g["major_err_variogram"].median())
        r["med_cone_major"] = float(g["major_cone"].median())
        r["refined"] = int(g["refined"].sum())
        r["med_turn"] = float(pd.to_numeric(g["turn_deg"]).median())
        r["failed"] = int(g["failed"].sum())
        if "major_info_in" in g:   # the likelihood's information cones
            for ax in U.AXIS_NAMES:
                r[f"info_{ax}"] = float(np.mean(g[f"{ax}_info_in"].dropna().astype(bool)))
            r["med_info_cone_major"] = float(g["major_info_cone"].median())
        if "nugget_in" in g:   # the nugget's interval and error (model units, unit variance)
            held = g["nugget_in"].dropna()
            r["nugget_in"] = float(np.mean(held.astype(bool))) if len(held) else np.nan
            r["med_nugget_abs_err"] = float(np.median(np.abs(g["nugget_est"] - g["nugget_true"])))
        if "unresolved" in g:   # share of runs with each axis flagged unresolved
            for ax in U.AXIS_NAMES:
                r[f"flag_{ax}"] = float(np.mean([ax in u for u in g["unresolved"]]))
        lines.append(r)
    out = pd.DataFrame(lines)
    with pd.option_context("display.width", 250, "display.max_columns", 50):
        print(out.round(3).to_string(index=False))
    n = len(df)
    if n:
        print(f"binomial standard error at 90 % with n = {n}: "
              f"{100 * np.sqrt(0.09 / n):.1f} points")
    return out


def _speed_data():
    """The two speed data sets of benchmarks/bench_discover.py (same seeds and layouts)."""
    sys.path.insert(0, str(Path(__file__).parent))
    from bench_discover import speed_tables

    tables = speed_tables()
    return {"5,000 composites": (tables["composites"], {"hole": "hole"}),
            "90k blast holes": (tables["blast holes"], {})}


def speed(args):
    """200 replicates with the real discover refit, on the volume built with bootstrap blocks.

    ``discover`` keeps no block sums in the fit's pass; the blocks come from
    ``Discovery.volume_with_blocks`` (one more pass over the pairs), timed apart.
    ``--at-once`` also times ``discover(..., bootstrap=reps)`` in one call.
    """
    from anisotropy.pipeline import discover

    rows = []
    for label, (df, kw) in _speed_data().items():
        if args.only and args.only not in label:
            continue
        t0 = time.perf_counter()
        D = discover(df, value="au", bootstrap=0, seed=0, **kw)
        t_disc = time.perf_counter() - t0
        t0 = time.perf_counter()
        vol = D.volume_with_blocks()
        t_vol = time.perf_counter() - t0
        occ = int(np.count_nonzero(_occupied_blocks(vol)))
        same = bool(np.allclose(vol.coarse_sums(), D.volume_.coarse_sums(), rtol=1e-9,
                                atol=1e-9, equal_nan=True))   # channels not kept are NaN
        refit = D.refit_function()
        t0 = time.perf_counter()
        res = U.block_bootstrap(vol, refit, D.model, n_replicates=args.reps, seed=0,
                                n_jobs=args.jobs, progress=True)
        t_boot = time.perf_counter() - t0
        t0 = time.perf_counter()   # the likelihood's information, which the cones now read
        D.likelihood_information(0.9)
        t_info = time.perf_counter() - t0
        row = {"case": label, "n": len(df), "discover_s": t_disc, "rebuild_s": t_vol,
               "information_s": t_info,
               "engine_blocks_occupied": occ, "sums_identical": same,
               "bootstrap_s": t_boot, "replicates": args.reps, "failed": res.n_failed,
               "blocks": res.blocks, "jobs": args.jobs,
               "major_cone": res.to_dict()["major"]["cone_deg"]}
        if args.at_once:   # discover asked for the bootstrap in the same call
            t0 = time.perf_counter()
            discover(df, value="au", bootstrap=args.reps, seed=0, n_jobs=args.jobs, **kw)
            row["at_once_s"] = time.perf_counter() - t0
        rows.append(row)
        print(json.dumps(row, default=float), flush=True)
    return rows


if __name__ == "__main__":
    p = argparse.ArgumentParser()
    p.add_argument("what", choices=["coverage", "speed", "summary", "model",
                                "discover-coverage"])
    p.add_argument("--sims", type=int, default=20)
    p.add_argument("--reps", type=int, default=60)
    p.add_argument("--jobs", type=int, default=2)
    p.add_argument("--out", default="/tmp/bench_uncertainty_coverage.json")
    p.add_argument("--offset", type=int, default=0, help="first simulation seed")
    p.add_argument("--cone-cal", type=float, default=1.0)
    p.add_argument("--range-cal", type=float, default=1.0)
    p.add_argument("--only", default=None, help="speed: only the case containing this "
                   "text; discover-coverage: only the scenarios containing it")
    p.add_argument("--information", action="store_true",
                   help="discover-coverage: also score the likelihood's information cones")
    p.add_argument("--at-once", action="store_true",
                   help="speed: also time discover with the bootstrap asked in the same call")
    p.add_argument("--no-refinement", action="store_true",
                   help="discover-coverage: switch the likelihood frame refinement off")
    a = p.parse_args()
    if a.what == "coverage":
        coverage(a)
    elif a.what == "model":
        model_check(a)
    elif a.what == "discover-coverage":
        discover_coverage(a)
    elif a.what == "summary":     # --out a.json[,b.json,...]: the runs joined
        rows = [r for path in a.out.split(",") for r in json.loads(Path(path).read_text())]
        if rows and "refined" in rows[0]:
            summarise_discover(rows)
        else:
            summarise(rows)
    else:
        speed(a)
    sys.exit(0)
