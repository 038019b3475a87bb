"""Tests of anisotropy.uncertainty.replicates: the block and model-based bootstrap runs.

Outside references: exact repeatability (same seed, any number of
processes), the shrinking of bands with more data (a consequence of the
bootstrap's consistency, Lahiri 2003, ch. 12), and the real pair engine and
joint fit on simulated fields (slow).
"""

from __future__ import annotations


import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from anisotropy import uncertainty as U
from anisotropy.errors import InputError
from uncertainty_stand_ins import (DIRECTIONS, StandInVolume, reference, stand_in_refit,
                                   truth)


def test_same_seed_same_bands_any_n_jobs(rng):
    vol = StandInVolume((8, 8, 1), (10, 10, 10), rng, truth())
    ref = reference(vol)
    a = U.block_bootstrap(vol, stand_in_refit, ref, n_replicates=40, seed=11, n_jobs=1,
                          min_blocks=25)
    b = U.block_bootstrap(vol, stand_in_refit, ref, n_replicates=40, seed=11, n_jobs=2,
                          min_blocks=25)
    c = U.block_bootstrap(vol, stand_in_refit, ref, n_replicates=40, seed=12, n_jobs=1,
                          min_blocks=25)
    da, db, dc = a.to_dict(), b.to_dict(), c.to_dict()
    for d in (da, db, dc):
        d.pop("seconds")
    assert da == db
    assert da != dc
    assert np.array_equal(a.counts, b.counts)


@pytest.mark.slow
def test_dask_scheduler_gives_the_same_bands(rng):
    distributed = pytest.importorskip("distributed")
    vol = StandInVolume((8, 8, 1), (10, 10, 10), rng, truth())
    ref = reference(vol)
    a = U.block_bootstrap(vol, stand_in_refit, ref, n_replicates=20, seed=11)
    with distributed.Client(processes=False, n_workers=1, threads_per_worker=2,
                            dashboard_address=None) as client:
        b = U.block_bootstrap(vol, stand_in_refit, ref, n_replicates=20, seed=11,
                              scheduler=client)
    da, db = a.to_dict(), b.to_dict()
    da.pop("seconds"), db.pop("seconds")
    assert da == db


def test_bands_shrink_with_more_blocks():
    # 4x more blocks of the same signal: the sampling spread of the stand-in
    # estimate falls roughly as 1/sqrt(blocks) (exact for a mean of iid blocks)
    cones = []
    for shape in ((6, 6, 1), (12, 12, 1)):
        vol = StandInVolume(shape, (10, 10, 10), np.random.default_rng(5), truth())
        res = U.block_bootstrap(vol, stand_in_refit, reference(vol), n_replicates=100,
                                seed=1, min_blocks=25)
        cones.append(res.to_dict()["major"]["cone_deg"])
    assert cones[1] < 0.8 * cones[0]


def test_result_schema_and_json(rng):
    import json

    vol = StandInVolume((8, 8, 1), (10, 10, 10), rng, truth())
    ref = reference(vol)
    res = U.block_bootstrap(vol, stand_in_refit, ref, n_replicates=30, seed=2)
    d = json.loads(json.dumps(res.to_dict()))  # plain types only
    assert d["method"] == "block_bootstrap" and d["replicates"] == 30
    assert d["confidence"] == 0.9
    ranges = res.reference_ranges
    for i, name in enumerate(("major", "semi_major", "minor")):
        assert set(d[name]) >= {"cone_deg", "trend", "plunge", "range"}
        lo, hi = d[name]["range"]
        # every interval holds its estimate; a bound beyond the longest lag is None
        if lo is not None and hi is not None:
            assert lo <= ranges[i] <= hi
        else:
            assert "longest lag" in d[name]["range_note"]
            assert ranges[i] > res.longest_lag or hi is None
    assert len(d["sills"]) == 1
    assert d["nugget"] is None or d["nugget"][0] <= ref.nugget <= d["nugget"][1]
    assert 0.0 <= d["swap_rate"]["major_semi_major"] <= 1.0
    bands = res.variogram_bands(np.eye(3), np.linspace(0, 200, 11))
    assert bands["lo"].shape == (3, 11)
    assert np.all(bands["lo"] <= bands["hi"] + 1e-12)
    eb = res.experimental_bands()
    assert eb["lo"].shape == (3, len(DIRECTIONS))
    assert "blocks" in res.summary()


