"""Tests of the pair engine (anisotropy.pairs) against exact brute force.

Brute force here means: all n(n-1)/2 pairs from numpy.triu_indices (the same
set scipy.spatial.distance.pdist enumerates), with the conventions written
out again in NumPy: canonical lag orientation as geometry.to_lower_hemisphere,
class k = ceil(d / lag - 1/2), head = tail + canonical lag.
"""

import math

import numpy as np
import pytest
from scipy.spatial.distance import pdist

from anisotropy import geometry
from anisotropy.errors import DataError, InputError
from anisotropy.pairs import CHANNELS, _lattice, build_volume
import anisotropy.pairs as pairs_mod


def brute_pairs(c, v):
    """Every unordered pair once: canonical lag, distance, head, tail."""
    i, j = np.triu_indices(len(c), 1)
    V = c[j] - c[i]
    flip = (V[:, 2] > 0) | ((V[:, 2] == 0) & ((V[:, 0] < 0) | ((V[:, 0] == 0) & (V[:, 1] < 0))))
    V = np.where(flip[:, None], -V, V)
    h = np.where(flip, v[i], v[j])
    t = np.where(flip, v[j], v[i])
    d = np.sqrt(V[:, 0] * V[:, 0] + V[:, 1] * V[:, 1] + V[:, 2] * V[:, 2])
    return i, j, V, d, h, t


def channel_rows(V, d, h, t):
    """(m, 15) per-pair channel contributions, channels as CHANNELS."""
    delta = h - t
    s = h + t
    nz = s != 0
    rel = np.where(nz, 4 * delta**2 / np.where(nz, s, 1) ** 2, 0.0)
    return np.column_stack([np.ones_like(d), d, delta**2, np.abs(delta), np.sqrt(np.abs(delta)),
                            h, t, h * h, t * t, h * t, rel, nz.astype(float),
                            V[:, 0], V[:, 1], V[:, 2]])


def assert_same_bins(a, b):
    """Same pairs in every bin (counts exactly) and the same sums up to rounding: two routes
    through the engine (per pair, or block by block through a scratch copy) add the same
    numbers in different orders."""
    np.testing.assert_array_equal(a[..., 0], b[..., 0])
    np.testing.assert_allclose(a, b, rtol=1e-12, atol=1e-12)


def binned(rows, idx, n):
    out = np.zeros((n, rows.shape[1]))
    np.add.at(out, idx, rows)
    return out


@pytest.fixture(scope="module")
def data():
    rng = np.random.default_rng(7)
    c = rng.random((260, 3)) * [60.0, 50.0, 25.0]
    c -= c.min(axis=0)  # the engine shifts to the minimum; make that a no-op
    v = rng.lognormal(0.0, 0.8, len(c))
    return c, v


@pytest.fixture(scope="module")
def volume(data):
    c, v = data
    return build_volume(c, v, lag=5.0, n_lags=6, blocks=20.0, map_cell=4.0, progress=False)


def test_channels_order_is_the_contract():
    # CONTRIBUTING.md, pairs/ contract
    assert CHANNELS == ("count", "dist", "sq", "abs", "sqrt", "head", "tail", "head2", "tail2",
                        "cross", "rel", "rel_n", "dx", "dy", "dz")


def test_class_sums_equal_brute_force(data, volume):
    # exact brute force over all pairs: omnidirectional aggregation over every cell is exact
    c, v = data
    i, j, V, d, h, t = brute_pairs(c, v)
    k = np.ceil(d / 5.0 - 0.5).astype(int)
    keep = k <= 6
    want = binned(channel_rows(V, d, h, t)[keep], k[keep], 7)
    got = volume.sums.sum(axis=1)
    np.testing.assert_array_equal(got[:, 0], want[:, 0])
    np.testing.assert_allclose(got, want, rtol=1e-10, atol=1e-9)
    assert volume.n_pairs == keep.sum()
    # the same count as scipy's pdist within max_distance
    assert volume.n_pairs == np.count_nonzero(pdist(c) <= volume.max_distance)


