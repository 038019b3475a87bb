"""End-to-end tests of the command line (``anisotropy explore``).

References: the tables are written by the tests, so every expected count is
known by construction (exact brute force); NumPy computes the reference
statistics; the PNG signature is from the PNG specification (ISO/IEC 15948,
section 5.2: the eight bytes 137 80 78 71 13 10 26 10).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest

from anisotropy.cli import EXIT_BAD_INPUT, EXIT_OK, main

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification, section 5.2

REQUIRED_KEYS = {"count", "mean", "std", "cv", "min", "max", "quantiles", "declustered",
                 "spacing", "topcut", "trend", "dropped", "changed", "warnings"}


def drill_table(rng, n_holes=6, per_hole=25):
    """Invented inclined drill holes with 2 m composites (Fenwright Hollow style)."""
    rows = []
    for h in range(n_holes):
        cx, cy = 512_000.0 + 40.0 * (h % 3), 7_012_000.0 + 40.0 * (h // 3)
        for k in range(per_hole):
            d = 1.0 + 2.0 * k
            rows.append({
                "HoleID": f"FH{h + 1:03d}",
                "MidX": cx + 0.5 * d, "MidY": cy + 0.1 * d, "MidZ": 850.0 - 0.85 * d,
                "Au_gpt": float(np.round(rng.lognormal(0.0, 1.0), 3)),
                "Domain": "vein" if k < 15 else "hangingwall",
            })
    return pd.DataFrame(rows)


@pytest.fixture
def good_csv(tmp_path, rng):
    df = drill_table(rng)
    # a few assay codes and a blank, placed by hand (brute-force expectations below)
    df.loc[3, "Au_gpt"] = -99.0          # missing-value code
    df.loc[4, "Au_gpt"] = -0.01          # below detection -> 0.005 (DL/2, common practice)
    df.loc[5, "Au_gpt"] = np.nan         # blank
    p = tmp_path / "fh_composites.csv"
    df.to_csv(p, index=False)
    return p, df


def run(argv, capsys):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def test_explore_writes_the_files_with_the_required_keys(good_csv, tmp_path, capsys):
    p, df = good_csv
    out_dir = tmp_path / "out"
    code, out, err = run(["explore", p, "--value", "Au_gpt", "--domain", "Domain",
                          "--domain-value", "vein", "--hole", "HoleID", "--out", out_dir], capsys)
    assert code == EXIT_OK, err
    assert "Traceback" not in err
    rec = json.loads((out_dir / "explore.json").read_text())
    assert REQUIRED_KEYS <= set(rec)
    assert {"mean", "std", "cell_size"} <= set(rec["declustered"])
    assert {"across_hole", "down_hole", "suggested_lag"} <= set(rec["spacing"])
    assert "candidates" in rec["topcut"]
    assert "0.975" in rec["quantiles"] and "0.5" in rec["quantiles"]
    # counts by construction: rows 3, 4, 5 are in the vein (k < 15 in hole 1)
    assert rec["dropped"] == {"blank value": 1, "missing-value code (<= -90)": 1}
    assert rec["changed"] == {"below-detection code (-DL) set to DL/2": 1}
    vein = df[df.Domain == "vein"]
    assert rec["samples"]["n_read"] == len(vein)
    assert rec["count"] == len(vein) - 2
    # the mean against NumPy on the cleaned grades (-0.01 -> 0.005 by arithmetic)
    v = vein["Au_gpt"].to_numpy().copy()
    v[v == -0.01] = 0.005
    v = v[np.isfinite(v) & (v > -90)]
    assert rec["mean"] == pytest.approx(float(np.mean(v)), rel=1e-12)
    assert rec["max"] == pytest.approx(float(np.max(v)), rel=0)
    assert {"dropped", "changed", "duplicates", "warnings"} <= set(rec["samples"])
    for name in ("histogram.png", "logprob.png"):
        assert (out_dir / name).read_bytes()[:8] == PNG_SIGNATURE
    # atomic writes leave no temporary files behind
    assert sorted(os.listdir(out_dir)) == ["explore.json", "histogram.png", "logprob.png"]
    # the printed summary says what was dropped and changed, and why defaults were used
    assert "missing-value code" in out and "DL/2" in out and "(default)" in out
    assert "MidX" in out and "detected from its name" in out


def test_duplicates_are_reported_under_each_policy(tmp_path, capsys):
    df = pd.DataFrame({"x": [0.0, 0.0, 10.0, 20.0, 30.0, 0.0] * 3,
                       "y": [0.0, 0.0, 5.0, 7.0, 9.0, 30.0] * 3,
                       "z": np.repeat([0.0, 10.0, 20.0], 6),
                       "au": np.arange(18, dtype=float) + 1.0})
    p = tmp_path / "dups.csv"
    df.to_csv(p, index=False)
    # "drop" is checked at the intake level in test_samples.py; two runs keep this fast
    for policy, n_used in (("keep", 18), ("average", 15)):
        out_dir = tmp_path / policy
        code, out, err = run(["explore", p, "--value", "au", "--duplicates", policy,
                              "--out", out_dir], capsys)
        assert code == EXIT_OK, err
        rec = json.loads((out_dir / "explore.json").read_text())
        # by construction: rows 1 and 2 of each level share a location -> 3 locations, 6 samples
        assert rec["samples"]["duplicates"] == {"locations": 3, "samples": 6, "policy": policy}
        assert rec["count"] == n_used
        assert "duplicate locations: 3" in out


BAD_TABLES = {
    "text_in_grade": ("x,y,z,au\n0,0,0,1\n1,0,0,2\n2,0,0,<0.01\n3,1,1,n.s.\n",
                      ["--value", "au"], ["'au'", "data rows 3 ('<0.01')", "4 ('n.s.')", "negative numbers"]),
    "missing_coordinate": ("Easting,Northing,Elevtn,au\n0,0,0,1\n1,0,0,2\n",
                           ["--value", "au"],
                           ["elevation (z)", "'Easting'", "'Northing'", "'Elevtn'",
                            "closest match is 'Elevtn'", "--z"]),
    "wrong_value_column": ("x,y,z,au_gpt\n0,0,0,1\n", ["--value", "au_gtp"],
                           ["'au_gtp'", "closest match is 'au_gpt'", "--value"]),
    "unknown_domain": ("x,y,z,au,dom\n0,0,0,1,vein\n1,0,0,2,blanket\n",
                       ["--value", "au", "--domain", "dom", "--domain-value", "shoot"],
                       ["'shoot'", "'blanket'", "'vein'"]),
    "ambiguous_x": ("x,midx,y,z,au\n0,0,0,0,1\n", ["--value", "au"], ["'x'", "'midx'", "--x"]),
    "all_missing": ("x,y,z,au\n0,0,0,-99\n1,0,0,\n", ["--value", "au"], ["no samples"]),
    "ragged": ("x,y,z,au\n0,0,0,1\n1,0,0,2,5,6\n", ["--value", "au"], ["line"]),
}


@pytest.mark.parametrize("name", sorted(BAD_TABLES))
def test_bad_tables_exit_2_with_the_message_and_no_traceback(name, tmp_path, capsys):
    text, opts, needles = BAD_TABLES[name]
    p = tmp_path / f"{name}.csv"
    p.write_text(text)
    out_dir = tmp_path / "out"
    code, out, err = run(["explore", p, *opts, "--out", out_dir], capsys)
    assert code == EXIT_BAD_INPUT
    assert "Traceback" not in err and "Traceback" not in out
    assert err.startswith("anisotropy explore: ")
    for needle in needles:
        assert needle in err, (needle, err)
    assert str(p) in err or name == "ragged" and p.name in err
    assert not out_dir.exists()  # nothing written on bad input


def test_missing_file_and_out_is_a_file(tmp_path, capsys, good_csv):
    code, out, err = run(["explore", tmp_path / "nope.csv", "--value", "au"], capsys)
    assert code == EXIT_BAD_INPUT and "not found" in err and "Traceback" not in err
    p, _ = good_csv
    blocker = tmp_path / "blocker"
    blocker.write_text("x")
    code, out, err = run(["explore", p, "--value", "Au_gpt", "--out", blocker], capsys)
    assert code == EXIT_BAD_INPUT and "existing file" in err


def test_unknown_policy_is_refused_by_the_parser(good_csv, capsys):
    p, _ = good_csv
    with pytest.raises(SystemExit) as info:
        main(["explore", str(p), "--value", "Au_gpt", "--duplicates", "median"])
    assert info.value.code == 2
    assert "invalid choice" in capsys.readouterr().err


def test_python_dash_m_runs_explore(good_csv, tmp_path):
    p, _ = good_csv
    out_dir = tmp_path / "sub"
    env = dict(os.environ, MPLBACKEND="Agg")
    proc = subprocess.run(
        [sys.executable, "-m", "anisotropy", "explore", str(p), "--value", "Au_gpt",
         "--hole", "HoleID", "--domain", "Domain", "--domain-value", "hangingwall",
         "--out", str(out_dir)],
        capture_output=True, text=True, env=env, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert "Traceback" not in proc.stderr
    rec = json.loads((out_dir / "explore.json").read_text())
    assert rec["domain"] == "hangingwall"
    assert rec["count"] == 6 * 10  # 10 hanging-wall composites per hole, by construction
    assert "Reading the table" in proc.stdout


def test_internal_error_exits_1_and_says_it_is_ours(good_csv, tmp_path, capsys, monkeypatch):
    import importlib

    explore_module = importlib.import_module("anisotropy.exploration")

    def broken(samples, **kw):
        raise RuntimeError("simulated bug")

    monkeypatch.setattr(explore_module, "explore", broken)
    p, _ = good_csv
    code, out, err = run(["explore", p, "--value", "Au_gpt", "--out", tmp_path / "o"], capsys)
    assert code == 1
    assert "internal error" in err and "simulated bug" in err
    assert not (tmp_path / "o" / "explore.json").exists()


def test_python_warnings_are_printed_as_notes_without_source_paths(good_csv, tmp_path, capsys,
                                                                   monkeypatch):
    import importlib
    import warnings

    explore_module = importlib.import_module("anisotropy.exploration")
    real = explore_module.explore

    def noisy(samples, **kw):
        warnings.warn("correlogram undefined in 3 lag bins", RuntimeWarning, stacklevel=1)
        return real(samples, **kw)

    monkeypatch.setattr(explore_module, "explore", noisy)
    p, _ = good_csv
    code, out, err = run(["explore", p, "--value", "Au_gpt", "--hole", "HoleID",
                          "--out", tmp_path / "o"], capsys)
    assert code == EXIT_OK
    assert "anisotropy explore: note: correlogram undefined in 3 lag bins" in err
    assert "RuntimeWarning" not in err and ".py:" not in err


def test_batch_passes_the_discover_modelling_options_by_their_python_names():
    import inspect

    from anisotropy.cli import _batch_options, build_parser
    from anisotropy.pipeline import discover

    args = build_parser().parse_args(
        ["batch", "t.csv", "--value", "au", "--domain", "zone", "--structures", "2",
         "--kind", "spherical", "--kind", "exponential", "--shared-ratios",
         "--bandwidth", "12", "--transform", "indicator", "--threshold", "1.5"])
    opts = _batch_options(args)
    assert opts["structures"] == 2 and opts["kinds"] == ["spherical", "exponential"]
    assert opts["shared_ratios"] is True and opts["bandwidth"] == 12.0
    assert opts["threshold"] == 1.5 and opts["transform"] == "indicator"
    # every name is a keyword of discover (checked against its signature), as run_batch requires
    known = set(inspect.signature(discover).parameters)
    intake = {"missing_codes", "below_detection", "duplicates"}
    assert set(opts) - intake <= known
    # the same spelling as discover's own options
    disc = {a.option_strings[0] for a in build_parser()._subparsers._group_actions[0]
            .choices["discover"]._actions if a.option_strings}
    bat = {a.option_strings[0] for a in build_parser()._subparsers._group_actions[0]
           .choices["batch"]._actions if a.option_strings}
    for o in ("--structures", "--kind", "--shared-ratios", "--bandwidth", "--threshold"):
        assert o in disc and o in bat


@pytest.mark.parametrize("command", ["discover", "batch", "check"])
def test_out_that_is_a_file_exits_2_without_a_traceback(command, good_csv, tmp_path, capsys):
    p, _ = good_csv
    blocker = tmp_path / "results"
    blocker.write_text("not a folder")
    argv = [command, p, "--value", "Au_gpt", "--hole", "HoleID", "--out", blocker]
    if command == "batch":
        argv += ["--domain", "Domain", "--bootstrap", "0"]
    if command == "check":
        argv += ["--plane", "150/70", "--bootstrap", "20"]
    code, out, err = run(argv, capsys)
    assert code == EXIT_BAD_INPUT
    assert "Traceback" not in err and str(blocker) in err and "--out" in err
    assert blocker.read_text() == "not a folder"


def test_unreachable_scheduler_exits_2_before_the_run(good_csv, tmp_path, capsys):
    import socket

    # a port nothing listens on: bind one, note it, close it
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    p, _ = good_csv
    addr = f"tcp://127.0.0.1:{port}"
    from anisotropy import cli

    cli_timeout = cli._check_scheduler.__kwdefaults__["timeout"]
    cli._check_scheduler.__kwdefaults__["timeout"] = 2
    try:
        code, out, err = run(["discover", p, "--value", "Au_gpt", "--bootstrap", "5",
                              "--scheduler", addr, "--out", tmp_path / "o"], capsys)
    finally:
        cli._check_scheduler.__kwdefaults__["timeout"] = cli_timeout
    assert code == EXIT_BAD_INPUT
    assert "Cannot reach the Dask scheduler" in err and addr in err and "Traceback" not in err
    assert not (tmp_path / "o" / "discovery.json").exists()


def test_explore_reads_a_table_without_elevation_as_two_dimensional(tmp_path, capsys, rng):
    # issue 17: x, y and grade only; the reference is the same table with a constant
    # elevation column, read by the 3D path (the old advice)
    df = pd.DataFrame({"Easting": 1000 + rng.uniform(0, 80, 60),
                       "Northing": 2000 + rng.uniform(0, 80, 60),
                       "au": rng.lognormal(0, 0.7, 60)})
    p2, p3 = tmp_path / "plan.csv", tmp_path / "plan_z.csv"
    df.to_csv(p2, index=False)
    df.assign(Elevation=0.0).to_csv(p3, index=False)
    code, out, err = run(["explore", p2, "--value", "au", "--out", tmp_path / "a"], capsys)
    assert code == EXIT_OK, err
    assert "z: none, the table is read as two-dimensional" in out
    code, _, err = run(["explore", p3, "--value", "au", "--out", tmp_path / "b"], capsys)
    assert code == EXIT_OK, err
    a = json.loads((tmp_path / "a" / "explore.json").read_text())
    b = json.loads((tmp_path / "b" / "explore.json").read_text())
    assert a["samples"]["planar"] and a["samples"]["columns"]["z"] is None
    assert a["spacing"] == b["spacing"] and a["mean"] == b["mean"]


def test_discover_top_cut_auto_by_exclusion_is_counted_and_printed(tmp_path, capsys):
    # issue 17: --top-cut auto --top-cut-mode exclude; references: numpy's 99 % quantile
    # (the rule of thumb taken when the log-probability plot shows no break, common
    # practice) and a brute-force count of the grades above it in the table written here
    from anisotropy.exploration import detect_logprob_break

    rng = np.random.default_rng(5)
    n = 500
    c = rng.uniform([0, 0, 0], [150, 150, 60], (n, 3))
    g = np.round(np.abs(rng.normal(4.0, 1.0, n) + 0.02 * c[:, 0]), 4)
    assert detect_logprob_break(g) is None
    p = tmp_path / "t.csv"
    pd.DataFrame({"x": c[:, 0], "y": c[:, 1], "z": c[:, 2], "cu": g}).to_csv(p, index=False)
    code, out, err = run(["discover", p, "--value", "cu", "--top-cut", "auto",
                          "--top-cut-mode", "exclude", "--bootstrap", "0", "--structures", "1",
                          "--units", "%", "--no-report", "--out", tmp_path / "o"], capsys)
    assert code == EXIT_OK, err
    thr = np.quantile(g, 0.99)
    n_over = int((g > thr).sum())
    d = json.loads((tmp_path / "o" / "discovery.json").read_text())
    tc = d["transform"]["top_cut"]
    assert tc["threshold"] == pytest.approx(thr, rel=1e-12) and tc["mode"] == "exclude"
    assert tc["n_excluded"] == n_over > 0 and d["input"]["n_used"] == n - n_over
    assert [v for k, v in d["input"]["dropped"].items() if k.startswith("top-cut")] == [n_over]
    assert "top-cut" in out and "99 % quantile" in out   # the reason is printed
    assert d["diagnostics"]["grade_units"] == "%"


def test_top_cut_option_refuses_a_word(tmp_path, capsys):
    with pytest.raises(SystemExit):
        main(["discover", "f.csv", "--value", "au", "--top-cut", "high"])
    assert "neither a grade nor 'auto'" in capsys.readouterr().err


def test_bootstrap_defaults_agree_and_the_demo_says_why_it_differs(monkeypatch):
    # issue 17: one default for discover, check and batch; the demo's, read from its
    # bundled TOML with the standard library's tomllib, is explained in its help
    import tomllib

    from anisotropy import cli
    from anisotropy.batch import demo_paths

    parser = cli.build_parser()
    d = parser.parse_args(["discover", "f.csv", "--value", "au"])
    c = parser.parse_args(["check", "f.csv", "--value", "au", "--plane", "150/70"])
    b = parser.parse_args(["batch", "f.csv", "--value", "au", "--domain", "zone"])
    assert d.bootstrap == c.bootstrap == cli._batch_options(b)["bootstrap"] == cli.DEFAULT_BOOTSTRAP
    with open(demo_paths()["config"], "rb") as fh:
        demo_n = tomllib.load(fh)["options"]["bootstrap"]
    sub = parser._subparsers._group_actions[0].choices
    demo_help = next(a.help for a in sub["demo"]._actions if a.dest == "bootstrap")
    assert f"default: {demo_n}" in demo_help and str(cli.DEFAULT_BOOTSTRAP) in demo_help


def test_batch_takes_units_and_the_bootstrap_method(monkeypatch, tmp_path):
    from anisotropy import batch as B
    from anisotropy import cli

    seen = {}

    class Res:
        rows = [{"status": "ok"}]

        def summary(self):
            return ""

    def fake_run_batch(*a, **kw):
        seen.update(kw)
        return Res()

    monkeypatch.setattr(B, "run_batch", fake_run_batch)
    code = cli.main(["batch", "t.csv", "--value", "au", "--domain", "zone", "--units", "g/t",
                     "--bootstrap-method", "model", "--out", str(tmp_path / "o")])
    assert code == cli.EXIT_OK
    assert seen["units"] == "g/t" and seen["bootstrap_method"] == "model"
    assert seen["bootstrap"] == cli.DEFAULT_BOOTSTRAP


def test_help_does_not_load_the_engine():
    # reference: the interpreter's own module table, in a fresh process (what --help
    # imports decides how long a geologist waits for it)
    import subprocess
    import sys

    code = ("import sys; from anisotropy.cli import build_parser; build_parser(); "
            "print(sorted(m for m in sys.modules if m.startswith(('anisotropy.pipeline', "
            "'anisotropy.check', 'anisotropy.batch', 'numba', 'scipy', 'matplotlib'))))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "[]"
    # the demo's help still names the bundled config's replicates, read from the file
    from anisotropy.cli import _demo_bootstrap
    from anisotropy.batch import demo_paths, load_config

    assert _demo_bootstrap() == load_config(demo_paths()["config"])["options"]["bootstrap"]
