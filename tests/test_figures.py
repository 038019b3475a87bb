"""Tests of anisotropy.report.figures: files decode as PNG (matplotlib.image.imread),
titles, labels, legends and counts are on the returned Figure, and the
log-probability points sit at scipy.stats.norm.ppf((i - 0.5)/n)."""

import matplotlib

matplotlib.use("Agg")

import matplotlib.image as mpimg  # noqa: E402
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402
from scipy import stats  # noqa: E402

from anisotropy.exploration import topcut_candidates  # noqa: E402
from anisotropy.report.figures import (DPI, downhole_figure, histogram_figure,  # noqa: E402
                                       logprob_figure)


def texts(fig):
    ax = fig.axes[0]
    out = [ax.get_title(), ax.get_xlabel(), ax.get_ylabel()]
    out += [t.get_text() for t in ax.texts]
    leg = ax.get_legend()
    out += [t.get_text() for t in leg.get_texts()] + [leg.get_title().get_text()] if leg else []
    return out


def test_histogram_written_as_png_with_labels(tmp_path, rng):
    v = rng.lognormal(0, 1, 500)
    v[:2] = np.nan
    n_open = len(plt.get_fignums())
    p = tmp_path / "sub" / "hist.png"
    fig = histogram_figure(v, title="Fenwright Hollow - Au", units="g/t", topcut=[5.0, 9.0], path=p,
                           log_scale=False)
    img = mpimg.imread(p)  # matplotlib decodes the PNG
    assert img.ndim == 3 and img.shape[0] > 100 and img.shape[1] > 100
    # size follows the 110 dpi setting: figure inches x DPI (matplotlib arithmetic)
    w_in, h_in = fig.get_size_inches()
    assert img.shape[1] == pytest.approx(w_in * DPI, abs=2)
    t = texts(fig)
    assert "Fenwright Hollow - Au" in t
    assert any("g/t" in s for s in t)
    assert any(s.startswith("n = 498") for s in t) and any("2 blank" in s for s in t)
    assert sum("top-cut" in s for s in t) == 2
    assert len(plt.get_fignums()) == n_open  # nothing left open in pyplot


def test_histogram_log_scale_auto_for_skewed_grades(rng):
    skewed = rng.lognormal(0, 1.5, 400)          # skewness well above 2
    assert stats.skew(skewed) > 2                  # scipy.stats.skew
    assert histogram_figure(skewed, title="s").axes[0].get_xscale() == "log"
    even = rng.normal(10, 1, 400)
    assert histogram_figure(even, title="e").axes[0].get_xscale() == "linear"


def test_histogram_log_scale_counts_non_positive(rng):
    v = np.concatenate([rng.lognormal(0, 1, 100), [0.0, -1.0]])
    fig = histogram_figure(v, title="log bins", units="%", log_scale=True)
    assert fig.axes[0].get_xscale() == "log"
    assert any("2 non-positive" in s for s in texts(fig))


def test_logprob_figure_points_candidates_and_png(tmp_path, rng):
    v = rng.lognormal(0, 1.2, 300)
    cands = topcut_candidates(v)
    p = tmp_path / "logprob.png"
    fig = logprob_figure(v, title="Log-probability", units="g/t", candidates=cands, path=p)
    assert mpimg.imread(p).ndim == 3
    ax = fig.axes[0]
    assert ax.get_yscale() == "log"
    x, y = ax.lines[0].get_data()
    n = v.size
    # positions (i-0.5)/n on the normal scale: scipy.stats.norm.ppf
    np.testing.assert_allclose(x, stats.norm.ppf((np.arange(1, n + 1) - 0.5) / n))
    np.testing.assert_allclose(y, np.sort(v))
    t = texts(fig)
    for c in cands:
        # not applied: each line is called a top-cut candidate, with its method
        assert any(s.startswith(f"top-cut candidate ({c['method']})") for s in t)
    assert any("g/t" in s for s in t) and "Log-probability" in t
    assert any("probability" in s.lower() for s in t)
    assert any(s.startswith("n = 300") for s in t)


