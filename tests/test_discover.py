"""End-to-end tests of anisotropy.discover and ``anisotropy discover``.

Truth fields are simulated in the test by Cholesky factorisation
(``scipy.linalg.cholesky``) of covariance matrices built here from the
published model formulas (spherical: Journel & Huijbregts 1978, ch. II;
exponential with practical range: Chiles & Delfiner 2012, sec. 2.5) with a
known frame, independent of ``anisotropy.models`` and ``anisotropy.simulate``.

Tolerances.  A single realisation of a field whose ranges are a sizeable
part of the domain carries its own orientation error (the fit at the true
frame is often *worse* than at the fitted one, see benchmarks/RESULTS.md).
The benchmark over 12 seeded realisations per scenario measures the spread;
the tolerances below are the issue's worst-case targets (10 degrees on
scattered layouts, 15 on drill-hole strings) and 25 % on the ranges that
the sampling resolves (the issue's 20 % is a median target).
"""

import json
import math

import numpy as np
import pandas as pd
import pytest
from scipy.linalg import cholesky

import anisotropy
from anisotropy.errors import InputError, InsufficientDataError
from anisotropy.fitting.frames import likelihood_margin

# -- the truth, from the formulas -------------------------------------------------------


def frame_from_trend_plunge(trend, plunge, rotation):
    """Frame whose first column is the line (trend, plunge), rotated by ``rotation``.

    Built from the convention of design.md, x = east, y = north, z = up; line
    vector (sin t cos p, cos t cos p, -sin p). The second column starts
    horizontal and is turned by ``rotation`` about the first.
    """
    t, p, r = np.radians([trend, plunge, rotation])
    a = np.array([np.sin(t) * np.cos(p), np.cos(t) * np.cos(p), -np.sin(p)])
    s0 = np.array([np.cos(t), -np.sin(t), 0.0])
    m0 = np.cross(a, s0)
    s = np.cos(r) * s0 + np.sin(r) * m0
    c = np.cross(a, s)
    return np.column_stack([a, s, c])


def covariance(coords, frame, nugget, structures):
    """C(h) = nugget [h = 0] + sum c_k rho_k(|diag(1/a_k) R^T h|)."""
    diff = coords[:, None, :] - coords[None, :, :]
    local = diff @ frame
    C = np.zeros((len(coords), len(coords)))
    for kind, sill, ranges in structures:
        h = np.sqrt(np.sum((local / np.asarray(ranges, float)) ** 2, axis=-1))
        if kind == "spherical":  # Journel & Huijbregts (1978), ch. II
            hc = np.minimum(h, 1.0)
            C += sill * (1.0 - 1.5 * hc + 0.5 * hc ** 3)
        else:  # exponential, practical range
            C += sill * np.exp(-3.0 * h)
    C[np.diag_indices_from(C)] += nugget
    return C


def simulate(coords, frame, nugget, structures, seed):
    C = covariance(coords, frame, nugget, structures)
    L = cholesky(C + 1e-9 * np.eye(len(C)), lower=True)
    return L @ np.random.default_rng(seed).standard_normal(len(C))


def axis_err(a, b):
    return float(np.degrees(np.arccos(min(1.0, abs(float(np.dot(a, b)))))))


def table(coords, values, holes=None):
    d = {"east": coords[:, 0] + 5000.0, "north": coords[:, 1] + 20000.0,
         "elev": coords[:, 2] + 300.0, "grade": values}
    if holes is not None:
        d["hole"] = holes
    return pd.DataFrame(d)


def drill_holes(seed, spacing=25.0, n=(8, 8), length=80.0, composite=2.0, trend=300.0,
                plunge=60.0):
    rng = np.random.default_rng(seed)
    t, p = np.radians([trend, plunge])
    d = np.array([np.sin(t) * np.cos(p), np.cos(t) * np.cos(p), -np.sin(p)])
    pts, ids = [], []
    s = np.arange(composite / 2, length, composite)
    for i in range(n[0]):
        for j in range(n[1]):
            c = np.array([i * spacing, j * spacing, 0.0]) + np.r_[rng.normal(0, 2, 2), 0]
            pts.append(c + s[:, None] * d)
            ids += [f"FH{i:02d}{j:02d}"] * len(s)
    return np.concatenate(pts), np.array(ids)


# -- one fast recovery, reused for the self-consistency checks ---------------------------

STEEP = frame_from_trend_plunge(45.0, 60.0, 20.0)
STEEP_RANGES = (140.0, 70.0, 22.0)


@pytest.fixture(scope="module")
def steep_vein():
    rng = np.random.default_rng(7)
    coords = rng.uniform([0, 0, 0], [250, 250, 250], size=(1300, 3))
    v = simulate(coords, STEEP, 0.1, [("spherical", 0.9, STEEP_RANGES)], seed=8)
    # lognormal-like grades: the engine should pick normal scores by itself
    grades = np.exp(0.9 * v)
    D = anisotropy.discover(table(coords, grades), value="grade", seed=0)
    return D


