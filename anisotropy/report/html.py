"""The reviewer's report: one self-contained HTML file per discovery.

:func:`render_report` writes ``report.html`` (every figure embedded as a
base64 PNG data URI, inline style, no script, nothing fetched: it opens
offline in any browser) and the same figures as PNG files in
``figures/`` beside it.

The sections follow what a reviewer has to see, in the order of the chain:
the data and every sample dropped or changed, the grade distribution with
the top-cut, spacing and lags, the transform, variogram-map slices with the
fitted ellipse, the axes on a stereonet with their bootstrap uncertainty,
directional variograms with pair counts, bands and the model, the model
table to carry into estimation, the check of an interpretation, warnings,
and the caution on automated suggestions.

The markup is the Jinja2 template ``templates/report.html.j2``; this
module computes the figures and hands the template plain values. Every
string that came from the input (file, column and domain names, warnings
that quote them) is escaped by the template's autoescape
(:mod:`anisotropy.report.templating`).
"""

from __future__ import annotations

import io
import math
import re
from pathlib import Path
from collections.abc import Mapping

import matplotlib
import numpy as np

from anisotropy import safe_io as S
from anisotropy.constants import AXES as _AXES
from anisotropy.directional import cone_variogram, variogram_map
from anisotropy.geometry import line_to_vector, plane_to_pole, vector_to_line
from anisotropy.report import figures as F
from anisotropy.report.style import CAUTION, DOMAINING_NOTE
from anisotropy.report.templating import png_data_uri, render

__all__ = ["render_report", "REPORT_FIGURES"]

#: figure key -> title, in the order they appear in the report
REPORT_FIGURES = {
    "histogram": "Histogram of the grade with the top-cut",
    "log_probability": "Log-probability plot with the top-cut",
    "map_plan": "Variogram map, horizontal plan",
    "map_plane": "Variogram map in the plane of greatest continuity",
    "map_across": "Variogram map across the plane of greatest continuity",
    "stereonet": "Axes of continuity on a lower-hemisphere equal-area net",
    "directional": "Directional variograms",
    "model_table": "Nested model",
    "downhole": "Down-hole variogram and the nugget's extrapolation",
}

_AXIS_WORD = {"major": "major", "semi_major": "semi-major", "minor": "minor"}


# ---------------------------------------------------------------------------
# small helpers
# ---------------------------------------------------------------------------


def _g(x, fmt=".4g", missing="n/a") -> str:
    """A number as text in ``fmt`` (``missing`` for None or a non-finite value)."""
    if x is None:
        return missing
    try:
        f = float(x)
    except (TypeError, ValueError):
        return str(x)
    if not math.isfinite(f):
        return missing
    if fmt.endswith("d"):
        return format(int(round(f)), fmt)
    return format(f, fmt)


def _grid(rows, columns=None) -> dict:
    """A table record for the template's ``grid`` macro from a list of dicts."""
    columns = list(columns or (rows[0].keys() if rows else []))
    return {"columns": columns, "rows": [[r.get(c, "") for c in columns] for r in rows]}


def _flat(d: Mapping, prefix="") -> list:
    out = []
    for k, v in (d or {}).items():
        key = f"{prefix}{k}"
        if isinstance(v, Mapping):
            out.extend(_flat(v, key + "."))
        elif isinstance(v, (list, tuple)) and len(v) > 12:
            out.append((key, f"[{len(v)} values]"))
        elif isinstance(v, (list, tuple)) and all(isinstance(e, float) for e in v):
            out.append((key, ", ".join(format(e, ".5g") for e in v)))
        else:
            out.append((key, v if not isinstance(v, float) else format(v, ".5g")))
    return out


# ---------------------------------------------------------------------------
# figures from the discovery
# ---------------------------------------------------------------------------


def _attr(obj, *names, default=None):
    for n in names:
        if obj is not None and hasattr(obj, n):
            v = getattr(obj, n)
            if v is not None:
                return v
    return default


def _frame(disc) -> np.ndarray:
    R = _attr(disc, "frame")
    if R is None:
        R = disc.model.frame
    return np.asarray(R, float)


def _longest_ranges(model) -> np.ndarray:
    best = None
    for s in model.structures:
        r = np.asarray(s.ranges, float)
        if best is None or r[0] > best[0]:
            best = r
    return best if best is not None else np.array([1.0, 1.0, 1.0])


def _marks(disc, topcut):
    """The applied top-cut, else the exploration's candidates (for the lines on the plots)."""
    if topcut is not None:
        return float(topcut)
    ex = _attr(disc, "exploration")
    if ex is not None:
        cands = (ex.to_dict().get("topcut") or {}).get("candidates") or []
        return cands or None
    return None


