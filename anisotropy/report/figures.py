"""Figures for the report (matplotlib, headless).

Each figure is its own function returning a :class:`matplotlib.figure.Figure`
built without pyplot, so nothing is left open in pyplot's figure registry
and no display is needed; when ``path`` is given the figure is also saved as
PNG at :data:`DPI`. Shared styling lives in the small helpers just below;
new figures should use them so that every figure looks the same.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from matplotlib.figure import Figure
from scipy import stats

__all__ = ["DPI", "COLOURS", "histogram_figure", "logprob_figure"]

DPI = 110
#: our own palette; axis colours follow CONTRIBUTING.md
COLOURS = {
    "data": "#3d6e8f",        # slate blue: samples, bars
    "reference": "#444444",   # dark grey: means, medians, fitted lines
    "major": "#1b7837",       # green
    "semi_major": "#e08214",  # orange
    "minor": "#5e3c99",       # purple
}
#: colours cycled through for top-cut candidates / other marked values
MARK_COLOURS = ("#c51b7d", "#e08214", "#1b7837", "#5e3c99", "#8c510a", "#01665e")
FIGSIZE = (7.0, 4.8)


# ---------------------------------------------------------------------------
# shared styling helpers
# ---------------------------------------------------------------------------

def new_figure(figsize=FIGSIZE):
    """A fresh figure and its single axes, styled the house way."""
    fig = Figure(figsize=figsize, layout="constrained")
    ax = fig.add_subplot(1, 1, 1)
    ax.grid(True, which="major", color="#dddddd", linewidth=0.6)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    return fig, ax


def label_axes(ax, *, title: str, xlabel: str, ylabel: str) -> None:
    """Title and axis labels (labels carry their units)."""
    ax.set_title(title, fontsize=11)
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)


def with_units(name: str, units: str | None) -> str:
    """``"Grade (g/t)"``, or just the name when no units are known."""
    return f"{name} ({units})" if units else name


def count_note(ax, text: str) -> None:
    """Sample count (and similar facts) in the upper-left corner."""
    ax.text(0.02, 0.97, text, transform=ax.transAxes, va="top", ha="left", fontsize=9,
            bbox={"boxstyle": "round,pad=0.3", "facecolor": "white", "edgecolor": "#bbbbbb"})


def save_figure(fig, path) -> None:
    """Save as PNG at :data:`DPI` when ``path`` is given (folders created)."""
    if path is None:
        return
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    fig.savefig(p, dpi=DPI, format="png")


def marks_from(candidates) -> list[tuple[str, float]]:
    """(label, value) pairs from a number, a list of numbers or top-cut candidate dicts."""
    if candidates is None:
        return []
    if np.isscalar(candidates):
        return [(f"top-cut {float(candidates):.4g}", float(candidates))]
    out = []
    for c in candidates:
        if isinstance(c, dict):
            out.append((f"{c.get('method', 'mark')}: {float(c['value']):.4g}", float(c["value"])))
        else:
            out.append((f"top-cut {float(c):.4g}", float(c)))
    return out


def _finite(values) -> tuple[np.ndarray, int]:
    v = np.asarray(values, dtype=float).ravel()
    ok = np.isfinite(v)
    return v[ok], int((~ok).sum())


# ---------------------------------------------------------------------------
# figures
# ---------------------------------------------------------------------------

def histogram_figure(values, *, title: str, units: str = "", topcut=None, path=None,
                     bins="auto", log_scale: bool = False, value_name: str = "Grade"):
    """Histogram of the grades with the mean, median and any top-cuts marked.

    Parameters
    ----------
    values : array_like
        Grades (non-finite entries are left out and counted in the note).
    title : str
    units : str, optional
        Grade units for the axis label, e.g. ``"g/t"``.
    topcut : float, list of float or list of dict, optional
        Top-cut value(s) or candidates from
        :func:`anisotropy.explore.topcut_candidates`, drawn as vertical lines.
    path : str or Path, optional
        Save the PNG there.
    bins : int, sequence or str, default "auto"
        Passed to :func:`numpy.histogram_bin_edges` (linear scale).
    log_scale : bool, default False
        Log-spaced bins over the positive grades and a log x-axis.
    value_name : str, default "Grade"

    Returns
    -------
    matplotlib.figure.Figure
    """
    v, n_bad = _finite(values)
    fig, ax = new_figure()
    note = f"n = {v.size}"
    if log_scale:
        pos = v[v > 0]
        if n_left := v.size - pos.size:
            note += f"\n{n_left} non-positive not shown"
        edges = (np.geomspace(pos.min(), pos.max(), 41) if pos.size and pos.max() > pos.min()
                 else 10)
        ax.hist(pos, bins=edges, color=COLOURS["data"], edgecolor="white", linewidth=0.4,
                label="samples")
        ax.set_xscale("log")
    elif v.size:
        edges = np.histogram_bin_edges(v, bins=bins)
        if len(edges) > 101:
            edges = np.histogram_bin_edges(v, bins=100)
        ax.hist(v, bins=edges, color=COLOURS["data"], edgecolor="white", linewidth=0.4,
                label="samples")
    if n_bad:
        note += f"\n{n_bad} blank/NaN not shown"
    if v.size:
        ax.axvline(float(np.mean(v)), color=COLOURS["reference"], linestyle="-", linewidth=1.2,
                   label=f"mean {np.mean(v):.4g}")
        ax.axvline(float(np.median(v)), color=COLOURS["reference"], linestyle=":", linewidth=1.2,
                   label=f"median {np.median(v):.4g}")
    for k, (lab, val) in enumerate(marks_from(topcut)):
        ax.axvline(val, color=MARK_COLOURS[k % len(MARK_COLOURS)], linestyle="--", linewidth=1.2,
                   label=lab)
    label_axes(ax, title=title, xlabel=with_units(value_name, units), ylabel="Number of samples")
    count_note(ax, note)
    ax.legend(loc="upper right", fontsize=8, framealpha=0.9)
    save_figure(fig, path)
    return fig


PROB_TICKS = (0.0001, 0.001, 0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95, 0.99, 0.999, 0.9999)


def logprob_figure(values, *, title: str, units: str = "", candidates=None, path=None,
                   value_name: str = "Grade"):
    """Log-probability plot: grade on a log axis against a normal-probability axis.

    Each sample is plotted at the normal score of its position (i - 0.5)/n
    among all n finite values; grades of zero or below cannot be shown on a
    log axis and are counted in the note. A lognormal population plots as a
    straight line; a break toward a steeper upper tail points to a sparse
    high-grade population.

    Parameters
    ----------
    values : array_like
    title : str
    units : str, optional
    candidates : float, list of float or list of dict, optional
        Top-cut candidates, drawn as horizontal lines and named in the legend.
    path : str or Path, optional
        Save the PNG there.
    value_name : str, default "Grade"

    Returns
    -------
    matplotlib.figure.Figure
    """
    v, n_bad = _finite(values)
    v = np.sort(v)
    n = v.size
    fig, ax = new_figure()
    note = f"n = {n}"
    if n:
        x = stats.norm.ppf((np.arange(1, n + 1) - 0.5) / n)
        pos = v > 0
        ax.plot(x[pos], v[pos], linestyle="none", marker="o", markersize=3, alpha=0.7,
                color=COLOURS["data"], label="samples")
        if (~pos).any():
            note += f"\n{int((~pos).sum())} zero/negative not shown"
        if pos.any():
            ax.set_yscale("log")
        lo, hi = float(x[0]), float(x[-1])
        ticks = [p for p in PROB_TICKS if lo - 0.3 <= stats.norm.ppf(p) <= hi + 0.3]
        ax.set_xticks([float(stats.norm.ppf(p)) for p in ticks])
        ax.set_xticklabels([f"{100 * p:g}" for p in ticks], fontsize=8)
    if n_bad:
        note += f"\n{n_bad} blank/NaN not shown"
    for k, (lab, val) in enumerate(marks_from(candidates)):
        if val > 0:
            ax.axhline(val, color=MARK_COLOURS[k % len(MARK_COLOURS)], linestyle="--",
                       linewidth=1.1, label=lab)
    label_axes(ax, title=title, xlabel="Cumulative probability (%, normal scale)",
               ylabel=with_units(value_name, units) + " (log scale)")
    count_note(ax, note)
    ax.legend(loc="lower right", fontsize=8, framealpha=0.9)
    save_figure(fig, path)
    return fig
