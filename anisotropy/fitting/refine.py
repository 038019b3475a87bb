"""The variogram fit's frame refined by the samples' nearest-neighbour likelihood.

After the joint variogram fit, the frame is refined by a nearest-neighbour
(Vecchia 1988) Gaussian likelihood of the samples themselves
(:func:`anisotropy.fitting.likelihood.refine_frame_likelihood`).  The
likelihood's ranges, nugget and sill shares are reported, scaled to the
variogram fit's total sill (``REPORT_LIKELIHOOD_MODEL``): on simulated
scattered fields its ranges came two to three times closer to the truth
than a variogram refit with the frame held, which is kept in the record for
comparison.  The likelihood sees which sample sits next to which, so on
drill-hole strings it uses the across-hole information that the variogram
bins dilute.

Pure fitting: arrays, fit bins and fits in; a :class:`FrameRefinement` out.
"""

from __future__ import annotations

import functools
import itertools
from dataclasses import dataclass, replace

import numpy as np
from scipy.optimize import brentq

from anisotropy.constants import AXES
from anisotropy.errors import FitError
from anisotropy.fitting.bins import FitBins
from anisotropy.fitting.frames import (FrameChoice, PolishedFrame, global_frame_choice,
                                       likelihood_margin, ordered_axes)
from anisotropy.fitting.information import ReportedInformation, information_cones
from anisotropy.fitting.likelihood import refine_frame_likelihood, vecchia_setup
from anisotropy.fitting.nested import NestedFit, fit_nested
from anisotropy.geometry import vector_to_line
from anisotropy.models import correlation

__all__ = ["FrameRefinement", "refine_frame", "LIKELIHOOD_MAX_SAMPLES",
           "LIKELIHOOD_NEIGHBOURS", "LIKELIHOOD_NESTED_SHORT", "LIKELIHOOD_MIN_SHARE",
           "LIKELIHOOD_NESTED_FTOL", "LIKELIHOOD_NESTED_SCREEN_FTOL", "LIKELIHOOD_FTOL"]

