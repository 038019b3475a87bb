"""The plain model export: ``model.json``, ``model.csv`` and the experimental variograms.

``discovery.json`` holds the whole run and its diagnostics; the files
written here hold only what an estimation run needs, in every form a
geologist may have to type into another program, with the conventions
spelled out in the file itself and in ``docs/model-file.md``:

* ``model.json`` (schema ``anisotropy.model/1``): the nugget and one entry
  per structure (kind, sill and its units, ranges along the major,
  semi-major and minor axes as practical range *and* as the kind's scale
  parameter), the orientation (axes as trend/plunge; plane as dip
  direction/dip and strike/dip by the right-hand rule; pitch; rotation
  matrix with its layout; two rotation-angle sequences defined in words),
  flags for unresolved and extrapolated results, and, where the grades
  were transformed, the model in grade units under ``grade_units`` (from
  the Hermite expansion for normal scores, else the grades' semivariogram
  refitted with the frame held; see :func:`grade_record`);
* ``model.csv``: the same, one row per structure (the nugget its own row),
  for each set of units;
* ``experimental_variograms.csv``: the experimental variograms along the
  three axes (read from the lag volume, as in the report) and the first
  down-hole lags, so that the fit can be redone elsewhere.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from anisotropy import safe_io as S
from anisotropy.errors import AnisotropyError, InputError
from anisotropy.geometry import pitch_of, pole_to_plane, rotation_sequences, strike_of, \
    vector_to_line

__all__ = ["MODEL_SCHEMA", "SCALE_FACTOR", "scale_parameter", "orientation_record",
           "structure_record", "model_record", "grade_record", "model_rows",
           "MODEL_CSV_COLUMNS", "experimental_rows", "VARIOGRAM_CSV_COLUMNS",
           "write_model_files"]

MODEL_SCHEMA = "anisotropy.model/1"
AXES = ("major", "semi_major", "minor")

#: practical range = SCALE_FACTOR[kind] x scale parameter
SCALE_FACTOR = {"spherical": 1.0, "cubic": 1.0, "exponential": 3.0, "gaussian": math.sqrt(3.0)}

#: the correlation of each kind written with its scale parameter ``a`` and the
#: scaled distance ``s`` (lag measured in scale units, see docs/model-file.md)
KIND_FORMULA = {
    "spherical": "rho(s) = 1 - 1.5 s + 0.5 s^3 for s < 1, else 0; scale = range "
                 "(the sill is reached at s = 1); practical range = scale",
    "cubic": "rho(s) = 1 - (7 s^2 - 8.75 s^3 + 3.5 s^5 - 0.75 s^7) for s < 1, else 0; "
             "scale = range (the sill is reached at s = 1); practical range = scale",
    "exponential": "rho(s) = exp(-s); practical range (95 % of the sill) = 3 x scale",
    "gaussian": "rho(s) = exp(-s^2); practical range (95 % of the sill) = sqrt(3) x scale",
}

MATRIX_LAYOUT = ("rows east, north, up; columns major, semi-major, minor: column j holds the "
                 "(east, north, up) components of axis j; a lag vector d (east, north, up) "
                 "has components along the axes R^T d")


def scale_parameter(kind: str, practical_range: float) -> float:
    """The kind's scale parameter from its practical range (see :data:`SCALE_FACTOR`)."""
    try:
        return float(practical_range) / SCALE_FACTOR[kind]
    except KeyError:
        raise InputError(f"no scale rule for structure kind {kind!r}; kinds: "
                         f"{', '.join(SCALE_FACTOR)}.") from None


