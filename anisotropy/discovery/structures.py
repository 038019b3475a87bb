"""The nested structures (1..3 by a penalised criterion) and the frame refinement."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from anisotropy.fitting import FitBins, NestedFit, Selection, select_structures
from anisotropy.fitting.refine import FrameRefinement, refine_frame
from anisotropy.geometry import canonical_frame
from anisotropy.models import NestedModel, Structure

from anisotropy.discovery import params as _params
from anisotropy.discovery.search import FitSettings, Search


def ordered_model(fit, keep_frame=False, planar=False) -> NestedModel:
    """NestedModel with frame columns ordered by the longest structure, canonical.

    For planar data the column nearest the vertical stays last (minor): its
    range is tied to the semi-major one and not resolved.
    """
    ranges = np.asarray(fit.ranges, float)
    frame = np.asarray(fit.frame, float)
    if not keep_frame:
        j = int(np.argmax(ranges.max(axis=1)))
        if planar:
            v = int(np.argmax(np.abs(frame[2])))
            h = [i for i in range(3) if i != v]
            h = sorted(h, key=lambda i: -ranges[j, i])
            order = np.array(h + [v])
        else:
            order = np.argsort(-ranges[j], kind="stable")
        frame = frame[:, order]
        ranges = ranges[:, order]
        if planar:  # not resolved: reported equal to the semi-major range
            ranges[:, 2] = ranges[:, 1]
        if np.linalg.det(frame) < 0:
            frame = frame.copy()
            frame[:, 2] *= -1
        frame = canonical_frame(frame)
    structs = [Structure(kind=k, sill=float(c), ranges=tuple(float(x) for x in r))
               for k, c, r in zip(fit.kinds, fit.sills, ranges)]
    order = np.argsort([max(s.ranges) for s in structs], kind="stable")
    structs = [structs[i] for i in order]
    return NestedModel(nugget=float(fit.nugget), structures=structs, frame=frame)


@dataclass(frozen=True)
class Refinement:
    """The chosen nested model, after the likelihood refinement of its frame.

    Attributes
    ----------
    selection : Selection
        The variogram candidates with 1..3 structures and the choice.
    fit : NestedFit
        The final fit (refined, or the selection's best).
    model : NestedModel
        Its model, frame columns ordered major, semi-major, minor (canonical).
    frame_refinement : FrameRefinement or None
        None when the refinement does not apply (planar data, indicators,
        estimators other than the semivariogram and the robust one).
    """

    selection: Selection
    fit: NestedFit
    model: NestedModel
    frame_refinement: FrameRefinement | None = None
    choices: tuple[dict, ...] = ()
    warnings: tuple[str, ...] = ()

    @property
    def frame(self) -> np.ndarray:
        return np.asarray(self.model.frame, float)

    @property
    def record(self) -> dict | None:
        """``diagnostics.frame_refinement``: what the likelihood did (None: not run)."""
        return None if self.frame_refinement is None else self.frame_refinement.record

    @property
    def correction(self) -> np.ndarray | None:
        return None if self.frame_refinement is None else self.frame_refinement.correction


def refinement_applies(*, planar, transform_kind, estimator) -> bool:
    """The likelihood refinement runs on non-planar, non-indicator data, for
    the semivariogram and the robust estimator."""
    return bool(_params.LIKELIHOOD_REFINEMENT and not planar and transform_kind != "indicator"
                and estimator in ("semivariogram", "robust"))


def _structures_choice(n_asked, fit, record):
    nest = (record or {}).get("nested") or {}
    if n_asked is not None:
        return {"choice": "structures", "value": n_asked, "reason": "as requested"}
    if not nest.get("kept"):
        return {"choice": "structures", "value": len(fit.sills),
                "reason": "chosen by BIC with a minimum gain (see diagnostics.selection)"}
    supported = ("the variogram bins' BIC kept one structure; the nearest-neighbour "
                 "likelihood supports a second, shorter one (log-likelihood gain "
                 f"{nest['gain']:.1f} against a BIC penalty of {nest['bic_penalty']:.1f})")
    if nest.get("structure_added"):
        why = f"{supported}, fitted to the variogram with the refined frame held"
    else:
        why = (f"{supported} and its frame is used, but the second structure is not "
               f"reported: {nest['not_added']}")
    return {"choice": "structures", "value": len(fit.sills), "reason": why}


def choose_structures(bins: FitBins, search: Search, settings: FitSettings, *, coords, values,
                      n_structures=None, kinds=None, shared_ratios=False, refine=True,
                      seed=0, holes=None, confidence=0.9) -> Refinement:
    """1..3 nested structures from the best orientation, then the frame refinement.

    Parameters
    ----------
    bins : FitBins
    search : Search
        The orientation search (its best one-structure fit is the start).
    settings : FitSettings
    coords, values : ndarray
        The samples, for the likelihood refinement.
    n_structures : int, optional
        Asked for (None: chosen by BIC, then possibly a second structure from
        the likelihood).
    kinds : tuple of str, optional
        Structure kinds (default: the search's best kind).
    shared_ratios : bool
        Structures share one anisotropy shape.
    refine : bool
        Run the likelihood refinement (see :func:`refinement_applies`).
    seed : int
    holes : array_like (n,), optional
        Drill-hole labels (conditioning sets that see across holes, and frames
        with an axis along the holes among the candidates).
    confidence : float
        Sets the likelihood margin inside which a rival frame is reported.
    """
    best = search.best
    common = settings.kwargs()
    sel = select_structures(bins, (best.frame, best.nugget, best.sills, best.ranges, best.kinds),
                            max_structures=3, n_structures=n_structures,
                            kinds=kinds if kinds is not None else best.kinds,
                            total_sill=settings.total_sill, fixed_nugget=settings.fixed_nugget,
                            min_range=settings.min_range, max_range=settings.max_range,
                            planar=settings.planar, ftol=1e-6, shared_ratios=shared_ratios)
    fit, fr = sel.best, None
    if refine:
        others = tuple((f"search start {k + 1}", f.frame) for k, f in enumerate(search.polished))
        fr = refine_frame(fit, bins, coords, values, seed=seed, fit_kwargs=common,
                          add_structure=n_structures is None, one_structure=best,
                          holes=holes, other_frames=others, confidence=confidence,
                          kinds=() if kinds is not None else
                          tuple(k["kind"] for k in search.kinds))
        fit = fr.fit
    choices = (() if fr is None else fr.choices) + (
        _structures_choice(n_structures, fit, None if fr is None else fr.record),)
    return Refinement(selection=sel, fit=fit, model=ordered_model(fit, planar=settings.planar),
                      frame_refinement=fr, choices=choices,
                      warnings=() if fr is None else fr.warnings)