#: Larger sample sets are subsampled to this size for the likelihood.
LIKELIHOOD_MAX_SAMPLES = 2000
LIKELIHOOD_NEIGHBOURS = 30      # 20: about half the time, less accurate (RESULTS.md)
#: When the variogram fit keeps one structure, the likelihood is also
#: maximised with a second, shorter structure added (ranges this fraction of
#: the first, half the sill each to start), and that frame is kept when the
#: likelihood gain passes the BIC penalty of the four extra parameters: a
#: one-structure likelihood on a two-structure field turned the frame up to
#: 15 degrees wrong (benchmarks/RESULTS.md, issue 4).
LIKELIHOOD_NESTED_SHORT = 0.3
#: Least share of the total sill either structure must keep in the variogram
#: refit for the likelihood's second structure to be reported.
LIKELIHOOD_MIN_SHARE = 0.05
#: Relative stopping tolerance of the nested likelihood search (see
#: ``fitting.likelihood.refine_frame_likelihood``; None: SciPy's default, the
#: search then stops on the gradient). As ``LIKELIHOOD_FTOL``.
LIKELIHOOD_NESTED_FTOL = None
#: The second structure's search is first run to this looser tolerance (the
#: global frame choice's screening tolerance): it only decides whether the
#: gain passes the BIC penalty. It goes on to ``LIKELIHOOD_NESTED_FTOL`` only
#: when the decision is close, its gain within ``likelihood_margin(0.9, 4)``
#: (the 90 % likelihood-ratio resolution of the four added parameters, 3.9
#: log-units) of the penalty or past it. Stopped there, the search had at most
#: 1.0 log-unit left to gain on nine test sets, every decision the same as the
#: finished search's (benchmarks/RESULTS.md, "Likelihood: the second structure
#: decided at the screening tolerance").
LIKELIHOOD_NESTED_SCREEN_FTOL = 1e-4
#: The same for the first (variogram structures) likelihood search and the
#: kind choice. None: SciPy's default (2.2e-9), so the search stops on the
#: gradient, at the maximum. At 1e-5 (a step gaining less than 0.005 of a
#: log-likelihood of 500 stopped it) the demo blanket, whose likelihood is
#: flat in its ranges and nugget, stopped 0.3 log-units short, with ranges
#: 20 % apart depending on the last bits of its start (BLAS on one thread or
#: two); converged, both starts give the same ranges to 0.3 % and the
#: discovery takes as long, within the noise (benchmarks/RESULTS.md,
#: "Likelihood: searched to the maximum").
LIKELIHOOD_FTOL = None
#: Compare candidate frames globally by the likelihood before the refinement
#: (:func:`anisotropy.fitting.frames.global_frame_choice`); off only to measure
#: what the choice costs and changes (benchmarks).
GLOBAL_FRAME_CHOICE = True
#: Conditioning neighbours of the global choice's candidate searches: a
#: coarser Vecchia approximation than the refinement's (the cost of a
#: conditioning set grows with the cube of its size), the same for every
#: candidate, so their log-likelihoods stay comparable; the chosen frame is
#: then searched again with ``LIKELIHOOD_NEIGHBOURS``.
SCREEN_NEIGHBOURS = 15
#: Samples of the global choice's shared conditioning (a random subset when
#: there are more): the screening compares basins, which a thousand samples
#: separate; the chosen frame is then searched on ``LIKELIHOOD_MAX_SAMPLES``.
SCREEN_MAX_SAMPLES = 1000
#: The global choice's best candidate and its rivals (frames the screening
#: cannot separate) are compared again with ``LIKELIHOOD_NEIGHBOURS`` on
#: ``LIKELIHOOD_MAX_SAMPLES`` (:func:`anisotropy.fitting.frames.decide_rivals`):
#: on issue-15 oblique holes seed 104 the screening's order among four
#: frames within its margin was its approximation's, and the frame it kept
#: was 59 degrees off on two axes (benchmarks/RESULTS.md, "Issue-15
#: scenarios"). Off only to measure what it costs and changes.
DECIDE_RIVALS = True
#: Also write each axis's cone from the likelihood's observed information
#: (:meth:`FrameRefinement.likelihood_information`) into the record's
#: ``information``, whatever the layout (a study, ``benchmarks/RESULTS.md``;
#: the bootstrap asks for them itself where they are used).
INFORMATION_CONES = False
#: Report the likelihood's ranges, nugget and sill shares (scaled to the variogram
#: fit's total sill) instead of a variogram refit's with the likelihood's frame
#: held. On 192 scattered simulations the reported ranges' median log errors
#: fell from 0.10-0.15 to 0.05-0.07, and on three of four drill-hole scenarios
#: (96 realisations) by a third to five sixths (benchmarks/RESULTS.md, "The
#: likelihood's model reported"). Off only to measure what it changes.
REPORT_LIKELIHOOD_MODEL = True
#: Fewest samples for the likelihood to add anything.
MIN_SAMPLES_LIKELIHOOD = 100

#: What a variogram refit did when it moved the longest range to another column.
_RELABELLED = "changed which axis is the major, semi-major or minor"


@dataclass(frozen=True)
class FrameRefinement:
    """The variogram fit after the likelihood refinement of its frame.

    Attributes
    ----------
    fit : NestedFit
        The likelihood's model in the variogram's terms, or a variogram
        refit with the refined frame held (see ``REPORT_LIKELIHOOD_MODEL``);
        the input fit when the refinement did not run or failed.
    record : dict or None
        What the likelihood did (``diagnostics.frame_refinement``): turn,
        log-likelihoods, samples and neighbours, the nested comparison.
    correction : ndarray (3, 3) or None
        The rotation from the variogram fit's frame to the refined one
        (``refined = correction @ variogram``).
    choices, warnings : tuple
    likelihood : tuple or None
        The final likelihood search, its conditioning setup and the
        variogram fit's range limit (or None), kept in memory (not in the
        record) for :meth:`likelihood_information`.
    """

    fit: NestedFit
    record: dict | None = None
    correction: np.ndarray | None = None
    choices: tuple[dict, ...] = ()
    warnings: tuple[str, ...] = ()
    likelihood: tuple | None = None

    @property
    def reports_likelihood_model(self) -> bool:
        """True when :attr:`fit` carries the likelihood's ranges (not a variogram refit's)."""
        return bool((self.record or {}).get("likelihood_model_reported"))

    def likelihood_information(self, frame, confidence=0.9, seed=0):
        """The likelihood's observed information matched to ``frame``'s columns.

        The likelihood's axes are matched to ``frame``'s columns by direction
        (:func:`anisotropy.fitting.information.information_cones`).

        Returns
        -------
        anisotropy.fitting.information.ReportedInformation or None
            None without a likelihood, or where its information is not
            positive definite. Its ``logit_share_sd`` is None unless the
            reported nugget is the likelihood's share of the total sill (not
            held).
        """
        if self.likelihood is None:
            return None
        lk, setup, range_limit = self.likelihood
        ic = information_cones(lk, setup, confidence, seed, range_limit=range_limit)
        if ic.cones is None:
            return None
        cos = np.abs(np.asarray(frame, float).T @ np.asarray(lk.frame, float))
        col = [int(np.argmax(cos[i])) for i in range(3)]
        cones = list(ic.cones.values())
        return ReportedInformation(cones={a: cones[col[i]] for i, a in enumerate(AXES)},
                                   axes=ic.frames[:, :, col],
                                   logit_share_sd=self._share_sd(ic.logit_share_sd),
                                   likelihood_logit_share_sd=_share_names(ic.logit_share_sd))

    def _share_sd(self, logit_sd):
        """``logit_sd`` by share name where the reported nugget and sills are the likelihood's
        shares (its model reported, the nugget not held)."""
        if not self.reports_likelihood_model or (self.record or {}).get("nugget_held"):
            return None
        return _share_names(logit_sd)   # the reported structures are the likelihood's