def orientation_record(frame) -> dict:
    """Every form of the frame's orientation (see the module docstring)."""
    R = np.asarray(frame, dtype=float)
    axes = {}
    for i, name in enumerate(AXES):
        t, p = vector_to_line(R[:, i])
        axes[name] = {"trend": float(t), "plunge": float(p),
                      "vector_east_north_up": [float(x) for x in R[:, i]]}
    dd, dip = pole_to_plane(R[:, 2])
    return {
        "axes": axes,
        "plane": {"dip_direction": float(dd), "dip": float(dip),
                  "strike": float(strike_of(dd)),
                  "strike_rule": "right-hand rule: strike = dip direction - 90, the plane "
                                 "dips to the right looking along the strike"},
        "pitch": {"value": float(pitch_of(R[:, 0], float(dd), float(dip))),
                  "definition": "angle of the major axis inside the plane, measured from the "
                                "strike direction (right-hand rule) towards the dip "
                                "direction, 0 to 180 degrees"},
        "rotation_matrix": {"layout": MATRIX_LAYOUT, "rows": [[float(x) for x in r] for r in R]},
        "angle_sequences": rotation_sequences(R),
    }


def structure_record(kind: str, sill: float, ranges, sill_units: str) -> dict:
    """One structure: kind, sill with units, practical ranges and scale parameters."""
    r = [float(x) for x in ranges]
    return {"kind": kind, "sill": float(sill), "sill_units": sill_units,
            "practical_range_m": dict(zip(AXES, r)),
            "scale_m": {a: scale_parameter(kind, x) for a, x in zip(AXES, r)},
            "scale_rule": KIND_FORMULA[kind]}


def _model_part(model, units: str) -> dict:
    return {"units": units, "nugget": float(model.nugget),
            "total_sill": float(model.total_sill),
            "structures": [structure_record(s.kind, s.sill, s.ranges, units)
                           for s in model.structures]}


def _extrapolated(D, model) -> list:
    """The ranges of ``model`` longer than the longest lag the run computed."""
    max_lag = float((D.lags or {}).get("max_distance") or np.inf)
    return [{"structure": k, "axis": a, "range_m": float(r), "longest_lag_m": max_lag}
            for k, s in enumerate(model.structures, 1)
            for a, r in zip(AXES, s.ranges) if r > max_lag]


def _flags(D) -> dict:
    diag = D.diagnostics or {}
    extrapolated = _extrapolated(D, D.model)
    return {"unresolved_directions": list(diag.get("unresolved_axes") or []),
            "unresolved_ranges": list(diag.get("unresolved_ranges") or []),
            "extrapolated_ranges": extrapolated,
            "meaning": "an unresolved direction is one the sampling cannot fix (ambiguous "
                       "frames included); an unresolved range rests on too few lags; an "
                       "extrapolated range is longer than the longest lag computed"}


#: Estimators whose model on untransformed grades is already in squared grade units.
SQUARED_GRADE_ESTIMATORS = ("semivariogram", "robust")


def grade_record(D) -> dict | None:
    """The model in grade units, and how and why it was obtained (None: already in grade units).

    * Normal scores with a variogram or correlogram: from the Hermite
      expansion of the back-transform (:func:`anisotropy.hermite.grade_model`),
      same frame and ranges (``method: "hermite"``).
    * A log transform, or normal scores with an estimator that is not a
      covariance of the scores (madogram, pairwise relative): the grades' own
      semivariogram refitted with the frame held
      (:meth:`anisotropy.discovery.Discovery.grade_refit`,
      ``method: "refit_frame_held"``; ranges and sills refitted).
    * Untransformed grades with an estimator not in squared grade units
      (correlogram, madogram, pairwise relative): refitted likewise.
    * Indicators: none (no grade counterpart), with the reason.
    """
    tr = D.transform
    kind = getattr(tr, "kind", "raw")
    if kind == "raw" and D.estimator in SQUARED_GRADE_ESTIMATORS:
        return None
    if kind == "indicator":
        return {"method": "none",
                "reason": "an indicator model describes the 0/1 indicator itself and has "
                          "no grade-unit counterpart"}
    value = (getattr(D.samples, "columns", {}) or {}).get("value") or "grade"
    units = f"({value} units)^2"
    if kind == "normal_score" and D.estimator in ("semivariogram", "robust", "correlogram"):
        part, model = _hermite_part(D, units)
    else:
        why = _why_refit(kind, D.estimator)
        try:
            g = D.grade_refit()
        except AnisotropyError as exc:   # too few pairs or bins, or the fit failed: say so
            return {"method": "none", "reason": f"{why}; the grade variogram could not be "
                                                f"refitted with the frame held ({exc})"}
        part = _model_part(g.model, units)
        rec = g.to_dict()
        part.update({k: rec[k] for k in ("method", "grade_variance", "nugget_held",
                                          "range_order_kept", "fit_bins", "pairs",
                                          "estimator")})
        part["reason"] = f"{why}; instead {g.reason}"
        part["same_frame_and_ranges"] = False
        part["same_frame"] = True
        model = g.model
    cut = _top_cut_words(D)
    if cut:
        part["reason"] += f"; {cut}"
    part["check_downhole"] = _grade_check(D, model)
    part["extrapolated_ranges"] = _extrapolated(D, model)
    if part["extrapolated_ranges"]:
        part["reason"] += ("; some of its ranges are longer than the longest lag computed "
                           "(extrapolated_ranges): they rest on the model's shape beyond "
                           "the pairs")
    return part


