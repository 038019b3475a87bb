"""Tests of directional variograms, fans and maps (anisotropy.directional).

The exact path is checked against brute force over all pairs
(numpy.triu_indices, the pair set of scipy.spatial.distance.pdist) applying the
design.md rules written out again in NumPy.
"""

import math

import numpy as np
import pytest
from scipy.spatial.distance import pdist

from anisotropy import geometry
from anisotropy.directional import (experimental_variogram, map_volume, variogram_fan,
                                    variogram_map)
from anisotropy.errors import DataError, InputError
from anisotropy.estimators import ESTIMATORS
from anisotropy.pairs import _lattice, build_volume


def brute(c, v, *, lag, n_lags, direction=None, tol_deg=22.5, lag_tol=None, band=None):
    """Per class k = 1..n_lags: (mean distance, pairs, head values, tail values, deltas).

    Head: the sample further along ``direction``; omnidirectional, head = tail +
    the canonical (lower-hemisphere) lag.
    """
    i, j = np.triu_indices(len(c), 1)
    V = c[j] - c[i]
    flip = (V[:, 2] > 0) | ((V[:, 2] == 0) & ((V[:, 0] < 0) | ((V[:, 0] == 0) & (V[:, 1] < 0))))
    h = np.where(flip, v[i], v[j])
    t = np.where(flip, v[j], v[i])
    d = np.sqrt(V[:, 0] * V[:, 0] + V[:, 1] * V[:, 1] + V[:, 2] * V[:, 2])
    ok = np.ones(len(d), bool)
    if direction is not None:
        if len(direction) == 2:
            u = geometry.line_to_vector(*direction)
        else:
            u = np.asarray(direction, float) / np.linalg.norm(direction)
        u = geometry.to_lower_hemisphere(u)
        dot = V[:, 0] * u[0] + V[:, 1] * u[1] + V[:, 2] * u[2]
        # along a direction the head is the sample further along it (issue 17)
        h = np.where(dot > 0, v[j], v[i])
        t = np.where(dot > 0, v[i], v[j])
        ok &= d > 0
        if tol_deg < 90:
            ok &= np.abs(dot) >= d * math.cos(math.radians(tol_deg))
        if band is not None:
            ok &= d * d - dot * dot <= band * band
    tol = lag / 2 if lag_tol is None else lag_tol
    out = []
    for k in range(1, n_lags + 1):
        m = ok & (k * lag - tol < d) & (d <= k * lag + tol)
        out.append((d[m].mean() if m.any() else np.nan, int(m.sum()), h[m], t[m], h[m] - t[m]))
    return out


def brute_value(h, t, dl, estimator):
    n = len(dl)
    if n == 0:
        return np.nan
    if estimator == "semivariogram":  # Matheron (1963)
        return np.sum(dl**2) / (2 * n)
    if estimator == "madogram":
        return np.sum(np.abs(dl)) / (2 * n)
    if estimator == "robust":  # Cressie & Hawkins (1980), constants recalled from memory
        return (np.mean(np.sqrt(np.abs(dl))) ** 4 / (0.457 + 0.494 / n)) / 2
    if estimator == "pairwise_relative":  # Srivastava & Parker (1989)
        s = h + t
        nz = s != 0
        return np.sum(dl[nz] ** 2 / (s[nz] / 2) ** 2) / (2 * nz.sum())
    if estimator == "correlogram":  # 1 - numpy.corrcoef of head and tail
        if n < 2 or np.std(h) == 0 or np.std(t) == 0:
            return np.nan
        return 1 - np.corrcoef(h, t)[0, 1]
    raise AssertionError(estimator)


@pytest.fixture(scope="module")
def data():
    rng = np.random.default_rng(11)
    c = rng.random((240, 3)) * [70.0, 50.0, 30.0]
    c -= c.min(axis=0)  # make the engine's internal shift a no-op for bit-exact distances
    v = rng.lognormal(0.0, 0.7, len(c))
    return c, v