def _share_names(logit_sd):
    """The likelihood's share-logit standard deviations by name (nugget, sill0, ...)."""
    if logit_sd is None:
        return None
    names = ("nugget",) + tuple(f"sill{k}" for k in range(len(logit_sd) - 1))
    return {n: float(v) for n, v in zip(names, logit_sd)}


def _likelihood_model(lk, fit, kinds):
    """A likelihood fit's model as a ``fit_nested`` start, scaled to ``fit``'s total sill."""
    tot = float(fit.nugget + np.sum(fit.sills))
    return (lk.frame, tot * lk.nugget_share, tot * np.asarray(lk.shares, float),
            np.asarray(lk.ranges, float), tuple(kinds))


def _axis_order(ranges):
    """Frame columns ordered from longest to shortest range of the longest structure."""
    r = np.atleast_2d(np.asarray(ranges, float))
    j = int(np.argmax(r.max(axis=1)))
    return tuple(int(i) for i in np.argsort(-r[j], kind="stable"))


class _Problem:
    """The samples, bins and settings every likelihood and refit of one refinement shares.

    Every likelihood search of one refinement uses one set of conditioning
    sets (:func:`~anisotropy.fitting.likelihood.vecchia_setup`), built in the
    start frame's metric and, on drill holes, seeing across holes: the one-
    and two-structure likelihoods are then compared on the same approximation.
    """

    def __init__(self, bins, coords, values, seed, fit_kwargs, start, holes=None):
        self.bins, self.coords, self.values = bins, coords, values
        self.kw = dict(fit_kwargs, make_model=True)
        sizes = dict(n_neighbours=LIKELIHOOD_NEIGHBOURS, max_samples=LIKELIHOOD_MAX_SAMPLES)
        setup = vecchia_setup(coords, values, frame=start.frame, ranges=start.ranges,
                              seed=seed, holes=holes, **sizes)
        self.lk_kw = dict(seed=seed, setup=setup, **sizes)

    def likelihood(self, frame, ranges, nugget, sills, kinds, **ftol):
        return refine_frame_likelihood(self.coords, self.values, frame, ranges, nugget, sills,
                                       kinds, **ftol, **self.lk_kw)

    def refit(self, start, frame, **extra):
        return fit_nested(self.bins, start, fixed_frame=frame, **extra, **self.kw)

    def add_shorter(self, f1, kinds2, ftol=LIKELIHOOD_NESTED_FTOL):
        """The one-structure fit with a shorter structure added, half the sill each."""
        r1 = np.atleast_2d(np.asarray(f1.ranges, float))[0]
        s1 = float(np.asarray(f1.sills, float)[0])
        return self.likelihood(f1.frame, [LIKELIHOOD_NESTED_SHORT * r1, r1], f1.nugget,
                               [0.5 * s1, 0.5 * s1], kinds2, ftol=ftol)

    def finish(self, lk, kinds):
        """A likelihood search continued from where ``lk`` stopped, to the nested tolerance."""
        return self.likelihood(lk.frame, lk.ranges, lk.nugget_share, lk.shares, kinds,
                               ftol=LIKELIHOOD_NESTED_FTOL)