def _why_refit(kind: str, estimator: str) -> str:
    """Why the grade model is refitted rather than taken from the Hermite expansion."""
    if kind == "log":
        return ("the grades were log-transformed, and the Hermite back-transform applies to "
                "normal scores only; carrying the log-grade sills over to grades would "
                "assume the grades are exactly lognormal")
    if kind == "normal_score":
        return (f"the {estimator} is not a covariance of the normal scores, so the Hermite "
                "expansion of the back-transform does not apply")
    if kind == "raw":
        return (f"the {estimator} of the grades is not in squared grade units, so its "
                "sills cannot go into an estimation with a semivariogram")
    return f"the {kind} transform has no Hermite back-transform"


def _hermite_part(D, units: str):
    """The Hermite grade model's record and model (normal scores, covariance-type estimator)."""
    from anisotropy.hermite import grade_model

    g = grade_model(D.model, D.transform.back)
    rec = g.to_dict()
    part = _model_part(g.model, units)
    part.update({k: rec[k] for k in ("method", "reason", "grade_variance", "hermite_terms",
                                      "variance_captured", "max_misfit_share",
                                      "hermite_coefficients")})
    part["same_frame_and_ranges"] = True
    part["same_frame"] = True
    return part, g.model


def _top_cut_words(D) -> str:
    """The top-cut the grades went through before the transform, in words ('' if none)."""
    cut = getattr(getattr(D, "prepared", None), "top_cut", None)
    if cut is not None:
        how = "capped at" if cut.mode == "cap" else "with the samples above it left out,"
        return f"the grades are those {how} the top-cut {cut.threshold:.6g}"
    cap = (getattr(D.transform, "record", None) or {}).get("capping")
    if cap:
        return f"the grades are those capped before the transform (top-cut {cap.get('cap', cap)})"
    return ""


def _grade_check(D, model) -> dict:
    """The grade model against the direct grade variogram of the first down-hole lags."""
    from anisotropy.hermite import downhole_check

    comp = ((D.diagnostics or {}).get("downhole") or {}).get("composite")
    holes = getattr(D.samples, "holes", None)
    rows = []
    if holes is not None and comp:
        rows = downhole_check(model, D.samples.coords, _grades(D), holes, float(comp))
    return {"rows": rows,
            "note": "experimental: half the mean squared grade difference of the down-hole "
                    "pairs one, two and three composite lengths apart (no declustering); "
                    "model: the grade model's variogram averaged over the same pairs' lag "
                    "vectors" if rows else
                    "no down-hole pairs to check against (no hole column, or too few pairs)"}


