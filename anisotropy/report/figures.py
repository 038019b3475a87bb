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


def add_legend(ax, note: str, loc: str = "best") -> None:
    """Legend whose title carries the sample count (and similar facts)."""
    leg = ax.legend(loc=loc, fontsize=8, framealpha=0.9, title=note, title_fontsize=8)
    leg.get_title().set_multialignment("left")


def skewed_enough_for_log(v: np.ndarray) -> bool:
    """True for mostly positive, right-skewed grades (skewness > 2, >= 95 % positive)."""
    if v.size < 3 or np.mean(v > 0) < 0.95 or np.std(v) == 0:
        return False
    return bool(stats.skew(v) > 2.0)


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
        return [(f"top-cut applied {float(candidates):.4g}", float(candidates))]
    out = []
    for c in candidates:
        if isinstance(c, dict):
            out.append((f"top-cut candidate ({c.get('method', 'mark')}) {float(c['value']):.4g}",
                        float(c["value"])))
        else:
            out.append((f"top-cut candidate {float(c):.4g}", float(c)))
    return out


def _finite(values) -> tuple[np.ndarray, int]:
    v = np.asarray(values, dtype=float).ravel()
    ok = np.isfinite(v)
    return v[ok], int((~ok).sum())


# ---------------------------------------------------------------------------
# figures
# ---------------------------------------------------------------------------