def _first_search(P, fit, one_structure):
    """The likelihood from the variogram fit (and, for two structures, a second start)."""
    lk = P.likelihood(fit.frame, fit.ranges, fit.nugget, fit.sills, fit.kinds,
                      ftol=LIKELIHOOD_FTOL)
    f = P.refit((lk.frame, fit.nugget, fit.sills, fit.ranges, fit.kinds), lk.frame)
    starts = None
    if len(f.sills) == 2 and one_structure is not None:
        o = one_structure
        lk1 = P.likelihood(o.frame, o.ranges, o.nugget, o.sills, o.kinds, ftol=LIKELIHOOD_FTOL)
        f1 = P.refit((lk1.frame, o.nugget, o.sills, o.ranges, o.kinds), lk1.frame)
        alt = P.add_shorter(f1, tuple(fit.kinds))
        starts = {"variogram_fit": lk.negloglik, "one_structure_plus_shorter":
                  alt.negloglik, "chosen": "variogram_fit"}
        if alt.negloglik < lk.negloglik:
            starts["chosen"] = "one_structure_plus_shorter"
            lk = alt
            f = P.refit(_likelihood_model(lk, f, fit.kinds), lk.frame)
    return lk, f, starts


def _kind_choice(P, lk, f, kinds):
    """One structure kept: the likelihood searched with each other candidate kind, the best kept.

    The kinds have the same parameters (a frame, three ranges, a nugget
    share), so their maximised log-likelihoods on the same conditioning sets
    compare directly. The variogram's choice of kind weighs all lags alike
    and can take an exponential for a spherical field, whose likelihood then
    stretches the ranges to match the short lags (a flat blanket in
    ``tests/test_discover.py``: spherical 150 m, exponential chosen by the
    variogram, likelihood range 266 m; the spherical likelihood was 12
    log-units higher, range 165 m).  It runs after the second structure's
    BIC decision, made with the variogram's kind, and only where that left
    one structure: a single exponential can stand in for two spherical
    structures, and choosing it first would hide the second.

    Returns
    -------
    lk, f
        The best likelihood and the variogram refit of its kind with its
        frame held (unchanged where the variogram's kind is best).
    record : dict or None
        Each kind's negative log-likelihood, and in ``failed`` the kinds
        whose search failed for data reasons (with why); None with other
        than one structure or fewer than two kinds.
    """
    if len(f.sills) != 1 or len(lk.shares) != 1 or len(set(kinds)) < 2:
        return lk, f, None
    table, best, failed = {lk.kinds[0]: float(lk.negloglik)}, lk, {}
    for kind in dict.fromkeys(kinds):
        if kind in table:
            continue
        # started where the correlation falls to one half at the same distance: started
        # at the same ranges, the spherical search from a long exponential answer ended
        # 15 log-units below its maximum (tests/test_discover_structures.py)
        ranges = np.asarray(lk.ranges, float) * (half_correlation(lk.kinds[0])
                                                 / half_correlation(kind))
        try:
            alt = P.likelihood(lk.frame, ranges, lk.nugget_share, lk.shares, (kind,),
                               ftol=LIKELIHOOD_FTOL)
        except FitError as exc:   # one kind's search failing leaves the others standing
            failed[kind] = str(exc)
            continue
        table[kind] = float(alt.negloglik)
        best = alt if alt.negloglik < best.negloglik else best
    record = {"negloglik": table, "variogram_kind": lk.kinds[0], "chosen": best.kinds[0],
              "failed": failed}
    if best is lk:
        return lk, f, record
    f = P.refit((best.frame, f.nugget, f.sills, np.asarray(best.ranges, float),
                 tuple(best.kinds)), best.frame)
    return best, f, record


@functools.lru_cache(maxsize=None)
def half_correlation(kind) -> float:
    """Distance, in units of the range, at which a kind's correlation falls to one half."""
    return float(brentq(lambda h: float(correlation(kind, np.array([h]))[0]) - 0.5,
                        1e-9, 1.0))


def _kind_row(record):
    """The choice row of the likelihood's choice of structure kind."""
    nll = record["negloglik"]
    best = nll[record["chosen"]]
    others = ", ".join([f"{k} {v - best:.1f} below" for k, v in nll.items()
                        if k != record["chosen"]]
                       + [f"{k} not compared: its search failed"
                          for k in record["failed"]])
    return {"choice": "structure kind", "value": record["chosen"],
            "reason": f"the highest likelihood of the candidate kinds on the same "
                      f"conditioning sets ({others} log-likelihood units); the variogram fit "
                      f"had taken {record['variogram_kind']}"}


