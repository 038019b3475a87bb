"""Tests of anisotropy.transform against outside references.

References: scipy.stats.norm (ppf/cdf, kstest); brute-force weighted CDFs
written out here; direct arithmetic for capping and logs. The plotting
position (i - 0.5)/n is the one documented in anisotropy.transform (the
mid-point, or Hazen, position; recalled from memory as a standard choice).
"""

import numpy as np
import pytest
from scipy import stats

from anisotropy.errors import DataError, InputError
from anisotropy.transform import (
    NormalScore,
    apply_transform,
    cap_values,
    indicator_transform,
    log_transform,
    weighted_quantile,
)


def test_scores_of_distinct_values_are_ppf_of_midpoint_positions(rng):
    z = rng.lognormal(0.0, 1.0, 57)
    ns = NormalScore().fit(z)
    n = z.size
    ranks = stats.rankdata(z)  # 1..n, distinct values
    expected = stats.norm.ppf((ranks - 0.5) / n)  # scipy.stats.norm.ppf of (i-0.5)/n
    np.testing.assert_allclose(ns.transform(z), expected, rtol=0, atol=1e-12)
    assert len(ns.table_) == n


def test_weighted_scores_match_brute_force_weighted_cdf(rng):
    z = rng.gamma(2.0, 1.5, 40)
    w = rng.uniform(0.1, 3.0, 40)
    ns = NormalScore(weights=w).fit(z)
    wn = w / w.sum()
    # brute force: weight strictly below each value plus half its own weight
    for zi, wi, yi in zip(z, wn, ns.transform(z)):
        p = wn[z < zi].sum() + wi / 2.0
        assert yi == pytest.approx(stats.norm.ppf(p), abs=1e-10)  # scipy.stats.norm.ppf


def test_ties_share_the_average_of_their_positions():
    z = np.array([1.0, 2.0, 2.0, 2.0, 3.0, 5.0])
    y = NormalScore().fit(z).transform(z)
    n = z.size
    # brute force: the three 2.0 values sit at ranks 2, 3, 4 -> positions 1.5/6, 2.5/6, 3.5/6;
    # their common score is the ppf of the average position 2.5/6
    assert y[1] == y[2] == y[3]
    assert y[1] == pytest.approx(stats.norm.ppf(np.mean([(i - 0.5) / n for i in (2, 3, 4)])))
    assert y[0] == pytest.approx(stats.norm.ppf(0.5 / n))
    assert y[5] == pytest.approx(stats.norm.ppf(5.5 / n))


def test_round_trip_inside_the_table(rng):
    z = np.round(rng.lognormal(0.5, 1.2, 300), 2)  # rounding creates ties
    ns = NormalScore().fit(z)
    np.testing.assert_allclose(ns.back_transform(ns.transform(z)), z, rtol=1e-12, atol=1e-12)
    # values between table entries also come back (linear interpolation both ways)
    mid = (ns.table_["value"].to_numpy()[:-1] + ns.table_["value"].to_numpy()[1:]) / 2
    np.testing.assert_allclose(ns.back_transform(ns.transform(mid)), mid, rtol=1e-10)


@pytest.mark.parametrize("tails", [("linear", "linear"), ("power", "power"),
                                   ("linear", "exponential")])
def test_back_transform_monotone_and_tails_as_documented(rng, tails):
    z = rng.lognormal(0.0, 0.8, 200)
    ns = NormalScore(tails=tails, lower=0.0, upper=2 * z.max(), power=2.0).fit(z)
    y = np.linspace(-7, 7, 2001)
    back = ns.back_transform(y)
    assert np.all(np.diff(back) >= 0)
    t = ns.table_
    p1, pk = t["p"].iloc[0], t["p"].iloc[-1]
    z1, zk = t["value"].iloc[0], t["value"].iloc[-1]
    # lower tail formula from the NormalScore docstring, evaluated directly
    y_low = -5.0
    frac = stats.norm.cdf(y_low) / p1
    expect_low = 0.0 + (z1 - 0.0) * (frac if tails[0] == "linear" else frac ** 2.0)
    assert ns.back_transform(np.array([y_low]))[0] == pytest.approx(expect_low)
    y_hi = 4.0
    p = stats.norm.cdf(y_hi)
    if tails[1] == "exponential":
        expect_hi = zk + ns.scale_ * np.log((1 - pk) / (1 - p))
        assert ns.back_transform(np.array([10.0]))[0] > 2 * z.max()  # unbounded tail
    else:
        frac = (p - pk) / (1 - pk)
        expect_hi = zk + (2 * z.max() - zk) * (frac if tails[1] == "linear" else frac ** 2.0)
        assert ns.back_transform(np.array([40.0]))[0] == pytest.approx(2 * z.max())  # bounded
    assert ns.back_transform(np.array([y_hi]))[0] == pytest.approx(expect_hi, rel=1e-9)
    # forward transform of tail values inverts the same model
    np.testing.assert_allclose(ns.transform(ns.back_transform(np.array([y_low, y_hi]))),
                               [y_low, y_hi], atol=1e-7)


