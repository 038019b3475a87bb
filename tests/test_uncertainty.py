"""Tests of anisotropy.uncertainty: intervals, axis statistics, block resampling.

Outside references used below:
* scipy.stats.bootstrap (percentile and BCa, Efron & Tibshirani 1993, ch. 13-14)
* numpy.quantile
* exact brute force (all 6 axis permutations; a dense direction grid for the
  orientation-tensor mean, which maximises sum cos^2: Fisher, Lewis &
  Embleton 1987, sec. 3.2 - recalled from memory)
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, replace

import numpy as np
import pytest
from scipy import stats
from scipy.spatial.transform import Rotation

from anisotropy import uncertainty as U
from anisotropy.errors import InputError, InsufficientDataError
from anisotropy.fitting.information import ReportedInformation
from anisotropy.geometry import fibonacci_hemisphere, line_to_vector


# ---------------------------------------------------------------------------
# intervals
# ---------------------------------------------------------------------------

def test_percentile_matches_numpy_quantile(rng):
    r = rng.gamma(2.0, 1.0, size=999)
    lo, hi = U.percentile_interval(r, 0.9)
    # numpy.quantile (linear) at 5 % and 95 %
    assert lo == pytest.approx(np.quantile(r, 0.05))
    assert hi == pytest.approx(np.quantile(r, 0.95))


def test_percentile_matches_scipy_bootstrap(rng):
    x = rng.lognormal(size=40)
    res = stats.bootstrap((x,), np.mean, n_resamples=2000, method="percentile",
                          confidence_level=0.9, rng=np.random.default_rng(1))
    lo, hi = U.percentile_interval(res.bootstrap_distribution, 0.9)
    # scipy.stats.bootstrap(method="percentile") on the same resamples
    assert lo == pytest.approx(res.confidence_interval.low, rel=1e-12)
    assert hi == pytest.approx(res.confidence_interval.high, rel=1e-12)


@pytest.mark.parametrize("stat", [np.mean, lambda x, axis=-1: np.var(x, axis=axis, ddof=1)])
def test_bca_matches_scipy_on_same_resamples(rng, stat):
    x = rng.lognormal(sigma=0.8, size=35)
    res = stats.bootstrap((x,), stat, n_resamples=3000, method="BCa",
                          confidence_level=0.9, rng=np.random.default_rng(7))
    jack = np.array([stat(np.delete(x, i)) for i in range(len(x))])
    acc = U.jackknife_acceleration(jack)
    lo, hi = U.bca_interval(res.bootstrap_distribution, stat(x), 0.9, acceleration=acc)
    # scipy.stats.bootstrap(method="BCa"), same bootstrap distribution and the
    # delete-one jackknife of Efron & Tibshirani (1993) eq. 14.15
    assert lo == pytest.approx(res.confidence_interval.low, rel=1e-9)
    assert hi == pytest.approx(res.confidence_interval.high, rel=1e-9)


def test_influence_acceleration_equals_jackknife_for_the_mean(rng):
    # For the mean the statistic is exactly linear in the resampling counts,
    # so the regression recovers influence values proportional to x_i - mean,
    # as are the jackknife differences (Davison & Hinkley 1997, sec. 2.7.4;
    # Efron & Tibshirani 1993, eq. 14.15): same acceleration.
    x = rng.lognormal(sigma=1.0, size=20)
    counts = rng.multinomial(20, np.full(20, 1 / 20), size=400)
    reps = counts @ x / 20.0
    jack = np.array([np.delete(x, i).mean() for i in range(20)])
    assert U.influence_acceleration(reps, counts) == pytest.approx(
        float(U.jackknife_acceleration(jack)), rel=1e-8)
    # too few replicates per unit: no acceleration (documented fallback)
    assert U.influence_acceleration(reps[:30], counts[:30]) == 0.0


def test_bca_degenerate_returns_nan():
    # every replicate above the estimate: z0 infinite (Efron & Tibshirani 1993, 14.3)
    lo, hi = U.bca_interval(np.arange(1.0, 11.0), 0.0, 0.9)
    assert np.isnan(lo) and np.isnan(hi)


def test_confidence_validated():
    with pytest.raises(InputError):
        U.percentile_interval([1.0, 2.0], 1.5)


# ---------------------------------------------------------------------------
# axes
# ---------------------------------------------------------------------------

def _scatter_axes(rng, centre, sd_deg, n):
    """Axes scattered around a centre (random small rotations), random signs."""
    rv = rng.normal(scale=np.radians(sd_deg), size=(n, 3))
    v = Rotation.from_rotvec(rv).apply(centre)
    return v * rng.choice([-1.0, 1.0], size=(n, 1))


def test_mean_axis_maximises_sum_cos2_brute_force(rng):
    centre = line_to_vector(40.0, 30.0)
    axes = _scatter_axes(rng, centre, 12.0, 200)
    m, ev = U.mean_axis(axes)
    grid = fibonacci_hemisphere(40000)
    score = ((grid @ axes.T) ** 2).sum(axis=1)
    best = grid[np.argmax(score)]
    # exact brute force over a dense grid (~0.7 deg spacing)
    assert np.degrees(np.arccos(min(1.0, abs(best @ m)))) < 1.0
    assert m[2] <= 0  # lower hemisphere
    assert ev.sum() == pytest.approx(1.0)
    # eigenvalues against numpy.linalg.eigvalsh of the tensor built by hand
    T = sum(np.outer(a, a) for a in axes / np.linalg.norm(axes, axis=1)[:, None]) / len(axes)
    assert np.allclose(np.sort(ev), np.linalg.eigvalsh(T))


def test_axis_cone_brute_force(rng):
    ref = line_to_vector(200.0, 10.0)
    axes = _scatter_axes(rng, ref, 8.0, 301)
    _, cone = U.axis_cone(axes, ref, 0.9)
    ang = [np.degrees(np.arccos(min(1.0, abs(float(a @ ref)) / np.linalg.norm(a))))
           for a in axes]
    # brute-force angles, numpy.quantile
    assert cone == pytest.approx(np.quantile(ang, 0.9), abs=1e-6)
    inside = np.mean(np.array(ang) <= cone + 1e-9)
    assert 0.89 <= inside <= 0.91


def _random_frame(rng):
    return Rotation.random(random_state=rng.integers(1 << 31)).as_matrix()


def test_match_frame_against_all_permutations(rng):
    for _ in range(50):
        ref = _random_frame(rng)
        fr = _random_frame(rng)
        matched, perm = U.match_frame(ref, fr)
        best = max(itertools.permutations(range(3)),
                   key=lambda p: sum(abs(ref[:, i] @ fr[:, p[i]]) for i in range(3)))
        # exact brute force over the 6 permutations
        assert tuple(perm) == best
        assert np.all(np.sum(matched * ref, axis=0) >= 0)
        assert np.allclose(np.abs(matched), np.abs(fr[:, list(best)]))


def test_match_frame_recovers_swapped_axes(rng):
    ref = _random_frame(rng)
    small = Rotation.from_rotvec([0.02, -0.01, 0.03]).as_matrix()
    fr = (small @ ref)[:, [1, 0, 2]] * np.array([1.0, -1.0, 1.0])
    matched, perm = U.match_frame(ref, fr)
    assert list(perm) == [1, 0, 2]
    assert np.allclose(matched, small @ ref, atol=1e-12)


def test_trend_interval_wraps_through_north(rng):
    ref = line_to_vector(358.0, 20.0)
    axes = _scatter_axes(rng, ref, 4.0, 400)
    trend, plunge, note = U.trend_plunge_intervals(axes, ref, 0.9)
    assert note is None
    lo, hi = trend
    assert lo > hi  # read clockwise from lo to hi through north
    # brute force: signed trend differences from 358, numpy.quantile
    a = axes * np.sign(axes @ ref)[:, None]
    t = np.degrees(np.arctan2(a[:, 0], a[:, 1]))
    d = (t - 358.0 + 180) % 360 - 180
    assert lo == pytest.approx((358.0 + np.quantile(d, 0.05)) % 360, abs=1e-6)
    assert hi == pytest.approx((358.0 + np.quantile(d, 0.95)) % 360, abs=1e-6)
    assert 0 <= plunge[0] < 20 < plunge[1] <= 90


def test_horizontal_axis_keeps_its_trend(rng):
    # replicates tipping slightly up must not jump 180 degrees in trend
    ref = line_to_vector(90.0, 0.0)
    axes = _scatter_axes(rng, ref, 3.0, 300)
    trend, plunge, _ = U.trend_plunge_intervals(axes, ref, 0.9)
    assert 80 < trend[0] < 90 < trend[1] < 100
    assert plunge[0] >= 0 and plunge[1] < 10


def test_vertical_axis_has_no_trend(rng):
    ref = line_to_vector(0.0, 88.0)
    axes = _scatter_axes(rng, ref, 5.0, 200)
    trend, plunge, note = U.trend_plunge_intervals(axes, ref, 0.9)
    assert trend is None and "undefined" in note
    assert plunge[1] <= 90


# ---------------------------------------------------------------------------
# block resampling with a stand-in volume and a stand-in refit
# ---------------------------------------------------------------------------

@dataclass
class _Structure:
    kind: str
    sill: float
    ranges: tuple
    frame: object = None


class _StandInModel:
    """Just enough of models.NestedModel: one spherical structure in a frame."""

    def __init__(self, nugget, sill, ranges, frame):
        self.nugget = float(nugget)
        self.structures = [_Structure("spherical", float(sill), tuple(map(float, ranges)))]
        self.frame = np.asarray(frame, dtype=float)

    @property
    def total_sill(self):
        return self.nugget + sum(s.sill for s in self.structures)

    def _scale(self, u):
        u = np.asarray(u, dtype=float)
        return np.linalg.norm((self.frame.T @ (u / np.linalg.norm(u))) /
                              np.asarray(self.structures[0].ranges))

    def range_along(self, u):
        return 1.0 / self._scale(u)

    def variogram_along(self, u, d):
        h = np.minimum(np.asarray(d, dtype=float) * self._scale(u), 1.0)
        return self.nugget + self.structures[0].sill * (1.5 * h - 0.5 * h ** 3)


_DIRS = fibonacci_hemisphere(12)


class _StandInVolume:
    """A LagVolume-like object: per-block sums of a noisy directional signal."""

    def __init__(self, shape, size, rng, true_tensor, noise=0.5):
        self.block_shape = tuple(shape)
        self.block_size = np.asarray(size, dtype=float)
        self.block_origin = np.zeros(3)
        nb = int(np.prod(shape))
        self.lag, self.n_lags = 10.0, 2
        self.coarse_directions = _DIRS
        sig = np.einsum("ji,ik,jk->j", _DIRS, true_tensor, _DIRS)
        bs = np.zeros((nb, 3, len(_DIRS), 15))
        cnt = rng.integers(5, 15, size=(nb, len(_DIRS)))
        bs[:, 1, :, 0] = cnt
        bs[:, 1, :, 2] = cnt * sig * (1 + noise * rng.standard_normal((nb, len(_DIRS))))
        self.block_sums = bs
        self.block_of_sample = np.arange(nb)

    def coarse_sums(self, block_weights=None):
        w = np.ones(len(self.block_sums)) if block_weights is None else block_weights
        return np.tensordot(w, self.block_sums, axes=(0, 0))


def _stand_in_refit(sums, *, fixed_frame=None, start=None):
    """Frame from a least-squares tensor through the directional mean squares."""
    g = sums[1, :, 2] / sums[1, :, 0]
    A = np.stack([np.outer(d, d)[np.triu_indices(3)] for d in _DIRS])
    coef, *_ = np.linalg.lstsq(A, g, rcond=None)
    T = np.zeros((3, 3))
    T[np.triu_indices(3)] = coef
    T = (T + T.T) - np.diag(np.diag(T))
    w, v = np.linalg.eigh(T)
    order = np.argsort(w)[::-1]
    v = v[:, order]
    if np.linalg.det(v) < 0:
        v[:, 2] *= -1
    frame = fixed_frame if fixed_frame is not None else v
    ranges = 100.0 * np.sqrt(np.maximum(np.diag(frame.T @ T @ frame), 1e-6))
    resid = g - A @ coef
    return _StandInModel(0.1, 0.9, ranges, frame), float(resid @ resid)


def _truth():
    R = Rotation.from_euler("zyx", [30, 20, 10], degrees=True).as_matrix()
    return R @ np.diag([9.0, 4.0, 1.0]) @ R.T


def test_resample_weights_are_multinomial_and_seeded():
    w1 = U.resample_weights(30, 50, seed=3)
    w2 = U.resample_weights(30, 50, seed=3)
    assert np.array_equal(w1, w2)
    assert np.all(w1.sum(axis=1) == 30)
    # same draws as numpy's multinomial from the same generator
    ref = np.random.default_rng(3).multinomial(30, np.full(30, 1 / 30), size=50)
    assert np.array_equal(w1, ref)


def test_reweighted_sums_equal_explicit_loop(rng):
    vol = _StandInVolume((3, 3, 2), (10, 10, 10), rng, _truth())
    w = rng.integers(0, 3, size=len(vol.block_sums)).astype(float)
    explicit = sum(w[b] * vol.block_sums[b] for b in range(len(w)))
    # exact brute force
    assert np.allclose(U.reweighted_sums(vol.block_sums, w), explicit)


def test_block_grouping_rule(rng):
    vol = _StandInVolume((12, 12, 1), (10, 10, 10), rng, _truth())
    g = U.choose_block_grouping(vol, major_range=45.0, min_blocks=25)
    # side may not exceed 45 m and at least 25 occupied blocks remain:
    # factor 4 gives 40 m and 3 x 3 = 9 blocks (too few); factor 2 gives
    # 6 x 6 = 36 blocks at 20 m; factor 3 gives 4 x 4 = 16 (too few).
    assert g.factor[:2] == (2, 2) and g.n_groups == 36
    # brute force: every engine block in exactly one group
    idx = np.unravel_index(np.arange(144), (12, 12, 1))
    expected = (idx[0] // 2) * 6 + idx[1] // 2
    assert np.array_equal(g.group_of_block, expected)
    # no range cap, 9 blocks wanted: factors 4 and 5 both leave ceil(12/f)^2 = 9
    # blocks, 6 leaves 4; the rule takes the largest, 5
    g2 = U.choose_block_grouping(vol, major_range=1000.0, min_blocks=9)
    assert g2.factor[:2] == (5, 5) and g2.n_groups == 9
    assert "occupied" in g2.reason


def test_too_few_blocks_warns_or_refuses(rng):
    vol = _StandInVolume((2, 2, 1), (10, 10, 10), rng, _truth())
    g = U.choose_block_grouping(vol, 100.0)
    assert g.n_groups == 4 and g.warnings
    vol1 = _StandInVolume((1, 1, 1), (10, 10, 10), rng, _truth())
    with pytest.raises(InsufficientDataError):
        U.choose_block_grouping(vol1, 100.0)


def _reference(vol):
    return _stand_in_refit(vol.coarse_sums())[0]


def test_same_seed_same_bands_any_n_jobs(rng):
    vol = _StandInVolume((8, 8, 1), (10, 10, 10), rng, _truth())
    ref = _reference(vol)
    a = U.block_bootstrap(vol, _stand_in_refit, ref, n_replicates=40, seed=11, n_jobs=1,
                          min_blocks=25)
    b = U.block_bootstrap(vol, _stand_in_refit, ref, n_replicates=40, seed=11, n_jobs=2,
                          min_blocks=25)
    c = U.block_bootstrap(vol, _stand_in_refit, ref, n_replicates=40, seed=12, n_jobs=1,
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
    vol = _StandInVolume((8, 8, 1), (10, 10, 10), rng, _truth())
    ref = _reference(vol)
    a = U.block_bootstrap(vol, _stand_in_refit, ref, n_replicates=20, seed=11)
    with distributed.Client(processes=False, n_workers=1, threads_per_worker=2,
                            dashboard_address=None) as client:
        b = U.block_bootstrap(vol, _stand_in_refit, ref, n_replicates=20, seed=11,
                              scheduler=client)
    da, db = a.to_dict(), b.to_dict()
    da.pop("seconds"), db.pop("seconds")
    assert da == db


def test_bands_shrink_with_more_blocks():
    # 4x more blocks of the same signal: the sampling spread of the stand-in
    # estimate falls roughly as 1/sqrt(blocks) (exact for a mean of iid blocks)
    cones = []
    for shape in ((6, 6, 1), (12, 12, 1)):
        vol = _StandInVolume(shape, (10, 10, 10), np.random.default_rng(5), _truth())
        res = U.block_bootstrap(vol, _stand_in_refit, _reference(vol), n_replicates=100,
                                seed=1, min_blocks=25)
        cones.append(res.to_dict()["major"]["cone_deg"])
    assert cones[1] < 0.8 * cones[0]


def test_result_schema_and_json(rng):
    import json

    vol = _StandInVolume((8, 8, 1), (10, 10, 10), rng, _truth())
    ref = _reference(vol)
    res = U.block_bootstrap(vol, _stand_in_refit, ref, n_replicates=30, seed=2)
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
    assert eb["lo"].shape == (3, len(_DIRS))
    assert "blocks" in res.summary()


def test_swap_rate_on_nearly_isotropic_plane(rng):
    # major and semi-major ranges nearly equal: their order flips between
    # replicates, while a clearly elongated plane keeps it
    R = Rotation.from_euler("z", 30, degrees=True).as_matrix()
    flat = R @ np.diag([4.1, 4.0, 1.0]) @ R.T
    long = R @ np.diag([9.0, 4.0, 1.0]) @ R.T
    rates = []
    for T in (flat, long):
        vol = _StandInVolume((8, 8, 1), (10, 10, 10), np.random.default_rng(9), T, noise=0.3)
        res = U.block_bootstrap(vol, _stand_in_refit, _reference(vol), n_replicates=60, seed=4)
        rates.append(res.swap_rate)
    assert rates[0] > 0.2
    assert rates[1] < 0.05


def test_failed_refits_are_counted(rng):
    vol = _StandInVolume((8, 8, 1), (10, 10, 10), rng, _truth())
    ref = _reference(vol)
    calls = {"n": 0}

    def flaky(sums, *, fixed_frame=None, start=None):
        calls["n"] += 1
        if calls["n"] % 5 == 0:
            raise RuntimeError("did not converge")
        return _stand_in_refit(sums, fixed_frame=fixed_frame, start=start)

    res = U.block_bootstrap(vol, flaky, ref, n_replicates=20, seed=0)
    assert res.n_failed == 4 and res.n_replicates == 16
    d = res.to_dict()
    assert d["failed"] == 4 and any("failed" in w for w in d["warnings"])


def test_unknown_estimator_is_refused_before_any_replicate(rng):
    # an estimator name that is not one of anisotropy.estimators.ESTIMATORS must raise,
    # not give semivariogram bands with no error recorded
    vol = _StandInVolume((8, 8, 1), (10, 10, 10), rng, _truth())
    ref = _reference(vol)
    calls = {"n": 0}

    def counting(sums, *, fixed_frame=None, start=None):
        calls["n"] += 1
        return _stand_in_refit(sums, fixed_frame=fixed_frame, start=start)

    with pytest.raises(InputError, match="unknown estimator 'semivariance'"):
        U.block_bootstrap(vol, counting, ref, n_replicates=10, seed=0, estimator="semivariance")
    assert calls["n"] == 0
    with pytest.raises(InputError, match="interval"):
        U.block_bootstrap(vol, counting, ref, n_replicates=10, seed=0, interval="student")
    assert calls["n"] == 0


def test_a_bug_in_the_refit_is_not_counted_as_a_failed_replicate(rng):
    # only the errors a fit states (FitError, non-convergence, numerical breakdown) are
    # counted as failed replicates; a programming error stops the run
    vol = _StandInVolume((8, 8, 1), (10, 10, 10), rng, _truth())
    ref = _reference(vol)

    def buggy(sums, *, fixed_frame=None, start=None):
        return sums[None][7, 7, 7]  # IndexError

    with pytest.raises(IndexError):
        U.block_bootstrap(vol, buggy, ref, n_replicates=6, seed=0)


# ---------------------------------------------------------------------------
# the real pair engine and joint fit on simulated fields (slow)
# ---------------------------------------------------------------------------

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

    def refit(sums, *, fixed_frame=None, start=None):
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


def test_interval_helpers_hold_the_estimate_and_drop_bounds_beyond_the_lags():
    # by hand: an interval that misses its estimate is widened to it, never narrowed
    assert U.holding_estimate([488.0, 10557.0], 314.0) == ([314.0, 10557.0], True)
    assert U.holding_estimate([100.0, 200.0], 150.0) == ([100.0, 200.0], False)
    # bounds beyond the longest lag (261 m) are unbounded
    assert U.bounded_by_lags([120.0, 400.0], 261.0)[0] == [120.0, None]
    iv, note = U.bounded_by_lags([300.0, 400.0], 261.0)
    assert iv == [None, None] and "> 261 m" in note
    assert U.bounded_by_lags([120.0, 200.0], 261.0) == ([120.0, 200.0], None)
    assert U.range_text([120.0, None], 261.0) == "120 m to > 261 m"
    assert U.range_text([None, None], 261.0) == "> 261 m"
    # a value every replicate repeats was held fixed; a spread one was not
    assert U.held_fixed([0.2, 0.2, 0.2], 0.2)
    assert not U.held_fixed([0.2, 0.21, 0.19], 0.2)


def test_nugget_held_in_the_replicates_has_no_interval(rng):
    # the stand-in refit holds its nugget at 0.1 in every replicate (as the down-hole
    # nugget is held in the real chain's replicates)
    vol = _StandInVolume((8, 8, 1), (10, 10, 10), rng, _truth())
    res = U.block_bootstrap(vol, _stand_in_refit, _reference(vol), n_replicates=20, seed=3)
    assert np.all(res.nugget == 0.1)
    d = res.to_dict()
    assert d["nugget"] is None
    assert any("nugget is held fixed" in n for n in d["notes"])
    assert "nugget held fixed" in res.summary()


def test_confidence_interval_record_in_the_manner_of_scipy(rng):
    # reference: the same bands read one by one through interval() and axis_summary(),
    # whose percentile and BCa rules are held against numpy.quantile and
    # scipy.stats.bootstrap in the tests at the top of this module
    vol = _StandInVolume((8, 8, 1), (10, 10, 10), rng, _truth())
    res = U.block_bootstrap(vol, _stand_in_refit, _reference(vol), n_replicates=40, seed=4)
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
        vol = _StandInVolume((8, 8, 1), (10, 10, 10), np.random.default_rng(9), T, noise=0.3)
        res = U.block_bootstrap(vol, _stand_in_refit, _reference(vol), n_replicates=60, seed=4)
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
        # a rival frame 40 degrees away: the cone holds the rival's axis and a cone as wide
        # around it (their sum, the triangle inequality on the sphere), at most 90
        res.rival_angles = {"major": 40.0}
        assert res.axis_summary(0)["cone_deg"] == min(90.0, 40.0 + got[0]["cone_deg"])
        assert "40.0 degrees away" in res.axis_summary(0)["cone_note"]


def test_range_interval_is_the_wald_interval_where_the_cone_is_the_informations(rng):
    # where an axis's cone comes from the likelihood's information and that information's
    # log-range standard deviation is given, the range interval is range * exp(+-z sd)
    # with z the normal quantile (SciPy's norm.ppf), uncalibrated; an axis whose cone is
    # the replicates' keeps the replicates' (calibrated) interval
    from scipy.stats import norm

    R = Rotation.from_euler("z", 30, degrees=True).as_matrix()
    vol = _StandInVolume((8, 8, 1), (10, 10, 10), np.random.default_rng(9),
                         R @ np.diag([9.0, 4.0, 1.0]) @ R.T, noise=0.3)
    res = U.block_bootstrap(vol, _stand_in_refit, _reference(vol), n_replicates=60, seed=4)
    res.distances = None     # no longest lag: bounds are kept as they are (tested elsewhere)
    plain = [res.axis_summary(i) for i in range(3)]
    sds = {"major": 0.1, "semi_major": 0.2, "minor": 0.05}
    res.information = ReportedInformation({}, log_range_sd=sds)
    assert [res.axis_summary(i) for i in range(3)] == plain      # no information cones
    res.information = ReportedInformation({"major": 2.5, "semi_major": 3.5, "minor": 1.5},
                                          log_range_sd=sds)
    z = norm.ppf(0.5 + 0.5 * res.confidence)
    for i, axis in enumerate(("major", "semi_major", "minor")):
        got = res.axis_summary(i)
        est = res.reference_ranges[i]
        sd = sds[axis]
        np.testing.assert_allclose(got["range"], [est * np.exp(-z * sd), est * np.exp(z * sd)])
        assert got["range_interval"] == "likelihood information (Wald, log scale)"
    res.information = None
    assert [res.axis_summary(i)["range"] for i in range(3)] == [p["range"] for p in plain]


def test_nugget_and_sill_intervals_are_wald_intervals_of_their_shares_where_given(rng):
    # where the likelihood's information gives the standard deviation of a share's logit,
    # the interval is total * expit(logit(share) +- z sd), z the normal quantile (SciPy's
    # norm.ppf, expit and logit); the total sill keeps the replicates' interval
    from scipy.special import expit, logit
    from scipy.stats import norm

    vol = _StandInVolume((8, 8, 1), (10, 10, 10), np.random.default_rng(9), _truth(), noise=0.3)
    res = U.block_bootstrap(vol, _stand_in_refit, _reference(vol), n_replicates=40, seed=4)
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


def test_carried_interval_is_the_replicates_spread_about_their_median_placed_at_the_estimate():
    # by hand with NumPy's quantiles: estimate * q / median, the estimate inside; plain
    # percentiles where the estimate is not positive
    r = np.random.default_rng(2).lognormal(np.log(100.0), 0.3, 500)
    lo, hi = np.quantile(r, [0.05, 0.95])
    med = np.median(r)
    got, how = U.carried_interval(r, 150.0, 0.9)
    np.testing.assert_allclose(got, [150.0 * lo / med, 150.0 * hi / med])
    assert got[0] < 150.0 < got[1] and how == "percentile, carried to the estimate"
    np.testing.assert_allclose(U.carried_interval(r, 0.0, 0.9)[0], [lo, hi])
    assert U.carried_interval(r[:1], 150.0, 0.9)[1] == "none"


def test_a_recentred_bootstrap_carries_its_intervals_and_bands_to_the_reference(rng):
    # the reference from another estimator (here: the stand-in's ranges scaled by 1.4):
    # the range intervals and the model bands are the replicates' percentiles times the
    # reference over the replicates' median (carried_interval above; NumPy by hand)
    R = Rotation.from_euler("z", 30, degrees=True).as_matrix()
    vol = _StandInVolume((8, 8, 1), (10, 10, 10), np.random.default_rng(9),
                         R @ np.diag([9.0, 4.0, 1.0]) @ R.T, noise=0.3)
    ref = _reference(vol)
    res = U.block_bootstrap(vol, _stand_in_refit, ref, n_replicates=60, seed=4,
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