def test_swap_rate_on_nearly_isotropic_plane(rng):
    # major and semi-major ranges nearly equal: their order flips between
    # replicates, while a clearly elongated plane keeps it
    R = Rotation.from_euler("z", 30, degrees=True).as_matrix()
    flat = R @ np.diag([4.1, 4.0, 1.0]) @ R.T
    long = R @ np.diag([9.0, 4.0, 1.0]) @ R.T
    rates = []
    for T in (flat, long):
        vol = StandInVolume((8, 8, 1), (10, 10, 10), np.random.default_rng(9), T, noise=0.3)
        res = U.block_bootstrap(vol, stand_in_refit, reference(vol), n_replicates=60, seed=4)
        rates.append(res.swap_rate)
    assert rates[0] > 0.2
    assert rates[1] < 0.05


def test_failed_refits_are_counted(rng):
    vol = StandInVolume((8, 8, 1), (10, 10, 10), rng, truth())
    ref = reference(vol)
    calls = {"n": 0}

    def flaky(sums, *, fixed_frame=None, start=None, block_weights=None):
        calls["n"] += 1
        if calls["n"] % 5 == 0:
            raise RuntimeError("did not converge")
        return stand_in_refit(sums, fixed_frame=fixed_frame, start=start)

    res = U.block_bootstrap(vol, flaky, ref, n_replicates=20, seed=0)
    assert res.n_failed == 4 and res.n_replicates == 16
    d = res.to_dict()
    assert d["failed"] == 4 and any("failed" in w for w in d["warnings"])


def test_unknown_estimator_is_refused_before_any_replicate(rng):
    # an estimator name that is not one of anisotropy.estimators.ESTIMATORS must raise,
    # not give semivariogram bands with no error recorded
    vol = StandInVolume((8, 8, 1), (10, 10, 10), rng, truth())
    ref = reference(vol)
    calls = {"n": 0}

    def counting(sums, *, fixed_frame=None, start=None, block_weights=None):
        calls["n"] += 1
        return stand_in_refit(sums, fixed_frame=fixed_frame, start=start)

    with pytest.raises(InputError, match="unknown estimator 'semivariance'"):
        U.block_bootstrap(vol, counting, ref, n_replicates=10, seed=0, estimator="semivariance")
    assert calls["n"] == 0
    with pytest.raises(InputError, match="interval"):
        U.block_bootstrap(vol, counting, ref, n_replicates=10, seed=0, interval="student")
    assert calls["n"] == 0


def test_a_bug_in_the_refit_is_not_counted_as_a_failed_replicate(rng):
    # only the errors a fit states (FitError, non-convergence, numerical breakdown) are
    # counted as failed replicates; a programming error stops the run
    vol = StandInVolume((8, 8, 1), (10, 10, 10), rng, truth())
    ref = reference(vol)

    def buggy(sums, *, fixed_frame=None, start=None, block_weights=None):
        return sums[None][7, 7, 7]  # IndexError

    with pytest.raises(IndexError):
        U.block_bootstrap(vol, buggy, ref, n_replicates=6, seed=0)



