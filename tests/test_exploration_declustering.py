"""Tests of anisotropy.exploration.declustering: cell declustering.

Reference: the weights 1/(occupied cells x samples in the cell) of Isaaks &
Srivastava (1989), ch. 10, computed by hand or by a brute-force loop.
"""

import json

import numpy as np
import pytest

from anisotropy.exploration import cell_declustering


# declustering

def clustered_grid():
    """10 x 10 grid at 10 m plus nine extra samples inside the cell of node (50, 50)."""
    xx, yy = np.meshgrid(np.arange(0, 100, 10.0), np.arange(0, 100, 10.0))
    grid = np.column_stack([xx.ravel(), yy.ravel(), np.zeros(xx.size)])
    off = np.linspace(0.05, 0.45, 9)
    cluster = np.column_stack([50 + off, 50 + off[::-1], np.zeros(9)])
    coords = np.vstack([grid, cluster])
    values = np.concatenate([np.ones(100), np.full(9, 10.0)])
    return coords, values


@pytest.mark.parametrize("n_offsets", [1, 5])
def test_cell_declustering_hand_built(n_offsets):
    coords, values = clustered_grid()
    dec = cell_declustering(coords, values, cell_sizes=[10.0], n_offsets=n_offsets)
    # by hand (Isaaks & Srivastava 1989 ch. 10, w = 1/(L n_c)): 100 occupied cells;
    # 99 cells hold one grid node (w = 1/100), the cell at (50, 50) holds the node and
    # the nine cluster samples (w = 1/1000 each); the cluster stays in that cell for
    # every origin shift (shifts < 10 m, cluster within 0.5 m of the node)
    expected = np.full(109, 1 / 100)
    at = (coords[:, 0] >= 50) & (coords[:, 0] < 51) & (coords[:, 1] >= 50) & (coords[:, 1] < 51)
    expected[at] = 1 / 1000
    np.testing.assert_allclose(dec.weights, expected, rtol=1e-12)
    assert dec.mean == pytest.approx(0.99 * 1 + (1 * 1 + 9 * 10) / 1000)  # 1.081
    assert dec.std == pytest.approx(np.sqrt(np.sum(expected * (values - 1.081) ** 2)))
    assert dec.naive_mean == pytest.approx(190 / 109)
    assert dec.criterion == "given"


def brute_force_weights(coords, size, n_offsets):
    """Dictionary-of-cells version of the Isaaks & Srivastava (1989, ch. 10) weights."""
    c0 = coords - coords.min(axis=0)
    w = np.zeros(len(coords))
    for k in range(n_offsets):
        cells = {}
        for i, p in enumerate(c0):
            key = tuple(int(np.floor((p[a] + size * k / n_offsets) / size)) for a in range(3))
            cells.setdefault(key, []).append(i)
        for members in cells.values():
            for i in members:
                w[i] += 1.0 / (len(cells) * len(members))
    return w / n_offsets


def test_cell_weights_against_brute_force(rng):
    coords = np.vstack([rng.uniform(0, 100, (80, 3)), rng.normal(30, 3, (40, 3))])
    values = rng.lognormal(0, 1, 120)
    for size in (7.0, 19.0, 40.0):
        dec = cell_declustering(coords, values, cell_sizes=[size], n_offsets=4)
        np.testing.assert_allclose(dec.weights, brute_force_weights(coords, size, 4), rtol=1e-12)
        assert dec.weights.sum() == pytest.approx(1.0)


def test_cell_size_chosen_by_smallest_declustered_mean():
    coords, values = clustered_grid()
    sizes = [0.01, 2.0, 5.0, 10.0, 20.0, 50.0, 1000.0]
    dec = cell_declustering(coords, values, cell_sizes=sizes)
    table = dec.table
    assert list(table["cell_size"]) == sizes
    assert dec.mean == pytest.approx(table["mean"].min())
    assert dec.cell_size == table["cell_size"][table["mean"].idxmin()]
    # very small cells (0.01 m, below the 0.05 m gaps in the cluster) or very large
    # ones (1000 m: all in one cell for every origin shift) give back the naive mean:
    # arithmetic from the weight formula
    assert table["mean"].iloc[0] == pytest.approx(190 / 109)
    assert table["mean"].iloc[-1] == pytest.approx(190 / 109)
    assert dec.mean < 190 / 109
    json.dumps(dec.to_dict())