CASES = [
    dict(lag=6.0, n_lags=6),
    dict(lag=4.0, n_lags=8, lag_tol=3.5),  # overlapping classes
    dict(lag=7.5, n_lags=4, lag_tol=1.0),  # gaps between classes
]
DIRECTIONS = [None, (30.0, 20.0), (120.0, 0.0), [0.2, -0.1, -1.0]]


@pytest.mark.filterwarnings("ignore:correlogram undefined")  # one-pair lags: expected NaN
@pytest.mark.parametrize("case", CASES)
@pytest.mark.parametrize("direction", DIRECTIONS)
@pytest.mark.parametrize("tol_deg,band", [(10.0, None), (22.5, None), (45.0, 6.0), (90.0, 4.0)])
def test_exact_path_equals_brute_force(data, case, direction, tol_deg, band):
    # exact brute force over all pairs, every estimator
    c, v = data
    ref = brute(c, v, lag=case["lag"], n_lags=case["n_lags"], direction=direction,
                tol_deg=tol_deg, lag_tol=case.get("lag_tol"), band=band)
    for est in ESTIMATORS:
        df = experimental_variogram(c, v, lag=case["lag"], n_lags=case["n_lags"],
                                    direction=direction, angular_tolerance=tol_deg,
                                    lag_tolerance=case.get("lag_tol"), bandwidth=band,
                                    estimator=est)
        assert list(df.columns) == ["lag_index", "distance", "pairs", "value"]
        np.testing.assert_array_equal(df["lag_index"], np.arange(1, case["n_lags"] + 1))
        np.testing.assert_array_equal(df["pairs"], [r[1] for r in ref])
        np.testing.assert_allclose(df["distance"], [r[0] for r in ref], rtol=1e-12)
        want = [brute_value(r[2], r[3], r[4], est) for r in ref]
        np.testing.assert_allclose(df["value"], want, rtol=1e-9, atol=1e-12)


def test_omni_counts_equal_pdist(data):
    # scipy pdist: pairs per class (k lag - lag/2, k lag + lag/2]
    c, v = data
    d = pdist(c)
    df = experimental_variogram(c, v, lag=5.0, n_lags=5)
    for k in range(1, 6):
        assert df["pairs"][k - 1] == np.count_nonzero((d > 5 * k - 2.5) & (d <= 5 * k + 2.5))


def test_empty_lags_and_single_sample(data):
    c, v = data
    df = experimental_variogram(c[:2] * 0.01, v[:2], lag=10.0, n_lags=3)
    assert (df["pairs"] == 0).all() and df["value"].isna().all() and df["distance"].isna().all()
    one = experimental_variogram([[1.0, 2.0, 3.0]], [4.0], lag=1.0, n_lags=4, direction=(0, 0))
    assert len(one) == 4 and (one["pairs"] == 0).all() and one["value"].isna().all()


def test_zero_variance_correlogram_warns(data):
    c, _ = data
    with pytest.warns(RuntimeWarning, match="zero variance"):
        df = experimental_variogram(c, np.full(len(c), 2.5), lag=6.0, n_lags=3,
                                    estimator="correlogram")
    assert df["value"].isna().all() and (df["pairs"] > 0).all()


def test_coincident_samples_only_omnidirectional():
    c = np.array([[0.0, 0, 0], [0, 0, 0], [1.0, 0, 0]])
    v = np.array([1.0, 2.0, 4.0])
    # tol 2 > lag: class 1 covers (-1, 3] and holds the zero-length pair omnidirectionally
    omni = experimental_variogram(c, v, lag=1.0, n_lags=1, lag_tolerance=2.0)
    east = experimental_variogram(c, v, lag=1.0, n_lags=1, lag_tolerance=2.0,
                                  direction=(90.0, 0.0), angular_tolerance=90.0)
    assert omni["pairs"][0] == 3 and east["pairs"][0] == 2


