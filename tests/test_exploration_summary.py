"""Tests of anisotropy.exploration.summary: explore()'s statistics, warnings and record.

References: NumPy (mean, std, quantile), SciPy (stats.skew), and the
standard library's json (the record is JSON-ready).
"""

import json

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from anisotropy.errors import InputError, InsufficientDataError
from anisotropy.exploration import (DEFAULT_QUANTILES, discovery_lags, explore,
                                    nominal_spacing)
from exploration_layouts import drill_layout


# statistics

def test_statistics_and_quantiles_match_numpy_and_scipy(rng):
    c = rng.uniform(0, 200, (400, 3))
    v = rng.lognormal(0.0, 1.0, 400)
    e = explore(c, v)
    assert e.count == 400
    assert e.mean == pytest.approx(np.mean(v))                     # numpy
    assert e.std == pytest.approx(np.std(v))                       # numpy, divisor n
    assert e.cv == pytest.approx(np.std(v) / np.mean(v))
    assert e.skewness == pytest.approx(stats.skew(v))              # scipy.stats.skew
    assert e.min == v.min() and e.max == v.max()
    assert set(e.quantiles) == {f"{q:g}" for q in DEFAULT_QUANTILES}
    assert "0.975" in e.quantiles and "0.995" in e.quantiles
    assert e.quantiles["0.975"] == pytest.approx(np.quantile(v, 0.975))  # numpy linear
    d = e.to_dict()
    json.dumps(d)  # JSON-ready
    for key in ("count", "mean", "std", "cv", "min", "max", "skewness", "quantiles",
                "declustered", "spacing", "topcut", "trend", "dropped", "changed", "warnings"):
        assert key in d
    for key in ("mean", "std", "cell_size"):
        assert key in d["declustered"]
    for key in ("across_hole", "down_hole", "suggested_lag"):
        assert key in d["spacing"]
    assert "candidates" in d["topcut"]


def test_explore_takes_a_sampleset_and_carries_its_counts():
    from anisotropy.samples import samples_from_frame

    c, h = drill_layout(nx=4, ny=4, n_comp=10)
    r = np.random.default_rng(3)
    v = r.lognormal(0, 1, len(c))
    v[:3] = -99.0    # missing code, dropped and counted by samples.py
    v[3:5] = -0.02   # below-detection code, replaced and counted
    df = pd.DataFrame({"EAST": c[:, 0] + 500000, "NORTH": c[:, 1] + 7e6, "RL": c[:, 2],
                       "AU": v, "HOLE": h})
    s = samples_from_frame(df, value="AU", hole="HOLE", source="fenwright.csv")
    e = explore(s)
    d = e.to_dict()
    assert d["count"] == len(c) - 3
    assert sum(d["dropped"].values()) == 3 and sum(d["changed"].values()) == 2
    assert d["value"] == "AU" and d["source"] == "fenwright.csv"
    assert d["spacing"]["across_hole"] == pytest.approx(25.0)
    assert "AU" in e.summary()


def test_strong_skew_flag_and_warning():
    r = np.random.default_rng(11)
    c = r.uniform(0, 100, (500, 3))
    v = r.lognormal(0, 2.0, 500)  # lognormal sigma 2: CV = sqrt(exp(4)-1) ~ 7.3 (arithmetic)
    e = explore(c, v)
    assert e.cv > 2 and e.strongly_skewed
    assert any("strongly skewed" in w for w in e.warnings)
    v2 = r.lognormal(0, 0.5, 500)  # CV ~ 0.53
    assert not explore(c, v2).strongly_skewed


def test_too_few_samples_is_an_input_error():
    with pytest.raises(InsufficientDataError):
        explore(np.zeros((2, 3)), [1.0, 2.0])
    with pytest.raises(InputError):
        explore(np.zeros((3, 3)), [1.0, 2.0])


def test_constant_grades_do_not_break_exploration():
    c = np.random.default_rng(2).uniform(0, 50, (60, 3))
    e = explore(c, np.full(60, 1.5))
    assert e.std == 0 and e.skewness is None and e.cv == 0
    assert not e.trend.material and e.trend.r2_linear is None
    assert all(cand["n_capped"] == 0 for cand in e.topcut)
    json.dumps(e.to_dict())


def test_summary_wording_units_and_trend_direction():
    # drill holes (no benches): the bench spacing is n/a and carries no unit
    c, h = drill_layout(nx=4, ny=4, n_comp=10)
    # grade rising straight up (by construction: value = 1 + z/10), so the gradient
    # points up: azimuth undefined-ish but inclination 90 degrees above horizontal
    r = np.random.default_rng(4)
    v = 1.0 + c[:, 2] / 10.0 + r.normal(0, 0.01, len(c)) - c[:, 2].min() / 10.0
    text = explore(c, v, holes=h).summary()
    assert "bench n/a," in text and "n/a m" not in text
    assert "along_hole" not in text and "suggested unit lag along hole" in text
    line = next(ln for ln in text.splitlines() if ln.startswith("Trend:"))
    assert "above the horizontal" in line and "inclination" not in line

    # one level (a bench, exact z = 0): the vertical lag is n/a, with no unit after it
    r = np.random.default_rng(5)
    flat = np.c_[r.uniform(0, 100, (200, 2)), np.zeros(200)]
    text = explore(flat, r.lognormal(0, 1, 200)).summary()
    vertical = next(ln for ln in text.splitlines() if "suggested unit lag vertical" in ln)
    assert "n/a m" not in vertical and "(tolerance n/a)" in vertical


def test_explore_reports_the_lag_discover_starts_from():
    # one rule: the lag explore reports is the one discover's lag stage takes (with a pair
    # budget too large to shorten it); checked by hand for scattered samples: 20 lags out
    # to half the extent, but not under half the median nearest-neighbour distance, and
    # never fewer than 12 lags
    from anisotropy.discovery.lags import choose_lags

    rng = np.random.default_rng(5)
    coords = rng.uniform(0, 200, (300, 3))
    sp = nominal_spacing(coords)
    half = 0.5 * float(np.max(coords.max(axis=0) - coords.min(axis=0)))
    lag, n_lags, _ = discovery_lags(sp)
    assert lag == float(f"{min(max(half / 20, 0.5 * sp.nearest), half / 12):.3g}")
    assert n_lags == round(half / lag)
    lc = choose_lags(coords, sp, pair_budget=1e12)
    assert (lc.unit_lag, lc.n_lags) == (lag, n_lags)
    assert sp.to_dict()["discovery_lag"]["unit_lag"] == lag