def test_fast_recovery_of_a_steep_vein(steep_vein):
    D = steep_vein
    assert D.transform.kind == "normal_score"
    assert any("skew" in c["reason"] for c in D.choices if c["choice"] == "transform")
    # axes as undirected vectors, worst-case scattered tolerance of the issue (10 degrees)
    for i in range(3):
        assert axis_err(D.frame[:, i], STEEP[:, i]) < 10.0, i
    r = D.axes()
    # ranges on normal scores of exp(Y) are those of Y (monotone transform)
    assert r["major"]["range"] == pytest.approx(STEEP_RANGES[0], rel=0.25)
    assert r["semi_major"]["range"] == pytest.approx(STEEP_RANGES[1], rel=0.25)
    assert r["minor"]["range"] == pytest.approx(STEEP_RANGES[2], rel=0.35)
    assert D.model.total_sill == pytest.approx(1.0, abs=0.02)  # normal scores: variance 1


def test_geometry_is_self_consistent(steep_vein):
    from anisotropy.geometry import (frame_from_angles, line_from_pitch, line_to_vector,
                                     plane_to_pole)

    D = steep_vein
    F = D.frame
    assert np.allclose(F.T @ F, np.eye(3), atol=1e-9)          # orthonormal
    assert np.isclose(np.linalg.det(F), 1.0)                    # right-handed
    pl = D.plane()
    pole = plane_to_pole(pl["dip_direction"], pl["dip"])
    # 1e-4 degrees: arccos near 1 resolves no better than about 1e-6 degrees
    assert axis_err(pole, F[:, 2]) < 1e-4                       # pole = minor axis
    assert axis_err(line_from_pitch(pl["dip_direction"], pl["dip"], pl["pitch"]),
                    F[:, 0]) < 1e-4                             # pitch gives the major axis
    assert math.isclose((pl["dip_direction"] - 90.0) % 360.0, pl["strike"])  # right-hand rule
    a = D.angles()
    assert np.allclose(frame_from_angles(a["azimuth"], a["plunge"], a["rotation"]), F,
                       atol=1e-9)                               # three angles = matrix
    for name, ax in D.axes().items():
        assert axis_err(line_to_vector(ax["trend"], ax["plunge"]), np.array(ax["vector"])) \
            < 1e-4
        assert ax["plunge"] >= 0


def test_screened_second_structure_decides_as_the_finished_search(steep_vein, monkeypatch):
    # reference: the same run with the second structure's search always taken to the
    # nested tolerance (the screening tolerance set equal to it): the same decision, and a
    # gain that differs by less than the margin within which the screen finishes it
    from anisotropy.fitting import refine

    monkeypatch.setattr(refine, "LIKELIHOOD_NESTED_SCREEN_FTOL", refine.LIKELIHOOD_NESTED_FTOL)
    rng = np.random.default_rng(7)
    coords = rng.uniform([0, 0, 0], [250, 250, 250], size=(1300, 3))
    v = simulate(coords, STEEP, 0.1, [("spherical", 0.9, STEEP_RANGES)], seed=8)
    full = anisotropy.discover(table(coords, np.exp(0.9 * v)), value="grade", seed=0)
    a = steep_vein.diagnostics["frame_refinement"]["nested"]
    b = full.diagnostics["frame_refinement"]["nested"]
    assert a["kept"] == b["kept"]
    assert abs(a["gain"] - b["gain"]) < likelihood_margin(0.9, dof=4)


def test_record_has_the_schema_and_is_json(steep_vein, tmp_path):
    D = steep_vein
    d = D.to_dict()
    for key in ("schema", "input", "transform", "lags", "axes", "plane", "rotation", "model",
                "uncertainty", "diagnostics", "cautions"):
        assert key in d
    assert d["schema"] == "anisotropy.discovery/1"
    assert set(d["lags"]) >= {"unit_lag", "n_lags", "lag_tolerance", "max_distance"}
    assert set(d["axes"]) == {"major", "semi_major", "minor"}
    assert d["model"]["structures"][0]["type"] in ("spherical", "exponential")
    assert set(d["diagnostics"]) >= {"pairs", "directions", "warnings", "seconds"}
    assert d["uncertainty"] == {}
    assert d["input"]["n_used"] == 1300 and d["input"]["value"] == "grade"
    # scattered samples without holes: the frame was refined by the likelihood; the
    # variogram keeps one structure (the truth has one), so a second, shorter one is tried
    # in the likelihood and kept only by BIC
    fr = d["diagnostics"]["frame_refinement"]
    assert fr["n_samples"] == 1300 and fr["turn_degrees"] >= 0.0
    assert len(d["model"]["structures"]) == 1
    nest = fr["nested"]
    assert len(nest["shares"]) == 2 and nest["kept"] == (nest["gain"] > nest["bic_penalty"])
    assert fr["structures_in_likelihood"] == (2 if nest["kept"] else 1)
    # the second structure's search stops at the screening tolerance unless the decision
    # is close (Wilks 1938 margin of its four parameters) or passes; a finished search
    # only gains
    margin = likelihood_margin(0.9, dof=4)
    assert nest["search_finished"] == (nest["screened_gain"] > nest["bic_penalty"] - margin)
    assert nest["gain"] >= nest["screened_gain"] - 1e-6
    assert not nest["structure_added"]  # the model kept one structure
    refine = [c for c in D.choices if c["choice"] == "frame refinement"]
    assert len(refine) == 1 and "Vecchia (1988)" in refine[0]["reason"]
    assert any("competent or qualified person" in c for c in d["cautions"])
    # every axis's range is the longest structure's own parameter
    longest = max(d["model"]["structures"], key=lambda s: s["ranges"]["major"])
    assert d["axes"]["minor"]["range"] == longest["ranges"]["minor"]
    p = D.to_json(tmp_path / "discovery.json")
    assert json.loads(p.read_text()) == json.loads(json.dumps(d))
    s = D.summary()
    for words in ("Plane of greatest continuity", "dip direction", "strike", "pitch",
                  "Major axis", "Semi-major", "Minor axis", "nugget", "competent"):
        assert words in s
    # numeric choices carry their units in the printed summary
    lag = next(c for c in D.choices if c["choice"] == "unit lag")["value"]
    assert f"unit lag: {lag:.4g} m - " in s
    assert "angular tolerance: " in s and " degrees - " in s.split("angular tolerance: ")[1][:30]