def test_validation(data):
    c, v = data
    bad = c.copy()
    bad[[3, 17]] = np.nan
    with pytest.raises(DataError, match="rows 3, 17"):
        experimental_variogram(bad, v, lag=5.0, n_lags=3)
    with pytest.raises(InputError, match="values"):
        experimental_variogram(c, v[:-1], lag=5.0, n_lags=3)
    with pytest.raises(InputError, match="lag"):
        experimental_variogram(c, v, lag=-1.0, n_lags=3)
    with pytest.raises(InputError, match="angular tolerance"):
        experimental_variogram(c, v, lag=5.0, n_lags=3, direction=(0, 0), angular_tolerance=0)
    with pytest.raises(InputError, match="bandwidth"):
        experimental_variogram(c, v, lag=5.0, n_lags=3, direction=(0, 0), bandwidth=-2)
    with pytest.raises(InputError, match="estimator"):
        experimental_variogram(c, v, lag=5.0, n_lags=3, estimator="nugget")
    with pytest.raises(InputError, match="plunge"):
        experimental_variogram(c, v, lag=5.0, n_lags=3, direction=(0, 95))


@pytest.fixture(scope="module")
def volume(data):
    c, v = data
    return build_volume(c, v, lag=6.0, n_lags=6, map_cell=5.0, progress=False)


def test_fan_matches_exact_up_to_cell_resolution(data, volume):
    # The fan gathers fine cells whose axis is within the tolerance; the exact path uses
    # each pair's own lag. Pairs can differ only when their angle to the direction is
    # within (cell radius + pixel) of the tolerance; brute force over all pairs.
    c, v = data
    table = _lattice.direction_table(volume.directions)
    i, j = np.triu_indices(len(c), 1)
    V = c[j] - c[i]
    d = np.linalg.norm(V, axis=1)
    k = np.ceil(d / 6.0 - 0.5).astype(int)
    use = (k >= 1) & (k <= 6)
    cell = _lattice.lookup(V[use], table)
    radius = np.max(geometry.axis_angle(V[use], volume.directions[cell]))
    dirs = np.array([[30.0, 20.0], [120.0, 0.0], [200.0, 60.0], [10.0, 85.0]])
    fan = variogram_fan(volume, dirs, angular_tolerance=20.0)
    assert fan.value.shape == (4, 6) and fan.pairs.shape == (4, 6)
    for n, (tr, pl) in enumerate(dirs):
        u = geometry.line_to_vector(tr, pl)
        ang = geometry.axis_angle(V[use], u)
        in_fan = geometry.axis_angle(volume.directions[cell], u) <= 20.0
        in_exact = ang <= 20.0
        diff = in_fan != in_exact
        assert np.all(np.abs(ang[diff] - 20.0) <= radius + 1e-9)
        np.testing.assert_array_equal(fan.pairs[n], np.bincount(k[use][in_fan], minlength=7)[1:])
        df = experimental_variogram(c, v, lag=6.0, n_lags=6, direction=(tr, pl),
                                    angular_tolerance=20.0)
        np.testing.assert_array_equal(df["pairs"], np.bincount(k[use][in_exact], minlength=7)[1:])
    assert radius < 2.5  # ~2 degree lattice: cell radius about 1.2 degrees (plus pixels)
    frame = fan.to_frame()
    assert len(frame) == 24 and set(frame.columns) >= {"trend", "plunge", "lag_index", "value"}
    assert isinstance(fan.to_dict()["pairs"][0][0], int)


def test_fan_omni_tolerance_is_exact(data, volume):
    # a 90-degree tolerance gathers every cell: identical to the exact omni counts
    c, v = data
    fan = variogram_fan(volume, [[0.0, 0.0]], angular_tolerance=90.0, estimator="madogram")
    df = experimental_variogram(c, v, lag=6.0, n_lags=6, estimator="madogram")
    np.testing.assert_array_equal(fan.pairs[0], df["pairs"])
    np.testing.assert_allclose(fan.value[0], df["value"], rtol=1e-10)