def test_scores_of_large_sample_are_standard_normal():
    z = np.random.default_rng(7).lognormal(1.0, 1.5, 20000)
    y = NormalScore().fit(z).transform(z)
    # scipy.stats.kstest against N(0, 1); the mid-point scores are near-exact quantiles
    assert stats.kstest(y, "norm").pvalue > 0.5
    assert abs(y.mean()) < 1e-3 and abs(y.std() - 1) < 5e-3


def test_weighted_quantile_against_brute_force():
    z = np.array([3.0, 1.0, 2.0, 4.0])
    w = np.array([1.0, 1.0, 2.0, 4.0]) / 8
    # sorted 1,2,3,4 with w .125,.25,.125,.5 -> positions .0625,.25,.4375,.75 (arithmetic)
    assert weighted_quantile(z, 0.25, w) == pytest.approx(2.0)
    assert weighted_quantile(z, 0.59375, w) == pytest.approx(3.5)
    assert weighted_quantile(z, 0.99, w) == pytest.approx(4.0)


def test_cap_metal_removed_by_direct_arithmetic():
    z = np.array([1.0, 2.0, 10.0, 20.0, 3.0])
    capped, rec = cap_values(z, 8.0)
    np.testing.assert_array_equal(capped, [1, 2, 8, 8, 3])
    assert rec["n_capped"] == 2
    assert rec["metal_removed"] == pytest.approx(2.0 + 12.0)          # (10-8) + (20-8)
    assert rec["metal_removed_pct"] == pytest.approx(100 * 14 / 36)    # of total 36


def test_log_constant_recorded_for_zeros():
    z = np.array([0.0, 0.2, 1.0, 5.0])
    out, rec = log_transform(z)
    assert rec["constant"] == pytest.approx(0.1)  # half the smallest positive grade
    np.testing.assert_allclose(out, np.log(z + 0.1))  # numpy log
    out2, rec2 = log_transform(np.array([1.0, 2.0]))
    assert rec2["constant"] == 0.0 and np.allclose(out2, np.log([1.0, 2.0]))
    with pytest.raises(DataError):
        log_transform(np.array([0.0, 0.0]))


def test_indicator_at_threshold_and_quantile():
    z = np.arange(1.0, 11.0)
    ind, rec = indicator_transform(z, threshold=3.0)
    np.testing.assert_array_equal(ind, (z <= 3.0).astype(float))
    assert rec["n_one"] == 3 and rec["proportion"] == pytest.approx(0.3)
    ind, rec = indicator_transform(z, quantile=0.5)
    # mid-point positions (i-0.5)/10: 0.5 falls half way between 5 and 6
    assert rec["threshold"] == pytest.approx(5.5)
    with pytest.raises(InputError):
        indicator_transform(z)


def test_apply_transform_records_and_round_trips(rng):
    z = rng.lognormal(0, 1, 100)
    res = apply_transform(z, "normal_score", cap=float(np.quantile(z, 0.95)))
    assert res.record["kind"] == "normal_score"
    assert res.record["capping"]["n_capped"] == int(np.sum(z > np.quantile(z, 0.95)))
    capped = np.minimum(z, np.quantile(z, 0.95))
    np.testing.assert_allclose(res.back(res.forward(z)), capped, rtol=1e-12)
    import json
    json.dumps(res.to_dict())
    lg = apply_transform(z, "log")
    np.testing.assert_allclose(lg.back(lg.values), z, rtol=1e-12)
    with pytest.raises(InputError):
        apply_transform(z, "square")


def test_bad_input_raises_family_errors():
    with pytest.raises(DataError):
        NormalScore().fit([1.0, np.nan])
    with pytest.raises(InputError):
        NormalScore(weights=[1.0]).fit([1.0, 2.0])
    with pytest.raises(InputError):
        NormalScore(tails="cubic")


from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402
from hypothesis.extra.numpy import arrays  # noqa: E402

grades = arrays(np.float64, st.integers(2, 60),
                elements=st.floats(0.0, 1e4, allow_nan=False, allow_infinity=False))


@settings(max_examples=60, deadline=None)
@given(grades, st.sampled_from([("linear", "linear"), ("power", "power"),
                                ("linear", "exponential")]))
def test_property_round_trip_and_monotone(z, tails):
    ns = NormalScore(tails=tails, power=1.5).fit(z)
    y = ns.transform(z)
    # exact round trip of the fitted values (the table is interpolated both ways)
    np.testing.assert_allclose(ns.back_transform(y), z, rtol=1e-9, atol=1e-9)
    # order preserved: brute-force comparison of all pairs
    assert np.all((z[:, None] < z[None, :]) <= (y[:, None] < y[None, :]))
    assert np.all((z[:, None] == z[None, :]) == (y[:, None] == y[None, :]))
    back = ns.back_transform(np.linspace(-8, 8, 401))
    assert np.all(np.diff(back) >= -1e-9 * max(1.0, np.abs(back).max()))


