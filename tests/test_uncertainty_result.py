"""Tests of anisotropy.uncertainty.result: BootstrapResult's cones, intervals and bands.

Outside references used below:
* scipy.stats.norm.ppf, scipy.special.expit and logit (Wald intervals)
* numpy.quantile (carried intervals)
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from scipy.spatial.transform import Rotation
from scipy.special import expit, logit
from scipy.stats import norm

from anisotropy import uncertainty as U
from anisotropy.fitting.information import ReportedInformation
from uncertainty_stand_ins import StandInVolume, reference, stand_in_refit, truth


def test_nugget_held_in_the_replicates_has_no_interval(rng):
    # the stand-in refit holds its nugget at 0.1 in every replicate (as the down-hole
    # nugget is held in the real chain's replicates)
    vol = StandInVolume((8, 8, 1), (10, 10, 10), rng, truth())
    res = U.block_bootstrap(vol, stand_in_refit, reference(vol), n_replicates=20, seed=3)
    assert np.all(res.nugget == 0.1)
    d = res.to_dict()
    assert d["nugget"] is None
    assert any("nugget is held fixed" in n for n in d["notes"])
    assert "nugget held fixed" in res.summary()


def test_confidence_interval_record_in_the_manner_of_scipy(rng):
    # reference: the same bands read one by one through interval() and axis_summary(),
    # whose percentile and BCa rules are held against numpy.quantile and
    # scipy.stats.bootstrap in the tests at the top of this module
    vol = StandInVolume((8, 8, 1), (10, 10, 10), rng, truth())
    res = U.block_bootstrap(vol, stand_in_refit, reference(vol), n_replicates=40, seed=4)
    ci = res.confidence_interval
    assert ci.names[:3] == ("major", "semi_major", "minor")
    assert ci.confidence_level == res.confidence
    for k, name in enumerate(ci.names):
        band = res.interval(name)
        if band is None:          # held fixed: NaN bounds and the reason kept
            assert np.isnan(ci.low[k]) and np.isnan(ci.high[k]) and name in ci.notes
            continue
        for got, want in zip((ci.low[k], ci.high[k]), band):
            assert (np.isnan(got) and want is None) or got == want
        if np.isfinite(ci.low[k]) and np.isfinite(ci.high[k]):
            assert ci.low[k] <= ci.estimate[k] <= ci.high[k]
    assert ci.notes["nugget"].startswith("the nugget is held fixed")
    for i, axis in enumerate(("major", "semi_major", "minor")):
        assert ci.cone_deg[axis] == res.axis_summary(i)["cone_deg"]
    frame = ci.to_frame()
    assert list(frame.index) == list(ci.names)
    assert ci.to_dict()["intervals"]["nugget"]["low"] is None


def test_information_cones_replace_the_replicates_unless_the_axes_are_exchanged(rng):
    # the rule of BootstrapResult.axis_summary: a cone from the likelihood's information,
    # where given, is the axis's cone; where the replicates exchange two axes in more than
    # 1 - confidence of them (the nearly isotropic plane above), those two keep the
    # replicates' cone, which reaches both modes; a rival frame still widens any cone
    R = Rotation.from_euler("z", 30, degrees=True).as_matrix()
    for T, exchanged in ((R @ np.diag([9.0, 4.0, 1.0]) @ R.T, False),
                         (R @ np.diag([4.1, 4.0, 1.0]) @ R.T, True)):
        vol = StandInVolume((8, 8, 1), (10, 10, 10), np.random.default_rng(9), T, noise=0.3)
        res = U.block_bootstrap(vol, stand_in_refit, reference(vol), n_replicates=60, seed=4)
        plain = [res.axis_summary(i) for i in range(3)]
        res.information = ReportedInformation({"major": 2.5, "semi_major": 3.5, "minor": 1.5})
        got = [res.axis_summary(i) for i in range(3)]
        assert [g["replicate_cone_deg"] for g in got] == [p["cone_deg"] for p in plain]
        assert got[2]["cone_deg"] == 1.5 and got[2]["cone_source"] == "likelihood information"
        for i in (0, 1):
            if exchanged:
                assert got[i]["cone_deg"] == plain[i]["cone_deg"]
                assert got[i]["cone_source"] == "replicates"
            else:
                assert got[i]["cone_deg"] == (2.5, 3.5)[i]
        # trend and plunge intervals then come from the frames drawn for the information
        # cone: draws all at the reference frame give a point interval (its own plunge)
        res.information = replace(res.information,
                                  axes=np.repeat(res.reference_frame[None], 50, axis=0))
        lo, hi = res.axis_summary(2)["plunge"]
        assert hi - lo < 1e-9
        assert res.axis_summary(2)["plunge"] != plain[2]["plunge"]
        # a rival frame 40 degrees away: the likelihood has two maxima, so its curvature
        # at one gives no cone; the replicates' cone holds the rival's axis and a cone as
        # wide around it (their sum, the triangle inequality on the sphere), at most 90
        res.rival_angles = {"major": 40.0}
        assert res.axis_summary(0)["cone_deg"] == min(90.0, 40.0 + plain[0]["cone_deg"])
        assert "40.0 degrees away" in res.axis_summary(0)["cone_note"]
        assert res.axis_summary(0)["cone_rival_deg"] == 40.0
        assert all(res.axis_summary(i)["cone_source"] == "replicates" for i in range(3))


def test_an_open_direction_gets_no_cone_narrower_than_its_floor(rng):
    # BootstrapResult.open_axes: the diagnosis calls the minor axis's direction open; its
    # cone becomes the floor (twice a 15-degree tolerance here) with a note, and its trend
    # and plunge intervals reach the cone's extents (cone_extents, tested against brute
    # force in test_uncertainty_axes); other axes, and a cone already wider, are unchanged
    from anisotropy.uncertainty.axes import cone_extents
    R = Rotation.from_euler("z", 30, degrees=True).as_matrix()
    vol = StandInVolume((8, 8, 1), (10, 10, 10), rng, R @ np.diag([9.0, 4.0, 1.0]) @ R.T,
                        noise=0.3)
    res = U.block_bootstrap(vol, stand_in_refit, reference(vol), n_replicates=60, seed=4)
    plain = [res.axis_summary(i) for i in range(3)]
    assert plain[2]["cone_deg"] < 30.0
    res.open_axes = {"minor": 30.0}
    got = [res.axis_summary(i) for i in range(3)]
    assert got[:2] == plain[:2]
    assert got[2]["cone_deg"] == 30.0 and got[2]["cone_source"] == "unresolved direction"
    assert got[2]["replicate_cone_deg"] == plain[2]["cone_deg"]
    assert "unresolved" in got[2]["cone_note"] and "cone_rival_deg" not in got[2]
    half, (plo, phi) = cone_extents(res.reference_frame[:, 2], 30.0)
    assert got[2]["plunge"][0] <= plo + 1e-9 and got[2]["plunge"][1] >= phi - 1e-9
    assert res.cone(2)[0] == 30.0          # what check_interpretation reads
    res.open_axes = {"minor": 0.5 * plain[2]["cone_deg"]}
    assert res.axis_summary(2) == plain[2]


def test_information_cone_kept_only_where_the_two_estimators_agree():
    # BootstrapResult.gap_check: the angle between the likelihood's axis and the variogram
    # fit's may reach sqrt(replicate cone^2 - information cone^2) (Hausman 1978: the
    # difference of an efficient and a consistent estimator has the variance of the
    # consistent one less the efficient one's), computed here by hand with NumPy
    R = Rotation.from_euler("z", 30, degrees=True).as_matrix()
    vol = StandInVolume((8, 8, 1), (10, 10, 10), np.random.default_rng(9),
                        R @ np.diag([9.0, 4.0, 1.0]) @ R.T, noise=0.3)
    res = U.block_bootstrap(vol, stand_in_refit, reference(vol), n_replicates=60, seed=4)
    rep = [res.axis_summary(i)["cone_deg"] for i in range(3)]
    info = {"major": 0.5 * rep[0], "semi_major": 0.5 * rep[1], "minor": 2.0 * rep[2]}
    res.information = ReportedInformation(info)
    allowed = [np.sqrt(rep[i] ** 2 - info[a] ** 2) if rep[i] > info[a] else 0.0
               for i, a in enumerate(("major", "semi_major", "minor"))]
    # the major's gap just inside what is allowed, the semi-major's just beyond it, the
    # minor's information cone wider than the replicates' (nothing allowed)
    res.variogram_gap = {"major": 0.99 * allowed[0], "semi_major": 1.01 * allowed[1],
                         "minor": 1.0}
    got = [res.axis_summary(i) for i in range(3)]
    assert got[0]["cone_deg"] == info["major"]
    assert got[0]["cone_source"] == "likelihood information"
    assert got[1]["cone_deg"] == rep[1] and got[1]["cone_source"] == "replicates"
    # beyond the allowed gap the cone is the wider of the two: here the information's
    assert got[2]["cone_deg"] == info["minor"]
    for g, a, within in zip(got, allowed, (True, False, False)):
        assert g["variogram_gap"]["allowed_deg"] == pytest.approx(a, rel=1e-12)
        assert g["variogram_gap"]["within"] is within
    # without a comparison the information's cone is kept, as before
    res.variogram_gap = None
    assert [res.axis_summary(i)["cone_deg"] for i in range(3)] == list(info.values())
    assert "variogram_gap" not in res.axis_summary(0)


def test_range_interval_stays_the_replicates_where_the_cone_is_the_informations(rng):
    # the cones may come from the likelihood's information, but the range intervals are
    # the replicates' (calibrated) on every layout: here the percentile interval of the
    # replicates' ranges (numpy.quantile by hand) widened by the range calibration on
    # the log scale about the estimate
    R = Rotation.from_euler("z", 30, degrees=True).as_matrix()
    vol = StandInVolume((8, 8, 1), (10, 10, 10), np.random.default_rng(9),
                         R @ np.diag([9.0, 4.0, 1.0]) @ R.T, noise=0.3)
    res = U.block_bootstrap(vol, stand_in_refit, reference(vol), n_replicates=60, seed=4,
                            range_calibration=1.25)
    res.distances = None     # no longest lag: bounds are kept as they are (tested elsewhere)
    res.interval_method = "percentile"
    plain = [res.axis_summary(i) for i in range(3)]
    res.information = ReportedInformation({"major": 2.5, "semi_major": 3.5, "minor": 1.5})
    for i in range(3):
        got = res.axis_summary(i)
        assert got["cone_source"] == "likelihood information"
        assert got["range"] == plain[i]["range"]
        est = res.reference_ranges[i]
        lo, hi = np.quantile(res.ranges[:, i], [0.05, 0.95])
        want = [est * (lo / est) ** 1.25, est * (hi / est) ** 1.25]
        want = [min(want[0], est), max(want[1], est)]        # it holds the estimate
        np.testing.assert_allclose(got["range"], want)


def test_nugget_and_sill_intervals_are_wald_intervals_of_their_shares_where_given(rng):
    # where the likelihood's information gives the standard deviation of a share's logit,
    # the interval is total * expit(logit(share) +- z sd), z the normal quantile (SciPy's
    # norm.ppf, expit and logit); the total sill keeps the replicates' interval
    from scipy.special import expit, logit
    from scipy.stats import norm

    vol = StandInVolume((8, 8, 1), (10, 10, 10), np.random.default_rng(9), truth(), noise=0.3)
    res = U.block_bootstrap(vol, stand_in_refit, reference(vol), n_replicates=40, seed=4)
    plain = res.to_dict()
    assert plain["nugget"] is None and plain["share_interval"] == "replicates"   # held
    res.information = ReportedInformation({}, logit_share_sd={"nugget": 0.4, "sill0": 0.4})
    z = norm.ppf(0.5 + 0.5 * res.confidence)
    got = res.to_dict()
    for band, share in ((got["nugget"], 0.1), (got["sills"][0], 0.9)):
        np.testing.assert_allclose(band, [expit(logit(share) - z * 0.4),
                                          expit(logit(share) + z * 0.4)])
        assert band[0] < share < band[1]
    assert got["total_sill"] == plain["total_sill"]
    assert got["share_interval"].startswith("likelihood information (Wald, logit scale")
    np.testing.assert_allclose(res.interval("nugget"), got["nugget"])
    ci = res.confidence_interval
    k = ci.names.index("sill0")
    np.testing.assert_allclose([ci.low[k], ci.high[k]], got["sills"][0])
    assert "nugget" not in ci.notes and "sill0" not in ci.notes


def test_a_recentred_bootstrap_carries_its_intervals_and_bands_to_thereference(rng):
    # the reference from another estimator (here: the stand-in's ranges scaled by 1.4):
    # the range intervals and the model bands are the replicates' percentiles times the
    # reference over the replicates' median (carried_interval above; NumPy by hand)
    R = Rotation.from_euler("z", 30, degrees=True).as_matrix()
    vol = StandInVolume((8, 8, 1), (10, 10, 10), np.random.default_rng(9),
                         R @ np.diag([9.0, 4.0, 1.0]) @ R.T, noise=0.3)
    ref = reference(vol)
    res = U.block_bootstrap(vol, stand_in_refit, ref, n_replicates=60, seed=4,
                            range_calibration=1.0)
    res.distances = None
    res.recentred = True
    for i in range(3):
        est = res.reference_ranges[i]
        r = res.ranges[:, i]
        lo, hi = np.quantile(r, [0.05, 0.95])
        np.testing.assert_allclose(res.axis_summary(i)["range"],
                                   [est * lo / np.median(r), est * hi / np.median(r)])
    u = res.reference_frame[:, 0]
    d = np.array([5.0, 20.0, 60.0])
    band = res.variogram_bands(u[None], d)
    curves = np.array([m.variogram_along(u, d) for m in res.models])
    k = band["model"][0] / np.median(curves, axis=0)
    np.testing.assert_allclose(band["lo"][0], np.quantile(curves, 0.05, axis=0) * k)
    np.testing.assert_allclose(band["hi"][0], np.quantile(curves, 0.95, axis=0) * k)
    assert res.to_dict()["recentred"] is True


def test_a_rival_nugget_widens_the_band_to_hold_it_with_the_replicates_spread(rng):
    # two estimates of the nugget (the held down-hole one and the likelihood's): the band
    # joins the replicates' interval with their spread carried to the second (NumPy
    # quantiles times 0.25 over their median, by hand), and with one structure the sill's
    # band with that carried to the total less it (1.0 - 0.25); one that adds nothing
    # leaves the band and the notes as they were
    vol = StandInVolume((8, 8, 1), (10, 10, 10), np.random.default_rng(9), truth(), noise=0.3)
    res = U.block_bootstrap(vol, stand_in_refit, reference(vol), n_replicates=40, seed=4)
    res.nugget = 0.1 + 0.01 * rng.standard_normal(res.n_replicates)
    res.sills = (1.0 - res.nugget)[:, None]
    plain = res.to_dict()
    assert plain["nugget"][1] < 0.25 and plain["sills"][0][0] > 0.75
    res.rival_nugget = (0.25, "the likelihood's nugget")
    got = res.to_dict()
    q = np.quantile(res.nugget, [0.05, 0.95])
    np.testing.assert_allclose(got["nugget"],
                               [plain["nugget"][0], 0.25 * q[1] / np.median(res.nugget)])
    qs = np.quantile(res.sills[:, 0], [0.05, 0.95])
    np.testing.assert_allclose(got["sills"][0],
                               [0.75 * qs[0] / np.median(res.sills[:, 0]), plain["sills"][0][1]])
    assert any("widened to hold the likelihood's nugget (0.25) too" in n for n in got["notes"])
    assert res.confidence_interval.notes["nugget"].startswith("the nugget interval is widened")
    res.rival_nugget = (float(np.median(res.nugget)), "the likelihood's nugget")
    assert res.to_dict()["nugget"] == plain["nugget"]
    assert res.to_dict()["notes"] == plain["notes"]       # the total sill's note only
    # the rival's own spread from the likelihood's information: its Wald interval on the
    # logit scale of the share, times the total sill (scipy.special.logit, expit and
    # scipy.stats.norm.ppf), joins the band too; the sill's band is left as it was
    res.rival_nugget = (0.25, "the likelihood's nugget")
    res.information = ReportedInformation({}, likelihood_logit_share_sd={"nugget": 1.0,
                                                                         "sill0": 1.0})
    tot = float(res.reference.total_sill)
    z = norm.ppf(0.95)
    wald = tot * expit(logit(0.25 / tot) + np.array([-z, z]) * 1.0)
    both = res.to_dict()
    np.testing.assert_allclose(both["nugget"], [min(plain["nugget"][0], wald[0]),
                                                max(got["nugget"][1], wald[1])])
    assert wald[0] < plain["nugget"][0] and wald[1] > got["nugget"][1]
    assert both["sills"] == got["sills"]
