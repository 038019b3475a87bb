"""End-to-end tests of anisotropy.batch on a multi-domain table built from a simulated field.

Domains: "alpha" (drill-hole strings through a simulated anisotropic
field, with an interpretation to check), a hostile name (path traversal +
markup), "tiny" (too small), "flat" (no variability), "broken" (an
impossible interpretation). References outside the project: the standard
library's ``csv`` and ``json`` readers, ``html.parser`` (what a browser
sees), ``os.path.commonpath`` (containment), and the batch run on a Dask
``LocalCluster`` (same rows as on local processes).
"""

import csv
import html
import json
import os
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from anisotropy.batch import SUMMARY_HEADINGS, load_config, run_batch
from anisotropy.errors import InputError

HOSTILE = "../../<script>alert(1)</script> & co"
ALL = ["alpha", HOSTILE, "tiny", "flat", "broken"]
OPTIONS = {"bootstrap": 3, "fan_spacing": 12, "seed": 7}
CONFIG = {
    "options": dict(OPTIONS),
    "domain": {
        "alpha": {"interpretation": {"plane": "020/70", "pitch": 25}},
        "broken": {"interpretation": {"plane": "200/95"}},  # a dip of 95 is impossible
        HOSTILE: {"transform": "log", "lag": 8.0, "n_lags": 10, "estimator": "robust",
                  "topcut": 5.0, "units": "g/t"},
        "not_in_table": {"transform": "log"},
    },
}


def _strings(rng, n_holes, per_hole, origin):
    from anisotropy.geometry import line_to_vector

    cx = origin[0] + rng.uniform(0, 140, n_holes)
    cy = origin[1] + rng.uniform(0, 140, n_holes)
    d = line_to_vector(rng.uniform(0, 360, n_holes), rng.uniform(55, 75, n_holes))
    pts, holes = [], []
    for h in range(n_holes):
        for j in range(per_hole):
            pts.append(np.array([cx[h], cy[h], 100.0]) + (4.0 * j + 2.0) * d[h])
            holes.append(f"{origin[0]:.0f}-{h}")
    return np.array(pts), holes


def _table():
    from anisotropy.geometry import frame_from_angles
    from anisotropy.models import NestedModel, Structure
    from anisotropy.simulate import simulate_field

    rng = np.random.default_rng(11)
    model = NestedModel(0.1, [Structure("spherical", 0.9, (80.0, 40.0, 15.0))],
                        frame_from_angles(60, 20, 30))
    parts = []
    for k, (name, holes, per) in enumerate([("alpha", 12, 10), (HOSTILE, 12, 10), ("tiny", 2, 6),
                                            ("flat", 4, 10), ("broken", 4, 10)]):
        pts, hid = _strings(rng, holes, per, (1000.0 * k, 0.0))
        if name == "flat":
            grade = np.full(len(pts), 1.25)
        else:
            grade = np.round(np.exp(0.3 + 0.8 * simulate_field(pts, model, seed=k)), 3)
        parts.append(pd.DataFrame({"hole": hid, "x": pts[:, 0], "y": pts[:, 1], "z": pts[:, 2],
                                   "au": grade, "zone": name}))
    return pd.concat(parts, ignore_index=True)


@pytest.fixture(scope="module")
def table():
    return _table()


@pytest.fixture(scope="module")
def batch(tmp_path_factory, table):
    root = tmp_path_factory.mktemp("batch")
    out = root / "out"
    res = run_batch(table, value="au", domain="zone", hole="hole", out=out, config=CONFIG, jobs=2)
    return root, out, res


def _rows(res):
    return {r["domain"]: r for r in res.rows}


def test_every_domain_has_a_row_with_the_right_status(batch):
    root, out, res = batch
    rows = _rows(res)
    assert sorted(rows) == sorted(ALL)
    assert rows["alpha"]["status"] == "ok" and rows[HOSTILE]["status"] == "ok"
    assert rows["tiny"]["status"] == "skipped"
    assert "too small" in rows["tiny"]["reason"] and "12 samples" in rows["tiny"]["reason"]
    assert rows["flat"]["status"] == "skipped" and "no variability" in rows["flat"]["reason"]
    assert rows["broken"]["status"] == "failed" and "interpretation" in rows["broken"]["reason"]
    assert rows["alpha"]["verdict"] in ("consistent", "uncertain", "contradicted")
    assert rows[HOSTILE]["verdict"] is None
    for name in ("alpha", HOSTILE):
        r = rows[name]
        assert r["n_used"] == 120 and r["replicates"] and r["replicates"] >= 1
        for key in ("plane_dip", "major_trend", "range_major", "nugget", "cone_major"):
            assert r[key] is not None and np.isfinite(r[key])