def histogram_figure(values, *, title: str, units: str = "", topcut=None, path=None,
                     bins="auto", log_scale="auto", value_name: str = "Grade"):
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
        :func:`anisotropy.exploration.topcut_candidates`, drawn as vertical lines.
    path : str or Path, optional
        Save the PNG there.
    bins : int, sequence or str, default "auto"
        Passed to :func:`numpy.histogram_bin_edges` (linear scale).
    log_scale : bool or "auto", default "auto"
        Log-spaced bins over the positive grades and a log x-axis. "auto"
        uses it for mostly positive grades with skewness above 2, where a
        linear histogram crowds nearly every sample into the first bars.
    value_name : str, default "Grade"

    Returns
    -------
    matplotlib.figure.Figure
    """
    v, n_bad = _finite(values)
    fig, ax = new_figure()
    note = f"n = {v.size}"
    if log_scale == "auto":
        log_scale = skewed_enough_for_log(v)
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
    xlabel = with_units(value_name, units) + (" (log scale)" if log_scale else "")
    label_axes(ax, title=title, xlabel=xlabel, ylabel="Number of samples")
    add_legend(ax, note, loc="best")
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
    add_legend(ax, note, loc="lower right")
    save_figure(fig, path)
    return fig

# ---------------------------------------------------------------------------
# continuity figures (issue 6): variogram-map slices, stereonet,
# directional variograms, model table. Plain arrays in, a Figure out.
# ---------------------------------------------------------------------------

CONTINUITY_COLOURS = {k: COLOURS[k] for k in ("major", "semi_major", "minor")}
CONTINUITY_LABELS = {"major": "major", "semi_major": "semi-major", "minor": "minor"}
INTERPRETED_STYLE = {"color": "black", "linestyle": "--"}
OTHER_DIRECTION_COLOURS = ("#4d4d4d", "#2166ac", "#b2182b", "#8c510a", "#01665e")


def _blank_figure(figsize):
    """A figure without axes (the continuity figures lay out their own)."""
    return Figure(figsize=figsize, layout="constrained")


def _saved(fig, path):
    save_figure(fig, path)
    return fig


def section_ellipse(frame, ranges, u_axis, v_axis, n=181):
    """Points of the central section of a range ellipsoid by a plane.

    The ellipsoid has semi-axes ``ranges`` along the columns of ``frame``;
    the plane is spanned by the unit vectors ``u_axis`` and ``v_axis``.
    Along a unit direction ``d`` the ellipsoid's radius is
    ``1 / sqrt(sum_i (d . a_i)^2 / r_i^2)``.

    Parameters
    ----------
    frame : array_like (3, 3)
        Columns major, semi-major, minor unit vectors.
    ranges : array_like (3,)
        Ranges along those axes (metres).
    u_axis, v_axis : array_like (3,)
        Orthonormal in-plane basis (the map's horizontal and vertical axes).
    n : int
        Number of points around the curve.

    Returns
    -------
    u, v : ndarray (n,)
        In-plane coordinates (metres) of the ellipse.
    """
    R = np.asarray(frame, float)
    r = np.asarray(ranges, float)
    e_u = np.asarray(u_axis, float)
    e_v = np.asarray(v_axis, float)
    phi = np.linspace(0.0, 2.0 * np.pi, n)
    d = np.cos(phi)[:, None] * e_u + np.sin(phi)[:, None] * e_v
    proj = d @ R  # (n, 3): components along major, semi, minor
    radius = 1.0 / np.sqrt(np.sum((proj / r) ** 2, axis=1))
    return radius * np.cos(phi), radius * np.sin(phi)


def variogram_map_figure(values, extent, pairs=None, *, ellipse=None, min_pairs=1,
                         title="Variogram map", xlabel="u (m)", ylabel="v (m)",
                         value_label="semivariogram", axis_marks=None, path=None):
    """One slice of the variogram map, with the fitted range ellipse.

    Parameters
    ----------
    values : array_like (n_v, n_u)
        Estimator value per map cell; row index along the vertical map axis
        (``v``), column index along the horizontal one (``u``). NaN where no
        pairs.
    extent : (u_min, u_max, v_min, v_max)
        Map extent in metres (cell edges).
    pairs : array_like (n_v, n_u), optional
        Pair count per cell; cells with fewer than ``min_pairs`` are blanked
        and the total is shown in the title.
    ellipse : tuple of arrays or list of them, optional
        ``(u, v)`` points of the fitted range ellipse (see
        :func:`section_ellipse`), drawn in black; a list draws several with
        labels ``[(u, v, label), ...]``.
    min_pairs : int
        Cells with fewer pairs are left blank.
    title, xlabel, ylabel, value_label : str
        Text; labels should carry units.
    axis_marks : dict, optional
        ``{name: (u, v)}`` in-plane directions of the axes to mark as rays
        from the centre, coloured per axis (``major``, ``semi_major``,
        ``minor``) or grey.
    path : path-like, optional
        Save a PNG there.

    Returns
    -------
    matplotlib.figure.Figure
    """
    vals = np.array(values, dtype=float)
    if vals.ndim != 2:
        raise ValueError("values must be a 2-D array (n_v, n_u)")
    n_total = None
    if pairs is not None:
        cnt = np.asarray(pairs, dtype=float)
        vals = np.where(cnt >= max(min_pairs, 1), vals, np.nan)
        n_total = int(np.nansum(cnt))
    fig = _blank_figure((5.6, 4.8))
    ax = fig.add_subplot()
    ax.set_facecolor("#eeeeee")
    finite = vals[np.isfinite(vals)]
    # colour scale from 0 to the 98th percentile, so a few thin, noisy cells do not wash it out
    vmax = float(np.percentile(finite, 98)) if finite.size else 1.0
    im = ax.imshow(vals, origin="lower", extent=extent, cmap="viridis", aspect="equal",
                   interpolation="nearest", vmin=0.0, vmax=vmax if vmax > 0 else None)
    cb = fig.colorbar(im, ax=ax, shrink=0.85, extend="max")
    cb.set_label(value_label)
    if ellipse is not None:
        items = ellipse if isinstance(ellipse, list) else [(ellipse[0], ellipse[1], "fitted range")]
        for item in items:
            u, v = item[0], item[1]
            label = item[2] if len(item) > 2 else "fitted range"
            ax.plot(u, v, color="black", lw=1.6, label=label)
    if axis_marks:
        half = 0.5 * min(extent[1] - extent[0], extent[3] - extent[2])
        for name, (du, dv) in axis_marks.items():
            norm = float(np.hypot(du, dv))
            if norm < 1e-9:
                continue
            colour = CONTINUITY_COLOURS.get(name, "#4d4d4d")
            lab = CONTINUITY_LABELS.get(name, name)
            ax.plot([-half * du / norm, half * du / norm], [-half * dv / norm, half * dv / norm],
                    color=colour, lw=1.2, ls=":", label=f"{lab} (in this plane)")
    ax.set_xlim(extent[0], extent[1])
    ax.set_ylim(extent[2], extent[3])
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    full = title if n_total is None else f"{title}\n{n_total:,} pairs; cells under {min_pairs} pairs blank"
    ax.set_title(full, fontsize=10)
    if ellipse is not None or axis_marks:
        ax.legend(loc="upper right", fontsize=7, framealpha=0.8)
    return _saved(fig, path)


def _small_circle(axis, radius_deg, n=241):
    """Points (n, 3) of a cone of half-angle ``radius_deg`` around ``axis`` (either sense)."""
    a = np.asarray(axis, float)
    a = a / np.linalg.norm(a)
    helper = np.array([0.0, 0.0, 1.0]) if abs(a[2]) < 0.9 else np.array([1.0, 0.0, 0.0])
    e1 = np.cross(a, helper)
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(a, e1)
    t = np.linspace(0.0, 2.0 * np.pi, n)
    c, s = np.cos(np.radians(radius_deg)), np.sin(np.radians(radius_deg))
    return c * a + s * (np.cos(t)[:, None] * e1 + np.sin(t)[:, None] * e2)


def _project_segments(points):
    """Project points to the lower-hemisphere net, split where they cross the primitive."""
    from anisotropy.geometry import equal_area

    p = np.asarray(points, float)
    upper = p[:, 2] > 0
    x, y = equal_area(p)
    x, y = np.atleast_1d(x), np.atleast_1d(y)
    cuts = np.flatnonzero(upper[1:] != upper[:-1]) + 1
    return [(xs, ys) for xs, ys in zip(np.split(x, cuts), np.split(y, cuts)) if len(xs) > 1]


def _net_frame(ax):
    from anisotropy.geometry import equal_area, line_to_vector

    t = np.linspace(0, 2 * np.pi, 361)
    ax.plot(np.cos(t), np.sin(t), color="black", lw=1.0)
    for pl in (30, 60):
        v = line_to_vector(np.degrees(t), np.full_like(t, pl))
        x, y = equal_area(v)
        ax.plot(x, y, color="#bbbbbb", lw=0.5)
    for tr in range(0, 360, 30):
        v = line_to_vector(np.full(10, float(tr)), np.linspace(0, 90, 10))
        x, y = equal_area(v)
        ax.plot(x, y, color="#dddddd", lw=0.5)
    ax.plot([0], [0], marker="+", color="#888888")
    for label, (x, y) in {"N": (0, 1.07), "E": (1.07, 0), "S": (0, -1.07), "W": (-1.07, 0)}.items():
        ax.text(x, y, label, ha="center", va="center", fontsize=9)
    ax.set_xlim(-1.18, 1.18)
    ax.set_ylim(-1.18, 1.18)
    ax.set_aspect("equal")
    ax.axis("off")


def stereonet_figure(axes, *, clouds=None, cones=None, interpreted=None, interpreted_plane=None,
                     confidence=None, title="Axes of continuity (lower hemisphere, equal area)", path=None):
    """Lower-hemisphere equal-area net of the three axes with their uncertainty.

    Parameters
    ----------
    axes : dict
        ``{"major": v, "semi_major": v, "minor": v}`` unit vectors (east,
        north, up), either sense.
    clouds : dict, optional
        ``{name: (n_rep, 3)}`` bootstrap replicate axes, drawn as small dots.
    cones : dict, optional
        ``{name: radius_deg}`` confidence-cone radius around each axis, drawn
        as the projected small circle.
    interpreted : dict, optional
        ``{name: v}`` interpreted directions, drawn as open black markers
        joined to the label; names as in ``axes`` (or any label).
    interpreted_plane : (3,) vector, optional
        Pole of an interpreted plane of greatest continuity, drawn as its
        great circle in black dashes.
    confidence : float, optional
        Confidence level of the cones, for the legend (0.9 -> "90 %").
    title : str
    path : path-like, optional
        Save a PNG there.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from anisotropy.geometry import equal_area, to_lower_hemisphere, vector_to_line

    fig = _blank_figure((5.6, 5.4))
    ax = fig.add_subplot()
    _net_frame(ax)
    level = "" if confidence is None else f" {confidence * 100:.0f} %"
    for name, colour in CONTINUITY_COLOURS.items():
        if clouds and name in clouds and clouds[name] is not None and len(clouds[name]):
            cx, cy = equal_area(to_lower_hemisphere(np.asarray(clouds[name], float)))
            ax.scatter(np.atleast_1d(cx), np.atleast_1d(cy), s=5, color=colour, alpha=0.35,
                       linewidths=0, label=f"{CONTINUITY_LABELS[name]} replicates ({len(clouds[name])})")
    for name, colour in CONTINUITY_COLOURS.items():
        if cones and name in cones and axes and name in axes and cones[name] is not None \
                and np.isfinite(cones[name]):
            for k, (xs, ys) in enumerate(_project_segments(_small_circle(axes[name], cones[name]))):
                ax.plot(xs, ys, color=colour, lw=1.3,
                        label=(f"{CONTINUITY_LABELS[name]}{level} cone {cones[name]:.0f}°" if k == 0 else None))
    markers = {"major": "o", "semi_major": "s", "minor": "^"}
    for name, colour in CONTINUITY_COLOURS.items():
        if axes and name in axes and axes[name] is not None:
            v = np.asarray(axes[name], float)
            x, y = equal_area(v)
            tr, pl = vector_to_line(v)
            ax.plot([x], [y], marker=markers[name], ms=9, color=colour, markeredgecolor="black",
                    ls="none", label=f"{CONTINUITY_LABELS[name]} {float(tr):03.0f}/{float(pl):02.0f}")
    if interpreted_plane is not None:
        from anisotropy.geometry import pole_to_plane

        pole = np.asarray(interpreted_plane, float)
        dd, dip = pole_to_plane(pole)
        for k, (xs, ys) in enumerate(_project_segments(_small_circle(pole, 90.0, n=361))):
            ax.plot(xs, ys, lw=1.2, label=(f"interpreted plane {float(dd):03.0f}/{float(dip):02.0f}"
                                            if k == 0 else None), **INTERPRETED_STYLE)
    if interpreted:
        for name, v in interpreted.items():
            if v is None:
                continue
            x, y = equal_area(np.asarray(v, float))
            tr, pl = vector_to_line(np.asarray(v, float))
            lab = CONTINUITY_LABELS.get(name, str(name))
            ax.plot([x], [y], marker=markers.get(name, "D"), ms=12, mfc="none", mec="black",
                    mew=1.6, ls="none", label=f"interpreted {lab} {float(tr):03.0f}/{float(pl):02.0f}")
    ax.set_title(title, fontsize=10)
    ax.legend(loc="upper left", bbox_to_anchor=(1.0, 1.0), fontsize=7, framealpha=0.9)
    fig.set_size_inches(8.2, 5.4)
    return _saved(fig, path)


def directional_variograms_figure(curves, *, sill=None, value_label="semivariogram",
                                  distance_label="lag distance (m)",
                                  title="Directional variograms", path=None):
    """Experimental directional variograms with pair counts, bands and the model.

    Parameters
    ----------
    curves : list of dict
        One dict per direction with keys ``label`` (str), ``distance``,
        ``value`` (experimental, NaN where empty), ``pairs`` (arrays of the
        same length), optional ``lo``/``hi`` (band, e.g. bootstrap
        percentiles) with optional ``band_distance`` when the band is on
        its own distances, optional ``model_distance``/``model_value`` (fitted
        nested model along this direction, solid line, label ``model_label``),
        optional ``pair_model_value`` (the model averaged over the pairs of
        each lag, see :func:`anisotropy.directional.model_over_pairs`;
        open markers on a dashed line at ``pair_model_distance``, default
        ``distance``; label ``pair_model_label``), optional ``axis`` (``major``,
        ``semi_major``, ``minor``; others go on the last panel together,
        with their model curves but without bands, to stay readable), optional
        ``angular_tolerance`` (degrees; stated in the panel's title).
    sill : float, optional
        Total sill, drawn as a horizontal line.
    value_label, distance_label, title : str
    path : path-like, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig = _blank_figure((10.0, 7.6))
    grid = fig.subplots(2, 2, sharey=True)
    panels = {"major": grid[0, 0], "semi_major": grid[0, 1], "minor": grid[1, 0]}
    other_ax = grid[1, 1]
    other_k = 0
    dmax = 0.0
    for c in curves:
        d = np.asarray(c["distance"], float)
        finite = d[np.isfinite(d)]
        if finite.size:
            dmax = max(dmax, float(finite.max()))
    for c in curves:
        name = c.get("axis")
        if name in panels:
            ax, colour = panels[name], CONTINUITY_COLOURS[name]
        else:
            ax = other_ax
            colour = OTHER_DIRECTION_COLOURS[other_k % len(OTHER_DIRECTION_COLOURS)]
            other_k += 1
        # the other directions share a panel: their bands and pair counts are left out, and
        # only the first one's model lines are named in the legend
        _draw_direction(ax, c, colour, on_axis=name in panels,
                        name_models=name in panels or other_k == 1)
    tols = {c.get("axis") if c.get("axis") in panels else "others": c.get("angular_tolerance")
            for c in curves if c.get("angular_tolerance") is not None}
    for name, ax in list(panels.items()) + [("others", other_ax)]:
        head = ("along the " + CONTINUITY_LABELS[name] + " axis" if name in panels
                else "other directions")
        if tols.get(name) is not None:
            head += f" (cone ±{float(tols[name]):g}°)"
        _dress_panel(ax, head, sill, dmax, value_label, distance_label)
    fig.suptitle(title + " (numbers beside points: pairs per lag)", fontsize=11)
    return _saved(fig, path)


def _draw_direction(ax, c, colour, *, on_axis, name_models):
    """One direction of :func:`directional_variograms_figure`: its band and pair counts
    (``on_axis`` only), its points sized by pairs, its model and pair-averaged model."""
    d = np.asarray(c["distance"], float)
    g = np.asarray(c["value"], float)
    n = np.asarray(c.get("pairs", np.zeros_like(d)), float)
    ok = np.isfinite(d) & np.isfinite(g) & (n > 0)
    if c.get("lo") is not None and c.get("hi") is not None and on_axis:
        lo, hi = np.asarray(c["lo"], float), np.asarray(c["hi"], float)
        if c.get("band_distance") is not None:
            bd = np.asarray(c["band_distance"], float)
            b = np.isfinite(bd) & np.isfinite(lo) & np.isfinite(hi)
        else:
            bd = d
            b = ok & np.isfinite(lo) & np.isfinite(hi)
        ax.fill_between(bd[b], lo[b], hi[b], color=colour, alpha=0.18, lw=0,
                        label=c.get("band_label", "bootstrap band"))
    sizes = 12 + 60 * np.sqrt(n[ok] / max(float(n[ok].max()), 1.0)) if ok.any() else 12
    ax.scatter(d[ok], g[ok], s=sizes, color=colour, edgecolor="black", linewidths=0.4,
               zorder=3, label=f"{c['label']} ({int(n.sum()):,} pairs)")
    if on_axis:
        for di, gi, ni in zip(d[ok], g[ok], n[ok]):
            ax.annotate(f"{int(ni)}", (di, gi), textcoords="offset points", xytext=(0, 6),
                        ha="center", fontsize=6, color="#444444")
    if c.get("model_distance") is not None:
        ax.plot(c["model_distance"], c["model_value"], color=colour, lw=1.6 if on_axis else 1.0,
                label=c.get("model_label", "fitted model") if name_models else None)
    if c.get("pair_model_value") is not None:
        pv = np.asarray(c["pair_model_value"], float)
        pd_ = (np.asarray(c["pair_model_distance"], float)
               if c.get("pair_model_distance") is not None else d)
        p_ok = np.isfinite(pd_) & np.isfinite(pv)
        ax.plot(pd_[p_ok], pv[p_ok], color=colour, ls="--", lw=1.0, marker="D",
                markersize=3.5, markerfacecolor="white", markeredgecolor=colour, zorder=4,
                label=c.get("pair_model_label", "model averaged over this lag's pairs")
                if name_models else None)


def _dress_panel(ax, head, sill, dmax, value_label, distance_label):
    """A panel's sill line, limits, axis labels, title and legend."""
    if sill is not None and np.isfinite(sill):
        ax.axhline(sill, color="#888888", lw=0.8, ls=":", label="total sill")
    ax.set_xlim(0, dmax * 1.03 if dmax > 0 else 1)
    ax.set_ylim(bottom=0)
    ax.set_xlabel(distance_label)
    ax.set_ylabel(value_label)
    ax.set_title(head, fontsize=10)
    if ax.has_data():
        ax.legend(fontsize=7, loc="lower right")


MODEL_TABLE_COLUMNS = ("structure", "type", "sill", "range major (m)", "range semi-major (m)",
                       "range minor (m)", "major trend/plunge", "semi-major trend/plunge",
                       "minor trend/plunge")


MARK_NOTE = ("* range not resolved by the sampling (too few lags, or the direction is not "
             "resolved); † range longer than the longest lag computed (an extrapolation).")


def model_table_rows(model_dict, axes_dict=None, marks=None):
    """Rows of the model table from the ``model`` and ``axes`` blocks of discovery.json.

    Parameters
    ----------
    model_dict : dict
        ``{"nugget": float, "structures": [{"type", "sill", "ranges": {...}}]}``.
    axes_dict : dict, optional
        ``{"major": {"trend", "plunge"}, ...}`` for the orientation columns.
    marks : dict, optional
        ``{(structure number, axis name): mark}`` appended to that range
        (see :data:`MARK_NOTE`).

    Returns
    -------
    list of dict
        Keys :data:`MODEL_TABLE_COLUMNS`; the first row is the nugget.
    """
    def orient(name):
        if not axes_dict or name not in axes_dict:
            return ""
        a = axes_dict[name]
        return f"{float(a['trend']):05.1f}/{float(a['plunge']):04.1f}"

    def num(x, fmt):
        return "" if x is None else format(float(x), fmt)

    rows = [{"structure": "0", "type": "nugget", "sill": num(model_dict.get("nugget"), ".4g"),
             "range major (m)": "", "range semi-major (m)": "", "range minor (m)": "",
             "major trend/plunge": "", "semi-major trend/plunge": "", "minor trend/plunge": ""}]
    marks = marks or {}
    for k, s in enumerate(model_dict.get("structures", []), start=1):
        r = s.get("ranges", {})

        def rng(a):
            return num(r.get(a), ".1f") + marks.get((k, a), "")

        rows.append({"structure": str(k), "type": str(s.get("type", s.get("kind", ""))),
                     "sill": num(s.get("sill"), ".4g"),
                     "range major (m)": rng("major"),
                     "range semi-major (m)": rng("semi_major"),
                     "range minor (m)": rng("minor"),
                     "major trend/plunge": orient("major"),
                     "semi-major trend/plunge": orient("semi_major"),
                     "minor trend/plunge": orient("minor")})
    return rows


def model_table_figure(rows, *, title="Nested model (transformed units)", path=None):
    """The model table drawn as a figure (for slides and the PNG set).

    Parameters
    ----------
    rows : list of dict
        From :func:`model_table_rows`.
    title : str
    path : path-like, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig = _blank_figure((11.0, 1.5 + 0.32 * (len(rows) + 2)))
    ax = fig.add_subplot()
    ax.axis("off")
    cells = [[str(r.get(c, "")) for c in MODEL_TABLE_COLUMNS] for r in rows]
    # headings on two lines (a long heading at one line is wider than its column)
    heads = [_two_lines(c) for c in MODEL_TABLE_COLUMNS]
    table = ax.table(cellText=cells, colLabels=heads, loc="upper center", cellLoc="center",
                     bbox=[0.0, 0.12, 1.0, 0.78])
    table.auto_set_font_size(False)
    table.set_fontsize(7.5)
    for (row, _col), cell in table.get_celld().items():
        if row == 0:
            cell.set_height(cell.get_height() * 1.6)
    if any(("*" in v or "†" in v) for r in cells for v in r):
        ax.text(0.0, 0.02, MARK_NOTE, transform=ax.transAxes, fontsize=7, va="bottom",
                wrap=True)
    ax.set_title(title, fontsize=10)
    return _saved(fig, path)


def _two_lines(heading: str) -> str:
    """Break a heading at the space nearest its middle."""
    if len(heading) <= 10 or " " not in heading:
        return heading
    mid = len(heading) // 2
    cut = min((i for i, ch in enumerate(heading) if ch == " "), key=lambda i: abs(i - mid))
    return heading[:cut] + "\n" + heading[cut + 1:]


def downhole_figure(points, *, nugget=None, model_nugget=None, held=None, composite=None,
                    sill=None, value_label="semivariogram", title="Down-hole variogram",
                    path=None):
    """The first down-hole lags, their straight line to lag 0, and both nuggets.

    Draws what the record holds (``diagnostics.downhole`` of discovery.json):
    the points, the straight line through the first two of them extended to
    lag 0 (the extrapolation the nugget was read from), the nugget recorded
    from it, and the fitted model's nugget.

    Parameters
    ----------
    points : sequence of (distance, value, pairs)
        The first down-hole lags, in order (distance in metres).
    nugget : float, optional
        The recorded down-hole nugget (the line's value at lag 0, kept between
        0 and the first point); None when none was extrapolated.
    model_nugget : float, optional
        The fitted model's nugget.
    held : bool, optional
        The model's nugget was held at the down-hole nugget (True) or fitted
        (False); unknown when None.
    composite : float, optional
        Composite length (m), stated in the title.
    sill : float, optional
        The model's total sill, drawn as a dotted line.
    value_label, title : str
        ``value_label`` carries the units.
    path : path-like, optional
        Save a PNG there.

    Returns
    -------
    matplotlib.figure.Figure
    """
    pts = np.asarray([tuple(p)[:3] for p in (points or [])], float).reshape(-1, 3)
    d, g, n = pts[:, 0], pts[:, 1], pts[:, 2]
    fig, ax = new_figure()
    ax.scatter(d, g, s=36, color=COLOURS["data"], edgecolor="black", linewidths=0.4, zorder=3,
               label=f"down-hole lags ({int(n.sum()):,} pairs)")
    for di, gi, ni in zip(d, g, n):
        ax.annotate(f"{int(ni)}", (di, gi), textcoords="offset points", xytext=(0, 7),
                    ha="center", fontsize=7, color="#444444")
    at_zero = None
    if len(pts) >= 2 and d[1] != d[0]:
        x = np.array([0.0, d[0], d[1]])
        line = g[0] + (g[1] - g[0]) / (d[1] - d[0]) * (x - d[0])
        at_zero = line[0]
        ax.plot(x, line, color=COLOURS["reference"], lw=1.4, ls="--",
                label="straight line through the first two lags, to lag 0")
    if nugget is not None:
        lab = f"down-hole nugget {float(nugget):.3g}"
        if at_zero is not None and not np.isclose(float(nugget), at_zero, rtol=1e-6,
                                                  atol=1e-12):
            lab += " (clipped from the line's value at lag 0)"
        ax.plot([0.0], [float(nugget)], ls="none", marker="o", ms=9, mfc="white",
                mec=COLOURS["major"], mew=2.0, zorder=4, clip_on=False, label=lab)
    if model_nugget is not None:
        how = {True: " (held at the down-hole nugget)", False: " (fitted)"}.get(held, "")
        ax.axhline(float(model_nugget), color=COLOURS["minor"], lw=1.2, ls=":",
                   label=f"fitted model's nugget {float(model_nugget):.3g}{how}")
    if sill is not None and np.isfinite(sill):
        ax.axhline(float(sill), color="#888888", lw=0.8, ls="-.",
                   label=f"model's total sill {float(sill):.3g}")
    ax.set_xlim(left=0.0, right=1.08 * float(d.max()) if d.size else 1.0)
    ax.set_ylim(bottom=0.0)
    head = title if not composite else f"{title} ({float(composite):.3g} m composites)"
    label_axes(ax, title=head, xlabel="distance down the hole (m)", ylabel=value_label)
    note = "numbers beside points: pairs" if d.size else "no down-hole lag with enough pairs"
    if nugget is None:
        note += "\nno nugget extrapolated (fewer than two lags)" if len(pts) < 2 else \
            "\nno nugget extrapolated"
    add_legend(ax, note, loc="lower right")
    save_figure(fig, path)
    return fig


__all__ += ["section_ellipse", "variogram_map_figure", "stereonet_figure",
            "directional_variograms_figure", "model_table_rows", "model_table_figure",
            "MODEL_TABLE_COLUMNS", "MARK_NOTE", "CONTINUITY_COLOURS", "downhole_figure"]
