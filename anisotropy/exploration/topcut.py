"""Top-cut candidates: quantiles and the log-probability break, with the metal each removes."""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from anisotropy.exploration.common import (AGGRESSIVE_METAL_PCT, MIN_SAMPLES, TOPCUT_QUANTILES, _f,
                                           _qkey)


def detect_logprob_break(values, *, search_from: float = 0.75, min_tail: int | None = None,
                         min_slope_ratio: float = 1.5, min_sse_gain: float = 0.5,
                         max_candidates: int = 200) -> dict | None:
    """Break in the upper tail of the log-probability plot.

    The positive values are sorted and plotted as log10(grade) against the
    normal score of their position (i - 0.5)/n. Over the upper half of the
    plot a continuous two-segment line ``y = a + b x + c max(0, x - x0)`` is
    fitted by least squares for every candidate break ``x0`` at a sample
    between the ``search_from`` quantile and the ``min_tail``-th largest value
    (default ``max(5, 0.5 % of the samples)``)
    (at most ``max_candidates`` evenly spread candidates). The break with the
    least residual sum of squares is reported when the upper segment is
    steeper by at least ``min_slope_ratio`` and the two segments cut the
    residual of a single line by at least ``min_sse_gain`` (both thresholds
    are judgements). A steeper upper segment is the usual sign of a sparse
    high-grade population that a top-cut aims at.

    Parameters
    ----------
    values : array_like

    Returns
    -------
    dict or None
        ``value`` (grade at the break), ``quantile``, ``slope_lower``,
        ``slope_upper``, ``sse_gain``; None when no break qualifies.
    """
    z = np.sort(np.asarray(values, dtype=float).ravel())
    n_all = z.size
    if min_tail is None:
        min_tail = max(5, int(math.ceil(0.005 * n_all)))
    pos = z > 0
    if n_all < 2 * min_tail + 10:
        return None
    p_all = (np.arange(1, n_all + 1) - 0.5) / n_all
    x, y, pz = stats.norm.ppf(p_all[pos]), np.log10(z[pos]), p_all[pos]
    upper = pz >= 0.5
    x, y, pz = x[upper], y[upper], pz[upper]
    if x.size < 2 * min_tail + 5:
        return None
    lo = int(np.searchsorted(pz, search_from))
    hi = x.size - min_tail
    if hi - lo < 1:
        return None
    cand = np.unique(np.linspace(lo, hi - 1, min(max_candidates, hi - lo)).astype(int))
    # least squares by the normal equations, with the sums that do not depend on
    # the break computed once (x is sorted, so the hinge is zero below index i).
    # Element-wise sums rather than BLAS products: a threaded BLAS crawls on a
    # busy machine for these thin 1-D products.
    m, sx, sxx = float(x.size), float(x.sum()), float((x * x).sum())
    sy, sxy = float(y.sum()), float((x * y).sum())
    c1 = np.linalg.solve(np.array([[m, sx], [sx, sxx]]), np.array([sy, sxy]))
    sse1 = float(((y - c1[0] - c1[1] * x) ** 2).sum())
    best = None
    for i in cand:
        x0 = x[i]
        if x[-1] == x0:
            continue
        h = x[i:] - x0
        sh, sxh, shh, shy = h.sum(), (x[i:] * h).sum(), (h * h).sum(), (h * y[i:]).sum()
        G = np.array([[m, sx, sh], [sx, sxx, sxh], [sh, sxh, shh]])
        r = np.array([sy, sxy, shy])
        try:
            coef = np.linalg.solve(G, r)
        except np.linalg.LinAlgError:
            continue
        fit = coef[0] + coef[1] * x
        fit[i:] += coef[2] * h
        sse = float(np.sum((y - fit) ** 2))
        if best is None or sse < best[0]:
            best = (sse, i, coef)
    if best is None or sse1 <= 0:
        return None
    sse, i, coef = best
    b, c = float(coef[1]), float(coef[2])
    gain = 1.0 - sse / sse1
    if b <= 0 or (b + c) / b < min_slope_ratio or gain < min_sse_gain:
        return None
    return {"value": float(10 ** y[i]), "quantile": float(pz[i]), "slope_lower": b,
            "slope_upper": b + c, "sse_gain": float(gain)}