def test_per_domain_overrides_reach_that_domain_only(batch, table):
    root, out, res = batch
    rows = _rows(res)
    hostile = json.loads((out / rows[HOSTILE]["folder"] / "discovery.json").read_text())
    alpha = json.loads((out / "alpha" / "discovery.json").read_text())
    assert hostile["transform"]["kind"] == "log" and alpha["transform"]["kind"] != "log"
    assert hostile["estimator"] == "robust" and alpha["estimator"] == "semivariogram"
    assert hostile["lags"]["unit_lag"] == 8.0 and hostile["lags"]["n_lags"] == 10
    assert alpha["lags"]["unit_lag"] != 8.0
    # top-cut: the count of capped grades is the brute-force count in the table
    grades = table.loc[table["zone"] == HOSTILE, "au"]
    assert rows[HOSTILE]["topcut"] == 5.0
    assert rows[HOSTILE]["n_capped"] == int((grades > 5.0).sum()) > 0
    assert rows["alpha"]["topcut"] is None
    assert any("top-cut 5" in w for w in hostile["diagnostics"]["warnings"])
    # the top-cut is in the transform record too, with the same brute-force count (issue 17)
    assert hostile["transform"]["top_cut"]["n_capped"] == rows[HOSTILE]["n_capped"]
    assert hostile["diagnostics"]["grade_units"] == "g/t"
    assert "grade_units" not in alpha["diagnostics"]


def test_demo_config_matches_the_bundled_deposit():
    from anisotropy.batch import _interpretation, demo_paths
    from anisotropy.samples import domain_values, read_table

    paths = demo_paths()
    cfg = load_config(paths["config"])
    names = domain_values(read_table(paths["composites"]), "domain")
    truth = json.loads(paths["truth"].read_text())
    assert sorted(cfg["domain"]) == sorted(names) == sorted(truth["domains"])
    checked = [n for n, over in cfg["domain"].items() if over.get("interpretation")]
    assert len(checked) >= 1
    for n in checked:
        _interpretation(cfg["domain"][n]["interpretation"], n)  # parses


def test_summary_files_match_and_read_back(batch):
    root, out, res = batch
    # reference: the standard library csv and json readers
    with open(out / "summary.csv", newline="", encoding="utf-8") as fh:
        reader = csv.DictReader(fh)
        assert tuple(reader.fieldnames) == SUMMARY_HEADINGS
        csv_rows = list(reader)
    js = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert [r["domain"] for r in csv_rows] == [r["domain"] for r in js["domains"]] \
        == [r["domain"] for r in res.rows]
    assert js["config_domains_not_in_table"] == ["not_in_table"]
    for c, j in zip(csv_rows, js["domains"]):
        assert c["status"] == j["status"] and c["reason"] == (j["reason"] or "")
        if j["range_major"] is not None:
            assert float(c["range_major_m"]) == pytest.approx(j["range_major"])
    alpha = json.loads((out / "alpha" / "check.json").read_text())
    assert alpha["verdict"] == _rows(res)["alpha"]["verdict"]
    disc = json.loads((out / "alpha" / "discovery.json").read_text())
    assert disc["schema"] == "anisotropy.discovery/1"
    assert disc["axes"]["major"]["trend"] == pytest.approx(_rows(res)["alpha"]["major_trend"], abs=1e-3)


def test_nothing_written_outside_out_and_folders_contained(batch):
    root, out, res = batch
    # everything under root is under out (reference: os.path.commonpath)
    base = str(out.resolve())
    for dirpath, dirnames, filenames in os.walk(root):
        for f in filenames:
            p = str((Path(dirpath) / f).resolve())
            assert os.path.commonpath([base, p]) == base, p
    folders = [r["folder"] for r in res.rows]
    assert len(set(folders)) == len(folders)
    assert sorted(p.name for p in out.iterdir() if p.is_dir()) == sorted(folders)
    hostile = _rows(res)[HOSTILE]["folder"]
    assert "/" not in hostile and ".." not in hostile and "<" not in hostile
    assert (out / hostile / "report.html").is_file()
    assert json.loads((out / hostile / "explore.json").read_text())["count"] == 120
    # no temporary files left behind by the atomic writes
    assert not [p for p in out.rglob("*.part")]


