"""examples/compare_truth.py: the README's recovered-vs-truth table."""

import importlib.util
import json
from pathlib import Path

import numpy as np

from anisotropy.geometry import vector_to_line

ROOT = Path(__file__).resolve().parents[1]
spec = importlib.util.spec_from_file_location("compare_truth", ROOT / "examples" / "compare_truth.py")
compare_truth = importlib.util.module_from_spec(spec)
spec.loader.exec_module(compare_truth)

TRUTH = json.loads((ROOT / "anisotropy" / "data" / "truth.json").read_text())


def _row_from_truth(name, turn_major_deg=0.0):
    """A summary row that reports the truth, optionally with the major axis
    turned about the minor axis by a known angle."""
    t = TRUTH["domains"][name]
    major = np.asarray(t["axes"]["major"]["vector"])
    minor = np.asarray(t["axes"]["minor"]["vector"])
    semi = np.cross(minor, major)
    a = np.radians(turn_major_deg)
    major_turned = np.cos(a) * major + np.sin(a) * semi
    row = {"domain": name, "status": "ok", "verdict": None, "cone_major": 5.0,
           "plane_dip_direction": t["plane"]["dip_direction"], "plane_dip": t["plane"]["dip"],
           "plane_pitch": t["plane"]["pitch"]}
    for axis, vec in (("major", major_turned), ("semi_major", semi), ("minor", minor)):
        trend, plunge = vector_to_line(vec)
        row[f"{axis}_trend"], row[f"{axis}_plunge"] = float(trend), float(plunge)
        row[f"range_{axis}"] = t["axes"][axis]["range"]
    return row


def test_truth_compared_with_itself_gives_zero_angles():
    # exact: the same axes, written as trend/plunge and back, are 0 degrees apart
    summary = {"domains": [_row_from_truth(d) for d in TRUTH["domains"]]}
    rows = compare_truth.comparison_rows(summary, TRUTH)
    assert len(rows) == len(TRUTH["domains"])
    for r in rows:
        assert max(r["angles"].values()) < 1e-3


def test_known_turn_of_the_major_axis_is_measured():
    # the major axis turned by 25 degrees inside the plane is 25 degrees from the true one
    # (plain vector arithmetic, no fitting involved)
    summary = {"domains": [_row_from_truth("vein_corridor", turn_major_deg=25.0),
                           {"domain": "ghost", "status": "failed"}]}
    rows = compare_truth.comparison_rows(summary, TRUTH)
    assert [r["domain"] for r in rows] == ["vein_corridor"]
    assert abs(rows[0]["angles"]["major"] - 25.0) < 1e-3
    table = compare_truth.markdown(rows)
    assert table.count("\n") == 2 and "vein_corridor" in table and "25°" in table