def test_fine_cell_is_nearest_axis(data, volume):
    c, v = data
    i, j, V, d, h, t = brute_pairs(c, v)
    k = np.ceil(d / 5.0 - 0.5).astype(int)
    keep = (k <= 6) & (d > 0)
    cell = _lattice.lookup(V[keep], _lattice.direction_table(volume.directions))
    # the kernel's cells are the table rule exactly (same arithmetic in NumPy)
    want = np.zeros((7, len(volume.directions)))
    np.add.at(want, (k[keep], cell), 1.0)
    np.testing.assert_array_equal(volume.sums[..., 0], want)
    # brute-force nearest axis (k-d tree over lattice and antipodes)
    near = _lattice.nearest_axis(V[keep], volume.directions)
    a_got = geometry.axis_angle(V[keep], volume.directions[cell])
    a_best = geometry.axis_angle(V[keep], volume.directions[near])
    # pixel-centre rounding: the only misassignments are pairs within a pixel of a
    # cell boundary, and then the axis is at most one pixel's angle farther
    bound = _lattice.pixel_angle(_lattice.direction_table(volume.directions).shape[0])
    assert np.all(a_got - a_best <= bound + 1e-9)
    assert np.mean(cell != near) < 0.10


def test_rim_horizontal_lags_same_axis_both_ways():
    # v and -v are one axis; the table must agree with the brute-force nearest axis
    # (up to the pixel bound) on both sides of the rim.
    dirs = _lattice.lattice(None, 2.0)
    table = _lattice.direction_table(dirs)
    az = np.linspace(0, 2 * np.pi, 721)
    hv = np.column_stack([np.sin(az), np.cos(az), np.zeros_like(az)])
    near = _lattice.nearest_axis(hv, dirs)
    bound = _lattice.pixel_angle(table.shape[0])
    for vec in (hv, -hv, hv + [0, 0, -1e-9], hv + [0, 0, 1e-9]):
        cell = _lattice.lookup(vec, table)
        extra = geometry.axis_angle(hv, dirs[cell]) - geometry.axis_angle(hv, dirs[near])
        assert np.all(extra <= bound + 1e-9)


def test_block_sums_aggregate_to_fine_sums(volume):
    # sums over blocks equal the fine sums aggregated by fine_to_coarse (exact bookkeeping)
    agg = np.zeros((volume.n_lags + 1, len(volume.coarse_directions), len(CHANNELS)))
    np.add.at(agg, (slice(None), volume.fine_to_coarse), volume.sums)
    np.testing.assert_allclose(volume.block_sums.sum(axis=0), agg, rtol=1e-12, atol=1e-10)
    np.testing.assert_allclose(volume.coarse_sums(), agg, rtol=1e-12, atol=1e-10)
    np.testing.assert_allclose(volume.coarse_sums(np.ones(volume.n_blocks)), agg,
                               rtol=1e-12, atol=1e-10)


def test_fine_to_coarse_is_nearest_axis(volume):
    # brute force: argmax of |cos| over the coarse lattice
    cosm = np.abs(volume.directions @ volume.coarse_directions.T)
    best = cosm.max(axis=1)
    got = cosm[np.arange(len(cosm)), volume.fine_to_coarse]
    np.testing.assert_allclose(got, best, rtol=0, atol=1e-12)


def test_block_of_pair_is_block_of_midpoint(data, volume):
    # brute force: block of each pair's midpoint on the documented grid
    c, v = data
    i, j, V, d, h, t = brute_pairs(c, v)
    k = np.ceil(d / 5.0 - 0.5).astype(int)
    keep = k <= 6
    mid = 0.5 * (c[i] + c[j])[keep]
    shape = np.array(volume.block_shape)
    b = np.minimum(np.floor((mid - volume.block_origin) / volume.block_size).astype(int), shape - 1)
    flat = (b[:, 0] * shape[1] + b[:, 1]) * shape[2] + b[:, 2]
    want = np.bincount(flat, minlength=volume.n_blocks)
    np.testing.assert_array_equal(volume.block_sums[..., 0].sum(axis=(1, 2)), want)
    # LagVolume.blocks_of_pairs files the same pairs in the same blocks as the pass
    np.testing.assert_array_equal(volume.blocks_of_pairs(c, i[keep], j[keep]), flat)
    # each sample's own block on the same grid
    bs = np.minimum(np.floor((c - volume.block_origin) / volume.block_size).astype(int), shape - 1)
    np.testing.assert_array_equal(volume.block_of_sample,
                                  (bs[:, 0] * shape[1] + bs[:, 1]) * shape[2] + bs[:, 2])


