"""Tests of anisotropy.exploration.topcut: top-cut candidates and the log-probability break.

Reference: quantiles and the metal above them by direct arithmetic (NumPy),
and a mixture whose break is known by construction.
"""


import numpy as np
import pytest

from anisotropy.exploration import detect_logprob_break, topcut_candidates


# top-cut

def test_topcut_quantiles_and_metal_by_direct_arithmetic(rng):
    v = rng.lognormal(0, 1.2, 1000)
    cands = topcut_candidates(v)
    byname = {c["method"]: c for c in cands}
    for q in (0.975, 0.99, 0.995):
        c = byname[f"quantile_{q:g}"]
        cap = np.quantile(v, q)                         # numpy
        assert c["value"] == pytest.approx(cap)
        assert c["n_capped"] == int(np.sum(v > cap))
        # metal removed: direct arithmetic
        assert c["metal_removed_pct"] == pytest.approx(100 * np.sum(v[v > cap] - cap) / np.sum(v))
        assert c["mean_after"] == pytest.approx(np.minimum(v, cap).mean())
    assert [c["value"] for c in cands] == sorted(c["value"] for c in cands)


def test_logprob_break_found_in_a_mixture_and_not_in_a_lognormal():
    r = np.random.default_rng(101)
    main = r.lognormal(0, 0.8, 2000)
    high = r.lognormal(np.log(30), 0.7, 40)   # sparse high-grade population
    brk = detect_logprob_break(np.concatenate([main, high]))
    assert brk is not None
    # the break sits where the high population takes over: above most of the main
    # population (its 95 % quantile exp(0.8*1.645) ~ 3.7) and below the high one
    assert 3.0 < brk["value"] < 10.0
    assert brk["slope_upper"] > 1.5 * brk["slope_lower"]
    assert detect_logprob_break(np.random.default_rng(0).lognormal(0, 1.2, 1000)) is None
    cands = topcut_candidates(np.concatenate([main, high]))
    assert any(c["method"] == "logprob_break" for c in cands)
