"""Tests of anisotropy.check: structural notation, impossible interpretations, verdicts.

Outside references:
* the structural-geology conventions of design.md (pole of a plane dipping d
  towards D has trend D + 180, plunge 90 - d; a line with pitch p lies in the
  plane) checked by brute force with numpy (dot products, cross products);
* scipy.spatial.transform.Rotation to rotate a known frame by 40 degrees;
* a simulated Gaussian field with a known model (anisotropy.simulate, itself
  tested against the covariance it is built from) for the verdicts.
"""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from anisotropy.check import (DEFAULT_THRESHOLDS, Interpretation, check_interpretation,
                              parse_orientation)
from anisotropy.errors import InputError, InterpretationError
from anisotropy.geometry import axis_angle, frame_from_angles, line_to_vector


# ---------------------------------------------------------------------------
# notation and geometry (fast)
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("text,expected", [("150/70", (150.0, 70.0)), ("060/20", (60.0, 20.0)),
                                           (" 5.5 / 0 ", (5.5, 0.0))])
def test_parse_orientation(text, expected):
    assert parse_orientation(text) == expected


@pytest.mark.parametrize("bad", ["150", "150-70", "a/b", "150/70/3", ""])
def test_parse_orientation_refuses(bad):
    with pytest.raises(InterpretationError):
        parse_orientation(bad)


def test_plane_pole_by_hand():
    it = Interpretation.from_plane(150.0, 70.0)
    assert it.kind == "plane" and it.frame is None
    # design.md: pole trend = dip direction + 180, plunge = 90 - dip
    pole = line_to_vector(330.0, 20.0)
    assert axis_angle(it.axes["minor"], pole) < 1e-9


def test_plane_with_pitch_lies_in_plane():
    it = Interpretation.from_plane(150.0, 70.0, pitch=35.0)
    F = it.frame
    # brute force: orthonormal, right-handed, major and semi-major in the plane
    assert np.allclose(F.T @ F, np.eye(3), atol=1e-12)
    assert np.linalg.det(F) == pytest.approx(1.0)
    n = line_to_vector(330.0, 20.0)
    assert abs(F[:, 0] @ n) < 1e-9 and abs(F[:, 1] @ n) < 1e-9
    # pitch 35 from the strike (060, horizontal) towards the dip direction:
    # cos(angle to strike) = cos 35
    strike = line_to_vector(60.0, 0.0)
    assert abs(F[:, 0] @ strike) == pytest.approx(np.cos(np.radians(35.0)))


def test_axes_interpretation_frame():
    it = Interpretation.from_axes("060/20", "240/70")
    # 060/20 and 240/70 are perpendicular (dot product zero, brute force)
    assert abs(line_to_vector(60, 20) @ line_to_vector(240, 70)) < 1e-12
    assert axis_angle(it.frame[:, 0], line_to_vector(60, 20)) < 1e-9
    assert axis_angle(it.frame[:, 2], line_to_vector(240, 70)) < 1e-9


def test_non_perpendicular_pair_refused_with_its_angle():
    # 060/20 and 150/70 are 71.3 degrees apart (arccos of the dot product,
    # brute force), so they cannot be a major and a minor axis
    ang = np.degrees(np.arccos(abs(line_to_vector(60, 20) @ line_to_vector(150, 70))))
    with pytest.raises(InterpretationError, match=f"{ang:.1f} degrees"):
        Interpretation.from_axes("060/20", "150/70")


@pytest.mark.parametrize("call,fragment", [
    (lambda: Interpretation.from_plane(150, 95), "between 0 and 90"),
    (lambda: Interpretation.from_plane(150, -5), "between 0 and 90"),
    (lambda: Interpretation.from_plane(150, 70, pitch=200), "pitch"),
    (lambda: Interpretation.from_plane(150, 70, major="150/10"), "out of the plane"),
    (lambda: Interpretation.from_plane(150, 70, pitch=10, major="060/00"), "not both"),
    (lambda: Interpretation.from_axes("060/20", "080/70"), "perpendicular"),
    (lambda: Interpretation.from_axes("060/120"), "between 0 and 90"),
    (lambda: Interpretation.from_axes("060/20", "060/20"), "perpendicular"),
    (lambda: Interpretation.from_plane(400, 70), "000 to 360"),
    (lambda: Interpretation.from_plane(-10, 70), "000 to 360"),
    (lambda: Interpretation.from_axes("400/10"), "000 to 360"),
])
def test_impossible_interpretations_refused(call, fragment):
    with pytest.raises(InterpretationError, match=fragment):
        call()