def _raw_grades(disc):
    smp = disc.samples
    return np.asarray(smp.values, float)


def _fig_histogram(disc, path, topcut):
    lab = _labels(disc)
    return F.histogram_figure(_raw_grades(disc), title=f"Histogram of {lab['value_name']}"
                              + (" (top-cut applied)" if topcut is not None else " (top-cut candidates)"),
                              topcut=_marks(disc, topcut), path=path, **lab)


def _fig_logprob(disc, path, topcut):
    lab = _labels(disc)
    return F.logprob_figure(_raw_grades(disc), title=f"Log-probability plot of {lab['value_name']}",
                            candidates=_marks(disc, topcut), path=path, **lab)


def _labels(disc) -> dict:
    cols = getattr(disc.samples, "columns", {}) or {}
    units = str((getattr(disc, "diagnostics", None) or {}).get("grade_units") or "")  # --units
    return {"value_name": str(cols.get("value") or "grade"), "units": units}


def _map_plane_basis(normal):
    """Right-handed in-plane basis (u, v) for a plane with the given normal.

    ``u`` is horizontal (the strike direction) unless the plane is
    horizontal, then east; ``v`` completes the pair (up-dip for a dipping
    plane, north for a horizontal one).
    """
    n = np.asarray(normal, float)
    n = n / np.linalg.norm(n)
    if n[2] > 0:
        n = -n
    up = np.array([0.0, 0.0, 1.0])
    u = np.cross(up, n)
    if np.linalg.norm(u) < 1e-8:
        return np.array([1.0, 0.0, 0.0]), np.array([0.0, 1.0, 0.0])
    u /= np.linalg.norm(u)
    v = np.cross(n, u)
    if v[2] < 0:
        u, v = -u, -v
    return u, v


def _fig_map(disc, path, which):
    R = _frame(disc)
    plane_info = disc.plane() or {}
    if which == "plan":
        normal = np.array([0.0, 0.0, -1.0])
        kw = {"plane": "horizontal"}
        title = "Variogram map: horizontal plan"
    elif which == "plane":
        normal = R[:, 2]
        kw = {"normal": normal}
        title = (f"Variogram map in the plane of greatest continuity "
                 f"({_num(plane_info.get('dip_direction'), '03.0f')}/"
                 f"{_num(plane_info.get('dip'), '02.0f')})")
    else:
        normal = R[:, 1]
        kw = {"normal": normal}
        title = "Variogram map across the plane (major-minor section)"
    estimator = _estimator(disc)
    ms = variogram_map(disc.volume_, estimator=estimator, **kw)
    # MapSlice arrays are indexed [u, v]; the figure wants rows along v
    values = np.asarray(ms.value, float).T
    pairs = np.asarray(ms.pairs, float).T
    u_axis, v_axis = np.asarray(ms.e1, float), np.asarray(ms.e2, float)
    half = 0.5 * float(ms.map_cell)
    extent = (float(ms.u[0]) - half, float(ms.u[-1]) + half,
              float(ms.v[0]) - half, float(ms.v[-1]) + half)
    eu, ev = F.section_ellipse(R, _longest_ranges(disc.model), u_axis, v_axis)
    marks = {}
    for i, name in enumerate(_AXES):
        a = R[:, i]
        du, dv = float(a @ u_axis), float(a @ v_axis)
        if math.hypot(du, dv) > 0.5:  # the axis lies near the slice plane
            marks[name] = (du, dv)
    return F.variogram_map_figure(values, extent, pairs, ellipse=(eu, ev), min_pairs=3,
                                  title=title, xlabel=_axis_label(u_axis),
                                  ylabel=_axis_label(v_axis),
                                  value_label=f"{estimator} ({_units(disc)})",
                                  axis_marks=marks, path=path)


def _num(x, fmt):
    """``format(x, fmt)``; a significant-figure spec (``.3g``) writes values under 0.001 in
    exponent form (3.82e-04, not 0.000382), which reads better in a table."""
    try:
        x = float(x)
    except (TypeError, ValueError):
        return "?"
    if fmt.endswith("g") and fmt[:-1].lstrip(".").isdigit() and 0.0 < abs(x) < 1e-3:
        return format(x, f".{max(int(fmt[:-1].lstrip('.')) - 1, 0)}e")
    return format(x, fmt)


def _axis_label(vec):
    tr, pl = vector_to_line(np.asarray(vec, float))
    return f"distance toward {float(tr):03.0f}/{float(pl):02.0f} (m)"


