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

from anisotropy.explore import topcut_candidates  # noqa: E402
from anisotropy.report.figures import DPI, histogram_figure, logprob_figure  # noqa: E402


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