def _cap_effect(v: np.ndarray, cap: float) -> dict:
    over = v > cap
    total = float(np.sum(v))
    removed = float(np.sum(v[over] - cap))
    capped = np.minimum(v, cap)
    m = float(capped.mean())
    return {"n_capped": int(over.sum()),
            "metal_removed_pct": _f(100.0 * removed / total) if total > 0 else None,
            "mean_after": _f(m), "cv_after": _f(capped.std() / m) if m > 0 else None}


def topcut_candidates(values, *, quantiles=TOPCUT_QUANTILES) -> list[dict]:
    """Top-cut candidates, each with its method and the metal it removes.

    Parameters
    ----------
    values : array_like
        Grades.
    quantiles : sequence of float
        High quantiles offered (default 0.975, 0.99, 0.995; numpy linear
        quantiles).

    Returns
    -------
    list of dict
        One per candidate, sorted by value: ``method``, ``value``,
        ``quantile``, ``n_capped``, ``metal_removed_pct`` (sum of
        ``value - cap`` over capped samples, % of the total, unweighted),
        ``mean_after``, ``cv_after``, ``reason``, and ``aggressive`` when the
        cap removes more than 10 % of the metal (common practice).
    """
    v = np.asarray(values, dtype=float).ravel()
    v = v[np.isfinite(v)]
    if v.size < MIN_SAMPLES:
        return []
    out = []
    for q in quantiles:
        cap = float(np.quantile(v, q))
        d = {"method": f"quantile_{_qkey(q)}", "value": cap, "quantile": float(q),
             "reason": f"the {100 * q:g} % quantile of the grades"}
        d.update(_cap_effect(v, cap))
        out.append(d)
    brk = detect_logprob_break(v)
    if brk is not None:
        d = {"method": "logprob_break", "value": brk["value"], "quantile": brk["quantile"],
             "reason": (f"break in the log-probability plot at the {100 * brk['quantile']:.1f} % "
                        f"point: the upper tail is {brk['slope_upper'] / brk['slope_lower']:.1f}x "
                        "steeper (two-segment least-squares fit)")}
        d.update(_cap_effect(v, brk["value"]))
        out.append(d)
    for d in out:
        d["aggressive"] = bool(d["metal_removed_pct"] is not None
                               and d["metal_removed_pct"] > AGGRESSIVE_METAL_PCT)
    return sorted(out, key=lambda d: d["value"])


def suggested_topcut(candidates) -> dict | None:
    """The one top-cut candidate taken by ``--top-cut auto``, with the reason.

    Parameters
    ----------
    candidates : list of dict
        As returned by :func:`topcut_candidates`.

    Returns
    -------
    dict or None
        The chosen candidate (a copy) with ``reason`` saying why it was
        chosen; None when there is no candidate.

    Notes
    -----
    The rule: among the candidates that are not aggressive (remove at most
    ``AGGRESSIVE_METAL_PCT`` % of the metal), the log-probability break when
    one was found (it is read off this domain's own distribution), else the
    99 % quantile (common practice), else the highest such candidate; when
    every candidate is aggressive, the highest (the one removing least).
    """
    cands = [dict(c) for c in candidates or []]
    if not cands:
        return None
    mild = [c for c in cands if not c.get("aggressive")]
    by = {c["method"]: c for c in mild}
    if "logprob_break" in by:
        c, why = by["logprob_break"], "the break in the log-probability plot"
    elif f"quantile_{_qkey(0.99)}" in by:
        c, why = by[f"quantile_{_qkey(0.99)}"], ("no usable break in the log-probability plot; "
                                                 "the 99 % quantile (common practice)")
    elif mild:
        c, why = max(mild, key=lambda d: d["value"]), ("the highest candidate removing at most "
                                                       f"{AGGRESSIVE_METAL_PCT:g} % of the metal")
    else:
        c, why = max(cands, key=lambda d: d["value"]), (
            f"every candidate removes more than {AGGRESSIVE_METAL_PCT:g} % of the metal; the "
            "highest, which removes least")
    c["reason"] = (f"{why}: {c['reason']}; caps {c['n_capped']} "
                   f"{'sample' if c['n_capped'] == 1 else 'samples'} and removes "
                   + ("an unknown share" if c.get("metal_removed_pct") is None
                      else f"{c['metal_removed_pct']:.1f} %") + " of the metal")
    return c