def _units(disc) -> str:
    """Units of the analysed variable's variogram, by transform and estimator (the run's own)."""
    units = (getattr(disc, "diagnostics", None) or {}).get("units")
    if units:
        return str(units)
    kind = (_transform_record(disc).get("kind") or "raw")
    return {"normal_score": "normal-score units", "log": "log units",
            "indicator": "indicator units"}.get(kind, "grade units squared")


def _readable(pairs) -> list:
    """Flattened record keys as words: ``normal_score.tails.upper_bound`` -> ``tails: upper bound``."""
    out = []
    for k, v in pairs:
        parts = str(k).split(".")
        if len(parts) > 1 and parts[0] in ("normal_score", "log", "indicator", "raw"):
            parts = parts[1:]
        words = [p.replace("_", " ") for p in parts]
        out.append((": ".join(words), v))
    return out


def _transform_record(disc) -> dict:
    t = _attr(disc, "transform")
    rec = _attr(t, "record")
    if isinstance(rec, Mapping):
        out = dict(rec)
        out.setdefault("kind", _attr(t, "kind"))
        return out
    return dict(disc.to_dict().get("transform") or {})


def _estimator(disc) -> str:
    return disc.estimator or "semivariogram"


def _replicate_axes(disc):
    unc = _attr(disc, "uncertainty")
    axes = _attr(unc, "axes")
    if axes is None:
        return None
    a = np.asarray(axes, float)
    if a.ndim != 3 or a.shape[0] == 0:
        return None
    return {name: a[:, :, i] for i, name in enumerate(_AXES)}


def _interpreted_axes(check) -> dict | None:
    """Interpreted axis vectors of a CheckResult (``interpretation.axes``)."""
    if check is None:
        return None
    interp = _attr(check, "interpretation")
    axes = _attr(interp, "axes")
    if not isinstance(axes, Mapping):
        axes = {k: v.get("vector") for k, v in
                ((check.to_dict().get("interpretation") or {}).get("axes") or {}).items()}
    out = {k: np.asarray(v, float) for k, v in axes.items() if v is not None}
    return out or None


def _interpreted_pole(check):
    if check is None:
        return None
    plane = _attr(_attr(check, "interpretation"), "plane")
    if plane is None:
        return None
    return np.asarray(plane_to_pole(float(plane[0]), float(plane[1])), float)


def _fig_stereonet(disc, d, path, check):
    R = _frame(disc)
    unc = d.get("uncertainty") or {}
    cones = {a: (unc.get(a) or {}).get("cone_deg") for a in _AXES} if unc else None
    conf = unc.get("confidence") if unc else None
    return F.stereonet_figure({a: R[:, i] for i, a in enumerate(_AXES)},
                              clouds=_replicate_axes(disc), cones=cones,
                              interpreted=_interpreted_axes(check),
                              interpreted_plane=_interpreted_pole(check), confidence=conf,
                              path=path)


def _fig_directional(disc, path):
    vol = disc.volume_
    R = _frame(disc)
    lags = disc.lags or {}
    dirs_diag = (getattr(disc, "diagnostics", {}) or {}).get("directions") or {}
    tol = float(lags.get("angular_tolerance")
                or (dirs_diag.get("angular_tolerance") if isinstance(dirs_diag, Mapping) else None)
                or 22.5)
    bw = lags.get("bandwidth") or None
    estimator = _estimator(disc)
    dirs = [(a, R[:, i], f"{_AXIS_WORD[a]} axis") for i, a in enumerate(_AXES)]
    for tr, pl in ((0.0, 0.0), (90.0, 0.0), (0.0, 90.0)):
        v = line_to_vector(tr, pl)
        if min(float(np.degrees(np.arccos(min(1.0, abs(float(v @ R[:, i])))))) for i in range(3)) > 15:
            dirs.append((None, v, f"{tr:03.0f}/{pl:02.0f}"))
    dmax = float(vol.max_distance)
    grid = np.linspace(0.0, dmax, 120)
    bands = None
    unc = _attr(disc, "uncertainty")
    if unc is not None and getattr(unc, "n_replicates", 0) >= 2:
        bands = unc.variogram_bands(np.stack([d[1] for d in dirs]), grid)
    curves = []
    for k, (axis, u, label) in enumerate(dirs):
        # the cone's points and the model as the cone's own pairs see it (their lags
        # leave the axis), computed in anisotropy.directional
        cone = cone_variogram(vol, u, angular_tolerance=tol, bandwidth=bw, estimator=estimator,
                              model=disc.model)
        tr, pl = vector_to_line(u)
        name = label if axis is None else f"{label} {float(tr):03.0f}/{float(pl):02.0f}"
        c = {"label": name, "axis": axis, "distance": cone.distance, "value": cone.value,
             "pairs": cone.pairs,
             "angular_tolerance": tol,
             "model_distance": grid, "model_value": disc.model.variogram_along(u, grid),
             "model_label": "model along the axis" if axis else "model along the direction",
             "pair_model_value": cone.model_over_pairs,
             "pair_model_label": "model averaged over this lag's pairs"}
        if bands is not None:
            c.update(lo=bands["lo"][k], hi=bands["hi"][k], band_distance=grid,
                     band_label=f"bootstrap band of the model ({unc.confidence * 100:.0f} %)")
        curves.append(c)
    return F.directional_variograms_figure(
        curves, sill=float(disc.model.total_sill), value_label=f"{estimator} ({_units(disc)})",
        title=f"Directional variograms (angular tolerance {tol:g}°)", path=path)