def test_logprob_figure_notes_zero_grades(rng):
    v = np.concatenate([rng.lognormal(0, 1, 50), [0.0, 0.0, 0.0]])
    fig = logprob_figure(v, title="zeros", units="ppm")
    assert any("3 zero/negative" in s for s in texts(fig))
    assert len(fig.axes[0].lines[0].get_xdata()) == 50


# ------------------------------------------------ issue 17: down-hole variogram figure

def _dashed(fig):
    return [ln for ln in fig.axes[0].get_lines() if ln.get_linestyle() == "--"]


def test_downhole_figure_line_passes_through_the_recorded_points(tmp_path):
    # a record as discovery.json holds it: (distance, value, pairs) of the first lags
    pts = [[2.05, 0.42, 310], [4.1, 0.55, 288], [6.0, 0.63, 250]]
    p = tmp_path / "dh.png"
    # the nugget recorded unclipped: the intercept of NumPy's line through the first two
    slope, icpt = np.polyfit([2.05, 4.1], [0.42, 0.55], 1)
    fig = downhole_figure(pts, nugget=icpt, model_nugget=0.31, held=False, composite=2.0,
                          sill=1.0, value_label="semivariogram (normal-score units)", path=p)
    assert mpimg.imread(p).ndim == 3                     # matplotlib decodes the PNG
    t = texts(fig)
    assert "Down-hole variogram (2 m composites)" in t
    assert "distance down the hole (m)" in t and "semivariogram (normal-score units)" in t
    assert fig.axes[0].get_legend() is not None
    for n in (310, 288, 250):                            # the pairs beside every point
        assert str(n) in t
    # the dashed line against NumPy's least-squares line through the first two points
    (line,) = _dashed(fig)
    x, y = line.get_data()
    np.testing.assert_allclose(y, np.polyval([slope, icpt], x), atol=1e-12)
    assert x[0] == 0.0 and x.max() == pytest.approx(4.1)
    # it passes through both recorded points (read back from the artist)
    np.testing.assert_allclose(np.interp([2.05, 4.1], x, y), [0.42, 0.55], atol=1e-12)
    # the recorded nugget is drawn at lag 0; the model's nugget as a level line
    marker = [ln for ln in fig.axes[0].get_lines() if ln.get_marker() == "o"]
    np.testing.assert_allclose(marker[0].get_xydata(), [[0.0, icpt]])
    assert any("down-hole nugget 0.29" in s for s in t) and not any("clipped" in s for s in t)
    model = [ln for ln in fig.axes[0].get_lines() if ln.get_linestyle() == ":"]
    assert np.allclose(model[0].get_ydata(), 0.31)
    assert any("fitted model's nugget 0.31 (fitted)" in s for s in t)


def test_downhole_figure_shows_a_clipped_nugget_off_the_line():
    # a steep start: the line through the first two points meets lag 0 below zero
    # (polyfit intercept, NumPy), and the recorded nugget is 0, so it is marked clipped
    pts = [[2.0, 0.10, 100], [4.0, 0.60, 90]]
    slope, icpt = np.polyfit([2.0, 4.0], [0.10, 0.60], 1)
    assert icpt < 0
    fig = downhole_figure(pts, nugget=0.0, model_nugget=0.0, held=True)
    (line,) = _dashed(fig)
    assert line.get_ydata()[0] == pytest.approx(icpt)
    t = texts(fig)
    assert any("clipped from the line's value at lag 0" in s for s in t)
    assert any("nugget 0 (held at the down-hole nugget)" in s for s in t)


def test_downhole_figure_with_one_lag_draws_no_line():
    fig = downhole_figure([[3.0, 0.4, 40]], nugget=None, model_nugget=0.3)
    assert _dashed(fig) == []
    assert any("no nugget extrapolated" in s for s in texts(fig))