def _keep_axis_order(P, lk, f):
    """Report the likelihood's ranges when the variogram refit relabelled its axes."""
    if _axis_order(f.ranges) == _axis_order(lk.ranges):
        return f, None, None
    # the variogram refit relabelled the axes the likelihood's frame was fitted for: it
    # traded ranges between two structures (the likelihood's ranges and shares are then
    # reported, scaled to the refit's total sill), or, with one structure, its two longest
    # or shortest ranges came out the other way round (issue-15 oblique holes seed 104: the
    # major reported 87 degrees off); the likelihood's ranges are then reported with the
    # refit's nugget and sill (a pure nugget's likelihood can put all the sill on a
    # structure shorter than any sample spacing, which its nugget share would hide)
    if len(f.sills) == 1:
        start = (lk.frame, f.nugget, f.sills, np.asarray(lk.ranges, float), tuple(f.kinds))
        what = "the likelihood's ranges are reported with the refit's nugget and sill"
    else:
        start = _likelihood_model(lk, f, f.kinds)
        what = (f"the likelihood's ranges and sill shares are reported (scaled to a total "
                f"sill of {float(f.nugget + np.sum(f.sills)):.3g})")
    f = P.refit(start, lk.frame, optimise=False)
    held = f"the variogram refit with the likelihood's frame held {_RELABELLED}; {what}"
    return f, held, f"{held}; compare them with the experimental variograms"


def _likelihood_reported(P, lk, f, held):
    """The likelihood's ranges, nugget and sill shares in the variogram refit's terms.

    Returns
    -------
    fit : NestedFit
        The likelihood's model scaled to ``f``'s total sill (a held nugget
        stays held and the structures share the rest), evaluated against the
        bins without a search; ``f`` itself where the likelihood has other
        structures or kinds than ``f``, or ``held`` already reported it.
    refit : dict or None
        The variogram refit's own ranges, nugget and sills, for comparison.
    reported : str or None
        What is reported, for the record.
    """
    same = len(lk.shares) == len(f.sills) and tuple(lk.kinds) == tuple(f.kinds)
    if not REPORT_LIKELIHOOD_MODEL or held or not same:
        return f, None, None
    tot = float(f.nugget + np.sum(f.sills))
    nugget = P.kw.get("fixed_nugget")
    nugget = tot * float(lk.nugget_share) if nugget is None else float(nugget)
    shares = np.asarray(lk.shares, float)
    sills = max(tot - nugget, 0.0) * shares / max(float(np.sum(shares)), 1e-300)
    refit = {"ranges": np.asarray(f.ranges, float).tolist(), "nugget": float(f.nugget),
             "sills": np.asarray(f.sills, float).tolist(), "objective": float(f.objective)}
    out = P.refit((lk.frame, nugget, sills, np.asarray(lk.ranges, float), tuple(f.kinds)),
                  lk.frame, optimise=False)
    return out, refit, (f"the likelihood's ranges, nugget and sill shares are reported, "
                        f"scaled to the variogram's total sill of {tot:.3g}")


def _added_to_variogram(P, lk2, f, nested):
    """The likelihood's second structure fitted to the variogram, unless it does not hold."""
    tot = float(f.nugget + np.sum(f.sills))
    two = P.refit(_likelihood_model(lk2, f, (f.kinds[0],) * 2), lk2.frame)
    if np.min(two.sills) < LIKELIHOOD_MIN_SHARE * tot:
        nested["not_added"] = f"a structure kept under {LIKELIHOOD_MIN_SHARE:.0%} of the sill"
        return f
    if _axis_order(two.ranges) != _axis_order(lk2.ranges):
        # the variogram traded ranges between the two structures and relabelled the
        # axes the likelihood's frame was fitted for
        nested["not_added"] = "the variogram refit with the frame held " + _RELABELLED
        return f
    nested["structure_added"] = True
    return two


