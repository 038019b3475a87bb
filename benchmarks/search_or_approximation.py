"""Where the engine misses the referee: its search, or its approximation of the likelihood?

For each issue-15 realisation (``bench_discover.realisation``) and the
referee's maximum of the exact likelihood on it (``exact_likelihood.py
--json``), the engine's own nearest-neighbour (Vecchia 1988) likelihood is
searched from two starts on one shared set of conditioning sets:

* the engine's answer (``discover`` on the realisation, as
  ``bench_discover.one`` runs it, no bootstrap);
* the referee's maximum (its frame, ranges, nugget and sill shares).

If the search from the referee's maximum ends higher in the engine's own
likelihood, the engine's global choice missed a better basin of its own
objective: a *search* failure.  If it ends lower, the engine's approximation
(subsample, neighbours, conditioning order) prefers the engine's frame: an
*approximation* failure, which a better search cannot fix.

The conditioning sets are built in the plain Euclidean metric with the
across-hole rule (as the global frame choice builds them), with the
settings given: ``--max-samples`` (default the refinement's 2,000),
``--neighbours`` (default its 30) and ``--ordering`` (default its random
order; ``maxmin``: Guinness 2018), ``--metric`` (``answer``: the sets
chosen in the referee answer's anisotropic metric, as the refinement chooses
them in its start's) and ``--conditioning`` (``nearest``: the plain
nearest predecessors instead of the across-hole rule).  With ``--referee-start-only`` only the second search
runs: the error of the approximation's own maximum, against the referee's.

Run:  python benchmarks/search_or_approximation.py --referee referee.json
      [--scenarios oblique near-major] [--seeds 101 104] [--max-samples 2000]
      [--neighbours 30] [--ordering random] [--metric euclidean]
      [--conditioning across-holes] [--referee-start-only] [--json out.json]
"""

from __future__ import annotations

import argparse
import json
import sys
import time

import numpy as np
import pandas as pd

sys.path.insert(0, __file__.rsplit("/", 1)[0])
from bench_discover import SCENARIOS, axis_err, realisation, structure_parts  # noqa: E402

import anisotropy  # noqa: E402
from anisotropy.fitting.frames import ordered_axes  # noqa: E402
from anisotropy.fitting.likelihood import refine_frame_likelihood, vecchia_setup  # noqa: E402


def engine_start(coords, values, holes, seed):
    """The engine's answer on the realisation, as ``bench_discover.one`` runs it."""
    df = pd.DataFrame({"x": coords[:, 0], "y": coords[:, 1], "z": coords[:, 2],
                       "grade": values + 10.0})
    if holes is not None:
        df["hole"] = holes
    D = anisotropy.discover(df, value="grade", hole="hole" if holes is not None else None,
                            transform="raw", seed=seed)
    st = D.model.structures
    var = float(D.model.total_sill)
    return {"frame": np.asarray(D.frame, float), "ranges": np.array([s.ranges for s in st]),
            "nugget": float(D.model.nugget) / var,
            "sills": np.array([s.sill for s in st]) / var, "kinds": [s.kind for s in st]}


def referee_start(row):
    """The referee's maximum (the higher of its two polished starts)."""
    a, b = row["truth_start"], row["other_start"]
    m = a if a["loglik"] >= b["loglik"] else b
    return {"frame": np.asarray(m["frame"], float), "ranges": np.asarray(m["ranges"], float),
            "nugget": float(m["nugget_share"]), "sills": np.asarray(m["sill_shares"], float)}


def polish(coords, z, start, kinds, setup, seed, args):
    """Search the engine's likelihood from ``start``, in the start's own structure kinds
    where it has them (the engine may report fewer structures than the truth has)."""
    F, R = ordered_axes(start["frame"], start["ranges"])
    lk = refine_frame_likelihood(coords, z, F, R, start["nugget"], start["sills"],
                                 start.get("kinds", kinds),
                                 setup=setup, seed=seed, ftol=1e-6,
                                 n_neighbours=args.neighbours, max_samples=args.max_samples)
    return ordered_axes(lk.frame, lk.ranges)[0], float(lk.negloglik)


