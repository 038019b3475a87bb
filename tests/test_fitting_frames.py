"""Tests of the global frame choice (anisotropy.fitting.frames)."""

from dataclasses import dataclass

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from anisotropy.fitting.frames import (FrameStart, axis_swap_shares, choose_frame,
                                       decide_rivals, dominant_directions, frame_starts,
                                       likelihood_margin)
from anisotropy.geometry import line_to_vector


@dataclass(frozen=True)
class _Polished:
    """What choose_frame reads from a polish (its documented callback contract)."""

    frame: np.ndarray
    ranges: np.ndarray
    negloglik: float


def test_margin_is_half_the_chi_square_quantile():
    # chi-square, 3 degrees of freedom, 90 % quantile = 6.2514 (statistical tables, e.g.
    # Abramowitz & Stegun 1964 table 26.8; value recalled from memory)
    assert likelihood_margin(0.9) == pytest.approx(6.2514 / 2, abs=1e-3)


def test_starts_exchange_ranges_and_align_an_axis_with_the_holes():
    F = Rotation.from_euler("zyx", [30, 20, 10], degrees=True).as_matrix()
    R = np.array([[100.0, 50.0, 10.0]])
    u = line_to_vector(200.0, 60.0)
    starts = frame_starts(F, R, hole_directions=[u])
    names = [s.name for s in starts]
    assert names[:3] == ["variogram fit", "major and semi-major exchanged",
                         "semi-major and minor exchanged"]
    assert np.allclose(starts[1].ranges, [[50, 100, 10]])
    assert np.allclose(starts[2].ranges, [[100, 10, 50]])
    G = starts[3].frame
    # a rotation (orthonormal, det +1) with one column exactly along the holes
    assert np.allclose(G.T @ G, np.eye(3), atol=1e-12) and np.linalg.det(G) > 0
    i = int(np.argmax(np.abs(G.T @ u)))
    assert abs(abs(G[:, i] @ u) - 1) < 1e-12
    # the smallest such rotation: the turn equals the angle from F's nearest axis to u
    turn = np.degrees(Rotation.from_matrix(G @ F.T).magnitude())
    expect = np.degrees(np.arccos(np.max(np.abs(F.T @ u))))
    assert turn == pytest.approx(expect, abs=1e-9)


def test_other_frames_close_to_the_variogram_frame_are_not_repeated():
    F = np.eye(3)
    near = Rotation.from_euler("z", 5, degrees=True).as_matrix()
    far = Rotation.from_euler("z", 40, degrees=True).as_matrix()
    starts = frame_starts(F, [[3.0, 2.0, 1.0]], other_frames=[("near", near), ("far", far)])
    assert [s.name for s in starts][3:] == ["far"]


def test_dominant_directions_recover_two_hole_sets():
    rng = np.random.default_rng(0)
    a, b = line_to_vector(90.0, 60.0), line_to_vector(0.0, 10.0)
    dirs, w = [], []
    for base, n in ((a, 30), (b, 20), (line_to_vector(250.0, 30.0), 3)):
        for _ in range(n):
            v = base + 0.03 * rng.standard_normal(3)
            dirs.append(v / np.linalg.norm(v))
            w.append(rng.integers(10, 30))
    out = dominant_directions(np.array(dirs), np.array(w, float))
    assert len(out) == 2  # the three-hole set holds under 20 % of the samples
    assert abs(out[0] @ a) > np.cos(np.radians(2)) and abs(out[1] @ b) > np.cos(np.radians(2))


def _quadratic_polish(minima):
    """A stand-in likelihood with known minima: each start goes to the minimum whose
    columns match its own (by axis cosines) and returns that minimum's value."""
    def polish(frame, ranges):
        best = max(minima, key=lambda m: np.abs(np.diag(m[0].T @ frame)).sum())
        return _Polished(best[0], best[1], best[2])
    return polish


