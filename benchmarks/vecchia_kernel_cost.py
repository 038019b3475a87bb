"""Cost of one nearest-neighbour likelihood evaluation, value alone and with its gradient.

Times the compiled kernels of ``anisotropy.fitting._vecchia_kernels`` of one
source tree (``vecchia_terms`` and ``vecchia_terms_grad``) on 2,000 random
samples in a 200 m box, 30 neighbours (the refinement's sizes), for one and
two structures, spherical and exponential. Run it once per tree, one after
the other, to compare two versions (this machine's absolute times drift)::

    git worktree add --detach /tmp/old cd4ab8c
    python benchmarks/vecchia_kernel_cost.py /tmp/old
    python benchmarks/vecchia_kernel_cost.py .

Printed per case: milliseconds per call (median of ``--calls`` after one
compiling call) and the value and first gradient sums, which must agree
between trees that compute the same likelihood.
"""

import argparse
import os
import sys
import time


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("tree", help="root of the source tree to time")
    ap.add_argument("--calls", type=int, default=15)
    args = ap.parse_args(argv)
    tree = os.path.abspath(args.tree)
    sys.path.insert(0, tree)
    import numpy as np

    from anisotropy.fitting import _vecchia_kernels as vk
    from anisotropy.fitting.likelihood import vecchia_neighbours

    if not os.path.abspath(vk.__file__).startswith(tree):
        sys.exit(f"imported {vk.__file__}, not the package of {tree}")
    rng = np.random.default_rng(0)
    X = rng.uniform(0.0, 200.0, (2000, 3))
    order, nbr = vecchia_neighbours(X, 30, seed=0)
    Y, y = X[order], rng.normal(size=len(X))
    print("| structures | kind | value ms | value and gradient ms | q | Gq[0] |")
    print("|---|---|---|---|---|---|")
    for K, kind, code in ((1, "spherical", 0), (1, "exponential", 1), (2, "spherical", 0),
                          (2, "exponential", 1)):
        codes = np.full(K, code, dtype=np.int64)
        ranges = np.array([[100.0, 60.0, 20.0], [30.0, 20.0, 8.0]])[:K]
        S = np.ascontiguousarray(Y[None] / ranges[:, None, :])
        shares = np.full(K, 0.9 / K)
        ms = []
        for f in (vk.vecchia_terms, vk.vecchia_terms_grad):
            out = f(S, y, nbr, codes, shares, 0.1)  # compiles (or loads the cache)
            t = []
            for _ in range(args.calls):
                t0 = time.perf_counter()
                out = f(S, y, nbr, codes, shares, 0.1)
                t.append(time.perf_counter() - t0)
            ms.append(1e3 * float(np.median(t)))
        print(f"| {K} | {kind} | {ms[0]:.1f} | {ms[1]:.1f} | {out[0]:.10g} | {out[2][0]:.10g} |")


if __name__ == "__main__":
    main()