def _fig_table(disc, d, path):
    return F.model_table_figure(F.model_table_rows(d.get("model") or {}, d.get("axes") or {},
                                                   marks=_range_marks(d)),
                                title=f"Nested model ({_units(disc)})", path=path)


def _nugget_held(d):
    """True when the record's nugget choice holds a number (the down-hole nugget held in
    the fit), False when it says fitted, None when the record does not say."""
    for c in (d.get("diagnostics") or {}).get("choices") or []:
        if isinstance(c, Mapping) and c.get("choice") == "nugget":
            v = c.get("value")
            return isinstance(v, (int, float)) and not isinstance(v, bool)
    return None


def _fig_downhole(d, path, value_label):
    """The down-hole variogram of the record's ``diagnostics.downhole`` (None without one)."""
    dh = (d.get("diagnostics") or {}).get("downhole") or {}
    if not dh.get("points"):
        return None
    model = d.get("model") or {}
    return F.downhole_figure(dh["points"], nugget=dh.get("nugget"),
                             model_nugget=model.get("nugget"), held=_nugget_held(d),
                             composite=dh.get("composite"), sill=model.get("total_sill"),
                             value_label=value_label, path=path)


def _section_downhole(d) -> dict:
    """The reading of the down-hole variogram figure (``drawn``), or why there is none."""
    dh = (d.get("diagnostics") or {}).get("downhole") or {}
    if not dh.get("points"):
        return {"drawn": False,
                "text": "Not drawn: the samples are not in drill holes, or too few pairs lie one "
                        "or two composites apart in the same hole."}
    nug = dh.get("nugget")
    held = _nugget_held(d)
    model_nug = (d.get("model") or {}).get("nugget")
    read = (f"The line gives a down-hole nugget of {_num(nug, '.3g')}" if nug is not None
            else "No nugget was extrapolated (fewer than two down-hole lags with enough pairs)")
    how = {True: "held at that value in the fit", False: "fitted with the other parameters",
           None: "as fitted"}[held]
    return {"drawn": True,
            "text": f"Points: the first down-hole lags, each from the pairs in the same hole a "
                    f"whole number of composites apart ({_num(dh.get('composite'), '.3g')} m "
                    "composites), at their mean distance, with the pairs beside each; the run's "
                    "estimator. Dashed: the straight line through the "
                    f"first two points, extended to lag 0. {read}; the model's nugget is "
                    f"{_num(model_nug, '.3g')}, {how}."}


def _draw_all(disc, d, fig_dir: Path, check, topcut):
    """Every figure of the report, drawn and written; ``d`` is the discovery's record."""
    matplotlib.use("Agg", force=False)
    makers = {
        "histogram": lambda p: _fig_histogram(disc, p, topcut),
        "log_probability": lambda p: _fig_logprob(disc, p, topcut),
        "map_plan": lambda p: _fig_map(disc, p, "plan"),
        "map_plane": lambda p: _fig_map(disc, p, "plane"),
        "map_across": lambda p: _fig_map(disc, p, "across"),
        "stereonet": lambda p: _fig_stereonet(disc, d, p, check),
        "directional": lambda p: _fig_directional(disc, p),
        "model_table": lambda p: _fig_table(disc, d, p),
        "downhole": lambda p: _fig_downhole(d, p, f"{_estimator(disc)} ({_units(disc)})"),
    }
    out = {}
    for key, make in makers.items():
        path = fig_dir / f"{key}.png"
        try:
            fig = make(None)
            if fig is None:  # does not apply to these samples (said in its section)
                out[key] = (None, None)
                continue
            buf = io.BytesIO()
            fig.savefig(buf, format="png", dpi=F.DPI)
            data = buf.getvalue()
            S.atomic_write_bytes(path, data)
            out[key] = (data, None)
        except Exception as exc:  # noqa: BLE001 - a missing figure is reported, never fatal
            out[key] = (None, f"{type(exc).__name__}: {exc}")
    return out