def test_choice_keeps_the_best_and_names_a_rival_within_the_margin():
    F = np.eye(3)
    swapped = F[:, [1, 0, 2]] * np.array([1, 1, -1])
    R = np.array([[100.0, 60.0, 10.0]])
    minima = [(F, R, 10.0), (swapped, R, 11.0)]
    starts = [FrameStart("variogram fit", F, R), FrameStart("exchanged", swapped, R)]
    ch = choose_frame(starts, _quadratic_polish(minima))
    assert ch.best.name == "variogram fit" and ch.ambiguous
    assert ch.ambiguous_axes == ("major", "semi_major")
    assert ch.rival_angles()["major"] == pytest.approx(90.0)
    # beyond the margin the rival is not reported
    minima[1] = (swapped, R, 10.0 + likelihood_margin(0.9) + 0.01)
    ch = choose_frame(starts, _quadratic_polish(minima))
    assert not ch.ambiguous and ch.ambiguous_axes == ()
    d = ch.to_dict()
    assert d["candidates"][0]["chosen"] and not d["candidates"][1]["chosen"]


def test_polished_frames_are_ordered_by_range():
    F = np.eye(3)
    starts = [FrameStart("s", F, np.array([[10.0, 100.0, 50.0]]))]
    ch = choose_frame(starts, lambda f, r: _Polished(f, r, 0.0))
    assert np.allclose(ch.best.ranges, [[100, 50, 10]])
    assert np.allclose(np.abs(ch.best.frame), np.eye(3)[:, [1, 2, 0]])
    assert np.linalg.det(ch.best.frame) > 0


def test_swap_shares_count_exchanged_replicates():
    F = np.eye(3)
    ex = F[:, [1, 0, 2]]
    tilt = Rotation.from_euler("x", 60, degrees=True).as_matrix()  # semi-major/minor swap
    reps = [F, F, ex, tilt]
    s = axis_swap_shares(F, reps)
    assert s["major-semi_major"] == pytest.approx(0.25)
    assert s["semi_major-minor"] == pytest.approx(0.25)
    assert s["major-minor"] == 0.0


def _aniso_field(X, frame, ranges, rng):
    """Gaussian field, anisotropic exponential covariance exp(-3 |h'|) with h' the lag in the
    frame divided by the practical ranges (Journel & Huijbregts 1978, geometric anisotropy);
    plain NumPy Cholesky, independent of the engine."""
    L = (X @ frame) / np.asarray(ranges, float)
    d = np.linalg.norm(L[:, None, :] - L[None, :, :], axis=2)
    C = 0.9 * np.exp(-3.0 * d) + 0.1 * np.eye(len(X))
    return np.linalg.cholesky(C + 1e-10 * np.eye(len(X))) @ rng.standard_normal(len(X))


@pytest.mark.slow
def test_global_choice_with_the_real_likelihood_lands_on_the_true_major():
    from anisotropy.fitting.likelihood import refine_frame_likelihood

    rng = np.random.default_rng(1)
    truth = Rotation.from_euler("z", 30, degrees=True).as_matrix()
    ranges = np.array([60.0, 20.0, 8.0])
    # vertical holes on a 12 m grid, 3 m composites (768 samples)
    gx, gy = np.meshgrid(np.arange(8) * 12.0, np.arange(8) * 12.0)
    X = np.column_stack([np.repeat(gx.ravel(), 12), np.repeat(gy.ravel(), 12),
                         -3.0 * np.tile(np.arange(12.0), 64)])
    y = _aniso_field(X, truth, ranges, rng)
    start_ranges = np.array([[20.0, 60.0, 8.0]])  # major and semi-major exchanged

    def polish(frame, r):
        return refine_frame_likelihood(X, y, frame, r, 0.1, [0.9], ("exponential",),
                                       n_neighbours=20, seed=3, ftol=1e-6)

    ch = choose_frame(frame_starts(truth, start_ranges), polish)
    assert abs(ch.best.frame[:, 0] @ truth[:, 0]) > np.cos(np.radians(8))


def test_rivals_are_judged_against_the_frame_finally_reported():
    # screening: the best candidate sits 20 degrees from a second one within the margin;
    # the final search moved to the second one's axes, so the first is now the rival
    F = np.eye(3)
    G = Rotation.from_euler("z", 20, degrees=True).as_matrix() @ F
    R = np.array([[100.0, 60.0, 10.0]])
    minima = [(F, R, 10.0), (G, R, 10.5)]
    starts = [FrameStart("variogram fit", F, R), FrameStart("other", G, R)]
    ch = choose_frame(starts, _quadratic_polish(minima))
    assert ch.rivals == (1,)
    moved = ch.relative_to(G)
    assert moved.rivals == (0,)
    assert moved.rival_angles()["major"] == pytest.approx(20.0)
    assert moved.to_dict()["candidates"][0]["rival"]
    # a final frame within 15 degrees of every candidate has no rival
    mid = Rotation.from_euler("z", 10, degrees=True).as_matrix()
    assert not ch.relative_to(mid).ambiguous