def test_major_within_plane_tolerance_accepted():
    # strike line of plane 150/70 is 060/00; 3 degrees of plunge is within 5
    it = Interpretation.from_plane(150, 70, major="060/03")
    assert it.kind == "plane+pitch" and it.pitch is not None
    # the 060 strike direction of a plane dipping SE: pitch close to 0 or 180
    assert min(it.pitch, 180 - it.pitch) < 10


def test_minor_tolerance_boundary():
    maj = line_to_vector(60, 0)
    ok = Rotation.from_rotvec(np.radians(4.0) * maj).apply(line_to_vector(150, 0))
    tilt = np.cross(maj, [0, 0, 1.0])
    near = Rotation.from_rotvec(np.radians(4.0) * tilt / np.linalg.norm(tilt)).apply(
        line_to_vector(150, 0))
    far = Rotation.from_rotvec(np.radians(8.0) * np.array([0, 0, 1.0])).apply(
        line_to_vector(150, 0))
    Interpretation.from_axes(maj, ok)        # rotated about the major: still perpendicular
    Interpretation.from_axes(maj, near)      # 4 deg from perpendicular: within 5
    with pytest.raises(InterpretationError):
        Interpretation.from_axes(maj, far)   # 8 deg from perpendicular


def test_thresholds_validated():
    with pytest.raises(InputError):
        check_interpretation(object(), Interpretation.from_plane(0, 10), thresholds={"nope": 1})


# ---------------------------------------------------------------------------
# verdicts on a simulated field, discovered by the whole chain
# ---------------------------------------------------------------------------

@pytest.fixture(scope="module")
def field():
    """A scattered field of known frame (exact Cholesky simulation), discovered by ``discover``.

    The grades are the simulated Gaussian values shifted by 10 so that none is
    negative (a negative grade is read as a below-detection code).
    """
    import pandas as pd

    from anisotropy import discover
    from anisotropy.models import NestedModel, Structure
    from anisotropy.simulate import simulate_field

    rng = np.random.default_rng(1)
    coords = rng.uniform(0, (300, 300, 120), size=(1500, 3))
    truth_frame = frame_from_angles(60.0, 20.0, 10.0)
    truth = NestedModel(nugget=0.1, structures=[Structure("spherical", 0.9,
                                                          (150.0, 80.0, 40.0))],
                        frame=truth_frame)
    v = simulate_field(coords, truth, seed=3) + 10.0
    table = pd.DataFrame({"x": coords[:, 0], "y": coords[:, 1], "z": coords[:, 2], "g": v})
    found = discover(table, value="g", transform="raw", bootstrap=40, seed=0)
    return found, truth_frame


@pytest.mark.slow
def test_correct_interpretation_is_consistent(field):
    found, F = field
    assert axis_angle(found.frame[:, 0], F[:, 0]) < 15  # the fit itself found the truth
    it = Interpretation.from_axes(F[:, 0], F[:, 2])
    res = check_interpretation(found, it, thresholds={"max_ratio_replicates": 30})
    assert res.verdict == "consistent", res.summary()
    d = json.loads(json.dumps(res.to_dict()))
    assert d["verdict"] == "consistent"
    assert set(d["angles"]) == {"major", "semi_major", "minor"}
    assert d["fit"]["ratio"] >= 0.99  # a fixed frame cannot fit better than the free one
    assert "thresholds" in res.summary()
    # scattered samples: the cone judged against is the reported one, from the
    # likelihood's information where the replicates do not exchange the axis
    for k, j in (("major", 0), ("minor", 2)):
        cone, source, _ = found.uncertainty.cone(j)
        assert res.support[k]["cone_deg"] == cone
        assert found.uncertainty.axis_summary(j)["cone_source"] == source
    assert "likelihood information" in {found.uncertainty.cone(j)[1] for j in range(3)}