def one(name, spec, seed, ref_row, args):
    t0 = time.perf_counter()
    real = realisation(spec, seed)
    coords, v, holes = real["coords"], real["values"], real["holes"]
    kinds = [structure_parts(s)[2] for s in spec["structures"]]
    ref = referee_start(ref_row)
    starts = [("from_referee", ref)]
    if not args.referee_start_only:
        eng = engine_start(coords, v, holes, seed)
        starts.insert(0, ("from_engine", eng))
    z = v - v.mean()
    metric = np.eye(3)
    if args.metric == "answer":
        F, Rr = ordered_axes(ref["frame"], ref["ranges"])
        metric = F / Rr[int(np.argmax(Rr.max(axis=1)))]
    setup = vecchia_setup(coords, z, metric=metric, n_neighbours=args.neighbours,
                          max_samples=args.max_samples, seed=seed,
                          holes=holes if args.conditioning == "across-holes" else None,
                          ordering=args.ordering)
    R = spec["R"]
    out = {"scenario": name, "seed": seed, "n": len(coords),
           "referee": {"major": ref_row["mle"]["major"], "minor": ref_row["mle"]["minor"]}}
    if not args.referee_start_only:
        out["engine_answer"] = {"major": axis_err(eng["frame"][:, 0], R[:, 0]),
                                "minor": axis_err(eng["frame"][:, 2], R[:, 2])}
    for key, start in starts:
        F, nll = polish(coords, z, start, kinds, setup, seed, args)
        out[key] = {"negloglik": nll, "major": axis_err(F[:, 0], R[:, 0]),
                    "minor": axis_err(F[:, 2], R[:, 2])}
    if not args.referee_start_only:
        out["gain_from_referee"] = (out["from_engine"]["negloglik"]
                                    - out["from_referee"]["negloglik"])
    out["seconds"] = time.perf_counter() - t0
    return out


def _line(o):
    g = o["from_referee"]
    txt = (f"{o['scenario']:<42} {o['seed']:>4}  referee {o['referee']['major']:5.1f}/"
           f"{o['referee']['minor']:5.1f}  from referee {g['major']:5.1f}/{g['minor']:5.1f}")
    if "from_engine" in o:
        e, f = o["engine_answer"], o["from_engine"]
        txt += (f"  engine {e['major']:5.1f}/{e['minor']:5.1f}  polished {f['major']:5.1f}/"
                f"{f['minor']:5.1f}  gain {o['gain_from_referee']:+7.2f}")
    return txt + f"  ({o['seconds']:.0f} s)"


def summary(out):
    """Per scenario: medians and 90th percentiles of the approximation's maximum against the
    referee's (major / minor axis errors, degrees), and the search-failure count."""
    lines = ["| scenario | n | approximation major median / p90 | referee | approximation "
             "minor median / p90 | referee |", "|---|---|---|---|---|---|"]
    for name in dict.fromkeys(o["scenario"] for o in out):
        rr = [o for o in out if o["scenario"] == name]
        cell = []
        for ax in ("major", "minor"):
            a = np.array([o["from_referee"][ax] for o in rr])
            b = np.array([o["referee"][ax] for o in rr])
            cell += [f"{np.median(a):.1f} / {np.percentile(a, 90):.1f}",
                     f"{np.median(b):.1f} / {np.percentile(b, 90):.1f}"]
        lines.append(f"| {name} | {len(rr)} | " + " | ".join(cell) + " |")
    g = np.array([o["gain_from_referee"] for o in out if "gain_from_referee" in o])
    if len(g):
        lines += ["", f"search failures (the referee's start ends higher by more than 0.5 "
                      f"log-units): {int(np.sum(g > 0.5))} of {len(g)}; the approximation "
                      f"prefers the engine's end (by more than 0.5): {int(np.sum(g < -0.5))}"]
    return "\n".join(lines)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--referee", required=True)
    ap.add_argument("--scenarios", nargs="*", default=None)
    ap.add_argument("--seeds", nargs="*", type=int, default=None)
    ap.add_argument("--max-samples", type=int, default=2000)
    ap.add_argument("--neighbours", type=int, default=30)
    ap.add_argument("--ordering", choices=("random", "maxmin"), default="random")
    ap.add_argument("--metric", choices=("euclidean", "answer"), default="euclidean",
                    help="conditioning sets in the plain metric, or in the referee answer's")
    ap.add_argument("--conditioning", choices=("across-holes", "nearest"),
                    default="across-holes", help="the engine's across-hole rule, or the "
                    "plain nearest predecessors whatever their hole")
    ap.add_argument("--referee-start-only", action="store_true",
                    help="skip the engine: the approximation's own maximum only")
    ap.add_argument("--json", default=None)
    args = ap.parse_args(argv)
    rows = json.load(open(args.referee))
    out = []
    for r in rows:
        if args.scenarios and not any(s in r["scenario"] for s in args.scenarios):
            continue
        if args.seeds and r["seed"] not in args.seeds:
            continue
        out.append(one(r["scenario"], SCENARIOS[r["scenario"]], r["seed"], r, args))
        print(_line(out[-1]), flush=True)
        if args.json:
            json.dump(out, open(args.json, "w"), indent=1)
    if out:
        print("\n" + summary(out))


if __name__ == "__main__":
    main()
