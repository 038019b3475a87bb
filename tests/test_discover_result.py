"""Tests of the ``Discovery`` result: its records, its record file and its bootstrap.

The field is simulated by Cholesky factorisation (``scipy.linalg.cholesky``)
of the spherical covariance (Journel & Huijbregts 1978, ch. II) written
here; the bootstrap's block side is checked against
``anisotropy.uncertainty.engine_block_side`` and its block count against
``numpy.unique`` of the block indices; a replicate's down-hole nugget against
the plain rule on the pairs whose midpoints (``numpy.floor`` on the block
grid) lie in the blocks it kept.
"""

import numpy as np
import pandas as pd
import pytest
from scipy.linalg import cholesky
from threadpoolctl import threadpool_info, threadpool_limits

import anisotropy
from anisotropy import pipeline
from anisotropy.discovery import Discovery, RefitState
from anisotropy.errors import InputError
from anisotropy.discovery.bins import downhole_nugget
from anisotropy.uncertainty import MIN_BLOCKS, BootstrapResult, engine_block_side
from anisotropy.uncertainty.blocks import block_weights_from_groups

STAGES = ("read", "prepare", "transform", "sill", "lags", "volume", "bins", "fan", "starts",
          "search", "structures", "continuity", "diagnose")


def _table(seed=5, n=500):
    rng = np.random.default_rng(seed)
    coords = rng.uniform([0, 0, 0], [200, 200, 100], size=(n, 3))
    # spherical covariance, ranges 120 / 60 / 25 m along x, y, z; nugget 0.2
    h = np.sqrt(np.sum(((coords[:, None] - coords[None]) / [120.0, 60.0, 25.0]) ** 2, -1))
    hc = np.minimum(h, 1.0)
    C = 0.8 * (1 - 1.5 * hc + 0.5 * hc ** 3) + 0.2 * np.eye(n)
    v = cholesky(C, lower=True) @ rng.standard_normal(n)
    return pd.DataFrame({"x": coords[:, 0], "y": coords[:, 1], "z": coords[:, 2],
                         "g": v + 10.0})


@pytest.fixture(scope="module")
def run():
    return anisotropy.discover(_table(), value="g", structures=1, fan_spacing=15, seed=3)


def test_the_result_is_composed_of_the_stage_records(run):
    D = run
    assert isinstance(D, Discovery) and isinstance(D.refit, RefitState)
    assert D.model is D.refinement.model and D.volume_ is D.pair_volume.volume
    assert D.lags == D.lag_choice.record() and D.transform is D.transform_choice.result
    # every stage timed, and the total
    assert set(D.seconds) == set(STAGES) | {"total"}
    d = D.to_dict()
    assert set(d["diagnostics"]["seconds"]) == set(STAGES) | {"total"}
    # the choices are the stages' own, in the order of the chain
    names = [c["choice"] for c in D.choices]
    assert names.index("transform") < names.index("unit lag") < names.index("bootstrap blocks") \
        < names.index("bin weights") < names.index("direction fan") < names.index("structures")


def test_without_a_bootstrap_the_pass_keeps_no_blocks_and_a_later_one_builds_them(run):
    # issue 16: the pass is sized to what the fit needs; a later bootstrap makes one more
    # pass with blocks sized for it (issue 14: enough occupied blocks to resample)
    D = run
    assert D.uncertainty is None and D.to_dict()["uncertainty"] == {}
    assert not D.pair_volume.has_blocks and D.volume_.block_sums.shape[0] == 0
    row = next(c for c in D.choices if c["choice"] == "bootstrap blocks")
    assert row["value"] is None and "keeps no block sums" in row["reason"]
    V = D.volume_with_blocks()
    assert D.volume_with_blocks() is V                 # built once
    side = engine_block_side(D.samples.coords, max_side=D.lags["max_distance"])
    assert np.all(np.asarray(V.block_size) == side)
    c = D.samples.coords
    assert len(np.unique(np.floor((c - c.min(0)) / side), axis=0)) >= MIN_BLOCKS
    # the same pairs: counts exactly, sums up to the order of the additions; the blocks
    # partition them (their counts add up to the volume's)
    assert np.array_equal(V.sums[..., 0], D.volume_.sums[..., 0])
    np.testing.assert_allclose(V.sums, D.volume_.sums, rtol=1e-12, atol=0)
    assert np.array_equal(V.block_sums[..., 0].sum(axis=0), V.coarse_sums()[..., 0])


def test_the_bootstrap_method_gives_what_discover_gives(run):
    # the same blocks, seed and refit: bootstrapping a discovery later equals asking
    # discover for the bootstrap (exact equality of the bands): both make the same pass
    # with blocks after the fit's pass without them
    later = run.bootstrap(12, rng=3, confidence_level=0.9)
    assert isinstance(later, BootstrapResult) and later.n_requested == 12
    assert run.uncertainty is None                    # the method does not store it
    D = anisotropy.discover(_table(), value="g", structures=1, fan_spacing=15, seed=3,
                            bootstrap=12)
    assert not D.pair_volume.has_blocks and D.volume_with_blocks() is D.volume_with_blocks()
    a, b = D.bootstrap(12, rng=3, confidence_level=0.9).to_dict(), D.uncertainty.to_dict()
    a.pop("seconds"), b.pop("seconds")
    assert a == b
    assert np.array_equal(run.volume_with_blocks().block_sums,
                          D.volume_with_blocks().block_sums, equal_nan=True)
    # the same resampling blocks (the rule's text names the main fit's major range, which
    # the two runs' sums, added in another order, may move in the fourth digit)
    for key in ("factor", "side", "n_blocks"):
        assert later.to_dict()["blocks"][key] == b["blocks"][key]
    with pytest.raises(InputError, match="bootstrap method"):
        run.bootstrap(5, method="jackknife")


