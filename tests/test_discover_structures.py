"""Tests of the ``choose_structures`` stage and of ``fitting.refine.refine_frame``.

Fit bins are exact values of spherical models (Journel & Huijbregts 1978,
ch. II, written here); the ordered model is checked against the frame's
columns permuted by hand.
"""

import dataclasses

import numpy as np
import pytest

from anisotropy.discovery.search import FitSettings, Search
from anisotropy.discovery.structures import choose_structures, ordered_model
from anisotropy.fitting import FitBins, fit_nested
from anisotropy.fitting.refine import refine_frame
from anisotropy.geometry import fan_for_spacing


def _bins(F, structures, nugget=0.1):
    dirs = fan_for_spacing(15.0)
    dist = np.arange(1, 16) * 10.0
    lags = (dist[None, :, None] * dirs[:, None, :]).reshape(-1, 3)
    gamma = np.full(len(lags), nugget)
    for sill, ranges in structures:
        h = np.minimum(np.sqrt(np.sum((lags @ F / np.asarray(ranges)) ** 2, axis=1)), 1.0)
        gamma += sill * (1.5 * h - 0.5 * h ** 3)
    b = FitBins(lags=lags, distance=np.linalg.norm(lags, axis=1), gamma=gamma,
                pairs=np.full(len(lags), 1000.0),
                direction_index=np.repeat(np.arange(len(dirs)), len(dist)),
                lag_index=np.tile(np.arange(1, len(dist) + 1), len(dirs)))
    b.weight = b.pairs / b.distance
    return b


SETTINGS = FitSettings.for_lags(10.0, 155.0, fixed_nugget=None, total_sill=1.0, planar=False)


def _search(bins):
    f = fit_nested(bins, (np.eye(3), 0.1, [0.9], [[100.0, 50.0, 20.0]], ("spherical",)),
                   **SETTINGS.kwargs())
    return Search(best=f, tried=[], kinds=[])


def test_one_structure_is_chosen_on_one_structure_bins():
    bins = _bins(np.eye(3), [(0.9, (100.0, 50.0, 20.0))])
    ref = choose_structures(bins, _search(bins), SETTINGS, coords=np.zeros((0, 3)),
                            values=np.zeros(0), refine=False)
    assert len(ref.model.structures) == 1 and ref.frame_refinement is None
    assert ref.record is None and ref.correction is None
    assert ref.choices[-1]["reason"].startswith("chosen by BIC")
    st = ref.model.structures[0]
    assert st.ranges == pytest.approx((100.0, 50.0, 20.0), rel=0.01)
    asked = choose_structures(bins, _search(bins), SETTINGS, coords=np.zeros((0, 3)),
                              values=np.zeros(0), n_structures=2, refine=False)
    assert len(asked.model.structures) == 2
    assert asked.choices[-1] == {"choice": "structures", "value": 2, "reason": "as requested"}


def test_the_model_frame_is_ordered_by_the_longest_structure():
    # the fit's columns hold ranges 20, 100, 50: the model's must be 100, 50, 20 (the fit's
    # columns 1, 2, 0), right-handed
    F = np.eye(3)
    fit = dataclasses.make_dataclass("Fit", ["frame", "ranges", "sills", "kinds", "nugget"])(
        F, np.array([[20.0, 100.0, 50.0]]), np.array([0.9]), ("spherical",), 0.1)
    m = ordered_model(fit)
    assert m.structures[0].ranges == (100.0, 50.0, 20.0)
    for i, j in enumerate((1, 2, 0)):
        assert abs(m.frame[:, i] @ F[:, j]) == pytest.approx(1.0)
    assert np.linalg.det(m.frame) == pytest.approx(1.0)


def test_refinement_keeps_the_fit_for_few_samples_and_catches_only_data_errors():
    bins = _bins(np.eye(3), [(0.9, (100.0, 50.0, 20.0))])
    fit = _search(bins).best
    rng = np.random.default_rng(0)
    # under 100 samples the likelihood adds nothing: the fit comes back untouched
    few = refine_frame(fit, bins, rng.uniform(0, 100, (50, 3)), rng.normal(size=50),
                       fit_kwargs=SETTINGS.kwargs())
    assert few.fit is fit and few.record is None and few.warnings == ()
    coords = rng.uniform(0, 100, (300, 3))
    # a start without sill is a data problem (FitError): said, and the fit kept
    no_sill = dataclasses.replace(fit, nugget=0.0, sills=np.array([0.0]))
    out = refine_frame(no_sill, bins, coords, rng.normal(size=300),
                       fit_kwargs=SETTINGS.kwargs())
    assert out.fit is no_sill and out.correction is None
    assert len(out.warnings) == 1 and "likelihood refinement of the frame failed" in out.warnings[0]
    # a shape bug is not a data problem: it surfaces
    with pytest.raises(ValueError):
        refine_frame(fit, bins, coords, rng.normal(size=299), fit_kwargs=SETTINGS.kwargs())