def test_map_cells_equal_brute_force(data, volume):
    c, v = data
    i, j, V, d, h, t = brute_pairs(c, v)
    k = np.ceil(d / 5.0 - 0.5).astype(int)
    keep = k <= 6
    m = (volume.map_sums.shape[0] - 1) // 2
    idx = np.floor(V[keep] / 4.0 + 0.5).astype(int) + m
    want = np.zeros(volume.map_sums.shape[:3])
    np.add.at(want, (idx[:, 0], idx[:, 1], idx[:, 2]), 1.0)
    np.testing.assert_array_equal(volume.map_sums[..., 0], want)
    centres, full = volume.full_map()
    # symmetrised: cell c and -c hold the same sums; every pair twice except the centre
    np.testing.assert_array_equal(full[..., 0], full[::-1, ::-1, ::-1, 0])
    assert full[..., 0].sum() == 2 * keep.sum() - want[m, m, m]


def test_batches_give_identical_sums(data, volume):
    c, v = data
    messages = []
    small = build_volume(c, v, lag=5.0, n_lags=6, blocks=20.0, map_cell=4.0,
                         progress=messages.append, batch_candidates=2000)
    assert small.stats["batches"] > 3
    # the same pairs in every bin whatever the batching: counts exactly; the other sums to
    # rounding (with blocks on, each batch folds its block-by-block scratch sums, so the
    # order of additions depends on the batches)
    for a, b in ((small.sums, volume.sums), (small.block_sums, volume.block_sums),
                 (small.map_sums, volume.map_sums)):
        np.testing.assert_array_equal(a[..., 0], b[..., 0])
        np.testing.assert_allclose(a, b, rtol=1e-12, atol=1e-12)
    # without blocks the chunks take the same offsets in the same order: bit-identical
    kw = dict(lag=5.0, n_lags=6, blocks=False, map_cell=4.0, progress=False)
    np.testing.assert_array_equal(build_volume(c, v, batch_candidates=2000, **kw).sums,
                                  build_volume(c, v, **kw).sums)
    assert "pairs" in messages[0] and any("batch" in m for m in messages[1:])


def test_long_run_announces_estimate(data, capsys, monkeypatch):
    c, v = data
    monkeypatch.setattr(pairs_mod.build, "ANNOUNCE_PAIRS", 0)
    vol = build_volume(c, v, lag=5.0, n_lags=6, progress=True, batch_candidates=5000)
    err = capsys.readouterr().err
    assert "pair engine: about" in err and "batch" in err
    assert vol.stats["estimated_pairs"] > 0


def test_block_memory_is_bounded(data):
    c, v = data
    vol = build_volume(c, v, lag=5.0, n_lags=6, blocks=1.0, progress=False, block_memory=2**20)
    per = vol.block_sums[0].nbytes * (vol.stats["chunks"] + 1)
    assert vol.n_blocks * per <= 2**20 or vol.n_blocks == 1
    assert vol.block_size[0] > 1.0
    assert vol.memory_bytes >= vol.sums.nbytes + vol.block_sums.nbytes


def test_blocks_and_map_can_be_turned_off(data, volume):
    c, v = data
    vol = build_volume(c, v, lag=5.0, n_lags=6, blocks=False, map_cell=False, progress=False)
    assert vol.n_blocks == 0 and vol.map_cell is None
    assert_same_bins(vol.sums, volume.sums)
    agg = np.zeros((7, len(vol.coarse_directions), len(CHANNELS)))
    np.add.at(agg, (slice(None), vol.fine_to_coarse), vol.sums)
    np.testing.assert_allclose(vol.coarse_sums(), agg)


