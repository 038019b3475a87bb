"""Transforms applied to grades before variography.

* :class:`NormalScore` -- the normal-score (Gaussian anamorphosis) transform
  with declustering weights, ties and an explicit back-transform with stated
  tail extrapolation (Goovaerts 1997, *Geostatistics for Natural Resources
  Evaluation*, on the normal-score transform and its back-transform).
* :func:`log_transform`, :func:`indicator_transform`, :func:`cap_values` --
  the log (with a recorded constant for zeros), the indicator at a threshold
  or quantile, and capping at a top-cut.
* :func:`apply_transform` -- one entry point that returns a
  :class:`TransformResult` holding the transformed values, the forward and
  backward maps and a JSON-ready record of what was done, for the run record.

Conventions
-----------
Plotting positions. For sorted values with (normalised) weights ``w`` the
cumulative position of a value is the weight strictly below it plus half its
own weight: ``p_k = W_{<k} + W_k / 2``. With equal weights and distinct
values this is the familiar ``(i - 0.5) / n`` (i = 1..n). Tied values are
merged into one table entry carrying their summed weight, so they all get
the same score, namely the average of the positions ``(i - 0.5) / n`` they
would have had if they were distinct. The score is ``Phi^-1(p_k)``
(``scipy.stats.norm.ppf``).

Between table entries both directions interpolate linearly (score against
value), so that ``back_transform(transform(z)) == z`` inside the table.
Beyond the table the tails follow the model stated in ``tails``
(see :class:`NormalScore`).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import Callable

import numpy as np
import pandas as pd
from scipy import stats

from anisotropy.errors import DataError, InputError, InsufficientDataError
from anisotropy.exploration import suggested_topcut, topcut_candidates

__all__ = [
    "NormalScore",
    "TransformResult",
    "apply_transform",
    "log_transform",
    "indicator_transform",
    "cap_values",
    "weighted_quantile",
    "TRANSFORM_KINDS",
    "TAIL_MODELS",
]

TRANSFORM_KINDS = ("normal_score", "raw", "log", "indicator")
TAIL_MODELS = ("linear", "power", "exponential")

# probabilities are kept inside (P_FLOOR, 1 - P_FLOOR) when a value falls on
# or beyond a tail bound, so that scores stay finite (about +-6 here)
P_FLOOR = 1e-9


def _as_values(values, name: str = "values") -> np.ndarray:
    z = np.asarray(values, dtype=float).ravel()
    if z.size == 0:
        raise InsufficientDataError(f"No {name} to transform: the array is empty.")
    bad = ~np.isfinite(z)
    if bad.any():
        rows = np.flatnonzero(bad)[:5].tolist()
        raise DataError(
            f"{int(bad.sum())} of the {name} are blank, NaN or infinite "
            f"(first positions {rows}); remove or fill them before transforming."
        )
    return z


def _as_weights(weights, n: int) -> np.ndarray:
    if weights is None:
        return np.full(n, 1.0 / n)
    w = np.asarray(weights, dtype=float).ravel()
    if w.size != n:
        raise InputError(f"{w.size} weights were given for {n} values; give one weight per value.")
    if not np.all(np.isfinite(w)) or np.any(w < 0):
        raise DataError("Declustering weights must be finite and non-negative.")
    total = w.sum()
    if total <= 0:
        raise DataError("Declustering weights sum to zero; at least one weight must be positive.")
    return w / total


def weighted_quantile(values, q, weights=None) -> np.ndarray | float:
    """Quantile of a (weighted) sample on the mid-point plotting positions.

    Parameters
    ----------
    values : array_like
        Data.
    q : float or array_like
        Probabilities in [0, 1].
    weights : array_like, optional
        Non-negative weights (normalised here). Equal weights when omitted.

    Returns
    -------
    float or ndarray
        Linear interpolation of the sorted values against the cumulative
        positions ``W_{<k} + W_k/2`` (clipped to the data range).
    """
    z = _as_values(values)
    w = _as_weights(weights, z.size)
    order = np.argsort(z, kind="mergesort")
    zs, ws = z[order], w[order]
    p = np.cumsum(ws) - ws / 2.0
    out = np.interp(np.asarray(q, dtype=float), p, zs)
    return float(out) if np.ndim(out) == 0 else out


# ---------------------------------------------------------------------------
# normal scores
# ---------------------------------------------------------------------------

def _tail_spec(tails) -> tuple[str, str]:
    if isinstance(tails, str):
        lower, upper = tails, tails
        if tails == "exponential":  # exponential only makes sense for the upper tail
            lower = "linear"
    else:
        try:
            lower, upper = tails
        except (TypeError, ValueError):
            raise InputError(
                f"tails={tails!r}: give one of {TAIL_MODELS} or a pair (lower, upper)."
            ) from None
    for side, t in (("lower", lower), ("upper", upper)):
        if t not in TAIL_MODELS:
            raise InputError(f"Unknown {side} tail model {t!r}; choose one of {TAIL_MODELS}.")
    if lower == "exponential":
        raise InputError("The exponential tail is offered for the upper tail only; "
                         "use 'linear' or 'power' for the lower tail.")
    return lower, upper


class NormalScore:
    """Normal-score transform honouring declustering weights.

    Parameters
    ----------
    weights : array_like, optional
        Declustering weights, one per value passed to :meth:`fit`
        (normalised to sum to one). Equal weights when omitted.
    tails : str or (str, str), default ("linear", "exponential")
        Tail model for values/scores beyond the fitted table, per side:

        * ``"linear"`` -- linear in cumulative probability between the
          extreme table value and the stated bound (``lower``/``upper``).
        * ``"power"`` -- ``z = z_end + (bound - z_end) * t**power`` with
          ``t`` the relative position of the probability inside the tail
          (0 at the table end, 1 at probability 0 or 1); ``power=1`` is the
          linear tail, ``power > 1`` keeps the tail closer to the table end.
        * ``"exponential"`` (upper only) -- unbounded exponential tail
          ``z = z_max + scale * ln((1 - p_max) / (1 - p))``, with ``scale``
          the weighted mean excess of the values above the 0.9 weighted
          quantile (the tail's mean excess for an exponential tail).
    lower, upper : float, optional
        Bounds of the linear/power tails. Defaults: ``lower`` is 0 when all
        values are non-negative (grades), else the minimum (no extrapolation
        below the data); ``upper`` is the maximum plus the span between the
        0.9 weighted quantile and the maximum.
    power : float, default 1.0
        Exponent of the ``"power"`` tails.

    Attributes
    ----------
    table_ : pandas.DataFrame
        One row per distinct value (zero-weight values left out): ``value``,
        ``weight`` (summed over ties), ``count`` (samples), ``p`` (cumulative
        position) and ``score``.
    lower_, upper_, scale_ : float
        Tail bounds and exponential tail scale in use.
    n_, n_zero_weight_ : int
        Values fitted, and values left out of the table for zero weight.

    Notes
    -----
    Goovaerts (1997), *Geostatistics for Natural Resources Evaluation*,
    describes the normal-score transform, the use of declustering weights
    in the cumulative distribution and the need for tail extrapolation in
    the back-transform. The plotting positions and tie rule are in the
    module docstring.
    """

    def __init__(self, weights=None, *, tails=("linear", "exponential"), lower=None,
                 upper=None, power: float = 1.0):
        self.weights = weights
        self.tails = _tail_spec(tails)
        self.lower = lower
        self.upper = upper
        if not (np.isfinite(power) and power > 0):
            raise InputError(f"power={power!r}: the tail exponent must be a positive number.")
        self.power = float(power)

    # -- fitting ----------------------------------------------------------
    def fit(self, values) -> "NormalScore":
        """Build the transform table from ``values``.

        Parameters
        ----------
        values : array_like
            Grades (finite).

        Returns
        -------
        NormalScore
            ``self``, fitted.
        """
        z = _as_values(values)
        w = _as_weights(self.weights, z.size)
        keep = w > 0
        self.n_ = int(z.size)
        self.n_zero_weight_ = int((~keep).sum())
        z, w = z[keep], w[keep]
        w = w / w.sum()
        uniq, inv = np.unique(z, return_inverse=True)
        wk = np.bincount(inv, weights=w, minlength=uniq.size)
        ck = np.bincount(inv, minlength=uniq.size)
        p = np.cumsum(wk) - wk / 2.0
        score = stats.norm.ppf(p)
        self.table_ = pd.DataFrame({"value": uniq, "weight": wk, "count": ck, "p": p,
                                    "score": score})
        zmin, zmax = float(uniq[0]), float(uniq[-1])
        if self.lower is not None:
            lo = float(self.lower)
            if lo > zmin:
                raise InputError(f"lower={lo} lies above the smallest value {zmin}; "
                                 "the lower tail bound must not exceed the data.")
        else:
            lo = 0.0 if zmin >= 0 else zmin
        q90 = weighted_quantile(z, 0.9, w)
        if self.upper is not None:
            hi = float(self.upper)
            if hi < zmax:
                raise InputError(f"upper={hi} lies below the largest value {zmax}; "
                                 "the upper tail bound must not be below the data.")
        else:
            hi = zmax + (zmax - q90)
        above = z > q90
        scale = float(np.sum(w[above] * (z[above] - q90)) / np.sum(w[above])) if above.any() else 0.0
        self.lower_, self.upper_, self.scale_ = lo, hi, scale
        return self

    def _check_fitted(self):
        if not hasattr(self, "table_"):
            raise InputError("This NormalScore is not fitted yet; call fit(values) first.")

    # -- forward ------------------------------------------------------------
    def transform(self, x) -> np.ndarray:
        """Normal scores of ``x`` (fitted values get their table score).

        Parameters
        ----------
        x : array_like
            Grades.

        Returns
        -------
        ndarray
            Scores; values beyond the table follow the inverse of the tail
            model, values on or beyond a tail bound get the score of
            probability ``P_FLOOR`` (or ``1 - P_FLOOR``).
        """
        self._check_fitted()
        x = np.asarray(x, dtype=float)
        t = self.table_
        zt, yt, pt = t["value"].to_numpy(), t["score"].to_numpy(), t["p"].to_numpy()
        y = np.interp(x, zt, yt)
        lower, upper = self.tails
        lo_mask, hi_mask = x < zt[0], x > zt[-1]
        if lo_mask.any():
            xs = x[lo_mask]
            span = zt[0] - self.lower_
            if span <= 0:
                frac = np.zeros_like(xs)
            else:
                frac = np.clip((xs - self.lower_) / span, 0.0, 1.0)
                if lower == "power":
                    frac = frac ** (1.0 / self.power)
            p = np.clip(frac * pt[0], P_FLOOR, pt[0])
            y[lo_mask] = stats.norm.ppf(p)
        if hi_mask.any():
            xs = x[hi_mask]
            if upper == "exponential":
                if self.scale_ <= 0:
                    p = np.full_like(xs, 1 - P_FLOOR)
                else:
                    p = 1.0 - (1.0 - pt[-1]) * np.exp(-(xs - zt[-1]) / self.scale_)
            else:
                span = self.upper_ - zt[-1]
                if span <= 0:
                    frac = np.ones_like(xs)
                else:
                    frac = np.clip((xs - zt[-1]) / span, 0.0, 1.0)
                    if upper == "power":
                        frac = frac ** (1.0 / self.power)
                p = pt[-1] + frac * (1.0 - pt[-1])
            p = np.clip(p, pt[-1], 1 - P_FLOOR)
            y[hi_mask] = stats.norm.ppf(p)
        return y

    # -- backward -----------------------------------------------------------
    def back_transform(self, y, tails=None) -> np.ndarray:
        """Grades for normal scores ``y``.

        Parameters
        ----------
        y : array_like
            Normal scores.
        tails : str or (str, str), optional
            Override of the tail models given at construction.

        Returns
        -------
        ndarray
            Linear interpolation inside the table; the tail models beyond it.
            Monotone non-decreasing in ``y``.
        """
        self._check_fitted()
        lower, upper = self.tails if tails is None else _tail_spec(tails)
        y = np.asarray(y, dtype=float)
        t = self.table_
        zt, yt, pt = t["value"].to_numpy(), t["score"].to_numpy(), t["p"].to_numpy()
        z = np.interp(y, yt, zt)
        lo_mask, hi_mask = y < yt[0], y > yt[-1]
        if lo_mask.any():
            frac = stats.norm.cdf(y[lo_mask]) / pt[0]
            if lower == "power":
                frac = frac ** self.power
            z[lo_mask] = self.lower_ + (zt[0] - self.lower_) * frac
        if hi_mask.any():
            p = stats.norm.cdf(y[hi_mask])
            if upper == "exponential":
                # 1 - p computed through the survival function to keep precision
                sf = stats.norm.sf(y[hi_mask])
                z[hi_mask] = zt[-1] + self.scale_ * np.log((1.0 - pt[-1]) / np.maximum(sf, 1e-300))
            else:
                frac = (p - pt[-1]) / (1.0 - pt[-1])
                if upper == "power":
                    frac = frac ** self.power
                z[hi_mask] = zt[-1] + (self.upper_ - zt[-1]) * frac
        return z

    def record(self) -> dict:
        """JSON-ready description of the fitted transform."""
        self._check_fitted()
        t = self.table_
        return {
            "method": "normal score on a weighted empirical CDF; plotting position "
                      "W_below + W_own/2 ((i-0.5)/n unweighted); ties share one score",
            "weighted": self.weights is not None,
            "n": self.n_,
            "n_distinct": int(len(t)),
            "n_zero_weight": self.n_zero_weight_,
            "tails": {"lower": self.tails[0], "upper": self.tails[1],
                      "lower_bound": float(self.lower_), "upper_bound": float(self.upper_),
                      "power": self.power, "exponential_scale": float(self.scale_)},
            "score_range": [float(t["score"].iloc[0]), float(t["score"].iloc[-1])],
            "value_range": [float(t["value"].iloc[0]), float(t["value"].iloc[-1])],
        }


# ---------------------------------------------------------------------------
# log, indicator, capping
# ---------------------------------------------------------------------------

def log_transform(values, constant=None) -> tuple[np.ndarray, dict]:
    """Natural log of ``values + constant``.

    Parameters
    ----------
    values : array_like
        Grades.
    constant : float, optional
        Added before the log. When omitted it is 0 if every value is
        positive; otherwise ``-min + (smallest positive value) / 2``, so the
        smallest value maps to half the smallest positive grade (common
        practice). It is recorded either way.

    Returns
    -------
    (ndarray, dict)
        Transformed values and the record.
    """
    z = _as_values(values)
    auto = constant is None
    if auto:
        if np.all(z > 0):
            c = 0.0
        else:
            pos = z[z > 0]
            if pos.size == 0:
                raise DataError("A log transform needs some positive grades; every value is zero "
                                "or negative. Use the raw or normal-score transform instead.")
            c = float(-min(z.min(), 0.0) + pos.min() / 2.0)
    else:
        c = float(constant)
    shifted = z + c
    if np.any(shifted <= 0):
        raise DataError(f"With constant {c} some values are still zero or negative "
                        f"({int((shifted <= 0).sum())} values); give a larger constant.")
    return np.log(shifted), {"constant": c, "constant_chosen": "automatic" if auto else "given",
                             "n_non_positive": int((z <= 0).sum()), "base": "e"}


def indicator_transform(values, threshold=None, quantile=None, weights=None) -> tuple[np.ndarray, dict]:
    """Indicator ``1 if value <= threshold else 0``.

    Parameters
    ----------
    values : array_like
        Grades.
    threshold : float, optional
        The cut-off grade.
    quantile : float, optional
        Alternatively the cut-off as a (weighted) quantile of the values.
    weights : array_like, optional
        Declustering weights used for ``quantile`` and for the reported
        proportion.

    Returns
    -------
    (ndarray, dict)
        0/1 values (float) and the record.
    """
    z = _as_values(values)
    if (threshold is None) == (quantile is None):
        raise InputError("An indicator needs exactly one of threshold= (a grade) or "
                         "quantile= (a probability between 0 and 1).")
    if quantile is not None:
        q = float(quantile)
        if not 0.0 < q < 1.0:
            raise InputError(f"quantile={quantile!r}: give a probability strictly between 0 and 1.")
        thr = float(weighted_quantile(z, q, weights))
    else:
        thr = float(threshold)
    ind = (z <= thr).astype(float)
    w = _as_weights(weights, z.size)
    return ind, {"threshold": thr, "quantile": None if quantile is None else float(quantile),
                 "convention": "1 when value <= threshold", "n_one": int(ind.sum()),
                 "proportion": float(np.sum(w * ind))}


def cap_values(values, cap) -> tuple[np.ndarray, dict]:
    """Cap (top-cut) ``values`` at ``cap``.

    Parameters
    ----------
    values : array_like
        Grades.
    cap : float
        Top-cut grade.

    Returns
    -------
    (ndarray, dict)
        Capped values and a record with the count of capped values and the
        metal removed (sum of ``value - cap`` over capped values), also as a
        percentage of the total (unweighted sample metal).
    """
    z = _as_values(values)
    c = float(cap)
    if not np.isfinite(c):
        raise InputError(f"cap={cap!r}: the top-cut must be a finite grade.")
    over = z > c
    removed = float(np.sum(z[over] - c))
    total = float(np.sum(z))
    return np.minimum(z, c), {
        "cap": c, "n_capped": int(over.sum()), "metal_removed": removed,
        "metal_removed_pct": (100.0 * removed / total) if total > 0 else None,
    }


# ---------------------------------------------------------------------------
# one entry point
# ---------------------------------------------------------------------------

@dataclass
class TransformResult:
    """What a transform did.

    Attributes
    ----------
    values : ndarray
        Transformed values.
    kind : str
        One of :data:`TRANSFORM_KINDS`.
    record : dict
        JSON-ready account (kind, parameters, counts) for the run record.
    forward : callable
        Raw grades -> transformed values (capping included).
    back : callable or None
        Transformed values -> grades (None for indicators). For capped data
        it returns capped grades.
    """

    values: np.ndarray
    kind: str
    record: dict
    forward: Callable = field(repr=False)
    back: Callable | None = field(repr=False)

    def to_dict(self) -> dict:
        """The record (JSON-ready)."""
        return dict(self.record)


def apply_transform(values, kind, *, weights=None, threshold=None, quantile=None,
                    constant=None, cap=None, tails=("linear", "exponential"),
                    lower=None, upper=None) -> TransformResult:
    """Transform grades for variography and say what was done.

    Parameters
    ----------
    values : array_like
        Grades.
    kind : {"normal_score", "raw", "log", "indicator"}
        Transform.
    weights : array_like, optional
        Declustering weights (normal score, indicator quantile).
    threshold, quantile : float, optional
        Indicator cut-off (exactly one of them for ``kind="indicator"``).
    constant : float, optional
        Log constant (see :func:`log_transform`).
    cap : float, optional
        Top-cut applied before the transform.
    tails, lower, upper : optional
        Normal-score tail models and bounds (see :class:`NormalScore`).

    Returns
    -------
    TransformResult
    """
    if kind not in TRANSFORM_KINDS:
        raise InputError(f"Unknown transform {kind!r}; choose one of {TRANSFORM_KINDS}.")
    z = _as_values(values)
    record: dict = {"kind": kind, "n": int(z.size)}
    if cap is not None:
        z, cap_rec = cap_values(z, cap)
        record["capping"] = cap_rec
        c = float(cap)

        def pre(x):
            return np.minimum(np.asarray(x, dtype=float), c)
    else:
        record["capping"] = None

        def pre(x):
            return np.asarray(x, dtype=float)

    if kind == "raw":
        out = z.copy()
        forward, back = pre, (lambda y: np.asarray(y, dtype=float))
    elif kind == "log":
        out, rec = log_transform(z, constant)
        record["log"] = rec
        k = rec["constant"]
        forward = lambda x: np.log(pre(x) + k)  # noqa: E731
        back = lambda y: np.exp(np.asarray(y, dtype=float)) - k  # noqa: E731
    elif kind == "indicator":
        out, rec = indicator_transform(z, threshold=threshold, quantile=quantile, weights=weights)
        record["indicator"] = rec
        thr = rec["threshold"]
        forward = lambda x: (pre(x) <= thr).astype(float)  # noqa: E731
        back = None
    else:
        ns = NormalScore(weights, tails=tails, lower=lower, upper=upper).fit(z)
        out = ns.transform(z)
        record["normal_score"] = ns.record()
        forward = lambda x: ns.transform(pre(x))  # noqa: E731
        back = ns.back_transform
        record["mean"], record["variance"] = float(np.mean(out)), float(np.var(out))
    return TransformResult(values=out, kind=kind, record=record, forward=forward, back=back)


# ---------------------------------------------------------------------------
# top-cut of a sample set (cap or exclude), issue 17
# ---------------------------------------------------------------------------

#: What a top-cut does to a grade above it: set it to the top-cut, or leave the sample out.
TOP_CUT_MODES = ("cap", "exclude")


@dataclass
class TopCut:
    """A top-cut applied to the grades of a sample set.

    Attributes
    ----------
    threshold : float
        The top-cut grade.
    mode : {"cap", "exclude"}
        "cap": grades above the threshold were set to it; "exclude": samples
        above it were left out (the older practice).
    n_capped, n_excluded : int
        Samples capped or left out (one of the two is zero).
    reason : str
        Why this threshold: given, or explore's suggestion and why.
    method : str
        "given", or the explore candidate taken by ``"auto"``
        (``logprob_break``, ``quantile_0.99``, ...).
    metal_removed_pct : float or None
        Sum of ``grade - threshold`` over the affected samples (all of their
        grade when excluded), as a percentage of the total, unweighted.
    rows : list of int
        Data rows (1 = first row under the header) of the affected samples.
    """

    threshold: float
    mode: str
    n_capped: int
    n_excluded: int
    reason: str
    method: str = "given"
    metal_removed_pct: float | None = None
    rows: list = field(default_factory=list)

    @property
    def n_affected(self) -> int:
        """Samples capped or left out."""
        return self.n_capped + self.n_excluded

    def to_dict(self) -> dict:
        """JSON-ready record (the ``top_cut`` key of the transform record)."""
        return {"threshold": float(self.threshold), "mode": self.mode,
                "n_capped": int(self.n_capped), "n_excluded": int(self.n_excluded),
                "reason": self.reason, "method": self.method,
                "metal_removed_pct": (None if self.metal_removed_pct is None
                                      else float(self.metal_removed_pct)),
                "rows": [int(r) for r in self.rows]}


def parse_top_cut(top_cut, mode="cap"):
    """Check a top-cut setting: a positive grade or ``"auto"``, and a mode.

    Parameters
    ----------
    top_cut : float, str or None
        A grade (number or numeric text), ``"auto"``, or None (no top-cut).
    mode : {"cap", "exclude"}

    Returns
    -------
    (float, "auto" or None, str)
        The setting and the mode.

    Raises
    ------
    InputError
        Not a finite positive number nor "auto", or an unknown mode.
    """
    if mode not in TOP_CUT_MODES:
        raise InputError(f"top-cut mode {mode!r} is not known; use 'cap' (grades above the "
                         "top-cut are set to it) or 'exclude' (samples above it are left out).")
    if top_cut is None:
        return None, mode
    if isinstance(top_cut, str):
        text = top_cut.strip().lower()
        if text == "auto":
            return "auto", mode
        try:
            top_cut = float(text)
        except ValueError:
            raise InputError(f"top-cut {top_cut!r} is neither a grade nor 'auto'; give a "
                             "number such as 25 (in the grade's units) or 'auto' to take "
                             "the exploration's suggestion.") from None
    if isinstance(top_cut, bool) or not isinstance(top_cut, (int, float, np.number)):
        raise InputError(f"top-cut {top_cut!r} is neither a grade nor 'auto'.")
    c = float(top_cut)
    if not np.isfinite(c) or c <= 0:
        raise InputError(f"top-cut {top_cut!r}: a top-cut must be a positive grade (in the "
                         "grade's units), or 'auto'.")
    return c, mode


def choose_top_cut(values, top_cut) -> tuple[float, str, str]:
    """The threshold of a top-cut setting, with its method and reason.

    Parameters
    ----------
    values : array_like
        Grades (used by ``"auto"`` only).
    top_cut : float or "auto"

    Returns
    -------
    (threshold, method, reason)

    Raises
    ------
    InsufficientDataError
        ``"auto"`` on too few samples for any candidate.
    """

    if top_cut != "auto":
        return float(top_cut), "given", "as requested"
    pick = suggested_topcut(topcut_candidates(values))
    if pick is None:
        raise InsufficientDataError("--top-cut auto: too few samples for the exploration to "
                                    "suggest a top-cut; give the grade with --top-cut GRADE.")
    return float(pick["value"]), str(pick["method"]), "explore's suggestion, " + pick["reason"]


def apply_top_cut(samples, top_cut, mode="cap", *, choices=None):
    """Top-cut the grades of a sample set by capping or by exclusion, and count it.

    Parameters
    ----------
    samples : anisotropy.samples.record.SampleSet
    top_cut : float, "auto" or None
        The top-cut grade, ``"auto"`` for the suggestion of
        :func:`anisotropy.exploration.topcut.suggested_topcut` (computed on these
        samples' grades), or None for none.
    mode : {"cap", "exclude"}
        Set grades above the top-cut to it (default), or leave those samples
        out (the older practice).
    choices : list, optional
        When given, a ``{"choice": "top-cut", "value", "reason"}`` entry is
        appended (the discovery's list of choices made).

    Returns
    -------
    (SampleSet, TopCut or None)
        A new sample set (the input is not modified) whose ``changed``
        (cap) or ``dropped`` (exclude) counts and rows carry the top-cut
        under its own reason, with a warning saying what was done; and the
        record. With ``top_cut=None`` the input and None.
    """

    top_cut, mode = parse_top_cut(top_cut, mode)
    if top_cut is None:
        return samples, None
    v = np.asarray(samples.values, dtype=float)
    thr, method, reason = choose_top_cut(v, top_cut)
    over = v > thr
    k = int(over.sum())
    total = float(v.sum())
    removed = float(np.sum(v[over] - (thr if mode == "cap" else 0.0)))
    rows = [] if samples.rows is None else [int(r) for r in np.asarray(samples.rows)[over]]
    cut = TopCut(threshold=thr, mode=mode, n_capped=k if mode == "cap" else 0,
                 n_excluded=k if mode == "exclude" else 0, reason=reason, method=method,
                 metal_removed_pct=(100.0 * removed / total) if total > 0 else None, rows=rows)
    changed, dropped = dict(samples.changed), dict(samples.dropped)
    changed_rows, dropped_rows = dict(samples.changed_rows), dict(samples.dropped_rows)
    metal = ("" if cut.metal_removed_pct is None
             else f", removing {cut.metal_removed_pct:.1f} % of the metal")
    new = {}
    if mode == "cap":
        key = f"top-cut: grade above {thr:.6g} set to {thr:.6g}"
        values = np.minimum(v, thr)
        if k:
            changed[key], changed_rows[key] = k, rows
        said = f"{k} {'grade' if k == 1 else 'grades'} above it set to it"
    else:
        key = f"top-cut: grade above {thr:.6g}, sample left out"
        keep = ~over
        values = v[keep]
        new = {"coords": samples.coords[keep],
               "holes": None if samples.holes is None else samples.holes[keep],
               "rows": None if samples.rows is None else samples.rows[keep]}
        if k:
            dropped[key], dropped_rows[key] = k, rows
        said = f"{k} {'sample' if k == 1 else 'samples'} above it left out (the older practice)"
    note = (f"A top-cut {thr:.6g} ({reason}) was applied by "
            f"{'capping' if mode == 'cap' else 'exclusion'}: {said}{metal}.")
    out = dataclasses.replace(samples, values=np.ascontiguousarray(values), changed=changed,
                              dropped=dropped, changed_rows=changed_rows,
                              dropped_rows=dropped_rows,
                              warnings=list(samples.warnings) + [note], **new)
    if choices is not None:
        choices.append({"choice": "top-cut", "value": f"{thr:.6g} ({mode})", "reason": reason})
    return out, cut


__all__ += ["TopCut", "TOP_CUT_MODES", "parse_top_cut", "choose_top_cut", "apply_top_cut"]
