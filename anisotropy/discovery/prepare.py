"""The first stages: the samples read and explored, the transform, the total sill."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from anisotropy.errors import InsufficientDataError
from anisotropy.exploration import Exploration, explore
from anisotropy.samples import SampleSet, read_samples, samples_from_frame
from anisotropy.transform import TopCut, TransformResult, apply_top_cut, apply_transform

from anisotropy.constants import MIN_SAMPLES
from anisotropy.discovery.params import DiscoverParams


@dataclass(frozen=True)
class Prepared:
    """The samples used and their exploration (spacing, declustering)."""

    samples: SampleSet
    exploration: Exploration
    values: np.ndarray
    planar: bool
    warnings: tuple[str, ...] = ()
    choices: tuple[dict, ...] = ()
    top_cut: TopCut | None = None

    @property
    def spacing(self):
        return self.exploration.spacing

    @property
    def declustering_weights(self) -> np.ndarray | None:
        return getattr(self.exploration.declustering, "weights", None)

    @property
    def has_holes(self) -> bool:
        """Samples carry hole ids (drill-hole strings)."""
        return self.samples.holes is not None


def read(data, params: DiscoverParams) -> SampleSet:
    """The sample set from a table, a path or samples already read."""
    if isinstance(data, SampleSet):
        return data
    import pandas as pd

    p = params
    kw = dict(value=p.value, x=p.x, y=p.y, z=p.z, domain=p.domain,
              domain_value=p.domain_value, hole=p.hole, **p.intake)
    if isinstance(data, pd.DataFrame):
        return samples_from_frame(data, **kw)
    return read_samples(data, **kw)


def prepare(samples: SampleSet, *, top_cut=None, top_cut_mode="cap") -> Prepared:
    """Top-cut the grades if asked, check that the samples can carry a 3D answer, explore them.

    Parameters
    ----------
    samples : SampleSet
    top_cut : float, "auto" or None
        See :func:`anisotropy.transform.apply_top_cut` (applied first, counted
        in the samples' ``changed``/``dropped``).
    top_cut_mode : {"cap", "exclude"}

    Raises
    ------
    InsufficientDataError
        Fewer than ``MIN_SAMPLES`` samples, or no variability.
    """
    choices = []
    samples, cut = apply_top_cut(samples, top_cut, top_cut_mode, choices=choices)
    warnings = list(getattr(samples, "warnings", []) or [])
    if samples.n < MIN_SAMPLES:
        raise InsufficientDataError(
            f"{samples.source}: only {samples.n} usable samples"
            + (f" in domain {samples.domain}" if samples.domain is not None else "")
            + f"; a 3D continuity model needs at least {MIN_SAMPLES} (in practice a few "
              "hundred). Merge similar domains, add holes, or study the domain with fewer "
              "parameters by hand.")
    vals = np.asarray(samples.values, float)
    if np.nanstd(vals) == 0:
        raise InsufficientDataError(
            f"{samples.source}: every value of {samples.columns.get('value', 'the grade')} "
            f"is {vals[0]:g} in the {samples.n} samples used: there is no variability to "
            "study. Check the column and the domain selection.")
    exploration = explore(samples)
    planar = bool(getattr(samples, "planar", False))
    if planar:
        warnings.append("the samples lie in one plane: the result is azimuth-only "
                        "(directions within the plane); see the cautions")
    return Prepared(samples=samples, exploration=exploration, values=vals, planar=planar,
                    warnings=tuple(warnings), choices=tuple(choices), top_cut=cut)


# -- the transform --------------------------------------------------------------------

@dataclass(frozen=True)
class TransformChoice:
    """The transform applied and the values it gave."""

    result: TransformResult
    values: np.ndarray
    choices: tuple[dict, ...] = ()
    warnings: tuple[str, ...] = ()

    @property
    def kind(self) -> str:
        return self.result.kind


def _skew(v):
    v = np.asarray(v, float)
    m = v.mean()
    s = v.std()
    if s == 0:
        return 0.0, 0.0
    cv = s / abs(m) if m != 0 else np.inf
    sk = float(np.mean(((v - m) / s) ** 3))
    return float(cv), sk


def _auto_kind(values) -> tuple[str, str]:
    """Normal scores for skewed non-negative grades, raw values otherwise; and why."""
    cv, sk = _skew(values)
    if (cv > 1.0 or sk > 1.0) and np.all(values >= 0):
        why = []
        if cv > 1.0:
            why.append(f"CV {cv:.2f} > 1")
        if sk > 1.0:
            why.append(f"skewness {sk:.2f} > 1")
        return "normal_score", ("grades are skewed (" + ", ".join(why) + "): normal "
                                "scores keep a few high grades from dominating the "
                                "variogram (Goovaerts 1997); sills are reported in "
                                "normal-score units (total sill 1)")
    return "raw", (f"grades are not strongly skewed (CV {cv:.2f}, skewness {sk:.2f}, both "
                   "<= 1 or negative values present): raw values, sills in grade units "
                   "squared")


def choose_transform(values, *, transform="auto", estimator="semivariogram",
                     weights=None, threshold=None) -> TransformChoice:
    """The transform of the grades (normal scores by default for skewed grades).

    Parameters
    ----------
    values : ndarray (n,)
        The grades.
    transform : {"auto", "normal_score", "raw", "log", "indicator"}
    estimator : str
        The pairwise relative estimator keeps raw grades.
    weights : ndarray (n,), optional
        Declustering weights of the normal-score transform.
    threshold : float, optional
        Indicator threshold (default the median).
    """
    values = np.asarray(values, float)
    relative = estimator == "pairwise_relative"
    if transform == "auto" and not relative:
        kind, reason = _auto_kind(values)
    elif relative:
        kind = "raw"
        reason = ("the pairwise relative estimator needs positive raw grades (normal scores "
                  "and logs change sign), so no transform" if transform == "auto"
                  else "as requested")
    else:
        kind, reason = transform, "as requested"
    kw = {}
    if kind == "normal_score" and weights is not None:
        kw["weights"] = weights
    if kind == "indicator":
        kw.update({"quantile": 0.5} if threshold is None else {"threshold": threshold})
    tr = apply_transform(values, kind, **kw)
    tv = np.asarray(tr.values, float)
    if np.nanstd(tv) == 0:
        raise InsufficientDataError("the transformed values are all equal (e.g. an indicator "
                                    "threshold outside the range of the grades): choose "
                                    "another threshold or transform")
    return TransformChoice(result=tr, values=tv,
                           choices=({"choice": "transform", "value": kind, "reason": reason},))


# -- the total sill ---------------------------------------------------------------------

@dataclass(frozen=True)
class SillChoice:
    """The total sill the nugget and structures sum to (None: free), and the units."""

    total: float | None
    units: str
    choices: tuple[dict, ...] = ()
    warnings: tuple[str, ...] = ()


def _total_sill(values, kind, estimator, sill):
    var = float(np.var(values))
    if isinstance(sill, (int, float)) and not isinstance(sill, bool):
        return float(sill), "as requested"
    if sill == "free" or estimator in ("pairwise_relative", "madogram"):
        return None, ("as requested" if sill == "free" else
                      f"the {estimator} has no variance to sum to")
    if estimator == "correlogram":
        return 1.0, "the correlogram (1 - rho) rises to 1"
    if kind == "normal_score":
        return 1.0, ("nugget and sills sum to 1, the variance of normal scores by "
                     "construction (the plain variance of the scores is "
                     f"{var:.3f} because the scores carry declustering weights)")
    return var, ("nugget and sills sum to the variance of the "
                 + ("normal scores" if kind == "normal_score" else f"{kind} values"))


def _units(kind, estimator):
    if estimator == "correlogram":
        return "correlogram units (1 - rho)"
    if estimator == "pairwise_relative":
        return "pairwise relative units"
    if estimator == "madogram":
        # half the mean absolute difference: the variable's own units, not squared
        return {"normal_score": "normal-score units (madogram, not squared)",
                "raw": "grade units (madogram, not squared)",
                "log": "log-grade units (madogram, not squared)",
                "indicator": "indicator units (madogram)"}.get(kind, kind)
    if kind == "normal_score":
        return "normal-score units (variance 1)"
    return {"raw": "grade units squared", "log": "log-grade units squared",
            "indicator": "indicator units (0-1 variance)"}.get(kind, kind)


def choose_sill(values, *, kind, estimator="semivariogram", sill="variance") -> SillChoice:
    """The total sill constraint and the units the sills are reported in.

    Parameters
    ----------
    values : ndarray (n,)
        The transformed values.
    kind : str
        The transform applied ("normal_score", "raw", "log", "indicator").
    estimator : str
    sill : "variance", "free" or float
    """
    total, reason = _total_sill(values, kind, estimator, sill)
    choice = {"choice": "total sill", "value": "free" if total is None else total,
              "reason": reason}
    return SillChoice(total=total, units=_units(kind, estimator), choices=(choice,))