def _second_structure(P, lk, f, add_structure):
    """One structure: try a second, shorter one in the likelihood, kept by BIC."""
    kinds2 = (f.kinds[0],) * 2
    lk2 = P.add_shorter(f, kinds2, ftol=LIKELIHOOD_NESTED_SCREEN_FTOL)
    # BIC (Schwarz 1978): four more parameters (three log ranges, one share)
    penalty = 0.5 * 4 * np.log(lk2.n_samples)
    screened = lk.negloglik - lk2.negloglik
    close = bool(screened > penalty - likelihood_margin(0.9, dof=4))
    if close:  # the decision is close (or the structure passes): finish the search
        lk2 = P.finish(lk2, kinds2)
    gain = lk.negloglik - lk2.negloglik
    kept = bool(gain > penalty)
    nested = {"negloglik": lk2.negloglik, "negloglik_one_structure": lk.negloglik,
              "gain": gain, "bic_penalty": penalty, "kept": kept,
              "screened_gain": screened, "search_finished": close,
              "shares": [float(x) for x in lk2.shares],
              "nugget_share": float(lk2.nugget_share),
              "ranges": np.asarray(lk2.ranges, float).tolist(),
              "structure_added": False}
    if kept:
        f = P.refit((lk2.frame, f.nugget, f.sills, f.ranges, f.kinds), lk2.frame)
        if add_structure:
            f = _added_to_variogram(P, lk2, f, nested)
        lk = lk2
    return lk, f, nested


def _outcome(fit, f, lk, nested, starts, held, reported=None):
    """The choice row and the record of a finished refinement.

    ``held``: why the refit relabelled axes and the likelihood's ranges were
    kept; ``reported``: what of the likelihood's model is reported.
    """
    cosines = np.abs(np.sum(np.asarray(lk.frame) * np.asarray(fit.frame), axis=0))
    turn = float(np.degrees(np.arccos(np.clip(cosines.min(), 0.0, 1.0))))
    model_text = ("its model carrying a second, shorter structure besides the variogram's "
                  "one (kept by BIC)" if nested and nested["kept"] else
                  "with the variogram's structures")
    choice = {"choice": "frame refinement", "value": "nearest-neighbour likelihood",
              "reason": f"the variogram fit's frame turned by {turn:.1f} degrees to the "
                        f"maximum of a Vecchia (1988) likelihood on {lk.n_samples} "
                        f"samples, {lk.n_neighbours} neighbours each, {model_text}; "
                        + ("the likelihood's ranges and sill shares kept: the variogram "
                           "refit with that frame held relabelled the axes" if held else
                           reported or "ranges and sills refitted to the variogram with "
                           "that frame held")}
    record = {"turn_degrees": turn, "negloglik": lk.negloglik,
              "negloglik_start": lk.negloglik_start,
              "n_samples": lk.n_samples, "n_neighbours": lk.n_neighbours,
              "variogram_objective_before": fit.objective,
              "structures_in_likelihood": len(lk.shares),
              "axis_order_agrees": _axis_order(f.ranges) == _axis_order(lk.ranges),
              "ranges": np.asarray(lk.ranges, float).tolist(),
              "shares": [float(x) for x in lk.shares],
              "nugget_share": float(lk.nugget_share),
              "nested": nested, "two_structure_starts": starts,
              "likelihood_model_reported": held or reported}
    return choice, record


def matched_rotation(F, G):
    """The rotation taking frame ``G``'s axes to ``F``'s, axes matched by direction.

    The columns of ``F`` are permuted and signed to lie closest to ``G``'s
    (undirected axes; the permutation with the largest summed cosines), so
    that a relabelling of the same axes is not mistaken for a turn.
    """
    F, G = np.asarray(F, float), np.asarray(G, float)
    best = max(itertools.permutations(range(3)),
               key=lambda p: float(np.sum(np.abs(np.sum(G * F[:, list(p)], axis=0)))))
    M = F[:, list(best)]
    M = M * np.where(np.sum(G * M, axis=0) < 0, -1.0, 1.0)
    if np.linalg.det(M) < 0:  # keep a proper rotation: flip the least-aligned axis
        k = int(np.argmin(np.abs(np.sum(G * M, axis=0))))
        M[:, k] *= -1
    return M @ G.T


def _global_start(fit, coords, values, seed, holes, other_frames, confidence):
    """The likelihood's global choice among candidate frames, and the fit to start from."""
    frame, ranges = ordered_axes(fit.frame, fit.ranges)
    if not GLOBAL_FRAME_CHOICE or len(np.atleast_1d(fit.sills)) > 1:
        # two or more variogram structures: their fit can run a structure to the range
        # limit, and candidates polished from it compared badly (issue-4 shoot seed 110,
        # structures=2: 70 degrees off); refine_frame makes the choice on the best
        # one-structure fit instead where it has one
        other_frames, holes = (), None
        return FrameChoice((PolishedFrame("variogram fit", frame, ranges, 0.0),), 0.0, (), ()), fit
    choice = global_frame_choice(coords, values, frame, ranges, fit.nugget, fit.sills,
                                 fit.kinds, holes=holes, other_frames=other_frames, seed=seed,
                                 n_neighbours=SCREEN_NEIGHBOURS,
                                 max_samples=SCREEN_MAX_SAMPLES, confidence=confidence,
                                 decide_neighbours=LIKELIHOOD_NEIGHBOURS if DECIDE_RIVALS
                                 else None, decide_max_samples=LIKELIHOOD_MAX_SAMPLES)
    best = choice.best
    if best.name == "variogram fit":
        return choice, fit
    ranges = np.asarray(best.ranges, float).reshape(np.shape(fit.ranges))
    return choice, replace(fit, frame=np.asarray(best.frame, float), ranges=ranges)


