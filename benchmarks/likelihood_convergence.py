"""The likelihood's stopping tolerance against the last bits of its start.

``discover`` runs BLAS on one thread, so a direct call, a batch worker and a
cluster node add in the same order. Before, a two-thread BLAS moved the
directional fits of the demo blanket in their last bits, and its likelihood
search, stopped at a relative tolerance of 1e-5, ended with ranges 20 %
apart. This script re-creates that: for each demo domain it runs
``discover`` with BLAS on one thread and on two (the package's own limit
replaced by the one asked for), once with the searches stopped at
``--loose`` and once with the shipped tolerance (SciPy's default: the search
stops on the gradient), and prints the reported ranges, nugget, major axis,
the final negative log-likelihood and the seconds of each call.

Run:  python benchmarks/likelihood_convergence.py [--loose 1e-5] [--domains blanket ...]
"""

import argparse
import time
from pathlib import Path

from threadpoolctl import threadpool_limits

import anisotropy
from anisotropy import pipeline
from anisotropy.fitting import refine

DEMO = Path(anisotropy.__file__).parent / "data" / "fenwright_composites.csv"


def run(domain, blas_threads, ftol):
    """One discover call on a demo domain; a row of the printed table."""
    shipped = (refine.LIKELIHOOD_FTOL, refine.LIKELIHOOD_NESTED_FTOL)
    refine.LIKELIHOOD_FTOL = refine.LIKELIHOOD_NESTED_FTOL = ftol
    # the package's own one-thread limit replaced by the count asked for
    pipeline.threadpool_limits = lambda limits: threadpool_limits(limits=blas_threads)
    try:
        t = time.perf_counter()
        d = anisotropy.discover(DEMO, value="au_gpt", hole="hole_id", seed=20261201,
                                domain="domain", domain_value=domain)
        seconds = time.perf_counter() - t
    finally:
        refine.LIKELIHOOD_FTOL, refine.LIKELIHOOD_NESTED_FTOL = shipped
        pipeline.threadpool_limits = threadpool_limits
    s = d.model.structures
    major = d.to_dict()["axes"]["major"]
    return (f"{domain:14s} BLAS {blas_threads}  ftol {str(ftol):6s}  ranges "
            + " + ".join("/".join(f"{r:.1f}" for r in st.ranges) for st in s)
            + f" m  nugget {d.model.nugget:.3f}  major {major['trend']:.2f}/"
              f"{major['plunge']:.2f}  neg. log-lik "
              f"{d.diagnostics['frame_refinement']['negloglik']:.3f}  {seconds:.1f} s")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--loose", type=float, default=1e-5, help="the loose tolerance")
    ap.add_argument("--domains", nargs="+", default=["blanket", "shoot", "vein_corridor"])
    args = ap.parse_args(argv)
    run(args.domains[0], 1, None)   # compiles the kernels (not printed)
    for domain in args.domains:
        for ftol in (args.loose, refine.LIKELIHOOD_FTOL):
            for threads in (1, 2):
                print(run(domain, threads, ftol), flush=True)


if __name__ == "__main__":
    main()