# ---------------------------------------------------------------------------
# sections
# ---------------------------------------------------------------------------


def _figure(key, figs) -> dict:
    """The template's record of one figure: its image as a data URI, or why it is missing."""
    data, err = figs.get(key, (None, "not drawn"))
    return {"key": key, "title": REPORT_FIGURES[key], "error": err,
            "src": None if data is None else png_data_uri(data)}


def _topcut(disc):
    rec = _transform_record(disc)
    for k in ("cap", "topcut", "top_cut"):
        if rec.get(k) is not None:
            v = rec[k]   # top_cut is the record of anisotropy.transform.TopCut
            return float(v["threshold"] if isinstance(v, dict) else v)
    return None


def _row_list(rows, limit=60) -> str:
    """Row numbers as text, the first ``limit`` of them and how many more."""
    if not rows:
        return ""
    rows = [int(r) for r in rows]
    text = ", ".join(str(r) for r in rows[:limit])
    if len(rows) > limit:
        text += f" ... and {len(rows) - limit} more"
    return text


def _section_data(disc, d) -> dict:
    inp = d.get("input") or {}
    smp = disc.samples
    facts = [("grade column", inp.get("value")),
             ("domain", inp.get("domain") if inp.get("domain") is not None else "all samples"),
             ("samples in the domain", _g(inp.get("n_samples"), "d")),
             ("samples used", _g(inp.get("n_used"), "d"))]
    rows = []
    dropped_rows = getattr(smp, "dropped_rows", None) or {}
    changed_rows = getattr(smp, "changed_rows", None) or {}
    for reason, n in (inp.get("dropped") or getattr(smp, "dropped", {}) or {}).items():
        rows.append({"what": "dropped", "reason": reason, "samples": int(n),
                     "data rows": _row_list(dropped_rows.get(reason))})
    for reason, n in (getattr(smp, "changed", {}) or {}).items():
        rows.append({"what": "changed", "reason": reason, "samples": int(n),
                     "data rows": _row_list(changed_rows.get(reason))})
    dup = getattr(smp, "duplicates", None) or {}
    if dup.get("samples"):
        rows.append({"what": f"duplicates ({dup.get('policy')})",
                     "reason": f"{dup.get('locations')} shared locations", "samples": dup.get("samples"),
                     "data rows": _row_list(dup.get("rows"))})
    stats = None
    ex = _attr(disc, "exploration")
    if ex is not None:
        e = ex.to_dict()
        stats = [("count", _g(e.get("count"), "d")), ("mean", _g(e.get("mean"))),
                 ("standard deviation", _g(e.get("std"))), ("CV", _g(e.get("cv"), ".2f")),
                 ("skewness", _g(e.get("skewness"), ".2f")), ("min", _g(e.get("min"))),
                 ("max", _g(e.get("max")))]
        for q, v in (e.get("quantiles") or {}).items():
            stats.append((f"quantile {q}", _g(v)))
        dc = e.get("declustered") or {}
        if dc:
            stats.append(("declustered mean", _g(dc.get("mean"))))
            stats.append(("declustering cell (m)", _g(dc.get("cell_size"), ".3g")))
    return {"file": inp.get("file"), "facts": facts, "stats": stats,
            "changes": _grid(rows, ["what", "reason", "samples", "data rows"]) if rows else None,
            "with_rows": any(r["data rows"] for r in rows)}


def _section_topcut(disc, tc) -> dict:
    candidates = None
    ex = _attr(disc, "exploration")
    if ex is not None:
        cands = (ex.to_dict().get("topcut") or {}).get("candidates") or []
        if cands:
            candidates = _grid([{"candidate": _g(c.get("value")), "method": c.get("method"),
                                 "samples capped": c.get("n_capped"),
                                 "metal removed (%)": _g(c.get("metal_removed_pct"), ".1f")}
                                for c in cands])
    return {"value": _g(tc) if tc is not None else None, "candidates": candidates}