# ---------------------------------------------------------------------------
# top-cut of a sample set (issue 17)
# ---------------------------------------------------------------------------

def _sample_set(rng, n=400):
    import pandas as pd

    from anisotropy.samples import samples_from_frame

    df = pd.DataFrame({"x": rng.uniform(0, 100, n), "y": rng.uniform(0, 100, n),
                       "z": rng.uniform(0, 50, n), "au": np.round(rng.lognormal(0, 1.2, n), 3)})
    return samples_from_frame(df, value="au", source="t.csv"), df


def test_top_cut_by_capping_counts_and_caps_like_numpy(rng):
    from anisotropy.transform import apply_top_cut

    s, df = _sample_set(rng)
    thr = 6.0
    out, cut = apply_top_cut(s, thr, "cap")
    # references: numpy.minimum and a brute-force count on the table written here
    over = df["au"].to_numpy() > thr
    np.testing.assert_array_equal(out.values, np.minimum(df["au"].to_numpy(), thr))
    assert cut.n_capped == int(over.sum()) > 0 and cut.n_excluded == 0
    assert cut.rows == [int(r) for r in np.flatnonzero(over) + 1]  # data rows count from 1
    key = next(k for k in out.changed if k.startswith("top-cut"))
    assert out.changed[key] == cut.n_capped and out.changed_rows[key] == cut.rows
    removed = np.sum(df["au"].to_numpy()[over] - thr) / df["au"].sum() * 100
    assert cut.metal_removed_pct == pytest.approx(removed, rel=1e-12)
    assert s.values.max() > thr  # the input is left as it was
    assert any("top-cut 6" in w and "capping" in w for w in out.warnings)
    d = cut.to_dict()
    assert d["threshold"] == 6.0 and d["mode"] == "cap" and d["method"] == "given"


def test_top_cut_by_exclusion_leaves_the_samples_out_and_keeps_the_books(rng):
    from anisotropy.transform import apply_top_cut

    s, df = _sample_set(rng)
    out, cut = apply_top_cut(s, 6.0, "exclude")
    keep = df["au"].to_numpy() <= 6.0
    # reference: boolean indexing of the table written here
    np.testing.assert_array_equal(out.values, df["au"].to_numpy()[keep])
    np.testing.assert_allclose(out.world_coords, df[["x", "y", "z"]].to_numpy()[keep])
    assert cut.n_excluded == int((~keep).sum()) > 0 and cut.n_capped == 0
    assert out.n_read == out.n + sum(out.dropped.values())   # nothing lost unaccounted
    assert list(out.rows) == [int(r) for r in np.flatnonzero(keep) + 1]


def test_top_cut_auto_takes_the_99_percent_quantile_when_there_is_no_break(rng):
    from anisotropy.exploration import detect_logprob_break
    from anisotropy.transform import apply_top_cut

    # normal grades: no steeper upper tail on the log-probability plot
    s, _ = _sample_set(rng)
    s.values = np.abs(rng.normal(10.0, 1.0, s.n))
    assert detect_logprob_break(s.values) is None
    choices = []
    out, cut = apply_top_cut(s, "auto", choices=choices)
    # reference: numpy's linear quantile, the 99 % rule of thumb (common practice)
    assert cut.threshold == pytest.approx(np.quantile(s.values, 0.99), rel=1e-12)
    assert cut.method == "quantile_0.99" and "99 % quantile" in cut.reason
    assert choices and choices[0]["choice"] == "top-cut" and choices[0]["reason"] == cut.reason


def test_suggested_topcut_rule_on_candidates_written_by_hand():
    from anisotropy.exploration import suggested_topcut

    def c(method, value, aggressive):
        return {"method": method, "value": value, "aggressive": aggressive, "reason": "r",
                "n_capped": 3, "metal_removed_pct": 20.0 if aggressive else 2.0}

    q = [c("quantile_0.975", 5, True), c("quantile_0.99", 8, False), c("quantile_0.995", 9, False)]
    assert suggested_topcut(q)["method"] == "quantile_0.99"
    assert suggested_topcut(q + [c("logprob_break", 7, False)])["method"] == "logprob_break"
    assert suggested_topcut(q + [c("logprob_break", 4, True)])["method"] == "quantile_0.99"
    q[1]["aggressive"] = True
    assert suggested_topcut(q)["method"] == "quantile_0.995"
    q[2]["aggressive"] = True
    assert suggested_topcut(q)["value"] == 9 and "every candidate" in suggested_topcut(q)["reason"]
    assert suggested_topcut([]) is None


@pytest.mark.parametrize("bad", ["high", "-1", 0, float("nan"), True])
def test_top_cut_setting_is_checked(bad):
    from anisotropy.transform import parse_top_cut

    with pytest.raises(InputError):
        parse_top_cut(bad)
    with pytest.raises(InputError, match="cap.*exclude"):
        parse_top_cut(5.0, "clip")
    assert parse_top_cut("AUTO") == ("auto", "cap") and parse_top_cut("12.5") == (12.5, "cap")