def test_rivals_are_decided_again_on_the_finer_likelihood():
    # screening (coarse stand-in): F best, G a rival 1 unit below, H outside the margin;
    # the finer stand-in reverses F and G. Expected by hand: G kept, F its rival, H pruned
    # with its screening value
    F = np.eye(3)
    G = Rotation.from_euler("z", 40, degrees=True).as_matrix()
    H = Rotation.from_euler("x", 50, degrees=True).as_matrix()
    R = np.array([[100.0, 60.0, 10.0]])
    starts = [FrameStart("f", F, R), FrameStart("g", G, R), FrameStart("h", H, R)]
    coarse = choose_frame(starts, _quadratic_polish([(F, R, 0.0), (G, R, 1.0), (H, R, 9.0)]))
    assert coarse.best.name == "f" and coarse.rivals == (1,)
    seen = []

    def fine(frame, ranges):
        seen.append(frame)
        return _quadratic_polish([(F, R, 5.0), (G, R, 3.0), (H, R, 0.0)])(frame, ranges)

    ch = decide_rivals(coarse, fine)
    assert len(seen) == 2  # only the finalists are searched again (not h)
    assert ch.best.name == "g" and [c.name for c in ch.candidates] == ["g", "f"]
    assert ch.rivals == (1,) and ch.ambiguous_axes == ("major", "semi_major")
    assert ch.pruned == (("h", 9.0),)
    assert ch.to_dict()["pruned_at_screening"] == [{"name": "h", "loglik_below_best": 9.0}]
    assert ch.to_dict()["screening"]["candidates"][0]["name"] == "f"
    # beyond the margin on the finer likelihood f is no rival there, but the screening
    # could not separate it from g: it stays a rival (the union of the two comparisons)
    far = decide_rivals(coarse, _quadratic_polish([(F, R, 9.0), (G, R, 3.0), (H, R, 0.0)]))
    assert far.best.name == "g" and far.rivals == ()
    assert far.ambiguous and far.ambiguous_axes == ("major", "semi_major")
    assert [c.name for c, _ in far.rival_frames()] == ["f"]
    assert far.rival_angles()["major"] == pytest.approx(40.0)
    moved = far.relative_to(G)  # judged against the frame finally reported: the same
    assert moved.ambiguous_axes == ("major", "semi_major")
    assert moved.to_dict()["screening"]["candidates"][0]["rival"]
    # the choice row counts every candidate screened and says which were searched again
    from anisotropy.fitting.refine import _choice_texts
    row, warning = _choice_texts(far)
    assert row["value"] == "g" and row["reason"].startswith("3 candidate frames")
    assert "the best 2, which that screening could not separate, searched again" in row["reason"]
    assert "0.00 log-likelihood units below the best candidate" in warning  # f led the screening
    # no rival: nothing is searched again
    alone = choose_frame(starts[:1], _quadratic_polish([(F, R, 0.0)]))
    assert decide_rivals(alone, lambda f, r: pytest.fail("searched")) is alone


def test_matched_rotation_ignores_a_relabelling_of_the_same_axes():
    from anisotropy.fitting.refine import matched_rotation

    G = Rotation.from_euler("zyx", [30, 20, 10], degrees=True).as_matrix()
    turn = Rotation.from_euler("xyz", [3, -4, 5], degrees=True)
    F = turn.as_matrix() @ G
    relabelled = F[:, [1, 0, 2]] * np.array([1, -1, 1])  # columns exchanged, one reversed
    assert np.linalg.det(relabelled) > 0
    Q = matched_rotation(relabelled, G)
    # SciPy's rotation between the frames: the same small turn, not a 90 degree one
    assert np.allclose(Q, turn.as_matrix(), atol=1e-12)