def _gamma_from_record(d, lags):
    """Semivariogram of the recorded model at lag vectors (n, 3), written here.

    Nugget plus, per structure, ``sill * (1 - rho(h))`` with the geometric
    anisotropy distance ``h = |(lag . axis_i) / a_i|`` over the recorded
    frame's columns (major, semi-major, minor) and ranges (Journel &
    Huijbregts 1978, ch. II, geometric anisotropy).  rho: spherical
    ``1 - 1.5 h + 0.5 h^3`` below the range (Journel & Huijbregts 1978,
    ch. II); exponential ``exp(-3 h)`` and Gaussian ``exp(-3 h^2)`` in their
    practical-range forms (Chiles & Delfiner 2012, sec. 2.5; the factor 3 is
    recalled from memory as the 95 %-of-sill convention).
    """
    F = np.array(d["rotation"]["matrix"], float)
    g = np.full(len(lags), d["model"]["nugget"], float)
    for st in d["model"]["structures"]:
        a = np.array([st["ranges"][k] for k in ("major", "semi_major", "minor")])
        h = np.sqrt(np.sum(((lags @ F) / a) ** 2, axis=1))
        if st["type"] == "spherical":
            rho = np.where(h < 1.0, 1.0 - 1.5 * h + 0.5 * h ** 3, 0.0)
        elif st["type"] == "exponential":
            rho = np.exp(-3.0 * h)
        elif st["type"] == "gaussian":
            rho = np.exp(-3.0 * h * h)
        else:
            pytest.fail(f"no independent formula written for {st['type']}")
        g += st["sill"] * (1.0 - rho)
    return g


def test_residuals_are_reported_per_fan_direction(steep_vein):
    """Each fan direction's residual row against a recomputation from the record.

    The model values are recomputed by the formulas of ``_gamma_from_record``
    at the recorded lag distance times the recorded direction; the lags that
    count are those with at least the fan's ``min_pairs`` pairs (the rule of
    the fan's range step, recorded under ``direction_ranges.settings``); the
    relative residual is ``experimental / model - 1`` (Cressie 1985's
    relative form).  Trend and plunge are checked against the unit vector
    through the line convention of design.md, (sin t cos p, cos t cos p, -sin p).
    """
    D = steep_vein
    d = D.to_dict()
    rows = d["diagnostics"]["residuals_by_direction"]
    assert len(rows) == d["diagnostics"]["directions"]["n"]
    min_pairs = d["diagnostics"]["direction_ranges"]["settings"]["min_pairs"]
    fan_value = np.asarray(D.fan_.value, float)
    n_checked = 0
    for j, r in enumerate(rows):
        u = np.array(r["vector"])
        assert np.linalg.norm(u) == pytest.approx(1.0, abs=1e-12)
        t, p = np.radians([r["trend"], r["plunge"]])
        line = np.array([np.sin(t) * np.cos(p), np.cos(t) * np.cos(p), -np.sin(p)])
        assert axis_err(line, u) < 0.01  # trend and plunge are rounded to 0.01 degree
        lg = r["lags"]
        dist = np.array(lg["distance"])
        exp_ = np.array(lg["experimental"])
        npr = np.array(lg["pairs"])
        # the experimental values are the fan's (6 significant digits in the record);
        # directions re-read at a wider tolerance are not in D.fan_'s pair counts
        if r["angular_tolerance"] == D.fan_.angular_tolerance:
            fv = fan_value[j][np.isfinite(fan_value[j]) & (np.asarray(D.fan_.pairs[j]) > 0)]
            assert exp_ == pytest.approx(fv, rel=1e-5)
        model = _gamma_from_record(d, dist[:, None] * u[None, :])
        assert np.array(lg["model"]) == pytest.approx(model, rel=1e-5)
        used = (npr >= min_pairs) & (dist > 0)
        assert lg["used"] == used.tolist()
        assert r["n_lags"] == int(used.sum())
        assert r["pairs"] == int(npr[used].sum())
        rel = exp_[used] / model[used] - 1.0
        if rel.size == 0:
            assert r["mean_relative_residual"] is None and r["rms_relative_residual"] is None
            continue
        assert r["mean_relative_residual"] == pytest.approx(rel.mean(), abs=1e-5)
        assert r["rms_relative_residual"] == pytest.approx(np.sqrt(np.mean(rel ** 2)),
                                                           abs=1e-5)
        n_checked += 1
    assert n_checked > 0.5 * len(rows)
    # the summary names the worst-fitting direction of the better-sampled half
    ok = [r for r in rows if r["flag"] != "thin" and r["rms_relative_residual"] is not None]
    med = np.median([r["pairs"] for r in ok])
    worst = max((r for r in ok if r["pairs"] >= med), key=lambda r: r["rms_relative_residual"])
    line = next(x for x in D.summary().splitlines() if x.startswith("fit along the fan"))
    assert f"trend {worst['trend']:05.1f}, plunge {worst['plunge']:4.1f}" in line


