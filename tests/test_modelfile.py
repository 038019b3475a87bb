"""Tests of anisotropy.modelfile: model.json, model.csv, experimental_variograms.csv.

Outside references used here:
- docs/model-file.md: the covariance is rebuilt from model.json with only the
  formulas written there (coded again in this file, independently of
  anisotropy.models), and compared with the engine's model;
- the practical-range definition (95 % of the sill reached at the practical
  range; Journel & Huijbregts 1978, ch. II, recalled from memory);
- scipy.spatial.transform.Rotation for both rotation-angle sequences;
- pandas.read_csv and json (standard library) to read the files back;
- numpy.polynomial.hermite_e is the reference of the Hermite coefficients in
  tests/test_hermite.py; here the grade model is compared with
  anisotropy.hermite's own result for the same run (plumbing).
"""

import json
import math

import numpy as np
import pandas as pd
import pytest
from scipy.spatial.transform import Rotation

from anisotropy.geometry import frame_from_angles, line_to_vector
from anisotropy.modelfile import scale_parameter, write_model_files

R0 = np.array([[0.0, 1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, -1.0]])


def _table():
    from anisotropy.models import NestedModel, Structure
    from anisotropy.simulate import simulate_field

    rng = np.random.default_rng(5)
    n_holes, per = 14, 10
    cx, cy = rng.uniform(0, 150, n_holes), rng.uniform(0, 150, n_holes)
    d = line_to_vector(rng.uniform(0, 360, n_holes), rng.uniform(55, 75, n_holes))
    pts = np.array([[cx[h], cy[h], 100.0] + (4.0 * j + 2.0) * d[h]
                    for h in range(n_holes) for j in range(per)])
    model = NestedModel(0.1, [Structure("spherical", 0.9, (90.0, 40.0, 15.0))],
                        frame_from_angles(60, 20, 30))
    g = np.round(np.exp(0.3 + 0.8 * simulate_field(pts, model, seed=2)), 3)
    return pd.DataFrame({"hole": [f"H{h}" for h in range(n_holes) for _ in range(per)],
                         "x": pts[:, 0], "y": pts[:, 1], "z": pts[:, 2], "au": g})


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    from anisotropy.pipeline import discover

    disc = discover(_table(), value="au", hole="hole", fan_spacing=12, seed=1)
    out = tmp_path_factory.mktemp("model")
    paths = write_model_files(disc, out, run={"seed": 1})
    return disc, out, paths


# -- the covariance from the file and docs/model-file.md only -------------------

def _rho(kind, s):
    # docs/model-file.md, table "Structures, ranges and scale parameters"
    if kind == "spherical":
        return np.where(s < 1, 1 - 1.5 * s + 0.5 * s**3, 0.0)
    if kind == "cubic":
        return np.where(s < 1, 1 - (7 * s**2 - 8.75 * s**3 + 3.5 * s**5 - 0.75 * s**7), 0.0)
    if kind == "exponential":
        return np.exp(-s)
    if kind == "gaussian":
        return np.exp(-s * s)
    raise AssertionError(kind)


def _cov_from_file(part, rows, d):
    # docs/model-file.md: u = R^T d, s_k = ||u / scale_k||,
    # C(d) = nugget [d = 0] + sum_k sill_k rho_k(s_k)
    R = np.array(rows, float)
    u = d @ R
    c = np.where(np.all(d == 0, axis=-1), part["nugget"], 0.0)
    for st in part["structures"]:
        a = np.array([st["scale_m"][k] for k in ("major", "semi_major", "minor")])
        c = c + st["sill"] * _rho(st["kind"], np.linalg.norm(u / a, axis=-1))
    return c


def test_covariance_rebuilt_from_model_json_matches_the_engine(run):
    disc, out, paths = run
    rec = json.loads(paths["model_json"].read_text())
    assert rec["schema"] == "anisotropy.model/1"
    rng = np.random.default_rng(3)
    reach = max(max(s.ranges) for s in disc.model.structures)
    d = rng.normal(size=(500, 3)) * rng.uniform(0, 1.3 * reach, (500, 1)) / math.sqrt(3)
    d[0] = 0.0
    rows = rec["orientation"]["rotation_matrix"]["rows"]
    np.testing.assert_allclose(_cov_from_file(rec["model"], rows, d),
                               disc.model.covariance(d), rtol=1e-9, atol=1e-12)