def _choice_texts(choice: FrameChoice):
    """The choice row of the global frame choice, and a warning when a rival is close."""
    best = choice.best
    n = len(choice.candidates) + len(choice.pruned)
    again = ("" if choice.screening is None else
             f"; the best {len(choice.candidates)}, which that screening could not separate, "
             "searched again with the refinement's neighbours and samples")
    row = {"choice": "frame candidates", "value": best.name,
           "reason": f"{n} candidate frames (the variogram fit's, its axis exchanges, frames "
                     "along the holes and other good search frames) each polished by one "
                     f"shared likelihood{again}; the highest kept"}
    if not choice.ambiguous:
        return row, None
    rivals = "; ".join(_frame_words(c.frame) + (
        f", {below:.2f} log-likelihood units below the best candidate")
        for c, below in choice.rival_frames())
    axes = " and ".join(a.replace("_", "-") for a in choice.ambiguous_axes)
    reported = best.frame if choice.reported is None else choice.reported
    warning = (f"the {axes} axes are ambiguous: the samples cannot tell the reported frame "
               f"({_frame_words(reported)}) from {rivals} (inside the likelihood-ratio margin "
               f"of {choice.margin:.2f} log-likelihood units of the stated confidence); both "
               "are reported, the cones are widened to hold both, and the choice between "
               "them should rest on the geology")
    return row, warning


def _frame_words(frame):
    """A frame in the geologist's terms: each axis as trend/plunge."""
    words = []
    for i, a in enumerate(("major", "semi-major", "minor")):
        t, p = vector_to_line(np.asarray(frame, float)[:, i])
        words.append(f"{a} {float(t):03.0f}/{float(p):02.0f}")
    return ", ".join(words)


def _starts(fit, one_structure, coords, values, seed, holes, other_frames, confidence):
    """The global frame choice, the search's start, its one-structure base and its metric.

    With two variogram structures and a one-structure fit, the choice is made
    on the one-structure fit, which (as chosen) is the second start's base;
    the conditioning sets are then in its metric too (a structure run to the
    range limit distorts the two-structure fit's). Otherwise the choice is
    made on ``fit`` and its answer is both the start and the metric.
    """
    if one_structure is not None and len(np.atleast_1d(fit.sills)) > 1:
        choice, one_structure = _global_start(one_structure, coords, values, seed, holes,
                                              other_frames, confidence)
        return choice, fit, one_structure, one_structure
    choice, start = _global_start(fit, coords, values, seed, holes, other_frames, confidence)
    return choice, start, one_structure, start