def test_a_one_structure_refit_that_relabels_the_likelihoods_axes_is_not_reported():
    # issue 15, oblique holes seed 104: the likelihood put its longest range (158 m) on the
    # first column, the variogram refit with that frame held put 111 m on the second and
    # 102 m on the first, so the reported major became the likelihood's semi-major
    from anisotropy.fitting.likelihood import LikelihoodFit
    from anisotropy.fitting.refine import _keep_axis_order, _Problem

    bins = _bins(np.eye(3), [(0.9, (100.0, 50.0, 20.0))])  # the variogram: major on x
    rng = np.random.default_rng(0)
    start = _search(bins).best
    P = _Problem(bins, rng.uniform(0, 100, (300, 3)), rng.normal(size=300), 0,
                 SETTINGS.kwargs(), start)
    lk = LikelihoodFit(frame=np.eye(3), ranges=np.array([[50.0, 100.0, 20.0]]),
                       nugget_share=0.1, shares=np.array([0.9]), negloglik=0.0,
                       negloglik_start=0.0, n_samples=300, n_neighbours=30)
    f = P.refit((np.eye(3), start.nugget, start.sills, start.ranges, start.kinds), np.eye(3))
    assert np.argmax(f.ranges[0]) == 0  # the refit's longest range is on x
    kept, held, warning = _keep_axis_order(P, lk, f)
    # by hand: the likelihood's ranges (y longest) with the refit's own nugget and sill
    # (not the likelihood's shares: lk says 0.1 / 0.9, the refit of these bins about 0.1)
    assert np.allclose(kept.ranges, [[50.0, 100.0, 20.0]])
    assert kept.nugget == pytest.approx(f.nugget) and kept.sills[0] == pytest.approx(f.sills[0])
    assert "changed which axis is the major" in held and warning.startswith(held)
    # a likelihood that put its whole sill on the structure (no nugget) leaves the nugget
    no_nugget = dataclasses.replace(lk, nugget_share=0.0, shares=np.array([1.0]))
    assert _keep_axis_order(P, no_nugget, f)[0].nugget == pytest.approx(f.nugget)
    # the same order: the refit stands
    same = dataclasses.replace(lk, ranges=np.array([[100.0, 50.0, 20.0]]))
    assert _keep_axis_order(P, same, f) == (f, None, None)


def _problem(fixed_nugget=None, n=300, seed=0, values=None, coords=None):
    from anisotropy.fitting.refine import _Problem

    bins = _bins(np.eye(3), [(0.9, (100.0, 50.0, 20.0))])
    rng = np.random.default_rng(seed)
    settings = FitSettings.for_lags(10.0, 155.0, fixed_nugget=fixed_nugget, total_sill=1.0,
                                    planar=False)
    coords = rng.uniform(0, 100, (n, 3)) if coords is None else coords
    values = rng.normal(size=n) if values is None else values
    start = _search(bins).best
    return _Problem(bins, coords, values, 0, settings.kwargs(), start), start


def test_the_likelihoods_model_is_reported_in_the_variograms_terms(monkeypatch):
    # by hand: the likelihood's ranges, its nugget share 0.2 and structure share 0.8 of
    # the refit's total sill; a held nugget stays held and the structure takes the rest
    from anisotropy.fitting import refine
    from anisotropy.fitting.likelihood import LikelihoodFit

    lk = LikelihoodFit(frame=np.eye(3), ranges=np.array([[90.0, 40.0, 15.0]]),
                       nugget_share=0.2, shares=np.array([0.8]), negloglik=0.0,
                       negloglik_start=0.0, n_samples=300, n_neighbours=30,
                       kinds=("spherical",))
    for held_nugget in (None, 0.3):
        P, start = _problem(held_nugget)
        f = P.refit((np.eye(3), start.nugget, start.sills, start.ranges, start.kinds),
                    np.eye(3))
        tot = float(f.nugget + np.sum(f.sills))
        out, refit, what = refine._likelihood_reported(P, lk, f, None)
        assert np.allclose(out.ranges, [[90.0, 40.0, 15.0]])
        nugget = 0.2 * tot if held_nugget is None else held_nugget
        assert out.nugget == pytest.approx(nugget)
        assert out.sills[0] == pytest.approx(tot - nugget)
        assert refit["ranges"] == np.asarray(f.ranges).tolist() and "likelihood" in what
        # nothing to replace: the axes were relabelled (held), other structures or kinds,
        # or the switch off
        assert refine._likelihood_reported(P, lk, f, "held")[0] is f
        two = dataclasses.replace(lk, ranges=np.array([[30.0, 20.0, 5.0], [90.0, 40.0, 15.0]]),
                                  shares=np.array([0.3, 0.5]), kinds=("spherical",) * 2)
        assert refine._likelihood_reported(P, two, f, None)[0] is f
        other = dataclasses.replace(lk, kinds=("exponential",))
        assert refine._likelihood_reported(P, other, f, None)[0] is f
        monkeypatch.setattr(refine, "REPORT_LIKELIHOOD_MODEL", False)
        assert refine._likelihood_reported(P, lk, f, None) == (f, None, None)
        monkeypatch.setattr(refine, "REPORT_LIKELIHOOD_MODEL", True)