def test_coincident_points_sit_in_class_zero():
    c = np.array([[0.0, 0, 0], [0.0, 0, 0], [3.0, 0, 0]])
    v = np.array([1.0, 3.0, 2.0])
    vol = build_volume(c, v, lag=2.0, n_lags=2, progress=False)
    # by hand: pair (0,1) at d=0 -> class 0; pairs (0,2), (1,2) at d=3 -> ceil(3/2-0.5)=1
    np.testing.assert_array_equal(vol.sums[..., 0].sum(axis=1), [1, 2, 0])
    # zero lag keeps head = second sample: delta = 3 - 1 = 2 -> sq 4
    assert vol.sums[0, :, CHANNELS.index("sq")].sum() == 4.0


def test_single_sample_and_empty():
    vol = build_volume([[1.0, 2.0, 3.0]], [5.0], lag=1.0, n_lags=3, progress=False)
    assert vol.n_pairs == 0 and not vol.sums.any()


def test_validation_errors():
    c = np.zeros((4, 3))
    c[2, 1] = np.nan
    with pytest.raises(DataError, match="rows 2"):
        build_volume(c, np.ones(4), lag=1.0, n_lags=2, progress=False)
    with pytest.raises(InputError, match="values"):
        build_volume(np.zeros((4, 3)), np.ones(3), lag=1.0, n_lags=2, progress=False)
    with pytest.raises(InputError, match="lag"):
        build_volume(np.zeros((4, 3)), np.ones(4), lag=0.0, n_lags=2, progress=False)
    with pytest.raises(InputError, match="n_lags"):
        build_volume(np.zeros((4, 3)), np.ones(4), lag=1.0, n_lags=0, progress=False)
    with pytest.raises(DataError, match="values"):
        build_volume(np.zeros((2, 3)), [1.0, np.nan], lag=1.0, n_lags=2, progress=False)


def test_aggregate_matches_cell_rule(data, volume):
    # a direction's aggregate = the sums of the pairs whose table cell axis is within tolerance
    c, v = data
    i, j, V, d, h, t = brute_pairs(c, v)
    k = np.ceil(d / 5.0 - 0.5).astype(int)
    keep = (k <= 6) & (d > 0)
    cell = _lattice.lookup(V[keep], _lattice.direction_table(volume.directions))
    u = geometry.line_to_vector(40.0, 30.0)
    ok = np.abs(volume.directions[cell] @ u) >= math.cos(math.radians(25.0))
    rows = channel_rows(V[keep], d[keep], h[keep], t[keep])
    want = binned(rows[ok], k[keep][ok], 7)
    np.testing.assert_allclose(volume.aggregate((40.0, 30.0), 25.0), want, rtol=1e-10, atol=1e-9)
    d_to = volume.to_dict()
    assert d_to["n_pairs"] == volume.n_pairs and isinstance(d_to["memory_bytes"], int)


@pytest.mark.parametrize("estimator", ["semivariogram", "correlogram", "pairwise_relative",
                                       "madogram", "robust"])
def test_block_and_map_channel_subsets(data, volume, estimator):
    # kept channels equal the all-channel run exactly (same additions in the same order);
    # dropped ones are NaN; the fine sums never change. Reference: the full run, which the
    # tests above check against brute force over pdist pairs.
    c, v = data
    vol = build_volume(c, v, lag=5.0, n_lags=6, blocks=20.0, map_cell=4.0, progress=False,
                       block_channels=estimator, map_channels=estimator)
    kept = [CHANNELS.index(ch) for ch in vol.block_channels]
    dropped = [i for i in range(len(CHANNELS)) if i not in kept]
    for ch in ("count", "dist", "dx", "dy", "dz") + pairs_mod.ESTIMATOR_CHANNELS[estimator]:
        assert ch in vol.block_channels and ch in vol.map_channels
    assert len(dropped) > 0
    np.testing.assert_array_equal(vol.sums, volume.sums)
    np.testing.assert_array_equal(vol.block_sums[..., kept], volume.block_sums[..., kept])
    np.testing.assert_array_equal(vol.map_sums[..., kept], volume.map_sums[..., kept])
    assert np.isnan(vol.block_sums[..., dropped]).all() and np.isnan(vol.map_sums[..., dropped]).all()
    # unweighted coarse sums: kept channels from the blocks, the rest from the fine sums
    np.testing.assert_array_equal(vol.coarse_sums()[..., kept], volume.coarse_sums()[..., kept])
    agg = np.zeros_like(volume.coarse_sums())
    np.add.at(agg, (slice(None), vol.fine_to_coarse), vol.sums)
    np.testing.assert_array_equal(vol.coarse_sums()[..., dropped], agg[..., dropped])
    # the estimator reads only kept channels: same value from a re-weighted replicate
    from anisotropy.estimators import estimate
    w = np.random.default_rng(3).integers(0, 3, vol.n_blocks).astype(float)
    with np.errstate(all="ignore"), _nowarn():
        a = estimate(vol.coarse_sums(w), estimator)
        b = estimate(volume.coarse_sums(w), estimator)
    np.testing.assert_array_equal(a, b)