def test_the_refit_gives_back_the_main_fit(run):
    model, objective = run.refit_function()(run.volume_.coarse_sums())
    assert np.isfinite(objective)
    for i in range(3):
        assert abs(model.frame[:, i] @ run.frame[:, i]) > np.cos(np.radians(1.0))


def _holes_table(seed=2):
    # 6 x 6 vertical holes 20 m apart, 2 m composites to 50 m; spherical 90 / 45 / 12 m
    # along x, y, z with a 0.3 nugget (Cholesky, as _table)
    rng = np.random.default_rng(seed)
    z = np.arange(1.0, 50.0, 2.0)
    coords = np.array([[20.0 * i, 20.0 * j, -zz] for i in range(6) for j in range(6)
                       for zz in z])
    holes = np.repeat([f"H{k:02d}" for k in range(36)], len(z))
    h = np.sqrt(np.sum(((coords[:, None] - coords[None]) / [90.0, 45.0, 12.0]) ** 2, -1))
    hc = np.minimum(h, 1.0)
    C = 0.7 * (1 - 1.5 * hc + 0.5 * hc ** 3) + 0.3 * np.eye(len(coords))
    v = cholesky(C, lower=True) @ rng.standard_normal(len(coords))
    return pd.DataFrame({"x": coords[:, 0], "y": coords[:, 1], "z": coords[:, 2],
                         "g": v + 10.0, "hole": holes})


def test_the_bootstrap_re_reads_the_held_downhole_nugget_in_each_replicate():
    # issue 15, item 6: on drill holes the nugget is held at the down-hole one in the fit;
    # each block-bootstrap replicate reads it again from its re-weighted down-hole pairs,
    # so the nugget (and the one structure's sill) get intervals instead of none
    D = anisotropy.discover(_holes_table(), value="g", hole="hole", transform="raw",
                            structures=1, seed=3)
    wb = D.weighted
    assert wb.fixed_nugget is not None and D.model.nugget == pytest.approx(wb.fixed_nugget)
    V = D.volume_with_blocks()
    refit = D.refit_function(V)
    assert refit.downhole is not None and D.refit_function().downhole is None
    # all blocks kept: the main nugget; only some blocks kept: the plain rule on the pairs
    # whose midpoints lie in them (block grid by hand)
    assert refit.downhole(np.ones(V.n_blocks)) == pytest.approx(wb.fixed_nugget, rel=1e-12)
    d, ij = wb.downhole_pairs
    c = D.samples.coords
    mid = 0.5 * (c[ij[:, 0]] + c[ij[:, 1]]) - V.block_origin
    shape = np.array(V.block_shape)
    b = np.minimum(np.floor(mid / V.block_size).astype(int), shape - 1)
    flat = (b[:, 0] * shape[1] + b[:, 1]) * shape[2] + b[:, 2]
    keep = np.isin(np.arange(V.n_blocks), np.unique(flat)[::2])
    m = keep[flat]
    want = downhole_nugget((d[m], ij[m]), D.transform_choice.values,
                           wb.downhole["composite"], D.refit.settings.total_sill,
                           D.estimator)[0]
    assert refit.downhole(keep.astype(float)) == pytest.approx(want, rel=1e-12)
    # the replicates' nuggets are those of their own block weights, and have an interval
    boot = D.bootstrap(16, rng=1)
    weights = block_weights_from_groups(boot.counts, boot.group_of_block)
    np.testing.assert_allclose(boot.nugget, [refit.downhole(w) for w in weights], rtol=1e-9)
    u = boot.to_dict()
    assert np.ptp(boot.nugget) > 0 and u["nugget"] is not None and u["sills"][0] is not None
    assert u["nugget"][0] <= D.model.nugget <= u["nugget"][1]
    assert not any("nugget is held" in n for n in u["notes"])


def test_asking_for_a_bootstrap_does_not_change_the_answer():
    # the answer is computed before the bootstrap, from the same pass: bit for bit the
    # same frame and model with and without one (on drill holes a pass that also filled
    # block channels added its sums in another order, and the frame choice carried that
    # into a different answer on 16 of 120 benchmark realisations)
    df = _holes_table()
    kw = dict(value="g", hole="hole", transform="raw", seed=3, n_jobs=1)
    plain = anisotropy.discover(df, **kw)
    boot = anisotropy.discover(df, bootstrap=4, **kw)
    assert np.array_equal(plain.frame, boot.frame)
    assert plain.model.to_dict() == boot.model.to_dict()
    assert boot.uncertainty is not None and boot.pair_volume.has_blocks is False


def test_the_chain_runs_with_blas_on_one_thread(monkeypatch):
    # threadpoolctl's record of the loaded BLAS libraries, taken inside two stages that
    # call BLAS: the caller lets BLAS use two threads, the chain runs them on one (with
    # two, the demo blanket's directional fits moved in the last bits and its likelihood
    # ranges by 20 %: benchmarks/RESULTS.md)
    seen = []

    def spy(stage):
        def wrapped(*args, **kwargs):
            seen.append(sorted({int(i["num_threads"]) for i in threadpool_info()
                                if i["user_api"] == "blas"}))
            return stage(*args, **kwargs)
        return wrapped

    for name in ("fan_ranges", "choose_structures"):
        monkeypatch.setattr(pipeline, name, spy(getattr(pipeline, name)))
    with threadpool_limits(limits=2):
        anisotropy.discover(_table(n=300), value="g", structures=1, fan_spacing=15, seed=3)
    assert seen == [[1], [1]]