def test_grade_units_model_is_the_hermite_model_in_the_same_frame(run):
    from anisotropy.hermite import grade_model

    disc, out, paths = run
    assert disc.transform.kind == "normal_score"   # skewed grades: auto chose normal scores
    rec = json.loads(paths["model_json"].read_text())
    g = rec["grade_units"]
    assert g["method"] == "hermite" and "Hermite" in g["reason"]
    ref = grade_model(disc.model, disc.transform.back).model
    rng = np.random.default_rng(4)
    d = rng.normal(size=(200, 3)) * 40.0
    rows = rec["orientation"]["rotation_matrix"]["rows"]
    np.testing.assert_allclose(_cov_from_file(g, rows, d), ref.covariance(d), rtol=1e-9)
    # same ranges as the analysed model, total sill = grade variance
    for a, b in zip(g["structures"], rec["model"]["structures"]):
        assert a["practical_range_m"] == b["practical_range_m"]
    assert g["total_sill"] == pytest.approx(g["grade_variance"], rel=1e-9)


def test_grade_units_of_a_madogram_is_refitted_and_of_an_indicator_is_none():
    # the madogram of normal scores is no covariance of the scores: the Hermite
    # route does not apply, so the grades' semivariogram is refitted with the
    # frame held; an indicator has no grade counterpart. The refitted model's
    # content is checked against brute force in tests/test_discover_grades.py.
    from anisotropy.modelfile import grade_record
    from anisotropy.pipeline import discover

    table = _table()
    mad = discover(table, value="au", hole="hole", transform="normal_score",
                   estimator="madogram", fan_spacing=12, seed=1)
    g = grade_record(mad)
    assert g["method"] == "refit_frame_held" and "madogram" in g["reason"]
    assert g["same_frame_and_ranges"] is False and g["units"] == "(au units)^2"
    # numpy.var of the table's grades is the total sill
    assert g["total_sill"] == pytest.approx(float(np.var(table["au"])), rel=1e-9)
    np.testing.assert_array_equal(mad.grade_refit().model.frame, mad.frame)
    # the madogram of untransformed grades is in grade units, not squared: refitted too
    raw = discover(table, value="au", hole="hole", transform="raw", estimator="madogram",
                   fan_spacing=12, seed=1)
    g = grade_record(raw)
    assert g["method"] == "refit_frame_held" and "squared grade units" in g["reason"]
    np.testing.assert_array_equal(raw.grade_refit().model.frame, raw.frame)
    assert grade_record(discover(table, value="au", hole="hole", transform="raw",
                                 fan_spacing=12, seed=1)) is None
    ind = discover(table, value="au", hole="hole", transform="indicator", fan_spacing=12,
                   seed=1)
    g = grade_record(ind)
    assert g["method"] == "none" and "indicator" in g["reason"] and "structures" not in g


@pytest.mark.parametrize("kind", ["spherical", "exponential", "gaussian", "cubic"])
def test_practical_range_reaches_95_percent_of_the_sill(kind):
    # definition of the practical range (95 % of the sill; spherical and cubic
    # reach the whole sill at their range)
    a = scale_parameter(kind, 90.0)
    gamma = 1.0 - _rho(kind, np.array(90.0 / a))
    want = 1.0 if kind in ("spherical", "cubic") else 1.0 - math.exp(-3.0)
    assert float(gamma) == pytest.approx(want, abs=1e-12)