def _lean_chain(n, ranges, seed=1, box=(300.0, 300.0, 120.0), angles=(60.0, 20.0, 10.0)):
    """Simulated field -> pair engine volume -> joint fit; returns (volume, refit, model, truth)."""
    from anisotropy.fitting import bins_from_sums, fit_nested
    from anisotropy.geometry import fan_for_spacing, frame_from_angles
    from anisotropy.models import NestedModel, Structure
    from anisotropy.pairs import build_volume
    from anisotropy.simulate import simulate_field

    rng = np.random.default_rng(seed)
    coords = rng.uniform(0, box, size=(n, 3))
    truth = NestedModel(nugget=0.1, structures=[Structure("spherical", 0.9, ranges)],
                        frame=frame_from_angles(*angles))
    v = simulate_field(coords, truth, seed=seed + 100)
    vol = build_volume(coords, v, lag=10.0, n_lags=12, coarse_directions=fan_for_spacing(20.0),
                       blocks=U.engine_block_side(coords), progress=False, map_cell=False)
    total = float(np.var(v))

    def refit(sums, *, fixed_frame=None, start=None, block_weights=None):
        f = fit_nested(bins_from_sums(sums, min_pairs=10), start, fixed_frame=fixed_frame,
                       total_sill=total, max_nfev=200)
        m = f.model
        r = np.asarray(m.structures[0].ranges)
        o = np.argsort(-r, kind="stable")
        F = np.asarray(m.frame)[:, o]
        if np.linalg.det(F) < 0:
            F[:, 2] *= -1
        return NestedModel(nugget=m.nugget, structures=[
            Structure(s.kind, s.sill, tuple(np.asarray(s.ranges)[o])) for s in m.structures],
            frame=F), float(f.objective)

    start = NestedModel(nugget=0.3, structures=[Structure("spherical", 0.7, (90.0, 80.0, 70.0))],
                        frame=np.eye(3))
    model, _ = refit(vol.coarse_sums(), start=start)
    return coords, vol, refit, model, truth


@pytest.mark.slow
def test_bands_shrink_as_data_grow_real_chain():
    # the same scenario at 500 and 2000 samples in the same box: the sampling
    # spread of every estimate falls with more data (Efron & Tibshirani 1993,
    # ch. 2: the bootstrap standard error tracks the sampling error)
    out = []
    for n in (500, 2000):
        _, vol, refit, model, _ = _lean_chain(n, (150.0, 80.0, 40.0))
        res = U.block_bootstrap(vol, refit, model, n_replicates=30, seed=0)
        d = res.to_dict()
        # the replicates' own spread of the major range (the reported interval may be
        # unbounded when it reaches past the longest lag)
        lo, hi = np.percentile(np.log(res.ranges[:, 0]), [5, 95])
        out.append((d["major"]["cone_deg"], d["minor"]["cone_deg"], hi - lo))
    small, large = out
    assert large[0] < small[0] and large[1] < small[1] and large[2] < small[2], out


@pytest.mark.slow
def test_same_seed_same_bands_real_chain():
    _, vol, refit, model, _ = _lean_chain(600, (150.0, 80.0, 40.0))
    a = U.block_bootstrap(vol, refit, model, n_replicates=12, seed=5, n_jobs=1).to_dict()
    b = U.block_bootstrap(vol, refit, model, n_replicates=12, seed=5, n_jobs=2).to_dict()
    a.pop("seconds"), b.pop("seconds")
    assert a == b


@pytest.mark.slow
def test_swap_detected_on_nearly_isotropic_plane_real_chain():
    # major = semi-major = 100 m: the in-plane order is not resolved, so the
    # replicates' longest axis often lands on the reported semi-major axis;
    # 150 vs 60 m is resolved
    rates = []
    for ranges in ((100.0, 100.0, 30.0), (150.0, 60.0, 30.0)):
        _, vol, refit, model, _ = _lean_chain(1200, ranges)
        rates.append(U.block_bootstrap(vol, refit, model, n_replicates=30, seed=0).swap_rate)
    # (measured: about 0.17 against 0.0 for this seed; the warm-started block
    # bootstrap swaps less often than a fresh sample would, see RESULTS.md)
    assert rates[0] >= 0.1 and rates[0] > rates[1] + 0.1 and rates[1] < 0.05, rates


@pytest.mark.slow
def test_model_bootstrap_runs_and_is_seeded():
    coords, vol, refit, model, _ = _lean_chain(400, (150.0, 80.0, 40.0))
    a = U.model_bootstrap(coords, model, refit, volume=vol, n_replicates=8, seed=3)
    b = U.model_bootstrap(coords, model, refit, volume=vol, n_replicates=8, seed=3)
    da, db = a.to_dict(), b.to_dict()
    da.pop("seconds"), db.pop("seconds")
    assert da == db and da["method"] == "model_bootstrap"
    assert a.n_replicates + a.n_failed == 8 and a.n_replicates >= 6
    lo, hi = da["major"]["range"]
    est = a.reference_ranges[0]
    assert (lo is None or lo <= est) and (hi is None or est <= hi)
