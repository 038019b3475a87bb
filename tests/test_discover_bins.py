"""Tests of the ``weighted_bins`` stage and its drill-hole pieces.

Within-hole pair counts are checked against a brute-force loop over every
pair of every hole (lag classes by the definition of design.md: class k holds
distances in ((k - 1/2) lag, (k + 1/2) lag]); the down-hole nugget against a
straight line through two hand-computed semivariogram points (Matheron's
estimator, half the mean squared difference).
"""

import itertools

import numpy as np
import pytest

from anisotropy.discovery.bins import downhole_nugget, weighted_bins, within_hole_pairs
from anisotropy.discovery.lags import LagChoice, build_volume
from anisotropy.exploration import nominal_spacing


def _holes(n_holes=5, n=25, step=2.0, seed=0):
    """Straight holes of ``n`` samples ``step`` apart, random collars and directions."""
    rng = np.random.default_rng(seed)
    pts, ids = [], []
    for h in range(n_holes):
        d = rng.normal(size=3)
        d[2] = -abs(d[2]) - 1.0
        d /= np.linalg.norm(d)
        pts.append(rng.uniform(0, 100, 3) + np.arange(n)[:, None] * step * d)
        ids += [f"H{h}"] * n
    return np.concatenate(pts), np.array(ids)


def _grid_holes(n_holes=8, n=20, seed=0):
    """Holes on exact binary coordinates (multiples of 1/4 m), so every lag vector is exact."""
    rng = np.random.default_rng(seed)
    pts, ids = [], []
    for h in range(n_holes):
        step = rng.integers(-4, 5, size=3) / 4.0
        step[2] = -abs(step[2]) - 1.0
        pts.append(rng.integers(0, 400, 3) / 4.0 + np.arange(n)[:, None] * step)
        ids += [f"H{h}"] * n
    return np.concatenate(pts), np.array(ids)


def test_within_hole_pairs_by_brute_force():
    # reference: every pair of every hole enumerated (itertools), its class by the rule of
    # design.md, and its cell by the engine's own table, called pair by pair
    coords, holes = _holes()
    lc = LagChoice(unit_lag=5.0, n_lags=6)
    pv = build_volume(coords, np.zeros(len(coords)), lc)
    within, within_holes, _ = within_hole_pairs(pv.volume, coords, holes)
    want = np.zeros_like(within)
    seen = set()
    for i, j in itertools.combinations(range(len(coords)), 2):
        if holes[i] != holes[j]:
            continue
        d = float(np.linalg.norm(coords[j] - coords[i]))
        k = next((k for k in range(lc.n_lags + 1) if (k - 0.5) * lc.unit_lag < d
                  <= (k + 0.5) * lc.unit_lag), None)
        if k is None or d == 0:
            continue
        cell = int(pv.volume.bins_of_pairs(coords, [i], [j])[1][0])
        want[k, cell] += 1
        seen.add((k, cell, holes[i]))
    assert np.array_equal(within, want)
    holes_per_cell = np.zeros_like(within)
    for k, cell, _ in seen:
        holes_per_cell[k, cell] += 1
    assert np.array_equal(within_holes, holes_per_cell)


def test_within_hole_pairs_are_the_pass_own_counts_hole_by_hole():
    # reference: the pair engine run on each hole alone (an exact count of that hole's pairs
    # in each bin, by the pass itself); on exact coordinates the lag vectors are bit for bit
    # those of the pass over all samples, so the counts must agree exactly, bin by bin
    coords, holes = _grid_holes()
    lc = LagChoice(unit_lag=4.0, n_lags=8)
    pv = build_volume(coords, np.zeros(len(coords)), lc)
    within, within_holes, _ = within_hole_pairs(pv.volume, coords, holes)
    per_hole = []
    for h in np.unique(holes):
        m = holes == h
        one = build_volume(coords[m], np.zeros(m.sum()), lc)
        per_hole.append(one.volume.coarse_sums()[..., 0])
    per_hole = np.array(per_hole)
    assert np.array_equal(within, per_hole.sum(axis=0))
    assert np.array_equal(within_holes, (per_hole > 0).sum(axis=0))
    # and each bin's within-hole pairs are a subset of the pass's pairs of that bin
    assert np.all(within <= pv.volume.coarse_sums()[..., 0])