@pytest.mark.slow
def test_interpretation_40_degrees_off_is_contradicted(field):
    found, F = field
    # rotate the true frame 40 degrees about its semi-major axis (scipy Rotation):
    # major and minor axes both move 40 degrees
    R = Rotation.from_rotvec(np.radians(40.0) * F[:, 1]).as_matrix() @ F
    assert axis_angle(R[:, 0], F[:, 0]) == pytest.approx(40.0)
    it = Interpretation.from_axes(R[:, 0], R[:, 2])
    res = check_interpretation(found, it, thresholds={"max_ratio_replicates": 30})
    assert res.verdict == "contradicted", res.summary()
    assert res.support["major"]["outside"] and res.fit["worse"]


@pytest.mark.slow
def test_plane_only_checks_the_pole(field):
    found, truth_frame = field
    from anisotropy.geometry import pole_to_plane

    dd, dip = pole_to_plane(truth_frame[:, 2])
    res = check_interpretation(found, Interpretation.from_plane(dd, dip),
                               thresholds={"max_ratio_replicates": 20})
    assert set(res.angles) == {"minor"}
    # the true plane is consistent (its pole is the truth's minor axis, which the fit found)
    assert res.verdict == "consistent", res.summary()
    assert any("plane only" in r for r in res.reasons)
    # and the check can tell: the same plane dipping 40 degrees more (its pole turned
    # 40 degrees about the strike, scipy Rotation) is not consistent
    strike = line_to_vector(dd - 90.0, 0.0)
    pole = Rotation.from_rotvec(np.radians(40.0) * strike).apply(truth_frame[:, 2])
    assert axis_angle(pole, truth_frame[:, 2]) == pytest.approx(40.0)
    dd2, dip2 = pole_to_plane(pole)
    off = check_interpretation(found, Interpretation.from_plane(dd2, dip2),
                               thresholds={"max_ratio_replicates": 20})
    assert off.angles["minor"] > 30.0, off.summary()
    assert off.verdict != "consistent", off.summary()


def test_default_thresholds_documented():
    # every threshold the module docstring states with a value is the value the code uses
    import anisotropy.check as C

    stated = {k: float(v) for k, v in re.findall(r"``(\w+)``[ ,(]+(\d+(?:\.\d+)?)", C.__doc__)}
    assert set(stated) == {"confidence", "practical_deg", "ratio_share", "strong_share",
                           "swap_rate"}
    for key, value in stated.items():
        assert DEFAULT_THRESHOLDS[key] == value, key


# ---------------------------------------------------------------------------
# command line (argument handling; the long run is exercised by hand)
# ---------------------------------------------------------------------------

def test_cli_refuses_impossible_interpretation_before_reading(capsys, tmp_path):
    from anisotropy.cli import EXIT_BAD_INPUT, main

    missing = str(tmp_path / "not_there.csv")
    # dip over 90: refused (exit 2, the InputError family) before the file is read
    assert main(["check", missing, "--value", "g", "--plane", "150/95"]) == EXIT_BAD_INPUT
    assert "between 0 and 90" in capsys.readouterr().err
    assert main(["check", missing, "--value", "g", "--major", "060/20",
                 "--minor", "150/70"]) == EXIT_BAD_INPUT
    assert "perpendicular" in capsys.readouterr().err
    assert main(["check", missing, "--value", "g"]) == EXIT_BAD_INPUT
    assert "--plane" in capsys.readouterr().err
    assert main(["check", missing, "--value", "g", "--major", "060/20",
                 "--pitch", "30"]) == EXIT_BAD_INPUT
    assert main(["check", missing, "--value", "g", "--plane", "150/70",
                 "--bootstrap", "0"]) == EXIT_BAD_INPUT
    assert "at least 20" in capsys.readouterr().err