def _grades(D) -> np.ndarray:
    """The grades the transformed values came from (after the top-cut, if any)."""
    prepared = getattr(D, "prepared", None)
    if prepared is not None:
        return np.asarray(prepared.values, float)
    tr = D.transform
    return tr.back(np.asarray(tr.values, float))


def model_record(D, run: dict | None = None) -> dict:
    """The content of ``model.json`` for a :class:`~anisotropy.discovery.Discovery`."""
    s = D.samples
    cols = getattr(s, "columns", {}) or {}
    units = (D.diagnostics or {}).get("units") or ""
    main = _model_part(D.model, units)
    main["variable"] = {"normal_score": "normal scores", "log": "log grades",
                        "indicator": "indicators"}.get(getattr(D.transform, "kind", "raw"),
                                                       "grades")
    main["estimator"] = D.estimator
    return S.json_ready({
        "schema": MODEL_SCHEMA,
        "source": str(getattr(s, "source", "<table>")),
        "value": cols.get("value"), "domain": getattr(s, "domain", None),
        "coordinates": "east, north, up (metres), right-handed; trend clockwise from north, "
                       "plunge positive downwards",
        "covariance": "C(d) = nugget [d = 0] + sum_k sill_k rho_k(s_k), s_k = "
                      "|| (R^T d) / scale_k || (see docs/model-file.md)",
        "model": main,
        "grade_units": grade_record(D),
        "orientation": orientation_record(D.frame),
        "flags": _flags(D),
        "run": dict(run if run is not None else getattr(D, "run", None) or {}),
        "cautions": ["Automated continuity suggestions support, and do not replace, the "
                     "judgement of the competent or qualified person."],
    })


MODEL_CSV_COLUMNS = (
    "units_set", "structure", "kind", "sill", "sill_units",
    "range_major_m", "range_semi_major_m", "range_minor_m",
    "scale_major_m", "scale_semi_major_m", "scale_minor_m", "practical_range_over_scale",
    "major_trend_deg", "major_plunge_deg", "semi_major_trend_deg", "semi_major_plunge_deg",
    "minor_trend_deg", "minor_plunge_deg", "plane_dip_direction_deg", "plane_dip_deg",
    "plane_strike_rhr_deg", "pitch_deg",
    "seq1_azimuth_deg", "seq1_plunge_deg", "seq1_rotation_deg",
    "seq2_alpha_deg", "seq2_beta_deg", "seq2_gamma_deg",
    "r_east_major", "r_east_semi_major", "r_east_minor",
    "r_north_major", "r_north_semi_major", "r_north_minor",
    "r_up_major", "r_up_semi_major", "r_up_minor",
)


def _orientation_cells(o: dict) -> dict:
    c = {}
    for a in AXES:
        c[f"{a}_trend_deg"] = o["axes"][a]["trend"]
        c[f"{a}_plunge_deg"] = o["axes"][a]["plunge"]
    c.update(plane_dip_direction_deg=o["plane"]["dip_direction"], plane_dip_deg=o["plane"]["dip"],
             plane_strike_rhr_deg=o["plane"]["strike"], pitch_deg=o["pitch"]["value"])
    s1, s2 = o["angle_sequences"]["azimuth_plunge_rotation"], o["angle_sequences"]["zxz"]
    c.update(seq1_azimuth_deg=s1["azimuth"], seq1_plunge_deg=s1["plunge"],
             seq1_rotation_deg=s1["rotation"], seq2_alpha_deg=s2["alpha"],
             seq2_beta_deg=s2["beta"], seq2_gamma_deg=s2["gamma"])
    R = o["rotation_matrix"]["rows"]
    for i, row in enumerate(("east", "north", "up")):
        for j, col in enumerate(AXES):
            c[f"r_{row}_{col}"] = R[i][j]
    return c


