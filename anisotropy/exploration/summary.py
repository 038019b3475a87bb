"""The exploration of one domain and grade: statistics, declustering, spacing, top-cut, trend."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import stats

from anisotropy.errors import InputError, InsufficientDataError
from anisotropy.exploration.common import (DEFAULT_QUANTILES, MIN_SAMPLES, STRONG_SKEW_CV,
                                           TREND_R2_THRESHOLD, _coords_values, _f, _qkey)
from anisotropy.exploration.declustering import Declustering, cell_declustering
from anisotropy.exploration.spacing import Spacing, discovery_lags, nominal_spacing
from anisotropy.exploration.topcut import suggested_topcut, topcut_candidates
from anisotropy.exploration.trend import TrendCheck, trend_check


@dataclass
class Exploration:
    """Everything :func:`explore` found; ``to_dict()`` is ``explore.json``."""

    count: int
    mean: float
    std: float
    cv: float | None
    min: float
    max: float
    skewness: float | None
    quantiles: dict
    declustering: Declustering
    spacing: Spacing
    topcut: list
    strongly_skewed: bool
    trend: TrendCheck
    dropped: dict = field(default_factory=dict)
    changed: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)
    source: str = "<arrays>"
    value_column: str | None = None
    domain: str | None = None
    n_read: int | None = None
    duplicates: dict | None = None
    planar: bool = False
    origin: list | None = None

    def to_dict(self) -> dict:
        """JSON-ready dictionary (the keys of ``explore.json``)."""
        return {
            "source": self.source, "value": self.value_column, "domain": self.domain,
            "n_read": self.n_read, "origin": self.origin,
            "count": int(self.count), "mean": _f(self.mean), "std": _f(self.std),
            "cv": _f(self.cv), "min": _f(self.min), "max": _f(self.max),
            "skewness": _f(self.skewness),
            "quantiles": {k: _f(v) for k, v in self.quantiles.items()},
            "declustered": self.declustering.to_dict(),
            "spacing": self.spacing.to_dict(),
            "topcut": {"candidates": [dict(d) for d in self.topcut],
                       "suggested": suggested_topcut(self.topcut),
                       "strongly_skewed": bool(self.strongly_skewed),
                       "strong_skew_cv": STRONG_SKEW_CV,
                       "note": "candidates only: the top-cut is the geologist's decision"},
            "trend": self.trend.to_dict(),
            "planar": bool(self.planar), "duplicates": self.duplicates,
            "dropped": {str(k): int(v) for k, v in self.dropped.items()},
            "changed": {str(k): int(v) for k, v in self.changed.items()},
            "warnings": list(self.warnings),
        }

    def summary(self) -> str:
        """Readable multi-line summary for the geologist."""
        parts = (self._head_lines(), self._statistics_lines(), self._declustering_lines(),
                 self._spacing_lines(), self._topcut_lines(), self._trend_lines())
        L = list(parts[0])
        for part in parts[1:]:
            L += [""] + part
        if self.warnings:
            L += ["", "Warnings:"] + [f"  - {w}" for w in self.warnings]
        return "\n".join(L)

    def _head_lines(self) -> list:
        head = f"Exploration of {self.value_column or 'grade'}"
        if self.domain is not None:
            head += f", domain {self.domain}"
        head += f" ({self.source})"
        L = [head, "=" * len(head)]
        L.append(f"Samples read {self.n_read}, used {self.count}." if self.n_read is not None
                 else f"Samples used {self.count}.")
        L += [f"  dropped ({k}): {v}" for k, v in self.dropped.items()]
        L += [f"  changed ({k}): {v}" for k, v in self.changed.items()]
        return L

    def _statistics_lines(self) -> list:
        return [f"Mean {_g(self.mean)}   std {_g(self.std)}   CV {_g(self.cv, '.2f')}   "
                f"skewness {_g(self.skewness, '.2f')}",
                f"Min {_g(self.min)}   max {_g(self.max)}",
                "Quantiles: " + "  ".join(f"{k}: {_g(v)}" for k, v in self.quantiles.items())]

    def _declustering_lines(self) -> list:
        d = self.declustering
        if d.criterion != "given":
            first = (f"Declustered mean {_g(d.mean)} and std {_g(d.std)} (naive "
                     f"{_g(d.naive_mean)}), cell {_g(d.cell_size, '.3g')} m, chosen as the size "
                     f"giving the {'smallest' if d.criterion == 'min_mean' else 'largest'} "
                     "declustered mean")
        else:
            first = (f"Declustered mean {_g(d.mean)} and std {_g(d.std)} at the given cell "
                     f"{_g(d.cell_size, '.3g')} m")
        return [first, "  cell size (m) -> declustered mean: " + ", ".join(
            f"{r.cell_size:.3g}: {r.mean:.4g}" for r in d.table.itertuples())]

    def _spacing_lines(self) -> list:
        s = self.spacing
        L = [f"Spacing ({s.layout.replace('_', ' ')}): across-hole {_m(s.across_hole)} "
             f"(in plan {_m(s.across_hole_plan)}), down-hole {_m(s.down_hole)}, "
             f"bench {_m(s.bench)}, nearest neighbour {_m(s.nearest)}"]
        if s.pattern is not None:
            L.append(f"  pattern spacing {_m(s.pattern)} from the area per sample on each level "
                     f"(in-level nearest neighbour in plan {_m(s.plan_nearest)}, which "
                     "understates a jittered pattern)")
        for k, lag in s.suggested_lag.items():
            L.append(f"  suggested unit lag {k.replace('_', ' '):<11} {_m(lag):>9}  "
                     f"(tolerance {_m(s.lag_tolerance.get(k))}): {s.reasons.get(k, '')}")
        if s.extent:
            lag, n_lags, rows = discovery_lags(s, has_holes=bool(s.n_holes))
            L.append(f"  discover starts from {n_lags} lags of {_m(lag)}: {rows[0]['reason']}")
        return L

    def _topcut_lines(self) -> list:
        L = ["Top-cut candidates (the choice is yours):"]
        pick = suggested_topcut(self.topcut)
        for c in self.topcut:
            L.append(f"  {c['value']:.4g}  {c['method']:<16} caps {c['n_capped']} "
                     f"{'sample' if c['n_capped'] == 1 else 'samples'}, removes "
                     f"{_g(c['metal_removed_pct'], '.1f')} % of the metal"
                     + ("  [aggressive]" if c.get("aggressive") else "")
                     + ("  [taken by --top-cut auto]" if pick and c["method"] == pick["method"]
                        else ""))
        if self.strongly_skewed:
            L.append(f"  CV {self.cv:.2f} > {STRONG_SKEW_CV:g}: strongly skewed; prefer normal "
                     "scores or a robust estimator (common practice).")
        return L

    def _trend_lines(self) -> list:
        t = self.trend
        rising = (t.rising_azimuth is not None and t.rising_inclination is not None)
        return [f"Trend: linear R2 {_g(t.r2_linear, '.3f')}, "
                f"quadratic R2 {_g(t.r2_quadratic, '.3f')}"
                + (f"; grade rises toward azimuth {t.rising_azimuth:03.0f}, "
                   f"{abs(t.rising_inclination):.0f} degrees "
                   f"{'below' if t.rising_inclination >= 0 else 'above'} the horizontal"
                   if rising else "")]


def _g(x, fmt=".4g") -> str:
    """``x`` formatted, or "n/a" for None and non-finite numbers."""
    return "n/a" if x is None or (isinstance(x, float) and not math.isfinite(x)) \
        else format(x, fmt)


def _m(x) -> str:
    """A distance in metres, or "n/a"."""
    text = _g(x, ".3g")
    return text if text == "n/a" else f"{text} m"


def explore(samples, values=None, *, holes=None, quantiles=DEFAULT_QUANTILES,
            cell_sizes=None, n_offsets: int = 5, cell_shape=(1.0, 1.0, 1.0),
            declustering_criterion: str = "min_mean", trend_threshold: float = TREND_R2_THRESHOLD,
            bench_tolerance: float = 1.0) -> Exploration:
    """Statistics, declustering, top-cut, spacing and trend for one grade.

    Parameters
    ----------
    samples : SampleSet or array_like
        An :class:`anisotropy.samples.record.SampleSet`; or, with ``values`` given,
        an (n, 3) array of local coordinates.
    values : array_like, optional
        Grades, when ``samples`` is a coordinate array.
    holes : array_like, optional
        Hole ids, when ``samples`` is a coordinate array (a SampleSet
        brings its own).
    quantiles : sequence of float
        Probabilities reported, keyed as strings like "0.975".
    cell_sizes, n_offsets, cell_shape, declustering_criterion
        Passed to :func:`cell_declustering`. Default sizes here: 24 sizes
        spaced geometrically from half the nominal across-hole spacing (or
        nearest-neighbour distance) to ten times it, capped at half the
        largest extent (common practice: try sizes around and above the
        nominal spacing).
    trend_threshold : float
        Passed to :func:`trend_check`.
    bench_tolerance : float
        Passed to :func:`nominal_spacing`.

    Returns
    -------
    Exploration
    """
    coords, vals, holes, meta = _inputs(samples, values, holes)
    c, v = _coords_values(coords, vals)
    if v.size < MIN_SAMPLES:
        raise InsufficientDataError(
            f"Only {v.size} samples remain after reading; exploration needs at least "
            f"{MIN_SAMPLES}. Check the domain selection and the dropped-sample counts.")
    qs = [float(q) for q in quantiles]
    if any(not 0.0 <= q <= 1.0 for q in qs):
        raise InputError("quantiles must be probabilities between 0 and 1.")
    warnings = list(meta.pop("warnings", []))
    mean, std = float(v.mean()), float(v.std())
    cv = std / mean if mean > 0 else None
    qv = np.quantile(v, qs) if qs else []
    spacing = nominal_spacing(c, holes, bench_tolerance=bench_tolerance)
    if cell_sizes is None:
        cell_sizes = _default_cell_sizes(c, spacing)
    decl = cell_declustering(c, v, cell_sizes, n_offsets=n_offsets, cell_shape=cell_shape,
                             criterion=declustering_criterion)
    warnings.extend(n for n in decl.notes if "end of the range" in n)
    trend = trend_check(c, v, threshold=trend_threshold)
    warnings += _cautions(v, mean, cv, trend, spacing, holes)
    return Exploration(count=int(v.size), mean=mean, std=std, cv=cv, min=float(v.min()),
                       max=float(v.max()), skewness=float(stats.skew(v)) if std > 0 else None,
                       quantiles={_qkey(q): float(x) for q, x in zip(qs, qv)},
                       declustering=decl, spacing=spacing, topcut=topcut_candidates(v),
                       strongly_skewed=bool(cv is not None and cv > STRONG_SKEW_CV),
                       trend=trend, warnings=warnings, **meta)


def _inputs(samples, values, holes):
    """Coordinates, grades, hole ids and the reading's record (a SampleSet's, or none)."""
    if values is not None:
        return samples, values, holes, {}
    if not hasattr(samples, "coords") or not hasattr(samples, "values"):
        raise InputError("explore() takes a SampleSet, or coordinates and values: "
                         "explore(coords, values, holes=None).")
    if holes is None:
        holes = getattr(samples, "holes", None)
    cols = getattr(samples, "columns", None) or {}
    origin = getattr(samples, "origin", None)
    meta = dict(dropped=dict(getattr(samples, "dropped", {}) or {}),
                changed=dict(getattr(samples, "changed", {}) or {}),
                warnings=list(getattr(samples, "warnings", []) or []),
                source=str(getattr(samples, "source", "<table>")),
                value_column=cols.get("value"), domain=getattr(samples, "domain", None),
                n_read=getattr(samples, "n_read", None),
                duplicates=getattr(samples, "duplicates", None),
                planar=bool(getattr(samples, "planar", False)),
                origin=None if origin is None else [float(o) for o in origin])
    return samples.coords, samples.values, holes, meta


def _default_cell_sizes(c, spacing):
    """24 declustering cell sizes, half to ten times the nominal spacing (None: no spacing)."""
    base = spacing.across_hole or spacing.nearest
    extent = float(np.ptp(c, axis=0).max())
    if base and extent > 0:
        return np.geomspace(base / 2.0, max(base, min(10.0 * base, extent / 2.0)), 24)
    return None


def _cautions(v, mean, cv, trend, spacing, holes) -> list:
    """Warnings on skewness, the mean, a trend, few samples and unknown hole ids."""
    out = []
    if cv is not None and cv > STRONG_SKEW_CV:
        out.append(f"CV is {cv:.2f} (above {STRONG_SKEW_CV:g}): strongly skewed; prefer "
                   "normal scores or a robust estimator (common practice).")
    if mean <= 0:
        out.append("The mean grade is zero or negative: CV is not defined; check the value "
                   "column and the assay-code policy.")
    if trend.warning:
        out.append(trend.warning)
    if v.size < 100:
        out.append(f"Only {v.size} samples: experimental variograms will be noisy "
                   "(fewer than about 100 is thin, common practice).")
    if spacing.layout == "scattered" and holes is None:
        out.append("No hole ids given and no bench levels found: down-hole spacing is "
                   "unknown; give the hole column if the samples come from drill holes.")
    return out