def test_cli_check_options():
    from anisotropy.cli import DEFAULT_BOOTSTRAP, build_parser

    a = build_parser().parse_args(["check", "f.csv", "--value", "g", "--plane", "150/70",
                                   "--pitch", "35"])
    assert a.bootstrap == DEFAULT_BOOTSTRAP and a.confidence == 0.9 and a.out == "check"
    # the pitch stays text until the plane is known (it may carry a side, issue 17: "35E")
    assert a.plane == "150/70" and a.pitch == "35" and a.scheduler is None


def test_verdict_rule_truth_table():
    # the rule written in the module docstring, checked case by case (exhaustive over the
    # five inputs: 32 combinations against an independent restatement of the rule)
    from itertools import product

    from anisotropy.check import decide_verdict

    for outside, worse, placed, strong, close in product([False, True], repeat=5):
        got = decide_verdict(outside=outside, worse=worse, placed=placed, strong=strong,
                             close=close)
        if not outside and (close or not worse):
            want = "consistent"
        elif outside and (worse or (strong and not placed)):
            want = "contradicted"
        else:
            want = "uncertain"
        assert got == want, (outside, worse, placed, strong, close)
    # the case met on the demo vein: the true frame typed as axes, every axis within
    # 4 degrees, but a ratio share under 10 %: consistent, not uncertain
    assert decide_verdict(outside=False, worse=True, placed=True, strong=False,
                          close=True) == "consistent"



# ---------------------------------------------------------------------------
# strike/dip planes and side-marked pitches (issue 17)
# ---------------------------------------------------------------------------

def _rhr_vectors(strike, dip):
    """Strike and down-dip unit vectors written out with numpy (east, north, up).

    Right-hand rule: looking along the strike, the plane dips to the right, so
    the down-dip direction has azimuth strike + 90 (design.md, Conventions).
    """
    s, d = np.radians(strike), np.radians(dip)
    sv = np.array([np.sin(s), np.cos(s), 0.0])
    a = s + np.pi / 2
    dv = np.array([np.sin(a) * np.cos(d), np.cos(a) * np.cos(d), -np.sin(d)])
    return sv, dv


@pytest.mark.parametrize("strike,dip", [(60, 70), (0, 45), (275.5, 12), (350, 89), (180, 0)])
def test_strike_dip_gives_the_plane_of_its_dip_direction_dip(strike, dip):
    from anisotropy.check import parse_plane

    dd, dp = parse_plane(f"strike:{strike}/{dip}")
    # right-hand rule: dip direction = strike + 90
    assert dd == pytest.approx((strike + 90) % 360) and dp == dip
    assert parse_plane(f"{(strike + 90) % 360}/{dip}") == (dd, dp)
    assert parse_plane(f"dipdir:{(strike + 90) % 360}/{dip}") == (dd, dp)
    # independent pole: the cross product of the strike and down-dip vectors
    sv, dv = _rhr_vectors(strike, dip)
    pole = np.cross(sv, dv)
    a = Interpretation.from_plane(*parse_plane(f"STRIKE: {strike}/{dip}"))
    assert axis_angle(a.axes["minor"], pole) < 1e-9


@pytest.mark.parametrize("bad", ["060/70SE", "N60E/70", "strike:060", "strike 060/70",
                                 "s:060/70", "060/70/1"])
def test_other_plane_notations_are_refused_with_the_forms_read(bad):
    from anisotropy.check import parse_plane

    with pytest.raises(InterpretationError, match="strike:STRIKE/DIP"):
        parse_plane(bad)