class _nowarn:
    def __enter__(self):
        import warnings
        self._w = warnings.catch_warnings()
        self._w.__enter__()
        warnings.simplefilter("ignore")

    def __exit__(self, *exc):
        return self._w.__exit__(*exc)


def test_channel_subset_validation(data):
    c, v = data
    assert pairs_mod.resolve_channels(None) == CHANNELS
    assert pairs_mod.resolve_channels("all") == CHANNELS
    # a single channel brings its whole group (head/tail channels go together)
    assert pairs_mod.resolve_channels(["cross"]) == ("count", "dist", "head", "tail", "head2",
                                                     "tail2", "cross", "dx", "dy", "dz")
    with pytest.raises(InputError):
        build_volume(c, v, lag=5.0, n_lags=6, progress=False, block_channels="variance")


@pytest.mark.parametrize("estimator", ["semivariogram", "correlogram", "pairwise_relative",
                                       "madogram", "robust"])
@pytest.mark.parametrize("extras", [False, True, "map"],
                         ids=["fine_only", "with_blocks_and_map", "with_map_of_the_same_channels"])
def test_fine_channel_subsets(data, volume, estimator, extras):
    # Fine sums keeping one estimator's channels equal the all-channel run for the kept
    # channels (the same pairs in every bin; sums to rounding, since the blocks-on reference
    # adds them block by block; the all-channel run is checked against brute force over the
    # pdist pairs above); dropped channels are NaN. Without blocks and
    # map the semivariogram and the all-channel layouts go through the specialised kernel,
    # the others through the general one: both routes are covered here; so is a map of
    # the fine sums' own channels without blocks (the specialised kernel again for the
    # semivariogram, which is how discover builds its volume without a block bootstrap).
    c, v = data
    kw = {True: dict(blocks=20.0, map_cell=4.0), False: dict(blocks=False, map_cell=False),
          "map": dict(blocks=False, map_cell=4.0, map_channels=estimator)}[extras]
    vol = build_volume(c, v, lag=5.0, n_lags=6, progress=False, channels=estimator, **kw)
    kept = [CHANNELS.index(ch) for ch in vol.channels]
    dropped = [i for i in range(len(CHANNELS)) if i not in kept]
    assert vol.channels == pairs_mod.resolve_channels(estimator) and dropped
    assert_same_bins(vol.sums[..., kept], volume.sums[..., kept])
    assert np.isnan(vol.sums[..., dropped]).all()
    if extras is True:  # blocks and map keep every channel unless told otherwise
        assert_same_bins(vol.block_sums, volume.block_sums)
        assert_same_bins(vol.map_sums, volume.map_sums)
    if extras == "map":
        assert_same_bins(vol.map_sums[..., kept], volume.map_sums[..., kept])
        assert np.isnan(vol.map_sums[..., dropped]).all()
    assert vol.n_pairs == volume.n_pairs


