"""Choosing the number of nested structures (1 to 3).

Criterion (documented choice): the Bayesian information criterion on the
weighted residual sum of squares of the joint fit,
``BIC = m ln(WRSS / m) + p ln(m_eff)``, with ``m`` the number of fit bins,
``p`` the number of free parameters and ``m_eff = m / 4`` (the bins are not
independent: neighbouring cells and classes share samples, so the penalty
is taken on a quarter of them, which makes an extra structure earn its
four parameters; Schwarz 1978 for the criterion, the factor is our choice).
A further structure is kept only if it also lowers the WRSS by at least
``min_gain`` (default 3 %) and its sill share is at least 5 % of the total
and its ranges differ from the neighbouring structure's by a factor of at
least 1.5 (otherwise the two structures are the same structure split), and
no structure's range exceeds three times the longest lag (such a structure
stands for a drift), and all structures agree on which axis is longest and
which shortest (they share one ellipsoid, as geometric anisotropy assumes).  When a structure brings less than the minimum gain,
more structures are not tried.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from anisotropy.fitting.nested import NestedFit, fit_nested

__all__ = ["Selection", "select_structures", "bic"]


def bic(fit: NestedFit, m_eff_fraction: float = 0.25) -> float:
    """BIC of a fit on its weighted residual sum of squares (see module notes)."""
    m = len(fit.residuals)
    wrss = max(fit.wrss, 1e-300)
    return float(m * np.log(wrss / m) + fit.n_params * np.log(max(m * m_eff_fraction, 2.0)))


@dataclass
class Selection:
    """Result of :func:`select_structures`.

    Attributes
    ----------
    best : NestedFit
    fits : dict int -> NestedFit
        Every candidate tried.
    table : list of dict
        One row per candidate: structures, kinds, parameters, WRSS, BIC,
        chosen, reason.
    """

    best: NestedFit
    fits: dict
    table: list = field(default_factory=list)

    def to_dict(self) -> dict:
        return {"criterion": "BIC on the weighted residual sum of squares "
                             "(m_eff = bins/4) with a minimum gain",
                "candidates": self.table}


def _distinct(fit: NestedFit, total: float, drift_range=None) -> tuple[bool, str]:
    if fit.sills is None or len(fit.sills) < 2:
        return True, ""
    if drift_range is not None and np.any(fit.ranges.max(axis=1) > drift_range):
        return False, (f"a structure's range exceeds {drift_range:.3g} m (three times the "
                       "longest lag): it models a drift, not a structure")
    tot = total if total else float(fit.nugget + np.sum(fit.sills))
    if np.min(fit.sills) < 0.05 * tot:
        return False, "a structure holds under 5 % of the sill"
    if len(set(np.argmax(fit.ranges, axis=1))) > 1 or len(set(np.argmin(fit.ranges, axis=1))) > 1:
        return False, ("the structures disagree on which axis is longest or shortest: they "
                       "do not share one continuity ellipsoid")
    g = np.exp(np.mean(np.log(fit.ranges), axis=1))
    g = np.sort(g)
    if np.any(g[1:] / g[:-1] < 1.5):
        return False, "two structures have ranges within a factor 1.5 of each other"
    return True, ""


def select_structures(bins, start, *, max_structures=3, n_structures=None, kinds=None,
                      total_sill=None, min_gain=0.03, fixed_frame=None, m_eff_fraction=0.25,
                      drift_factor=3.0, **fit_options) -> Selection:
    """Fit 1..``max_structures`` structures warm-started from ``start`` and choose.

    Parameters
    ----------
    bins : FitBins
    start : NestedModel or tuple
        Starting model (usually the best one-structure fit from several frames).
    max_structures : int
        Largest number tried (1..3).
    n_structures : int, optional
        Force this number (then only that one is fitted).
    kinds : sequence of str, optional
        Kinds per structure (default: the start's kind for all).
    total_sill : float, optional
        Passed to :func:`fit_nested`.
    min_gain : float
        Relative WRSS gain an extra structure must bring.
    drift_factor : float
        A candidate with more than one structure is rejected when a structure's
        range exceeds this many times the longest bin distance (it then fits
        a drift).
    fixed_frame, fit_options
        Passed to :func:`fit_nested`.

    Returns
    -------
    Selection
    """
    counts = [int(n_structures)] if n_structures else list(range(1, int(max_structures) + 1))
    drift_range = None if drift_factor is None else drift_factor * float(np.max(bins.distance))
    fits = {}
    table = []
    prev = start
    for K in counts:
        f = fit_nested(bins, prev, n_structures=K, kinds=kinds, total_sill=total_sill,
                       fixed_frame=fixed_frame, **fit_options)
        fits[K] = f
        prev = (f.frame, f.nugget, f.sills, f.ranges, f.kinds)
        if K > 1 and n_structures is None and f.wrss > (1.0 - min_gain) * fits[K - 1].wrss:
            # no real gain from this structure: a further one is not tried
            break
    best_k = counts[0]
    reasons = {counts[0]: "first candidate"}
    for K in counts[1:]:
        if K not in fits:
            continue
        cur, new = fits[best_k], fits[K]
        ok, why = _distinct(new, total_sill, drift_range)
        gain = 1.0 - new.wrss / max(cur.wrss, 1e-300)
        if not ok:
            reasons[K] = f"rejected: {why}"
        elif bic(new, m_eff_fraction) >= bic(cur, m_eff_fraction):
            reasons[K] = "rejected: BIC not lower"
        elif gain < min_gain:
            reasons[K] = f"rejected: WRSS gain {gain:.1%} below {min_gain:.0%}"
        else:
            reasons[K] = f"accepted: BIC lower and WRSS gain {gain:.1%}"
            best_k = K
    for K in counts:
        if K not in fits:
            table.append({"structures": K, "chosen": False,
                          "reason": f"not tried: {K - 1} structures gained too little"})
            continue
        f = fits[K]
        table.append({"structures": K, "kinds": list(f.kinds), "parameters": f.n_params,
                      "wrss": float(f.wrss), "bic": bic(f, m_eff_fraction),
                      "chosen": K == best_k, "reason": reasons.get(K, "")})
    return Selection(best=fits[best_k], fits=fits, table=table)