#: Labels (with units) of the discovery.json ``lags`` keys in the report.
_LAG_LABELS = {"unit_lag": "unit lag (m)", "n_lags": "number of lags",
               "lag_tolerance": "lag tolerance (m)", "max_distance": "longest lag distance (m)",
               "angular_tolerance": "angular tolerance (degrees)",
               "bandwidth": "bandwidth (m)"}

#: Units appended to numeric choice values in the choices table.
_CHOICE_UNITS = {"unit lag": "m", "lag tolerance": "m", "angular tolerance": "degrees",
                 "bootstrap blocks": "m", "bandwidth": "m", "maximum distance": "m"}


def _choice_value(choice, value) -> str:
    """A choice's value as text: numbers to 4 significant figures, with their unit."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return "" if value is None else str(value)
    unit = _CHOICE_UNITS.get(str(choice))
    text = format(value, ".4g")
    return f"{text} {unit}" if unit else text


def _section_lags(disc, d) -> dict:
    lags = d.get("lags") or {}
    out = {"lags": [(_LAG_LABELS.get(str(k).split(".")[0], k), v) for k, v in _flat(lags)],
           "spacing": None, "suggested": None, "choices": None, "pairs": None}
    ex = _attr(disc, "exploration")
    if ex is not None:
        sp = ex.to_dict().get("spacing") or {}
        rows = []
        for k, lag in (sp.get("suggested_lag") or {}).items():
            rows.append({"direction class": str(k).replace("_", " "), "suggested lag (m)": _g(lag, ".3g"),
                         "why": (sp.get("reasons") or {}).get(k, "")})

        def metres(x):
            text = _g(x, ".3g")
            return text if text == "n/a" else f"{text} m"

        out["spacing"] = {k: metres(sp.get(k)) for k in ("across_hole", "down_hole", "bench")}
        out["suggested"] = _grid(rows) if rows else None
    diag = d.get("diagnostics") or {}
    choices = [c for c in (diag.get("choices") or []) if isinstance(c, Mapping)]
    if choices:
        out["choices"] = _grid([{"choice": c.get("choice"),
                                 "value": _choice_value(c.get("choice"), c.get("value")),
                                 "why": _for_people(c.get("reason"))} for c in choices],
                               ["choice", "value", "why"])
    if diag.get("pairs") is not None:
        out["pairs"] = _g(diag.get("pairs"), ",.0f")
    return out


def _section_model(disc, d) -> dict:
    rows = F.model_table_rows(d.get("model") or {}, d.get("axes") or {}, marks=_range_marks(d))
    plane = d.get("plane") or {}
    items = [("plane of greatest continuity (dip direction/dip)",
              f"{_g(plane.get('dip_direction'), '05.1f')} / {_g(plane.get('dip'), '04.1f')}"),
             ("strike (right-hand rule)", _g(plane.get("strike"), "05.1f")),
             ("pitch of the major axis in that plane", _g(plane.get("pitch"), "05.1f"))]
    return {"units": _units(disc), "mark_note": F.MARK_NOTE,
            "table": _grid(rows, list(F.MODEL_TABLE_COLUMNS)), "plane": items,
            "rotation": _rotation(_frame(disc)), "grade": _grade(disc),
            "uncertainty": _uncertainty(d.get("uncertainty") or {})}


def _uncertainty(unc) -> dict | None:
    """The bootstrap's intervals of the axes and ranges (None when no bootstrap was run)."""
    if not unc:
        return None
    rows = []
    for a in _AXES:
        u = unc.get(a) or {}
        rows.append({"axis": _AXIS_WORD[a], "cone radius (°)": _g(u.get("cone_deg"), ".1f"),
                     "trend interval": _pair(u.get("trend"), ".0f"),
                     "plunge interval": _pair(u.get("plunge"), ".0f"),
                     "range interval (m)": _pair(u.get("range"), ".0f"),
                     "cone from": _cone_source(u)})
    nug = unc.get("nugget")
    if (isinstance(nug, (list, tuple)) and len(nug) == 2
            and _num(nug[0], ".3g") == _num(nug[1], ".3g")):
        nug_text = (f"Nugget {_num(nug[0], '.3g')} in every replicate (held fixed in the "
                    "fit, so it carries no interval here)")
    else:
        nug_text = f"Nugget {_pair(nug, '.3g')}"
    return {"method": str(unc.get("method")).replace("_", " "),
            "replicates": _g(unc.get("replicates"), "d"),
            "confidence": _g((unc.get("confidence") or 0) * 100, ".0f"),
            "nugget": nug_text, "table": _grid(rows)}