def test_refit_function(steep_vein):
    D = steep_vein
    refit = D.refit_function()
    model, obj = refit(D.volume_.coarse_sums())
    # the same sums give back the main fit (warm start at the optimum)
    for i in range(3):
        assert axis_err(model.frame[:, i], D.frame[:, i]) < 1.0
    assert len(model.structures) == len(D.model.structures)
    assert np.isfinite(obj)
    # fixed frame: held exactly (for checking an interpretation)
    F = frame_from_trend_plunge(100.0, 10.0, 0.0)
    m2, obj2 = refit(D.volume_.coarse_sums(), fixed_frame=F)
    assert np.allclose(m2.frame, F)
    assert obj2 >= obj - 1e-9  # a wrong frame cannot fit better than the free optimum
    # re-weighted blocks (as the bootstrap does) still fit; the run kept no blocks (no
    # bootstrap asked), so they come from the volume built with them on request
    V = D.volume_with_blocks()
    w = np.random.default_rng(0).poisson(1.0, V.block_sums.shape[0]).astype(float)
    m3, _ = refit(V.coarse_sums(w))
    assert np.isclose(np.linalg.det(m3.frame), 1.0)


# -- bad input -------------------------------------------------------------------------


def test_too_few_samples_says_what_would_help(rng):
    c = rng.uniform(0, 100, (20, 3))
    with pytest.raises(InsufficientDataError, match="at least 30"):
        anisotropy.discover(table(c, rng.normal(size=20) + 5), value="grade")


def test_all_equal_values(rng):
    c = rng.uniform(0, 100, (200, 3))
    with pytest.raises(InsufficientDataError, match="no variability"):
        anisotropy.discover(table(c, np.full(200, 1.5)), value="grade")


def test_missing_domain_value_lists_the_existing_ones(rng):
    c = rng.uniform(0, 100, (200, 3))
    df = table(c, rng.normal(size=200) + 5)
    df["zone"] = np.where(c[:, 0] > 50, "VEIN", "BLANKET")
    with pytest.raises(InputError) as e:
        anisotropy.discover(df, value="grade", domain="zone", domain_value="SHOOT")
    assert "VEIN" in str(e.value) and "BLANKET" in str(e.value)


def test_pairwise_relative_refuses_transformed_values_and_picks_raw(rng, steep_vein):
    # the pairwise relative estimator divides by the squared pair mean ((z_h + z_t)/2)^2
    # (Isaaks & Srivastava 1989, ch. 7, recalled from memory): normal scores and indicators have pair means
    # near zero, so the estimate is meaningless on them
    c = rng.uniform(0, 100, (200, 3))
    df = table(c, np.exp(rng.normal(size=200)))
    for kind in ("normal_score", "log", "indicator"):
        with pytest.raises(InputError, match="--transform raw"):
            anisotropy.discover(df, value="grade", estimator="pairwise_relative",
                                transform=kind)
    # with transform auto the skewed grades stay raw
    D = anisotropy.discover(steep_vein.samples, estimator="pairwise_relative",
                            fan_spacing=15)
    assert D.transform.kind == "raw"
    t = next(ch for ch in D.choices if ch["choice"] == "transform")
    assert "pairwise relative" in t["reason"]


def test_progress_names_each_long_stage(steep_vein, capsys):
    lines = []
    anisotropy.discover(steep_vein.samples, fan_spacing=15, structures=1, progress=lines.append)
    stages = [ln for ln in lines if ln.startswith("discover: ")]
    # the five stages in the order the chain runs them, each with its elapsed time
    for want, got in zip(("pairs: unit lag", "ranges along the direction fan",
                          "fitting the orientation", "nested structures",
                          "is there continuity"), stages):
        assert got.startswith("discover: " + want) and got.endswith(" s]")
    assert len(stages) == 5
    capsys.readouterr()
    anisotropy.discover(steep_vein.samples, fan_spacing=15, structures=1, progress=False)
    assert "discover: " not in capsys.readouterr().err