def test_fan_bandwidth_at_class_centres(volume):
    fan_b = variogram_fan(volume, [[45.0, 10.0]], angular_tolerance=30.0, bandwidth=3.0)
    fan = variogram_fan(volume, [[45.0, 10.0]], angular_tolerance=30.0)
    # the bandwidth only removes pairs, more so at long lags (k lag sin(angle) <= b)
    assert np.all(fan_b.pairs <= fan.pairs)
    assert fan_b.pairs[0, -1] < fan.pairs[0, -1]


def test_horizontal_map_equals_brute_force(data, volume):
    # brute force: each pair at +v and -v, pixel = round(v / cell) with round(v_z / cell) == 0
    c, v = data
    i, j = np.triu_indices(len(c), 1)
    V = c[j] - c[i]
    d = np.linalg.norm(V, axis=1)
    keep = np.ceil(d / 6.0 - 0.5) <= 6
    delta = (v[j] - v[i])[keep]
    W = V[keep]
    sl = variogram_map(volume, plane="horizontal")
    r = (len(sl.u) - 1) // 2
    cnt = np.zeros((2 * r + 1, 2 * r + 1))
    sq = np.zeros_like(cnt)
    for sign in (1, -1):
        idx = np.floor(sign * W / 5.0 + 0.5).astype(int)
        m = idx[:, 2] == 0
        np.add.at(cnt, (idx[m, 0] + r, idx[m, 1] + r), 1)
        np.add.at(sq, (idx[m, 0] + r, idx[m, 1] + r), delta[m] ** 2)
    # the centre pixel holds its pairs once (v and -v both round to it)
    cnt[r, r] /= 2
    sq[r, r] /= 2
    np.testing.assert_array_equal(sl.pairs, cnt)
    with np.errstate(invalid="ignore"):
        np.testing.assert_allclose(sl.value, sq / (2 * cnt), rtol=1e-10)
    assert sl.to_dict()["map_cell"] == 5.0


@pytest.mark.filterwarnings("ignore:correlogram undefined")
def test_vertical_map_slices(volume):
    # the plane normal to east (x) is the layer round(v_x / cell) == 0 of the full map
    centres, full = volume.full_map()
    m = (len(centres) - 1) // 2
    sl = variogram_map(volume, normal=[1.0, 0.0, 0.0])
    assert sl.pairs.sum() == full[m, :, :, 0].sum()
    same = variogram_map(volume, plane=(270.0, 90.0))  # dip direction west, vertical
    assert same.pairs.sum() == sl.pairs.sum()
    tilted = variogram_map(volume, plane=(45.0, 30.0), estimator="correlogram")
    assert tilted.pairs.sum() > 0 and np.isfinite(tilted.value).any()


def test_map_volume_symmetric(volume):
    mv = map_volume(volume, estimator="madogram")
    np.testing.assert_array_equal(mv.pairs, mv.pairs[::-1, ::-1, ::-1])
    np.testing.assert_allclose(mv.value, mv.value[::-1, ::-1, ::-1], equal_nan=True)


def test_map_needs_map(data):
    c, v = data
    vol = build_volume(c, v, lag=6.0, n_lags=2, map_cell=False, blocks=False, progress=False)
    with pytest.raises(InputError, match="map"):
        variogram_map(vol)


@pytest.mark.parametrize("estimator", ["semivariogram", "correlogram", "pairwise_relative",
                                       "madogram", "robust"])