def refine_frame(fit: NestedFit, bins: FitBins, coords, values, *, seed=0, fit_kwargs=None,
                 add_structure=False, one_structure=None, holes=None, other_frames=(),
                 confidence=0.9, kinds=()) -> FrameRefinement:
    """The variogram fit's frame refined by the nearest-neighbour likelihood.

    When the variogram fit has one structure, the refined one-structure model
    is refined again with a second, shorter structure added (see
    ``LIKELIHOOD_NESTED_SHORT``); its frame is kept when its likelihood gain
    passes the BIC penalty. Both likelihoods use the same samples and order;
    their neighbour sets are chosen in each start's metric, so the comparison
    is between two approximations of nearly the same conditioning. With
    ``add_structure`` (the number of structures was left to the engine) the
    kept nested model is also what is fitted to the variogram, from the
    likelihood's parameters with its frame held, unless the variogram then
    gives either structure less than ``LIKELIHOOD_MIN_SHARE`` of the sill or
    orders the frame's columns differently from the likelihood (the longest
    structure's longest range on another column: the refit traded ranges
    between the structures, and the axes the frame was fitted for would be
    relabelled); the reason is recorded in ``nested["not_added"]``.

    When the variogram fit has two structures and ``one_structure`` (the best
    one-structure variogram fit) is given, the global frame choice is made
    on ``one_structure`` (a two-structure fit can run a structure to the
    range limit, and candidates polished from it compare badly), and the
    two-structure likelihood is also maximised from a second start: the
    chosen one-structure frame's likelihood answer with a shorter structure
    added. The variogram's
    two-structure fit can sit in a poor basin (a long structure with little
    sill running to the range limit, which on one issue-4 realisation turned
    the major axis 73 degrees); the start with the higher likelihood is kept
    and both are recorded in ``two_structure_starts``.

    Parameters
    ----------
    fit : NestedFit
        The variogram fit.
    bins : FitBins
        Its fit bins (with information weights).
    coords, values : ndarray
        The samples (local coordinates) and the analysed values.
    seed : int
        Seed of the likelihood's subsample and ordering.
    fit_kwargs : dict
        Constraints of :func:`anisotropy.fitting.fit_nested` shared with the
        variogram fit (nugget held, total sill, range limits, planar).
    add_structure : bool
        The number of structures was left to the engine.
    one_structure : NestedFit, optional
        The best one-structure variogram fit (second start for two structures).
    holes : array_like (n,), optional
        Drill-hole labels: conditioning sets that see across holes, and
        candidate frames with an axis along the dominant hole directions.
    other_frames : sequence of (name, frame)
        Other good frames of the variogram search (candidates).
    confidence : float
        Sets the rival margin of the global frame choice
        (:func:`anisotropy.fitting.frames.likelihood_margin`).
    kinds : sequence of str
        Structure kinds the engine may choose among (empty when the user
        fixed the kind): with one structure, the likelihood of each is
        compared on the same conditioning sets and the highest kept
        (:func:`_kind_choice`).

    Returns
    -------
    FrameRefinement
        With the input fit unchanged when there are fewer than 100 samples,
        or (with a warning) when a likelihood or refit fails for data
        reasons (:class:`~anisotropy.errors.FitError`).
    """
    if len(coords) < MIN_SAMPLES_LIKELIHOOD:
        return FrameRefinement(fit=fit)
    warnings, choices = [], []
    try:
        choice, start, one_structure, metric_of = _starts(
            fit, one_structure, coords, values, seed, holes, other_frames, confidence)
        P = _Problem(bins, coords, values, seed, fit_kwargs or {}, metric_of, holes)
        lk, f, starts = _first_search(P, start, one_structure)
        f, held, warning = _keep_axis_order(P, lk, f)
        if warning:
            warnings.append(warning)
        nested = None
        if len(f.sills) == 1:
            lk, f, nested = _second_structure(P, lk, f, add_structure)
        lk, f, kind_choice = _kind_choice(P, lk, f, () if held else kinds)
        f, refit, reported = _likelihood_reported(P, lk, f, held)
    except FitError as exc:
        warnings.append(f"the likelihood refinement of the frame failed ({exc}); the "
                        "variogram fit's frame is kept")
        return FrameRefinement(fit=fit, warnings=tuple(warnings))
    choice = choice.relative_to(ordered_axes(lk.frame, lk.ranges)[0])
    frow, warning = _choice_texts(choice)
    warnings += [warning] if warning else []
    row, record = _outcome(fit, f, lk, nested, starts, held, reported)
    record["variogram_refit"] = refit
    record["kind_choice"] = kind_choice
    if kind_choice is not None:
        choices.append(_kind_row(kind_choice))
    choices.append(frow)
    record["frame_candidates"] = choice.to_dict()
    record["hole_aware"] = holes is not None
    record["nugget_held"] = P.kw.get("fixed_nugget") is not None
    # a rotation of space (axes matched by direction): the bootstrap's replicates refit the
    # variogram and are turned by it; where the likelihood exchanged two of the variogram's
    # axes the replicates keep the variogram's order, and their swap rate shows it
    correction = matched_rotation(lk.frame, fit.frame)
    out = FrameRefinement(fit=f, record=record, correction=correction,
                          choices=tuple(choices) + (row,), warnings=tuple(warnings),
                          likelihood=(lk, P.lk_kw["setup"], P.kw.get("max_range")))
    if INFORMATION_CONES:   # a study: the cones in the record (benchmarks/RESULTS.md)
        info = out.likelihood_information(f.frame, confidence, seed)
        record["information"] = {"cones_deg": None if info is None else info.cones}
    return out