@pytest.mark.parametrize("lag", [0.3, 0.7, 1.0 / 3.0, 0.1])
@pytest.mark.parametrize("extras", [False, True], ids=["fine_only", "with_blocks_and_map"])
def test_class_at_exact_bounds_is_the_divide(lag, extras):
    # The kernel finds the class with a multiply by 1/lag and falls back to the divide
    # next to a bound. On a grid whose spacing is a multiple of lag/2 many pair distances
    # sit exactly on class bounds (d / lag - 1/2 an integer in exact arithmetic), and
    # 1/lag is inexact for these lags; the classes must still equal
    # numpy.ceil(d / lag - 0.5) pair for pair (brute force over all pairs).
    g = np.arange(7) * (lag / 2.0)
    c = np.array(np.meshgrid(g, g[:4], g[:3], indexing="ij")).reshape(3, -1).T
    v = np.arange(len(c), dtype=float)
    n_lags = 8
    kw = dict(blocks=lag, map_cell=lag) if extras else dict(blocks=False, map_cell=False)
    vol = build_volume(c, v, lag=lag, n_lags=n_lags, progress=False, **kw)
    i, j, V, d, h, t = brute_pairs(c, v)
    k = np.ceil(d / lag - 0.5).astype(int)
    keep = k <= n_lags
    # the boundary cases are really there: distances whose quotient is within 1e-12 of a
    # half-integer
    q = d / lag - 0.5
    assert np.sum(np.abs(q - np.round(q)) < 1e-12) > 50
    want = np.bincount(np.maximum(k[keep], 0), minlength=n_lags + 1)
    np.testing.assert_array_equal(vol.sums[..., 0].sum(axis=1), want)


@pytest.mark.parametrize("blocks", [3.0, 11.0, (7.0, 13.0, 5.0), 26.0, 200.0])
def test_block_major_route_bins_every_pair_once(data, blocks):
    # Block by block (cells searched in each block's extent shifted by half the offset) or
    # per pair (cell pairs straddling a block boundary): whatever the block size relative to
    # the search cells (5.4 m here), every pair is binned once, in the block of its midpoint.
    # Exact brute force over all pairs (numpy.triu_indices, as scipy's pdist enumerates them).
    c, v = data
    vol = build_volume(c, v, lag=5.0, n_lags=6, blocks=blocks, map_cell=4.0, progress=False)
    i, j, V, d, h, t = brute_pairs(c, v)
    k = np.ceil(d / 5.0 - 0.5).astype(int)
    keep = k <= 6
    assert vol.n_pairs == keep.sum()
    mid = 0.5 * (c[i] + c[j])[keep]
    shape = np.array(vol.block_shape)
    b = np.minimum(np.floor((mid - vol.block_origin) / vol.block_size).astype(int), shape - 1)
    flat = (b[:, 0] * shape[1] + b[:, 1]) * shape[2] + b[:, 2]
    np.testing.assert_array_equal(vol.block_sums[..., 0].sum(axis=(1, 2)),
                                  np.bincount(flat, minlength=vol.n_blocks))
    # per block and lag class, the sum of squared differences (Matheron's numerator)
    want = np.zeros((vol.n_blocks, 7))
    np.add.at(want, (flat, k[keep]), (h - t)[keep] ** 2)
    np.testing.assert_allclose(vol.block_sums[..., 2].sum(axis=2), want, rtol=1e-11, atol=1e-11)
    want_fine = binned(channel_rows(V, d, h, t)[keep], k[keep], 7)
    np.testing.assert_allclose(vol.sums.sum(axis=1), want_fine, rtol=1e-10, atol=1e-9)


def test_warm_up_compiles_what_a_discovery_uses():
    # After warm_up, a discovery (with a block bootstrap, so blocks, map and one estimator's
    # channels are all on) must not need any kernel signature that warm_up did not compile:
    # Numba's dispatcher lists every compiled signature (`signatures`), so a new one would
    # mean the workers of a batch compile again.
    from anisotropy.pipeline import discover
    from anisotropy.pairs import _kernels, warm_up

    warm_up()
    kernels = [_kernels.volume_pass, _kernels.block_major_pass, _kernels.exact_pass,
               _kernels.omni_pass]
    before = [set(k.signatures) for k in kernels]
    assert all(before)
    rng = np.random.default_rng(5)
    c = rng.random((400, 3)) * [120.0, 100.0, 60.0]
    v = np.sin(c[:, 0] / 25.0) + 0.3 * rng.standard_normal(len(c))
    import pandas as pd

    discover(pd.DataFrame({"x": c[:, 0], "y": c[:, 1], "z": c[:, 2], "g": v}), value="g",
             bootstrap=2, seed=0)
    assert [set(k.signatures) for k in kernels] == before