def _cone_source(u) -> str:
    """Where an axis's cone comes from, and why not the likelihood's where it could have."""
    base = _base_cone_source(u)
    if u.get("cone_rival_deg") is not None:
        return f"widened to hold a rival frame's axis and a cone as wide around it; that cone: {base}"
    return base


def _base_cone_source(u) -> str:
    """The cone before any widening to a rival frame: where it comes from."""
    source = str(u.get("cone_source") or "replicates")
    if source == "unresolved direction":
        return (f"the least cone of an unresolved direction, twice the sweep's angular "
                f"tolerance (the replicates gave {u.get('replicate_cone_deg', 0.0):.0f}°)")
    gap = u.get("variogram_gap") or {}
    if source == "replicates" and gap and not gap.get("within", True):
        return (f"replicates (the likelihood's and the variogram's axes differ by "
                f"{gap['gap_deg']:.0f}°, more than their spreads allow)")
    return source


def _range_marks(d) -> dict:
    """``{(structure, axis): mark}``: unresolved (*) and extrapolated (†) ranges."""
    diag = d.get("diagnostics") or {}
    unresolved = set(diag.get("unresolved_ranges") or []) | set(diag.get("unresolved_axes") or [])
    max_lag = (d.get("lags") or {}).get("max_distance")
    marks = {}
    for k, st in enumerate((d.get("model") or {}).get("structures") or [], 1):
        for a in _AXES:
            m = "*" if a in unresolved else ""
            r = (st.get("ranges") or {}).get(a)
            if max_lag is not None and r is not None and float(r) > float(max_lag):
                m += "†"
            if m:
                marks[(k, a)] = m
    return marks


def _grade(disc) -> dict | None:
    """The model in grade units (Hermite or refitted with the frame held), how, and its check."""
    from anisotropy.modelfile import grade_record

    out = dict.fromkeys(("error", "reason", "units", "variance", "misfit", "table", "check",
                         "same_ranges"))
    try:
        g = grade_record(disc)
    except Exception as exc:  # noqa: BLE001 - the report must still be written
        return {**out, "error": str(exc)}
    if g is None:
        return None
    if not g.get("structures"):
        return {**out, "reason": g.get("reason")}
    rows = [{"structure": "0", "type": "nugget", "sill": _g(g["nugget"], ".4g")}]
    for k, st in enumerate(g["structures"], 1):
        r = st["practical_range_m"]
        rows.append({"structure": str(k), "type": st["kind"], "sill": _g(st["sill"], ".4g"),
                     "ranges major / semi-major / minor (m)":
                         f"{r['major']:.1f} / {r['semi_major']:.1f} / {r['minor']:.1f}"})
    out.update(units=g["units"], reason=g["reason"], variance=_g(g["grade_variance"], ".4g"),
               misfit=(_g(100 * g["max_misfit_share"], ".1f")
                       if g.get("max_misfit_share") is not None else None),
               same_ranges=bool(g.get("same_frame_and_ranges")),
               table=_grid(rows, ["structure", "type", "sill",
                                  "ranges major / semi-major / minor (m)"]))
    chk = (g.get("check_downhole") or {}).get("rows") or []
    if chk:
        out["check"] = {"note": g["check_downhole"]["note"],
                        "table": _grid([{"lag (m)": _g(c["lag_m"], ".3g"), "pairs": c["pairs"],
                                         "experimental": _g(c["experimental"], ".4g"),
                                         "grade model": _g(c["model"], ".4g")} for c in chk])}
    return out


def _rotation(R) -> dict:
    """The rotation matrix and both angle sequences (the template says them in words)."""
    from anisotropy.geometry import rotation_sequences

    rows = [{"": name, "major": f"{R[i, 0]:+.4f}", "semi-major": f"{R[i, 1]:+.4f}",
             "minor": f"{R[i, 2]:+.4f}"} for i, name in enumerate(("east", "north", "up"))]
    seq = rotation_sequences(R)
    return {"matrix": _grid(rows, ["", "major", "semi-major", "minor"]),
            "s1": {k: f"{seq['azimuth_plunge_rotation'][k]:.1f}"
                   for k in ("azimuth", "plunge", "rotation")},
            "s2": {k: f"{seq['zxz'][k]:.1f}" for k in ("alpha", "beta", "gamma")}}


def _pair(v, fmt):
    if not isinstance(v, (list, tuple)) or len(v) != 2:
        return "n/a"
    return f"{_num(v[0], fmt)} – {_num(v[1], fmt)}"


def _section_check(check) -> dict | None:
    if check is None:
        return None
    c = check.to_dict()
    verdict = str(c.get("verdict"))
    summary = getattr(check, "summary", None)
    return {"verdict": verdict, "css": verdict.replace(" ", "-"),
            "summary": summary() if callable(summary) else None,
            "record": _flat({k: v for k, v in c.items() if k != "verdict"})}