def test_exact_sums_channel_subsets(estimator):
    # The exact pass skips the channels an estimator does not read: kept channels equal the
    # all-channel pass exactly, dropped ones are NaN (the all-channel pass is checked
    # against brute force over all pairs above).
    from anisotropy.directional import exact_sums
    from anisotropy.pairs import CHANNELS, resolve_channels
    rng = np.random.default_rng(11)
    c = rng.random((300, 3)) * [40.0, 30.0, 20.0]
    v = rng.lognormal(0.0, 0.7, len(c))
    for direction, lag_tol in ((None, None), ((30.0, 20.0), 3.5)):
        full = exact_sums(c, v, lag=4.0, n_lags=6, direction=direction, lag_tolerance=lag_tol)
        sub = exact_sums(c, v, lag=4.0, n_lags=6, direction=direction, lag_tolerance=lag_tol,
                         channels=estimator)
        kept = [CHANNELS.index(ch) for ch in resolve_channels(estimator)
                if ch not in ("dx", "dy", "dz")]
        dropped = [i for i in range(len(CHANNELS)) if i not in kept]
        np.testing.assert_array_equal(sub[:, kept], full[:, kept])
        assert np.isnan(sub[:, dropped]).all()
        # lag-vector sums named explicitly are kept (and equal the all-channel pass)
        named = exact_sums(c, v, lag=4.0, n_lags=6, direction=direction, lag_tolerance=lag_tol,
                           channels=[estimator, "dx"])
        vec = [CHANNELS.index(ch) for ch in ("dx", "dy", "dz")]
        np.testing.assert_array_equal(named[:, vec], full[:, vec])


@pytest.mark.parametrize("lag,lag_tol", [(0.7, None), (1.0 / 3.0, None), (0.7, 0.35),
                                         (0.7, 0.5), (1.0 / 3.0, 0.1)])
def test_exact_classes_on_bounds(lag, lag_tol):
    # Gridded samples put many distances exactly on class bounds k lag +- tol; the pass
    # finds the class by multiplying by 1/lag (inexact for these lags) and then applies
    # the rule k lag - tol < d <= k lag + tol itself, so counts must equal the brute-force
    # rule over all pairs (the `brute` helper above), overlapping classes included.
    g = np.arange(8) * (lag / 2.0)
    c = np.array(np.meshgrid(g, g[:5], g[:3], indexing="ij")).reshape(3, -1).T
    v = np.sin(np.arange(len(c), dtype=float))
    ref = brute(c, v, lag=lag, n_lags=6, lag_tol=lag_tol)
    df = experimental_variogram(c, v, lag=lag, n_lags=6, lag_tolerance=lag_tol)
    np.testing.assert_array_equal(df["pairs"], [r[1] for r in ref])


# ---------------------------------------------------------------------------
# one cone read from the volume, with the model over its pairs
# ---------------------------------------------------------------------------


def test_cone_variogram_omni_tolerance_equals_brute_force(data, volume):
    # 90 degrees takes every cell: class by class the same pairs as the exact rule
    # (brute force over numpy.triu_indices), so pairs, mean distance and value agree
    from anisotropy.directional import cone_variogram

    c, v = data
    cone = cone_variogram(volume, (30.0, 20.0), angular_tolerance=90.0)
    want = brute(c, v, lag=6.0, n_lags=6, direction=(30.0, 20.0), tol_deg=90.0)
    assert cone.pairs.shape == (7,)  # class 0 included
    np.testing.assert_array_equal(cone.pairs[1:], [w[1] for w in want])
    np.testing.assert_allclose(cone.distance[1:], [w[0] for w in want], rtol=1e-12)
    np.testing.assert_allclose(cone.value[1:],
                               [brute_value(*w[2:], "semivariogram") for w in want], rtol=1e-10)
    assert cone.model_over_pairs is None
    assert len(cone.to_frame()) == 7 and cone.to_dict()["estimator"] == "semivariogram"


