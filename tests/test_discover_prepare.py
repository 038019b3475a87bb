"""Tests of the first stages: ``prepare``, ``choose_transform`` and ``choose_sill``.

Skewness and coefficient of variation are checked with ``scipy.stats.skew``
and NumPy; normal scores against ``scipy.stats.norm.ppf`` of the ranks
(Goovaerts 1997, normal-score transform); the total sill of the raw values
against ``numpy.var``.
"""

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from anisotropy.discovery import choose_sill, choose_transform, prepare
from anisotropy.errors import InsufficientDataError
from anisotropy.samples import samples_from_frame


def _samples(coords, values):
    df = pd.DataFrame({"x": coords[:, 0], "y": coords[:, 1], "z": coords[:, 2], "g": values})
    return samples_from_frame(df, value="g", x="x", y="y", z="z")


def test_prepare_explores_the_samples():
    rng = np.random.default_rng(0)
    coords = rng.uniform(0, 100, (200, 3))
    prep = prepare(_samples(coords, rng.lognormal(size=200)))
    assert prep.samples.n == 200 and not prep.planar and not prep.has_holes
    assert prep.spacing.layout == "scattered"
    assert prep.values == pytest.approx(prep.samples.values)
    assert prep.declustering_weights is None or len(prep.declustering_weights) == 200


def test_prepare_refuses_too_few_samples_and_constant_grades():
    rng = np.random.default_rng(1)
    with pytest.raises(InsufficientDataError, match="at least 30"):
        prepare(_samples(rng.uniform(0, 100, (20, 3)), rng.normal(size=20) + 5))
    with pytest.raises(InsufficientDataError, match="no variability"):
        prepare(_samples(rng.uniform(0, 100, (50, 3)), np.full(50, 2.0)))


def test_one_bench_is_planar_and_says_so():
    rng = np.random.default_rng(2)
    coords = np.c_[rng.uniform(0, 100, (100, 2)), np.zeros(100)]
    prep = prepare(_samples(coords, rng.normal(size=100) + 5))
    assert prep.planar and any("one plane" in w for w in prep.warnings)


def test_skewed_grades_get_normal_scores():
    v = np.random.default_rng(3).lognormal(0.0, 1.0, 500)
    assert stats.skew(v) > 1.0                        # the rule's trigger, by SciPy
    tc = choose_transform(v)
    assert tc.kind == "normal_score"
    reason = tc.choices[0]["reason"]
    assert f"skewness {stats.skew(v):.2f} > 1" in reason
    assert f"CV {np.std(v) / np.mean(v):.2f} > 1" in reason or np.std(v) / np.mean(v) <= 1
    # without declustering weights the scores are the normal quantiles of the ranks
    # (up to the plotting position used), so their rank order is the grades'
    assert np.array_equal(np.argsort(tc.values), np.argsort(v))
    ppf = stats.norm.ppf((stats.rankdata(v) - 0.5) / len(v))
    assert np.corrcoef(tc.values, ppf)[0, 1] > 0.999


def test_symmetric_grades_stay_raw():
    v = np.random.default_rng(4).normal(10.0, 1.0, 500)
    tc = choose_transform(v)
    assert tc.kind == "raw" and np.array_equal(tc.values, v)
    assert "not strongly skewed" in tc.choices[0]["reason"]


def test_the_pairwise_relative_estimator_keeps_raw_grades():
    v = np.random.default_rng(5).lognormal(0.0, 1.0, 300)
    tc = choose_transform(v, estimator="pairwise_relative")
    assert tc.kind == "raw" and "pairwise relative" in tc.choices[0]["reason"]
    assert choose_transform(v, transform="raw", estimator="pairwise_relative"
                            ).choices[0]["reason"] == "as requested"


def test_an_indicator_threshold_outside_the_grades_is_refused():
    v = np.random.default_rng(6).uniform(0, 1, 300)
    tc = choose_transform(v, transform="indicator", threshold=0.25)
    assert set(np.unique(tc.values)) == {0.0, 1.0}
    assert np.mean(tc.values) == pytest.approx(np.mean(v <= 0.25))
    with pytest.raises(InsufficientDataError, match="threshold"):
        choose_transform(v, transform="indicator", threshold=5.0)


@pytest.mark.parametrize("kind, estimator, sill, total, units", [
    ("raw", "semivariogram", "variance", "var", "grade units squared"),
    ("normal_score", "semivariogram", "variance", 1.0, "normal-score units (variance 1)"),
    ("raw", "correlogram", "variance", 1.0, "correlogram units (1 - rho)"),
    ("raw", "madogram", "variance", None, "grade units (madogram, not squared)"),
    ("raw", "pairwise_relative", "variance", None, "pairwise relative units"),
    ("log", "semivariogram", "free", None, "log-grade units squared"),
    ("raw", "semivariogram", 2.5, 2.5, "grade units squared"),
])
def test_the_total_sill_and_its_units(kind, estimator, sill, total, units):
    v = np.random.default_rng(7).normal(3.0, 2.0, 400)
    sc = choose_sill(v, kind=kind, estimator=estimator, sill=sill)
    want = float(np.var(v)) if total == "var" else total
    assert sc.total == want and sc.units == units
    row = sc.choices[0]
    assert row["choice"] == "total sill" and row["value"] == ("free" if want is None else want)