def test_the_kind_of_one_structure_is_chosen_by_the_likelihood():
    # a spherical field (Cholesky of the spherical formula, Journel & Huijbregts 1978,
    # ch. II, computed here with NumPy), started from an exponential: the spherical
    # likelihood is the higher, and the variogram refit then carries that kind
    from anisotropy.fitting.refine import _kind_choice

    rng = np.random.default_rng(3)
    X = rng.uniform(0, 150, (700, 3)) * [1.0, 1.0, 0.5]
    h = np.sqrt((((X[:, None, :] - X[None, :, :]) / [80.0, 40.0, 20.0]) ** 2).sum(axis=2))
    C = 0.95 * np.where(h < 1, 1 - 1.5 * h + 0.5 * h ** 3, 0.0) + 0.05 * np.eye(len(X))
    y = np.linalg.cholesky(C) @ rng.standard_normal(len(X))
    P, start = _problem(coords=X, values=y)
    lk = P.likelihood(np.eye(3), [[80.0, 40.0, 20.0]], 0.05, [0.95], ("exponential",))
    f = P.refit((np.eye(3), start.nugget, start.sills, start.ranges, ("exponential",)),
                lk.frame)
    best, g, record = _kind_choice(P, lk, f, ("spherical", "exponential"))
    nll = record["negloglik"]
    assert set(nll) == {"spherical", "exponential"} and record["variogram_kind"] == "exponential"
    assert nll["spherical"] < nll["exponential"] and record["chosen"] == "spherical"
    assert best.kinds == ("spherical",) and tuple(g.kinds) == ("spherical",)
    assert best.negloglik == pytest.approx(nll["spherical"])
    # the kind fixed by the user (no candidates), or two structures: nothing compared
    assert _kind_choice(P, lk, f, ()) == (lk, f, None)


def test_half_correlation_distances_solve_the_kinds_formulas():
    # closed forms worked by hand from the formulas (Journel & Huijbregts 1978, ch. II;
    # the exponential and Gaussian in their practical-range form): exp(-3h) = 1/2 at
    # h = ln 2 / 3, exp(-3h^2) = 1/2 at sqrt(ln 2 / 3); the spherical's root of
    # 1 - 1.5h + 0.5h^3 = 1/2 by NumPy's polynomial roots
    from anisotropy.fitting.refine import half_correlation

    assert half_correlation("exponential") == pytest.approx(np.log(2) / 3)
    assert half_correlation("gaussian") == pytest.approx(np.sqrt(np.log(2) / 3))
    roots = np.roots([0.5, 0.0, -1.5, 0.5])
    sph = [r.real for r in roots if abs(r.imag) < 1e-12 and 0 < r.real < 1]
    assert half_correlation("spherical") == pytest.approx(sph[0])


def test_a_kind_whose_search_fails_is_left_out_of_the_choice():
    # a data failure (FitError) of one candidate kind's search does not end the refinement:
    # that kind is listed as failed and the others are compared as usual
    from anisotropy.errors import FitError
    from anisotropy.fitting.likelihood import LikelihoodFit
    from anisotropy.fitting.refine import _kind_choice, _kind_row

    P, start = _problem()
    lk = LikelihoodFit(frame=np.eye(3), ranges=np.array([[90.0, 40.0, 15.0]]),
                       nugget_share=0.2, shares=np.array([0.8]), negloglik=-10.0,
                       negloglik_start=0.0, n_samples=300, n_neighbours=30,
                       kinds=("spherical",))
    f = P.refit((np.eye(3), start.nugget, start.sills, start.ranges, start.kinds), np.eye(3))

    def likelihood(frame, ranges, nugget, sills, kinds, **kw):
        if kinds == ("gaussian",):
            raise FitError("the covariance is not positive definite")
        return dataclasses.replace(lk, kinds=kinds, negloglik=-5.0)

    P.likelihood = likelihood
    best, g, record = _kind_choice(P, lk, f, ("spherical", "exponential", "gaussian"))
    assert best is lk and g is f
    assert record["negloglik"] == {"spherical": -10.0, "exponential": -5.0}
    assert "positive definite" in record["failed"]["gaussian"]
    assert "gaussian not compared" in _kind_row(record)["reason"]