def test_cone_variogram_along_and_across_a_line_of_samples():
    # samples on an east-west line: every pair lies along 090/00, none along 000/00
    from anisotropy.directional import cone_variogram

    c = np.column_stack([np.arange(30) * 2.0, np.zeros(30), np.zeros(30)])
    v = np.sin(np.arange(30) / 3.0)
    vol = build_volume(c, v, lag=2.0, n_lags=5, progress=False)
    along = cone_variogram(vol, (90.0, 0.0), angular_tolerance=10.0, estimator="madogram")
    across = cone_variogram(vol, (0.0, 0.0), angular_tolerance=10.0)
    # k lags of 2 m on 30 samples: 30 - k pairs (exact count)
    np.testing.assert_array_equal(along.pairs[1:], [30 - k for k in range(1, 6)])
    for k in range(1, 6):
        assert along.value[k] == pytest.approx(np.mean(np.abs(v[k:] - v[:-k])) / 2, rel=1e-12)
    assert np.all(across.pairs == 0) and np.all(np.isnan(across.value))


def test_cone_variogram_model_over_pairs_of_a_linear_model(data, volume):
    # an isotropic model linear in the distance, gamma(h) = 0.01 |h|: averaged over a
    # class's pairs it is 0.01 x the class's mean pair distance (exact, brute force)
    from anisotropy.directional import cone_variogram

    c, v = data
    cone = cone_variogram(volume, (120.0, 0.0), angular_tolerance=90.0,
                          model=lambda h: 0.01 * np.linalg.norm(h, axis=1))
    want = brute(c, v, lag=6.0, n_lags=6, direction=(120.0, 0.0), tol_deg=90.0)
    np.testing.assert_allclose(cone.model_over_pairs[1:], [0.01 * w[0] for w in want],
                               rtol=1e-9)


def test_cone_variogram_validation(volume):
    from anisotropy.directional import cone_variogram

    with pytest.raises(InputError, match="estimator"):
        cone_variogram(volume, (0.0, 0.0), angular_tolerance=20.0, estimator="variance")
    with pytest.raises(InputError, match="angular tolerance"):
        cone_variogram(volume, (0.0, 0.0), angular_tolerance=120.0)
    with pytest.raises(InputError, match="bandwidth"):
        cone_variogram(volume, (0.0, 0.0), angular_tolerance=20.0, bandwidth=-1.0)


# ---------------------------------------------------------------------------
# head and tail along a direction whose cone crosses the horizontal (issue 17)
# ---------------------------------------------------------------------------

@pytest.fixture(scope="module")
def trend_field():
    """Samples with a strong linear trend, so that head and tail means differ."""
    rng = np.random.default_rng(23)
    c = rng.random((400, 3)) * [80.0, 80.0, 30.0]
    c -= c.min(axis=0)
    u = geometry.line_to_vector(120.0, 0.0)
    v = 0.08 * (c @ u) + 0.05 * c[:, 2] + rng.normal(0.0, 0.6, len(c))
    return c, v


def _along(c, v, u):
    """Brute force over all pairs (i < j): lag vectors, head and tail, head = further along u."""
    i, j = np.triu_indices(len(c), 1)
    V = c[j] - c[i]
    dot = V @ u
    h = np.where(dot > 0, v[j], v[i])
    t = np.where(dot > 0, v[i], v[j])
    return V, h, t


@pytest.mark.parametrize("direction,tol", [((120.0, 0.0), 20.0), ((300.0, 10.0), 20.0),
                                           ((45.0, 5.0), 30.0)])