def test_too_few_pairs_for_3d(rng):
    # 40 samples spread over a large box: few pairs, few lag-direction bins
    c = rng.uniform(0, 5000, (40, 3))
    with pytest.raises(InsufficientDataError, match="pairs"):
        anisotropy.discover(table(c, rng.normal(size=40) + 5), value="grade", lag=5.0,
                            n_lags=4)


def test_cli_bad_input_exits_2(tmp_path, capsys, rng):
    from anisotropy.cli import main

    c = rng.uniform(0, 100, (200, 3))
    f = tmp_path / "s.csv"
    table(c, np.full(200, 2.0)).to_csv(f, index=False)
    assert main(["discover", str(f), "--value", "grade", "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert "no variability" in err
    assert main(["discover", str(f), "--value", "nosuch", "--out", str(tmp_path / "o")]) == 2


def test_cli_writes_discovery_json(tmp_path, capsys):
    from anisotropy.cli import main

    rng = np.random.default_rng(3)
    coords = rng.uniform([0, 0, 0], [200, 200, 100], size=(700, 3))
    v = simulate(coords, frame_from_trend_plunge(120, 10, 0), 0.2,
                 [("exponential", 0.8, (120, 60, 25))], seed=4)
    f = tmp_path / "s.csv"
    table(coords, v + 10).to_csv(f, index=False)
    out = tmp_path / "o"
    assert main(["discover", str(f), "--value", "grade", "--structures", "1",
                 "--bootstrap", "20", "--out", str(out)]) == 0
    text = capsys.readouterr().out
    assert "Plane of greatest continuity" in text and "Choices made" in text
    d = json.loads((out / "discovery.json").read_text())
    assert d["schema"] == "anisotropy.discovery/1"
    assert len(d["model"]["structures"]) == 1
    assert d["transform"]["kind"] == "raw"
    assert d["uncertainty"]["replicates"] == 20 and d["uncertainty"]["confidence"] == 0.9
    # one self-contained report per run (issue 6), its PNGs decodable (signature bytes, PNG spec)
    html = (out / "report.html").read_text()
    assert "discovery" in html.lower() and "data:image/png;base64," in html
    pngs = sorted((out / "figures").glob("*.png"))
    assert pngs and all(p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" for p in pngs)


def test_cli_bootstrap_is_on_by_default():
    # issue 5: --bootstrap has a sensible default and 0 turns it off
    from anisotropy.cli import DEFAULT_BOOTSTRAP, build_parser

    parser = build_parser()
    args = parser.parse_args(["discover", "f.csv", "--value", "g"])
    assert args.bootstrap == DEFAULT_BOOTSTRAP > 0
    assert parser.parse_args(["discover", "f.csv", "--value", "g", "--bootstrap", "0"]).bootstrap == 0


# -- slow truth-recovery studies ------------------------------------------------------------


@pytest.mark.slow
def test_flat_blanket():
    F = frame_from_trend_plunge(30.0, 5.0, 3.0)
    rng = np.random.default_rng(11)
    coords = rng.uniform([0, 0, 0], [320, 320, 80], size=(2000, 3))
    v = simulate(coords, F, 0.15, [("spherical", 0.85, (150, 90, 12))], seed=12)
    D = anisotropy.discover(table(coords, v + 10), value="grade", transform="raw")
    assert axis_err(D.frame[:, 2], F[:, 2]) < 10.0   # the pole of a flat body
    assert axis_err(D.frame[:, 0], F[:, 0]) < 10.0
    # one realisation in a domain about twice the major range: 30 % (the benchmark
    # gives the median over 12 realisations)
    assert D.axes()["major"]["range"] == pytest.approx(150, rel=0.3)


def _two_structure_shoot():
    """A plunging shoot with two nested spherical structures (truth frame, sample table)."""
    F = frame_from_trend_plunge(135.0, 35.0, -15.0)
    rng = np.random.default_rng(21)
    coords = rng.uniform([0, 0, 0], [260, 260, 200], size=(2200, 3))
    v = simulate(coords, F, 0.05, [("spherical", 0.45, (35, 25, 10)),
                                   ("spherical", 0.5, (120, 60, 25))], seed=22)
    return F, table(coords, v + 10)


@pytest.mark.slow
def test_plunging_shoot_with_two_structures():
    F, df = _two_structure_shoot()
    D = anisotropy.discover(df, value="grade", transform="raw", structures=2)
    for i in range(3):
        assert axis_err(D.frame[:, i], F[:, i]) < 10.0
    assert len(D.model.structures) == 2
    short, long_ = sorted(D.model.structures, key=lambda s: s.ranges[0])
    # the short structure is sampled by many lags: its ranges land near the truth;
    # the long major range of one realisation, close to the longest lag (133 m),
    # is poorly pinned (the benchmark reports the median over realisations)
    assert short.ranges[0] == pytest.approx(35, rel=0.3)
    assert long_.ranges[2] == pytest.approx(25, rel=0.3)
    assert long_.ranges[0] > 2 * short.ranges[0]


@pytest.mark.slow
def test_plunging_shoot_second_structure_found_by_the_likelihood():
    # the same two-structure field (Cholesky of the spherical formulas) with the number of
    # structures left to the engine: at this density the variogram bins' BIC keeps one
    # structure, which puts the short structure's sill in the nugget (about 0.45 of the
    # sill against a true 0.05); the nearest-neighbour likelihood's nested model passes its
    # BIC penalty and the second structure is reported
    F, df = _two_structure_shoot()
    D = anisotropy.discover(df, value="grade", transform="raw")
    for i in range(3):
        assert axis_err(D.frame[:, i], F[:, i]) < 10.0
    assert len(D.model.structures) == 2
    assert D.model.nugget / D.model.total_sill < 0.15
    short, long_ = sorted(D.model.structures, key=lambda s: s.ranges[0])
    assert short.ranges[0] == pytest.approx(35, rel=0.35)
    assert long_.ranges[0] > 2 * short.ranges[0]
    why = next(c for c in D.choices if c["choice"] == "structures")["reason"]
    assert "likelihood" in why and "BIC" in why
    # a kept structure's search was finished to the nested tolerance before the decision
    nest = D.diagnostics["frame_refinement"]["nested"]
    assert nest["kept"] and nest["search_finished"]


def shoot_benchmark_realisation(seed):
    """Realisation ``seed`` of the issue-4 scattered shoot benchmark (its layout and field).

    Two spherical structures by Cholesky of the formulas (Journel & Huijbregts 1978,
    ch. II), 2,000 samples in a 260 x 260 x 200 m box; returns the true frame and table.
    """
    F = frame_from_trend_plunge(135.0, 35.0, -15.0)
    coords = np.random.default_rng(seed).uniform([0, 0, 0], [260, 260, 200], size=(2000, 3))
    v = simulate(coords, F, 0.05, [("spherical", 0.45, (35, 25, 10)),
                                   ("spherical", 0.5, (160, 70, 30))], seed=1000 + seed)
    return F, table(coords, v + 10)


@pytest.mark.slow
def test_two_variogram_structures_still_get_the_global_frame_choice():
    # two structures asked for on the issue-4 shoot (seed 108): the candidate frames are
    # built from the best one-structure fit and compared by the likelihood, as with one
    # structure. Before, a two-structure variogram fit skipped the choice (one candidate,
    # the variogram fit): on a blast-hole flat ore (benchmarks/RESULTS.md, "Blast-hole
    # benches", seed 104) that left a major axis 39 degrees off with no flag and 8-degree
    # cones. The candidates are the fit, its two exchanges and the other search frames.
    F, df = shoot_benchmark_realisation(108)
    D = anisotropy.discover(df, value="grade", transform="raw", seed=108, structures=2)
    assert len(D.model.structures) == 2
    fc = D.diagnostics["frame_candidates"]
    names = {c["name"] for c in fc["candidates"]} | {p["name"] for p in fc["pruned_at_screening"]}
    assert {"variogram fit", "major and semi-major exchanged",
            "semi-major and minor exchanged"} <= names
    assert axis_err(D.frame[:, 0], F[:, 0]) < 12.0


@pytest.mark.slow
def test_nested_refit_keeps_the_likelihoods_axes():
    # realisation 116 of the issue-4 shoot benchmark, kept as a regression case: the
    # two-structure variogram refit with the likelihood's frame held once made the
    # semi-major column the longest (a major axis reported 89 degrees off)
    F, df = shoot_benchmark_realisation(116)
    D = anisotropy.discover(df, value="grade", transform="raw", seed=116)
    for i in range(3):
        assert axis_err(D.frame[:, i], F[:, i]) < 10.0
    assert D.diagnostics["frame_refinement"]["axis_order_agrees"]


@pytest.mark.slow
def test_two_structures_asked_for_over_realisations():
    # four realisations of the issue-4 shoot benchmark (seeds 108-111; 110 once came out
    # 73 degrees off when the variogram's long structure ran to the range limit) with two
    # structures asked for. Statistical property, from the 24-seed study in
    # benchmarks/RESULTS.md (worst major error 10.4 degrees; median 3.9 over 24 seeds, 5.2
    # over seeds 100-111): every axis of every realisation within 12 degrees, and the
    # median of these four major errors under 8 (a median of four scatters); the long
    # structure's half-sill distance along the major axis (which does not depend on the
    # kind: the variogram picks exponentials for this spherical truth) within a factor of
    # two of the truth's in each realisation and within 30 % in the median (one
    # realisation's long range, near the longest lag, is poorly pinned)
    majors, ratios = [], []
    for seed in (108, 109, 110, 111):
        F, df = shoot_benchmark_realisation(seed)
        D = anisotropy.discover(df, value="grade", transform="raw", seed=seed, structures=2)
        errs = [axis_err(D.frame[:, i], F[:, i]) for i in range(3)]
        assert max(errs) < 12.0, (seed, errs)
        majors.append(errs[0])
        short, long_ = sorted(D.model.structures, key=lambda s: s.ranges[0])
        assert all(max(s.ranges) < 1000 for s in D.model.structures)
        ratios.append(half_sill_distance(long_.kind, long_.ranges[0])
                      / half_sill_distance("spherical", 160.0))
    assert np.median(majors) < 8.0, majors
    assert all(0.5 < r < 2.0 for r in ratios), ratios
    assert abs(np.median(ratios) - 1.0) < 0.3, ratios


def half_sill_distance(kind, a):
    """Distance at which a structure of range ``a`` reaches half its sill.

    Spherical (Journel & Huijbregts 1978, ch. II): the root in (0, 1) of
    1.5 x - 0.5 x^3 = 0.5, by numpy.roots, times ``a``. Exponential with practical
    range ``a`` (Chiles & Delfiner 2012, sec. 2.5): 1 - exp(-3 h / a) = 0.5, so
    h = a ln 2 / 3.
    """
    if kind == "spherical":
        r = np.roots([-0.5, 0.0, 1.5, -0.5])
        x = float(np.real(r[(np.abs(np.imag(r)) < 1e-12) & (np.real(r) > 0) & (np.real(r) < 1)][0]))
        return x * a
    if kind == "exponential":
        return a * math.log(2.0) / 3.0
    raise ValueError(kind)


@pytest.mark.slow
def test_drill_hole_strings():
    # holes drilled down the minor axis of a plunging shoot (the usual design):
    # the down-hole direction resolves the minor range, the collar grid the others
    F = frame_from_trend_plunge(120.0, 30.0, 0.0)
    coords, holes = drill_holes(5)
    v = simulate(coords, F, 0.15, [("spherical", 0.85, (110, 60, 20))], seed=6)
    D = anisotropy.discover(table(coords, v + 10, holes), value="grade", hole="hole",
                            transform="raw")
    assert any(c["choice"] == "drill-hole weights" for c in D.choices)
    # the frame is refined by the samples' likelihood on strings too
    assert D.diagnostics["frame_refinement"]["n_samples"] == min(len(coords), 2000)
    for i in range(3):
        assert axis_err(D.frame[:, i], F[:, i]) < 8.0   # drill-hole median target of the issue
    assert D.axes()["minor"]["range"] == pytest.approx(20, rel=0.3)
    # the angle from each reported axis to the variogram fit's nearest axis, by brute
    # force over the nine pairs of axes (numpy.arccos of the absolute cosines)
    V = D.refinement.selection.best.frame
    angles = np.degrees(np.arccos(np.clip(np.abs(D.frame.T @ V), 0.0, 1.0)))
    gap = D.variogram_gap()
    for i, name in enumerate(("major", "semi_major", "minor")):
        assert gap[name] == pytest.approx(angles[i].min(), abs=1e-9)
    # drill holes get the likelihood's information too (the cones are chosen with the gap)
    info = D.likelihood_information(0.9)
    assert info.cones.keys() == gap.keys()


@pytest.mark.slow
def test_unresolvable_minor_axis_is_said():
    # holes 60 m apart, vertical, in a blanket whose across-strike range is 15 m:
    # nothing samples the semi-major/minor directions at short lag
    F = frame_from_trend_plunge(0.0, 0.0, 90.0)  # major north, minor east (vertical plane)
    coords, holes = drill_holes(9, spacing=60.0, n=(6, 6), length=60.0, plunge=90.0)
    v = simulate(coords, F, 0.1, [("spherical", 0.9, (120, 50, 15))], seed=10)
    D = anisotropy.discover(table(coords, v + 10, holes), value="grade", hole="hole",
                            transform="raw")
    assert D.diagnostics["unresolved_axes"]
    assert any("not resolved" in w for w in D.warnings)


def test_planar_bench_gives_an_azimuth_only_result():
    # one bench of blast holes (5 m pattern): only azimuths can be resolved
    rng = np.random.default_rng(1)
    g = np.stack(np.meshgrid(np.arange(30) * 5.0, np.arange(30) * 5.0), -1).reshape(-1, 2)
    coords = np.c_[g + rng.normal(0, 0.5, g.shape), np.zeros(len(g))]
    F = frame_from_trend_plunge(60.0, 0.0, 0.0)
    v = simulate(coords, F, 0.1, [("spherical", 0.9, (60, 25, 10))], seed=3)
    D = anisotropy.discover(table(coords, v + 10), value="grade", transform="raw",
                            structures=1)
    assert D.planar and any("one plane" in c for c in D.to_dict()["cautions"])
    assert abs(D.frame[2, 2]) == pytest.approx(1.0)         # minor = vertical pole
    # 900 samples, one bench 150 m across, range 60 m: 15 degrees on the azimuth
    assert axis_err(D.frame[:, 0], F[:, 0]) < 15.0
    assert "minor" in D.diagnostics["unresolved_axes"]
    # the vertical pole of one bench has no lag near it (exact: every z is 0),
    # so the warning says so instead of printing "nan m"
    text = " ".join(D.warnings)
    assert "nan" not in text and "no lag bin lies within 25 degrees" in text
    minor_line = next(ln for ln in D.summary().splitlines() if ln.startswith("Minor axis"))
    assert "not resolved (planar data" in minor_line


def test_an_unresolved_direction_has_no_narrow_cone():
    # one bench: the vertical pole is assumed, not resolved, so every replicate holds it
    # too and their cone is 0; the reported cone is then the floor of an open direction,
    # twice the fan's angular tolerance (Discovery.open_cone_floors), with a note
    rng = np.random.default_rng(1)
    g = np.stack(np.meshgrid(np.arange(30) * 5.0, np.arange(30) * 5.0), -1).reshape(-1, 2)
    coords = np.c_[g + rng.normal(0, 0.5, g.shape), np.zeros(len(g))]
    v = simulate(coords, frame_from_trend_plunge(60.0, 0.0, 0.0), 0.1,
                 [("spherical", 0.9, (60, 25, 10))], seed=3)
    D = anisotropy.discover(table(coords, v + 10), value="grade", transform="raw",
                            structures=1, bootstrap=12, n_jobs=1)
    u = D.uncertainty.to_dict()
    floor = 2.0 * D.fan_ranges.tolerance
    assert u["minor"]["replicate_cone_deg"] < 1.0
    assert u["minor"]["cone_deg"] == pytest.approx(floor)
    assert u["minor"]["cone_source"] == "unresolved direction" and "cone_note" in u["minor"]
    for a in D.diagnostics["unresolved_axes"]:
        assert u[a]["cone_deg"] >= floor


def test_correlogram_sums_to_one(steep_vein):
    D = steep_vein
    D2 = anisotropy.discover(D.samples, estimator="correlogram", structures=1)
    assert D2.model.total_sill == pytest.approx(1.0)        # 1 - rho rises to 1
    assert axis_err(D2.frame[:, 2], D.frame[:, 2]) < 10.0


def test_madogram_units_are_not_squared(steep_vein):
    # the madogram is half the mean absolute difference (estimators.py contract; Cressie
    # 1993, sec. 2.4, recalled from memory): the
    # variable's own units, and its sill is not the variance, so no "total 1" warning
    D = anisotropy.discover(steep_vein.samples, estimator="madogram", structures=1,
                            transform="normal_score", fan_spacing=15)
    units = D.to_dict()["model"]["units"]
    assert "not squared" in units and "variance 1" not in units
    assert not any("total 1" in w for w in D.warnings)


def test_model_based_bootstrap_option(tmp_path):
    # issue 5: the model-based bootstrap is reachable from discover; each replicate is a
    # field simulated with the fitted model, so its record says method "model_bootstrap" and it is
    # seed-stable (same seed, same bands: exact equality)
    rng = np.random.default_rng(5)
    coords = rng.uniform([0, 0, 0], [200, 200, 100], size=(500, 3))
    v = simulate(coords, frame_from_trend_plunge(120, 10, 0), 0.2,
                 [("spherical", 0.8, (120, 60, 25))], seed=6)
    df = table(coords, v)
    runs = [anisotropy.discover(df, value="grade", structures=1, bootstrap=12,
                                bootstrap_method="model", seed=3) for _ in range(2)]
    u = [r.to_dict()["uncertainty"] for r in runs]
    assert u[0]["method"] == "model_bootstrap" and u[0]["replicates"] == 12
    assert u[0]["major"]["cone_deg"] == u[1]["major"]["cone_deg"]
    assert u[0]["major"]["range"] == u[1]["major"]["range"]
    # the reported model is the likelihood's (its ranges as recorded, held inside the fit's
    # range limit), so the replicates, which refit the variogram, are carried to it
    fr = runs[0].refinement.frame_refinement
    lk_ranges = sorted(runs[0].diagnostics["frame_refinement"]["ranges"][0], reverse=True)
    limit = runs[0].refit.settings.max_range
    assert fr.reports_likelihood_model and u[0]["recentred"] is True
    assert runs[0].model.structures[0].ranges == pytest.approx(
        np.minimum(lk_ranges, limit), rel=1e-5)
    # the nugget is the likelihood's share, so its interval is the Wald interval of that
    # share on the logit scale (SciPy's norm.ppf, logit, expit), times the total sill
    from scipy.special import expit, logit
    from scipy.stats import norm
    sd = runs[0].likelihood_information(0.9).logit_share_sd["nugget"]
    tot, nug = runs[0].model.total_sill, runs[0].model.nugget
    z = norm.ppf(0.95)
    np.testing.assert_allclose(u[0]["nugget"], tot * expit(logit(nug / tot) + np.r_[-z, z] * sd))
    assert u[0]["share_interval"].startswith("likelihood information")
    with pytest.raises(anisotropy.InputError, match="bootstrap method"):
        anisotropy.discover(df, value="grade", bootstrap=5, bootstrap_method="jackknife")


def test_values_without_spatial_correlation_give_no_confident_orientation(rng):
    # issue 15: 400 scattered samples drawn independently of their locations (pure
    # nugget).  Whatever the fits return, no axis may be reported as resolved, and the
    # record says why (the permutation test of anisotropy.fitting.continuity).
    c = rng.uniform(0, 250, (400, 3))
    D = anisotropy.discover(table(c, rng.normal(size=400) + 10.0), value="grade",
                            transform="raw", seed=0)
    d = D.to_dict()
    assert d["diagnostics"]["unresolved_axes"] == ["major", "semi_major", "minor"]
    assert d["diagnostics"]["continuity"]["verdict"] == "none"
    assert any("no spatial continuity" in w for w in d["diagnostics"]["warnings"])