@pytest.mark.parametrize("dd,dip,side,pitch,from_reverse", [
    (150, 70, "40E", 40, False),   # strike 060: its ENE end is the strike direction
    (150, 70, "40W", 40, True),    # the WSW end is the reverse strike
    (150, 70, "40NE", 40, False),
    (150, 70, "25SW", 25, True),
    (270, 60, "30S", 30, False),   # strike 180: the south end is the strike direction
    (270, 60, "30N", 30, True),
    (45, 30, "90E", 90, False),    # straight down-dip whichever end
    (45, 30, "0W", 0, False),      # strike 315: its end is the west-north-west one
    (45, 30, "0E", 0, True),
])
def test_side_marked_pitch_gives_the_same_major_axis(dd, dip, side, pitch, from_reverse):
    from anisotropy.check import parse_pitch
    from anisotropy.geometry import line_from_pitch

    p = parse_pitch(side, dd, dip)
    # independent vector: cos(p) along the named end of the strike line + sin(p) down-dip
    sv, dv = _rhr_vectors(dd - 90, dip)
    r = np.radians(pitch)
    expected = np.cos(r) * (-sv if from_reverse else sv) + np.sin(r) * dv
    a = Interpretation.from_plane(dd, dip, pitch=p)
    assert axis_angle(a.axes["major"], expected) < 1e-6
    # and the plain 0-180 pitch from the strike that means the same (geometry.line_from_pitch)
    plain = 180 - pitch if from_reverse else pitch
    assert p == pytest.approx(plain)
    assert axis_angle(line_from_pitch(dd, dip, plain), expected) < 1e-6


@pytest.mark.parametrize("dd,value,match", [
    (180, "40N", "names neither end"),    # strike 090 runs east-west: north is neither end
    (180, "40S", "names neither end"),
    (150, "100E", "over 90"),
    (150, "40X", "cannot read"),
    (150, "E40", "cannot read"),
    (150, "-40", "cannot read"),
])
def test_ambiguous_pitch_forms_are_refused(dd, value, match):
    from anisotropy.check import parse_pitch

    with pytest.raises(InterpretationError, match=match):
        parse_pitch(value, dd, 60)


def test_cli_reads_the_strike_form_and_side_pitch_like_the_default_form():
    import argparse

    from anisotropy.cli import _interpretation_from_args

    def interp(plane, pitch):
        return _interpretation_from_args(argparse.Namespace(plane=plane, pitch=pitch,
                                                            major=None, minor=None))

    a = interp("strike:060/70", "40W")
    b = interp("150/70", "140")
    np.testing.assert_allclose(a.frame, b.frame, atol=1e-12)
    assert a.pitch == pytest.approx(140.0)


def test_the_data_cannot_tell_between_a_rival_frame_and_the_reported_one():
    from anisotropy.check import candidate_frames, data_cannot_tell

    F = np.eye(3)
    F[:, 2] *= -1
    F[:, 1] *= -1  # right-handed, minor pointing down
    rival = {"rival": True, "axes": {"major": {"trend": 0.0, "plunge": 0.0},
                                     "semi_major": {"trend": 90.0, "plunge": 0.0},
                                     "minor": {"trend": 0.0, "plunge": 90.0}}}
    frames = candidate_frames(F, {"candidates": [{"rival": False}, rival]})
    assert len(frames) == 2       # the reported frame and the one rival
    # a rival of the coarser screening only (the record's nested "screening") counts too
    nested = candidate_frames(F, {"candidates": [{"rival": False}],
                                  "screening": {"candidates": [rival]}})
    assert len(nested) == 2 and np.allclose(nested[1], frames[1])
    resolved = {"verdict": "resolved"}
    east, north = np.array([1.0, 0, 0]), np.array([0, 1.0, 0])
    support = {"major": {"cone_deg": 5.0}}
    # the reported major runs east (column 0), the rival's north: an interpretation along
    # either is no evidence either way; one 45 degrees off both is judged as usual
    assert "cannot tell" in data_cannot_tell(frames, resolved, {"major": north}, support, 10.0)
    assert "cannot tell" in data_cannot_tell(frames, resolved, {"major": east}, support, 10.0)
    diag = np.array([1.0, 1.0, 0]) / np.sqrt(2)
    assert data_cannot_tell(frames, resolved, {"major": diag}, support, 10.0) == ""
    # without a rival, an interpretation along the reported frame is judged as usual
    assert data_cannot_tell(frames[:1], resolved, {"major": east}, support, 10.0) == ""
    # no spatial continuity at all: the data cannot judge any interpretation
    none = {"verdict": "none", "text": "no spatial continuity"}
    assert "no spatial continuity" in data_cannot_tell(frames, none, {"major": diag}, support,
                                                       10.0)