def test_directional_correlogram_takes_head_along_the_direction(trend_field, direction, tol):
    # reference: 1 - numpy.corrcoef(head, tail) over the pairs of each class, with
    # head = the sample further along the direction (brute force over all pairs)
    c, v = trend_field
    u = geometry.line_to_vector(*direction)
    i, j = np.triu_indices(len(c), 1)
    V, h, t = _along(c, v, u)
    d = np.linalg.norm(V, axis=1)
    ok = np.abs(V @ u) >= d * math.cos(math.radians(tol))
    df = experimental_variogram(c, v, lag=5.0, n_lags=8, direction=direction,
                                angular_tolerance=tol, estimator="correlogram")
    worst_mixed = 0.0
    for k in range(1, 9):
        m = ok & (k * 5.0 - 2.5 < d) & (d <= k * 5.0 + 2.5)
        want = 1 - np.corrcoef(h[m], t[m])[0, 1]
        assert df["value"][k - 1] == pytest.approx(want, rel=1e-9, abs=1e-12)
        # the canonical (lower-hemisphere) head, as before the fix, is off in these cones
        flip = (V[m, 2] > 0) | ((V[m, 2] == 0) & (V[m, 0] < 0))
        hc = np.where(flip, v[i][m], v[j][m])
        tc = np.where(flip, v[j][m], v[i][m])
        worst_mixed = max(worst_mixed, abs(1 - np.corrcoef(hc, tc)[0, 1] - want))
    assert worst_mixed > 0.01   # the test would catch the mixed pairs


def test_fan_and_cone_correlogram_take_head_along_the_direction():
    # Three benches at exact elevations with a grade trend: in-bench lags are horizontal,
    # across-bench lags plunge 14-20 degrees either way, so a 20-degree cone about a
    # horizontal direction gathers cells whose canonical lags point both ways. Reference:
    # 1 - numpy.corrcoef(head, tail) over the same pairs (each pair's fine cell from the
    # lattice lookup, as the kernel files it), head = the sample further along.
    from anisotropy.estimators import estimate

    rng = np.random.default_rng(29)
    c = rng.random((450, 3)) * [80.0, 80.0, 0.0]
    c[:, 2] = np.repeat([0.0, 10.0, 20.0], 150)
    u0 = geometry.line_to_vector(120.0, 0.0)
    v = 0.08 * (c @ u0) + 0.05 * c[:, 2] + rng.normal(0.0, 0.6, len(c))
    vol = build_volume(c, v, lag=5.0, n_lags=8, progress=False)
    table = _lattice.direction_table(vol.directions)
    i, j = np.triu_indices(len(c), 1)
    V = c[j] - c[i]
    d = np.linalg.norm(V, axis=1)
    k = np.ceil(d / 5.0 - 0.5).astype(int)
    use = (k >= 1) & (k <= 8) & (d > 0)
    cell = np.zeros(len(d), dtype=int)
    cell[use] = _lattice.lookup(V[use], table)
    dirs = [(120.0, 0.0), (300.0, 10.0), (45.0, 5.0)]
    fan = variogram_fan(vol, dirs, angular_tolerance=20.0, estimator="correlogram")
    fan_b = variogram_fan(vol, dirs, angular_tolerance=20.0, bandwidth=8.0,
                          estimator="correlogram")
    worst_mixed = 0.0
    for n, direction in enumerate(dirs):
        u = geometry.line_to_vector(*direction)
        _, h, t = _along(c, v, u)
        ang = geometry.axis_angle(vol.directions[cell], u)
        cone = vol.aggregate(direction, 20.0)
        mixed = estimate(np.einsum("kf,kfc->kc", vol.cell_mask(direction, 20.0).astype(float),
                                   vol.sums), "correlogram")   # the cells summed as stored
        for kk in range(1, 9):
            m = use & (ang <= 20.0) & (k == kk)
            want = 1 - np.corrcoef(h[m], t[m])[0, 1]
            assert fan.value[n, kk - 1] == pytest.approx(want, rel=1e-9)
            assert estimate(cone[kk:kk + 1], "correlogram")[0] == pytest.approx(want, rel=1e-9)
            worst_mixed = max(worst_mixed, abs(mixed[kk] - want))
            # bandwidth rule at class centres and cell axes (pairs module docstring)
            mb = m & (kk * 5.0 * np.sin(np.radians(ang)) <= 8.0)
            if mb.sum() > 2:
                want_b = 1 - np.corrcoef(h[mb], t[mb])[0, 1]
                assert fan_b.value[n, kk - 1] == pytest.approx(want_b, rel=1e-9)
    assert worst_mixed > 0.01   # without turning the cells round the test would fail