_CODE_REF = re.compile(r"\s*\((?:see\s+)?(?:anisotropy|diagnostics|uncertainty|lags)\.[\w.]+\)"
                       r"|\s*(?:see\s+)?\b(?:anisotropy|diagnostics)\.[A-Za-z_][\w.]*(?:\(\))?")


def _for_people(text) -> str:
    """Text for people: code paths such as ``(anisotropy.geometry.frame_from_angles)`` or
    ``see diagnostics.selection`` are taken out (the record keeps them)."""
    if text is None:
        return ""
    out = _CODE_REF.sub("", str(text))
    return re.sub(r"\(\s*\)", "", out).strip()


def _run(d) -> dict | None:
    """The audit trail in the report header (None when the record has none)."""
    run = d.get("run") or {}
    if not run:
        return None
    opts = run.get("options") or {}
    return {"utc": run.get("utc"), "version": run.get("version"), "seed": run.get("seed"),
            "sha": run.get("input_sha256"),
            "sha_note": run.get("input_sha256_note") or "not available",
            "command": run.get("command"),
            "options": ", ".join(f"{k}={v}" for k, v in opts.items()
                                 if v is not None and k not in ("progress", "intake"))}


def _warnings(disc, d) -> list:
    seen, out = set(), []
    sources = [d.get("warnings"), (d.get("diagnostics") or {}).get("warnings"),
               getattr(disc, "warnings", None), getattr(disc.samples, "warnings", None)]
    unc = d.get("uncertainty") or {}
    sources.append(unc.get("warnings"))
    for src in sources:
        for w in src or []:
            w = str(w)
            if w not in seen:
                seen.add(w)
                out.append(w)
    return out


# ---------------------------------------------------------------------------
# the report
# ---------------------------------------------------------------------------


def render_report(discovery, out_dir, *, check=None, title=None, topcut=None) -> Path:
    """Write the self-contained HTML report of one discovery.

    Parameters
    ----------
    discovery : anisotropy.Discovery
        The result (with its ``volume_`` for the variogram maps and
        directional variograms).
    out_dir : path-like
        Folder to write into (created): ``report.html`` and ``figures/*.png``.
    check : anisotropy.CheckResult, optional
        An interpretation checked against this discovery; shown in its own
        section and on the stereonet.
    title : str, optional
        Page title (default from the value column and domain).
    topcut : float, optional
        A top-cut applied to the grades before discovery (by the caller, for
        example the batch config), marked on the histogram and
        log-probability plot; default: the transform record's cap, if any.

    Returns
    -------
    Path
        The path of ``report.html``.
    """
    out_dir = Path(out_dir)
    fig_dir = out_dir / "figures"
    fig_dir.mkdir(parents=True, exist_ok=True)
    d = S.json_ready(discovery.to_dict())
    inp = d.get("input") or {}
    if title is None:
        title = f"Continuity of {inp.get('value') or 'grade'}"
        if inp.get("domain") is not None:
            title += f" in domain {inp.get('domain')}"
    if topcut is None:
        topcut = _topcut(discovery)
    figs = _draw_all(discovery, d, fig_dir, check, topcut)

    cautions = d.get("cautions")
    if not isinstance(cautions, (list, tuple)):
        cautions = [cautions] if cautions else []
    html = render(
        "report.html.j2", title=title, source=inp.get("file"), schema=d.get("schema"),
        version=_version(), run=_run(d), data=_section_data(discovery, d),
        topcut=_section_topcut(discovery, topcut), lags=_section_lags(discovery, d),
        transform=_readable(_flat(_transform_record(discovery))),
        figures={key: _figure(key, figs) for key in REPORT_FIGURES},
        model=_section_model(discovery, d), downhole=_section_downhole(d),
        check=_section_check(check),
        warnings=[_for_people(w) for w in _warnings(discovery, d)],
        failed=[k for k, (data, err) in figs.items() if data is None and err],
        caution=CAUTION, domaining_note=DOMAINING_NOTE,
        # the record's cautions, less the one shown above (any wording starting like it)
        cautions=[c for c in cautions if str(c) != CAUTION and not str(c).startswith(CAUTION[:40])])
    path = out_dir / "report.html"
    S.atomic_write_text(path, html)
    return path


def _version() -> str:
    try:
        from anisotropy import __version__

        return __version__
    except ImportError:  # pragma: no cover
        return "?"