class _Scan(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags, self.text, self.hrefs = [], [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.hrefs += [v for k, v in attrs if k in ("href", "src")]

    def handle_data(self, data):
        self.text.append(data)


def _scan(path):
    p = _Scan()
    p.feed(Path(path).read_text(encoding="utf-8"))
    p.close()
    return p


def test_hostile_name_is_text_in_every_page(batch):
    root, out, res = batch
    folder = _rows(res)[HOSTILE]["folder"]
    for page in (out / "index.html", out / folder / "report.html"):
        scan = _scan(page)
        # reference: html.parser sees no script element, and the name as plain text
        assert "script" not in scan.tags
        assert any(HOSTILE in t for t in scan.text)
        # reference: html.escape of the standard library; the page holds the name escaped
        # (autoescape writes & < > as html.escape does; the name has no quote characters)
        raw = page.read_text(encoding="utf-8")
        assert html.escape(HOSTILE, quote=False) in raw and "<script>alert" not in raw
    index = _scan(out / "index.html")
    links = [h for h in index.hrefs if h.endswith("report.html")]
    assert sorted(links) == sorted(f"{r['folder']}/report.html" for r in res.rows if r["status"] == "ok")
    for h in index.hrefs:
        assert not h.startswith(("http:", "https:", "/", "..")), h
        assert (out / h).exists(), h


def test_resume_reruns_nothing_then_only_what_changed(batch, table):
    root, out, res = batch
    before = {p: p.stat().st_mtime_ns for p in out.rglob("discovery.json")}
    again = run_batch(table, value="au", domain="zone", hole="hole", out=out, config=CONFIG,
                      jobs=2, resume=True)
    # the failed domain is always tried again; the complete ones are not
    assert again.ran == ["broken"]
    assert sorted(again.resumed) == sorted(set(ALL) - {"broken"})
    assert {p: p.stat().st_mtime_ns for p in out.rglob("discovery.json")} == before
    assert [r["status"] for r in again.rows] == [r["status"] for r in res.rows]
    # changing one domain's options re-runs that domain only
    cfg = json.loads(json.dumps(CONFIG))
    cfg["domain"]["tiny"] = {"skip": True}
    third = run_batch(table, value="au", domain="zone", hole="hole", out=out, config=cfg,
                      resume=True)
    assert sorted(third.ran) == ["broken", "tiny"]
    assert _rows(third)["tiny"]["reason"].startswith("skipped by the config")
    # changed data in one domain re-runs that domain only
    edited = table.copy()
    edited.loc[edited["zone"] == "flat", "au"] = 1.5
    fourth = run_batch(edited, value="au", domain="zone", hole="hole", out=out, config=CONFIG,
                       resume=True)
    assert sorted(fourth.ran) == ["broken", "flat", "tiny"]  # tiny: config back to CONFIG


@pytest.mark.slow
def test_dask_local_cluster_gives_the_same_summary(batch, table, tmp_path):
    distributed = pytest.importorskip("dask.distributed")
    root, out, res = batch
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False,
                                  dashboard_address=None) as cluster:
        # by address, as --scheduler gives it (the batch opens and closes its own client)
        dres = run_batch(table, value="au", domain="zone", hole="hole", out=tmp_path / "dask",
                         config=CONFIG, scheduler=cluster.scheduler_address, report=False)
    # same rows (the timing and the audit trail's clock aside) as the run on local
    # processes (joblib)
    clock = ("seconds", "run_utc")
    strip = [{k: v for k, v in r.items() if k not in clock} for r in res.rows]
    dstrip = [{k: v for k, v in r.items() if k not in clock} for r in dres.rows]
    assert dstrip == strip


def test_domain_selection_and_errors(table, tmp_path):
    with pytest.raises(InputError, match="not in column"):
        run_batch(table, value="au", domain="zone", out=tmp_path / "x", domains=["nope"])
    with pytest.raises(InputError):
        load_config({"option": {}})
    with pytest.raises(InputError, match="unknown option.*bootsrap"):
        run_batch(table, value="au", domain="zone", out=tmp_path / "y",
                  config={"options": {"bootsrap": 3}})
    bad = tmp_path / "bad.toml"
    bad.write_text("[options\nbootstrap = 3\n")
    with pytest.raises(InputError, match="not valid TOML"):
        load_config(bad)
    res = run_batch(table, value="au", domain="zone", hole="hole", out=tmp_path / "sel",
                    domains=["tiny", "flat"])
    assert [r["domain"] for r in res.rows] == ["tiny", "flat"]
    assert sorted(p.name for p in (tmp_path / "sel").iterdir() if p.is_dir()) == ["flat", "tiny"]


def test_cli_batch_and_resume(table, tmp_path, capsys):
    from anisotropy.cli import main

    src = tmp_path / "table.csv"
    table.to_csv(src, index=False)
    cfg = tmp_path / "cfg.toml"
    cfg.write_text('[options]\nbootstrap = 2\n\n[domain."tiny"]\nmin_samples = 50\n')
    out = tmp_path / "cli_out"
    argv = [str(src), "--value", "au", "--domain", "zone", "--hole", "hole", "--out", str(out),
            "--domains", "tiny,flat", "--config", str(cfg)]
    code = main(["batch", *argv])
    assert code == 1  # no domain ok: exit code says so
    text = capsys.readouterr().out
    assert "2 domains" in text and "index:" in text
    rows = list(csv.DictReader(open(out / "summary.csv", newline="")))
    assert {r["domain"]: r["status"] for r in rows} == {"tiny": "skipped", "flat": "skipped"}
    assert "at least 50" in rows[[r["domain"] for r in rows].index("tiny")]["reason"]
    main(["batch", *argv, "--resume"])
    assert "(0 run, 2 already done)" in capsys.readouterr().out


@pytest.mark.slow
def test_demo_end_to_end_through_the_cli(tmp_path, capsys):
    from anisotropy.cli import main

    out = tmp_path / "demo"
    code = main(["demo", "--out", str(out), "--jobs", "1", "--bootstrap", "5"])
    text = capsys.readouterr().out
    assert code == 0 and f"index: {out / 'index.html'}" in text
    js = json.loads((out / "summary.json").read_text())
    truth = json.loads((Path(__file__).parents[1] / "anisotropy" / "data" / "truth.json").read_text())
    assert sorted(r["domain"] for r in js["domains"]) == sorted(truth["domains"])
    assert all(r["status"] == "ok" and r["replicates"] == 5 for r in js["domains"])
    checked = {r["domain"]: r["verdict"] for r in js["domains"] if r["verdict"]}
    assert set(checked) == {"vein_corridor", "shoot"}


def test_interrupted_batch_leaves_no_partial_files_and_resumes(table, tmp_path, monkeypatch):
    import anisotropy.batch as B

    out = tmp_path / "cut"

    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(B, "_discover_domain", interrupted)
    with pytest.raises(KeyboardInterrupt):
        run_batch(table, value="au", domain="zone", out=out, domains=["tiny", "flat"])
    assert (out / "tiny" / ".complete").is_file()          # done before the interruption
    assert not (out / "flat" / ".complete").exists()       # interrupted: not marked done
    assert not (out / "summary.csv").exists() and not list(out.rglob("*.part"))
    monkeypatch.undo()
    res = run_batch(table, value="au", domain="zone", out=out, domains=["tiny", "flat"],
                    resume=True)
    assert res.ran == ["flat"] and res.resumed == ["tiny"]
    assert res.statuses == {"tiny": "skipped", "flat": "skipped"}


def test_non_numeric_pitch_in_the_config_fails_that_domain_with_the_reason(table, tmp_path):
    cfg = {"options": {"bootstrap": 0},
           "domain": {"tiny": {"min_samples": 2,
                               "interpretation": {"plane": "150/70", "pitch": "steep"}}}}
    res = run_batch(table, value="au", domain="zone", out=tmp_path / "p", domains=["tiny"],
                    config=cfg)
    row = res.rows[0]
    # a config error, said as such (not an internal error with a traceback file)
    assert row["status"] == "failed" and "pitch must be a number" in row["reason"]
    assert '[domain."tiny".interpretation]' in row["reason"]
    assert not (tmp_path / "p" / row["folder"] / "error.txt").exists()


def test_config_domain_not_in_the_table_is_said_on_the_terminal(table, tmp_path, capsys):
    cfg = {"options": {"bootstrap": 0}, "domain": {"tinny": {"skip": True}}}
    run_batch(table, value="au", domain="zone", out=tmp_path / "o", domains=["tiny"],
              config=cfg, progress=True)
    err = capsys.readouterr().err
    assert "tinny" in err and "not in the table" in err and "tiny" in err


def test_summary_says_one_domain_in_the_singular(tmp_path):
    from anisotropy.batch import BatchResult

    row = {"domain": "shoot", "status": "ok", "reason": ""}
    one = BatchResult(rows=[row], out=tmp_path, index=tmp_path / "index.html", ran=["shoot"])
    assert one.summary().startswith("1 domain: 1 ok (1 run, 0 already done)")
    two = BatchResult(rows=[row, dict(row, domain="vein")], out=tmp_path,
                      index=tmp_path / "index.html", ran=["shoot", "vein"])
    assert two.summary().startswith("2 domains: 2 ok")


def test_summary_gives_each_structure_units_flags_and_the_audit_trail(batch):
    # reference: the standard library csv and json readers; the per-domain
    # model.json and discovery.json written by the same run
    root, out, res = batch
    rows = {r["domain"]: r for r in csv.DictReader(open(out / "summary.csv", newline=""))}
    a = rows["alpha"]
    disc = json.loads((out / "alpha" / "discovery.json").read_text())
    model = json.loads((out / "alpha" / "model.json").read_text())
    assert model["schema"] == "anisotropy.model/1"
    assert (out / "alpha" / "model.csv").is_file()
    assert (out / "alpha" / "experimental_variograms.csv").is_file()
    st = disc["model"]["structures"][0]
    assert a["s1_kind"] == st["type"]
    assert float(a["s1_sill_in_sill_units"]) == pytest.approx(st["sill"], abs=1e-4)
    assert float(a["s1_range_major_m"]) == pytest.approx(st["ranges"]["major"], abs=1e-3)
    assert float(a["rotation_azimuth_deg"]) == pytest.approx(
        disc["rotation"]["angles"]["azimuth"], abs=1e-3)
    assert a["sill_units"] == disc["model"]["units"]
    assert "flags" in a and a["input_sha256"] == (disc["run"]["input_sha256"] or "")
    assert a["run_utc"] == disc["run"]["utc"] and a["seed"] == "7"
    if model["grade_units"] and model["grade_units"].get("structures"):
        assert float(a["grade_nugget_in_grade_sill_units"]) == pytest.approx(
            model["grade_units"]["nugget"], abs=1e-4)
        assert float(a["grade_s1_range_major_m"]) == pytest.approx(
            model["grade_units"]["structures"][0]["practical_range_m"]["major"], abs=1e-3)
    # every heading that carries a unit says so
    for h in ("plane_dip_deg", "range_minor_m", "nugget_in_sill_units", "seconds_s"):
        assert h in rows["alpha"]
    # index.html shows the warnings of the domain, as text (reference: html.parser)
    text = " ".join(_scan(out / "index.html").text)
    for w in disc["diagnostics"]["warnings"][:3]:
        assert w in text


def test_recorded_bootstrap_block_size_is_the_one_resampled(batch):
    # consistency of the record: the choice must repeat the block grouping the
    # bootstrap wrote (uncertainty.blocks.side, the blocks actually resampled)
    root, out, res = batch
    disc = json.loads((out / "alpha" / "discovery.json").read_text())
    used = disc["uncertainty"]["blocks"]["side"]
    ch = [c for c in disc["diagnostics"]["choices"] if c["choice"] == "bootstrap blocks"]
    assert len(ch) == 1
    assert ch[0]["value"] == pytest.approx(max(used))
    assert ch[0]["engine_block_side"] <= ch[0]["value"]


def test_index_escapes_every_string_from_the_input(tmp_path):
    from anisotropy.report.index import render_index

    evil = "<script>alert(1)</script> & co"
    rows = [{"domain": evil, "status": "ok", "folder": "d1", "n_used": 10, "flags": f"flag {evil}",
             "warning_list": [f"warning about {evil}", "plain"], "verdict": None},
            {"domain": "x", "status": "failed", "folder": "d2", "reason": f"reason {evil}"}]
    path = render_index(rows, tmp_path / "index.html", source=f"src {evil}.csv",
                        value=f"au {evil}", domain_column=f"zone {evil}", notes=[f"note {evil}"])
    raw = path.read_text(encoding="utf-8")
    # reference: html.escape of the Python standard library (no quote characters here)
    esc = html.escape(evil, quote=False)
    for shown in (f"<td>{esc}</td>", f"flag {esc}", f"<li>warning about {esc}</li>",
                  f"reason {esc}", f"src {esc}.csv", f"au {esc} by zone {esc}", f"note {esc}",
                  f"<title>Continuity batch: au {esc}</title>"):
        assert shown in raw, shown
    assert "<script>alert" not in raw
    # reference: html.parser sees no script element and the strings as text
    scan = _scan(path)
    assert "script" not in scan.tags and sum(evil in t for t in scan.text) >= 7
    assert scan.hrefs[:2] == ["summary.csv", "summary.json"]
    assert "d1/report.html" in scan.hrefs and "d2/row.json" in scan.hrefs