def test_downhole_nugget_is_the_line_through_the_first_two_lags():
    # 40 pairs 2 m apart differing by 1, 40 pairs 4 m apart differing by 1.2:
    # gamma(2) = 1/2, gamma(4) = 0.72, the line through them meets zero at 0.28
    values = np.r_[np.tile([0.0, 1.0], 40), np.tile([0.0, 1.2], 40)]
    ij = np.arange(160).reshape(80, 2)
    d = np.r_[np.full(40, 2.0), np.full(40, 4.0)]
    nug, pts = downhole_nugget((d, ij), values, 2.0, 1.0, "semivariogram")
    assert [p[:2] for p in pts] == [(2.0, pytest.approx(0.5)), (4.0, pytest.approx(0.72))]
    assert nug == pytest.approx(2 * 0.5 - 0.72)
    # too few down-hole pairs, or an estimator without a nugget to read: none
    assert downhole_nugget((d[:20], ij[:20]), values, 2.0, 1.0, "semivariogram")[0] is None
    assert downhole_nugget((d, ij), values, 2.0, 1.0, "madogram") == (None, None)


@pytest.mark.parametrize("estimator", ["semivariogram", "correlogram"])
def test_weighted_downhole_nugget_equals_the_nugget_of_the_repeated_pairs(estimator):
    # integer pair weights (a replicate's block counts) are the same as repeating each pair
    # that many times: the unweighted rule on the repeated pairs (np.repeat) is the reference
    rng = np.random.default_rng(4)
    values = rng.normal(size=600)
    ij = rng.integers(0, 600, size=(300, 2))
    d = rng.choice([2.0, 4.0, 6.0], size=300) + rng.uniform(-0.3, 0.3, 300)
    w = rng.integers(0, 4, size=300)
    got = downhole_nugget((d, ij), values, 2.0, 1.0, estimator, weights=w)
    want = downhole_nugget((np.repeat(d, w), np.repeat(ij, w, axis=0)), values, 2.0, 1.0,
                           estimator)
    assert got[0] == pytest.approx(want[0], rel=1e-9)
    np.testing.assert_allclose([p[:2] for p in got[1]], [p[:2] for p in want[1]], rtol=1e-9)
    # weights of one are the plain rule
    assert downhole_nugget((d, ij), values, 2.0, 1.0, estimator, weights=np.ones(300))[0] == \
        pytest.approx(downhole_nugget((d, ij), values, 2.0, 1.0, estimator)[0], rel=1e-12)


def test_scattered_bins_are_weighted_by_pairs_per_metre():
    rng = np.random.default_rng(1)
    coords = rng.uniform(0, 100, (400, 3))
    values = rng.normal(size=400)
    lc = LagChoice(unit_lag=8.0, n_lags=6)
    pv = build_volume(coords, values, lc)
    wb = weighted_bins(pv, coords, values, holes=None, spacing=nominal_spacing(coords), lags=lc,
                       total=float(np.var(values)), min_pairs=10)
    b = wb.bins
    assert np.all(b.pairs >= 10) and wb.fixed_nugget is None and wb.downhole is None
    assert np.array_equal(wb.ratio, np.ones_like(wb.ratio))
    assert b.weight == pytest.approx(b.pairs / b.distance)
    assert [c["choice"] for c in wb.choices] == ["bin weights", "nugget"]


def test_drill_hole_bins_count_holes_not_within_hole_pairs():
    coords, holes = _holes(n_holes=30, n=30, step=2.0, seed=2)
    values = np.random.default_rng(3).normal(size=len(coords))
    lc = LagChoice(unit_lag=10.0, n_lags=6)
    pv = build_volume(coords, values, lc)
    wb = weighted_bins(pv, coords, values, holes=holes,
                       spacing=nominal_spacing(coords, holes), lags=lc,
                       total=float(np.var(values)), min_pairs=10)
    # each bin's information is its between-hole pairs plus one per hole: never more than
    # its pairs, so no weight exceeds pairs per metre
    assert np.all(wb.ratio <= 1.0 + 1e-12) and np.all(wb.ratio >= 0.0)
    assert np.all(wb.bins.weight <= wb.bins.pairs / wb.bins.distance * (1 + 1e-12))
    assert wb.choices[0]["choice"] == "drill-hole weights"
    assert wb.downhole is not None and wb.downhole["composite"] == pytest.approx(2.0, rel=0.05)
    # 2 m composites under half the 10 m lag: the down-hole nugget is held in the fit
    assert wb.fixed_nugget == wb.downhole["nugget"]