def test_orientation_forms_agree_with_scipy(run):
    disc, out, paths = run
    o = json.loads(paths["model_json"].read_text())["orientation"]
    R = np.array(o["rotation_matrix"]["rows"])
    np.testing.assert_allclose(R, disc.frame, atol=1e-12)
    s1, s2 = o["angle_sequences"]["azimuth_plunge_rotation"], o["angle_sequences"]["zxz"]
    ref1 = Rotation.from_euler("ZXY", [-s1["azimuth"], -s1["plunge"], s1["rotation"]],
                               degrees=True).as_matrix() @ R0
    np.testing.assert_allclose(np.abs(np.sum(ref1 * R, axis=0)), 1.0, atol=1e-9)
    ref2 = Rotation.from_euler("ZXZ", [s2["alpha"], s2["beta"], s2["gamma"]],
                               degrees=True).as_matrix()
    np.testing.assert_allclose(ref2, R, atol=1e-9)
    # axes as trend/plunge rebuild the columns (up to sense): unit vector formula
    for j, a in enumerate(("major", "semi_major", "minor")):
        v = line_to_vector(o["axes"][a]["trend"], o["axes"][a]["plunge"])
        assert abs(float(v @ R[:, j])) == pytest.approx(1.0, abs=1e-9)
    # strike by the right-hand rule; the pole of the plane is the minor axis
    p = o["plane"]
    assert p["strike"] == pytest.approx((p["dip_direction"] - 90.0) % 360.0)
    pole = line_to_vector(p["dip_direction"] + 180.0, 90.0 - p["dip"])
    assert abs(float(pole @ R[:, 2])) == pytest.approx(1.0, abs=1e-9)


def test_model_csv_repeats_the_json(run):
    disc, out, paths = run
    rec = json.loads(paths["model_json"].read_text())
    df = pd.read_csv(paths["model_csv"])
    main = df[df["units_set"] == "analysed"]
    assert main.iloc[0]["kind"] == "nugget"
    assert main.iloc[0]["sill"] == pytest.approx(rec["model"]["nugget"])
    for k, st in enumerate(rec["model"]["structures"], 1):
        row = main[main["structure"] == k].iloc[0]
        assert row["kind"] == st["kind"] and row["sill"] == pytest.approx(st["sill"])
        assert row["scale_major_m"] * row["practical_range_over_scale"] == \
            pytest.approx(row["range_major_m"])
    assert set(df["units_set"]) == {"analysed", "grade"}
    assert df["r_north_major"].iloc[0] == pytest.approx(disc.frame[1, 0])


def test_experimental_variograms_csv_rows_lie_in_their_lag_classes(run):
    # lag classes as defined in the design: class k holds pair distances in
    # (k lag - tol, k lag + tol]; the mean distance of a class lies inside it
    disc, out, paths = run
    df = pd.read_csv(paths["variograms_csv"])
    assert set(df["direction"]) >= {"major", "semi_major", "minor"}
    assert {"lag_m", "mean_distance_m", "value", "pairs"} <= set(df.columns)
    maj = df[df["direction"] == "major"].sort_values("lag_class")
    assert (maj["pairs"] >= 0).all()
    tol = float(disc.lags["lag_tolerance"])
    full = maj[maj["pairs"] > 0]
    assert len(full) > 0
    assert (full["mean_distance_m"] > full["lag_m"] - tol - 1e-9).all()
    assert (full["mean_distance_m"] <= full["lag_m"] + tol + 1e-9).all()
    assert maj["angular_tolerance_deg"].iloc[0] == pytest.approx(
        float(disc.lags.get("angular_tolerance")
              or disc.diagnostics["directions"]["angular_tolerance"]))
    if "down_hole" in set(df["direction"]):
        dh = df[df["direction"] == "down_hole"]
        assert (dh["pairs"] > 0).all()


def test_cli_discover_writes_the_model_files_and_the_audit_trail(tmp_path):
    # end to end through the command line; the SHA-256 reference is hashlib
    # over the file's bytes (standard library)
    import hashlib

    from anisotropy.cli import main

    csv = tmp_path / "t.csv"
    _table().to_csv(csv, index=False)
    out = tmp_path / "out"
    argv = [str(csv), "--value", "au", "--hole", "hole", "--out", str(out), "--no-report",
            "--bootstrap", "0", "--seed", "3"]
    assert main(["discover"] + argv) == 0
    for name in ("discovery.json", "model.json", "model.csv", "experimental_variograms.csv"):
        assert (out / name).is_file()
    run = json.loads((out / "discovery.json").read_text())["run"]
    assert run["input_sha256"] == hashlib.sha256(csv.read_bytes()).hexdigest()
    assert run["seed"] == 3 and run["options"]["seed"] == 3
    assert run["command"].startswith("anisotropy discover ") and "--seed 3" in run["command"]
    assert json.loads((out / "model.json").read_text())["run"] == run