def model_rows(record: dict) -> list:
    """Rows of ``model.csv``: per units set, the nugget row then one row per structure."""
    o = _orientation_cells(record["orientation"])
    rows = []
    for name, part in (("analysed", record["model"]), ("grade", record.get("grade_units"))):
        if not part or "structures" not in part:
            continue
        rows.append({"units_set": name, "structure": 0, "kind": "nugget",
                     "sill": part["nugget"], "sill_units": part["units"], **o})
        for k, s in enumerate(part["structures"], 1):
            r, a = s["practical_range_m"], s["scale_m"]
            rows.append({"units_set": name, "structure": k, "kind": s["kind"], "sill": s["sill"],
                         "sill_units": s["sill_units"],
                         **{f"range_{x}_m": r[x] for x in AXES},
                         **{f"scale_{x}_m": a[x] for x in AXES},
                         "practical_range_over_scale": SCALE_FACTOR[s["kind"]], **o})
    return rows


VARIOGRAM_CSV_COLUMNS = ("direction", "trend_deg", "plunge_deg", "angular_tolerance_deg",
                         "lag_class", "lag_m", "mean_distance_m", "value", "pairs",
                         "estimator", "units")


def experimental_rows(D) -> list:
    """Experimental variograms along the three axes and down the holes (rows of the CSV).

    The axis variograms are read from the run's lag volume with
    :func:`anisotropy.directional.variogram_fan` at the run's angular
    tolerance (the same cones as the report's directional panels); the
    down-hole rows are the first down-hole lags the nugget was taken from.
    """
    from anisotropy.directional import variogram_fan

    units = (D.diagnostics or {}).get("units") or ""
    lags = D.lags or {}
    tol = float(lags.get("angular_tolerance")
                or ((D.diagnostics or {}).get("directions") or {}).get("angular_tolerance")
                or 22.5)
    unit_lag = float(lags.get("unit_lag") or 0.0)
    rows = []
    if D.volume_ is not None:
        bw = lags.get("bandwidth")
        fan = variogram_fan(D.volume_, np.asarray(D.frame, float).T, angular_tolerance=tol,
                            bandwidth=bw, estimator=D.estimator)
        for i, a in enumerate(AXES):
            for k in range(fan.value.shape[1]):
                rows.append({"direction": a, "trend_deg": fan.trend[i],
                             "plunge_deg": fan.plunge[i], "angular_tolerance_deg": tol,
                             "lag_class": int(fan.lag_index[k]),
                             "lag_m": fan.lag_index[k] * unit_lag,
                             "mean_distance_m": fan.distance[i, k], "value": fan.value[i, k],
                             "pairs": int(fan.pairs[i, k]), "estimator": D.estimator,
                             "units": units})
    dh = (D.diagnostics or {}).get("downhole") or {}
    comp = dh.get("composite")
    for k, p in enumerate(dh.get("points") or [], 1):
        rows.append({"direction": "down_hole", "lag_class": k,
                     "lag_m": None if not comp else k * float(comp),
                     "mean_distance_m": p[0], "value": p[1], "pairs": p[2],
                     "estimator": D.estimator, "units": units})
    return [{c: (None if isinstance(v, float) and not math.isfinite(v) else v)
             for c, v in r.items()} for r in rows]


def write_model_files(D, out_dir, run: dict | None = None) -> dict:
    """Write ``model.json``, ``model.csv`` and ``experimental_variograms.csv`` into ``out_dir``.

    Parameters
    ----------
    D : Discovery
    out_dir : path-like
        The folder of ``discovery.json``.
    run : dict, optional
        Audit record (default: ``D.run`` when present).

    Returns
    -------
    dict
        ``{"model_json": Path, "model_csv": Path, "variograms_csv": Path}``.
    """
    out = Path(out_dir)
    rec = model_record(D, run)
    paths = {"model_json": S.atomic_write_json(out / "model.json", rec),
             "model_csv": S.atomic_write_csv(out / "model.csv", model_rows(rec),
                                             MODEL_CSV_COLUMNS),
             "variograms_csv": S.atomic_write_csv(out / "experimental_variograms.csv",
                                                  experimental_rows(D), VARIOGRAM_CSV_COLUMNS)}
    return paths
