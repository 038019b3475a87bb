"""The bootstrap's result: replicates, cones, intervals and bands of one fitted model."""

from __future__ import annotations

import math
import warnings as _warnings
from dataclasses import dataclass, field

import numpy as np
from scipy.special import expit, ndtri

from anisotropy.constants import AXES as AXIS_NAMES
from anisotropy.errors import InputError
from anisotropy.fitting.information import ReportedInformation
from anisotropy.uncertainty.axes import (_axis_angle, _trend_plunge, _unit, axis_cone,
                                         trend_plunge_intervals)
from anisotropy.uncertainty.intervals import (_carried, _scalar_interval, bounded_by_lags,
                                              carried_interval, held_fixed, holding_estimate,
                                              percentile_interval, range_text)


#: ``cone_source`` of an axis whose cone is the floor of an unresolved direction
#: (:attr:`BootstrapResult.open_axes`).
OPEN_SOURCE = "unresolved direction"

#: The axis exchanges :meth:`BootstrapResult.swap_rates` counts, and the two
#: axes each involves.
SWAP_AXES = {"major_semi_major": ("major", "semi_major"),
             "semi_major_minor": ("semi_major", "minor")}


def _share_wald(value, total, sd, conf):
    """Wald interval of ``value`` as a share of ``total`` on the logit scale, times ``total``.

    ``sd`` is the standard deviation of the share's logit; None where it is
    missing or not finite, or the share is not strictly inside (0, 1).
    """
    if sd is None or not np.isfinite(sd) or not 0.0 < value < total:
        return None
    z = float(ndtri(0.5 + 0.5 * conf))
    logit = math.log(value / (total - value))
    return [float(total * expit(logit - z * sd)), float(total * expit(logit + z * sd))]


def _model_ranges_along(model, axes):
    """Range of the model along each of the given axis vectors (columns)."""
    out = np.empty(3)
    for i in range(3):
        out[i] = float(model.range_along(axes[:, i]))
    return out


@dataclass(frozen=True)
class ConfidenceInterval:
    """Bands of a bootstrap at its confidence level, one row per quantity.

    After the ``confidence_interval`` of :func:`scipy.stats.bootstrap`:
    ``low`` and ``high`` hold the lower and upper bound of each quantity named
    in ``names`` (the three axis ranges in metres, the nugget, the total sill
    and each structure's sill, in the model's units). A bound that is not
    finite is NaN: a value held fixed in every replicate fit, or a range
    bound beyond the longest lag computed (see ``notes``). ``cone_deg`` holds
    the half-angle of each axis's cone.
    """

    names: tuple
    low: np.ndarray
    high: np.ndarray
    estimate: np.ndarray
    cone_deg: dict
    confidence_level: float
    notes: dict

    def to_dict(self) -> dict:
        """Plain types, quantity by quantity (NaN as None)."""
        def plain(x):
            return float(x) if np.isfinite(x) else None
        return {"confidence_level": self.confidence_level,
                "intervals": {n: {"estimate": plain(e), "low": plain(lo), "high": plain(hi)}
                              for n, e, lo, hi in zip(self.names, self.estimate, self.low,
                                                      self.high)},
                "cone_deg": dict(self.cone_deg), "notes": dict(self.notes)}

    def to_frame(self):
        """One row per quantity: estimate, low, high."""
        import pandas as pd

        return pd.DataFrame({"estimate": self.estimate, "low": self.low, "high": self.high},
                            index=pd.Index(self.names, name="quantity"))


@dataclass
class BootstrapResult:
    """Replicates of a fitted model and the bands they give.

    Attributes
    ----------
    method : str
        "block" or "model".
    confidence : float
    reference : NestedModel
        The main fit the replicates are compared with.
    models : list of NestedModel
        The successful replicate fits.
    objectives : ndarray, shape (n_ok,)
    axes : ndarray, shape (n_ok, 3, 3)
        Replicate axes matched to the reference (column i matches reference
        axis i, signed to agree with it).
    permutations : ndarray of int, shape (n_ok, 3)
        ``permutations[k, i]``: replicate axis (0 = its own major) matched to
        reference axis i.
    ranges : ndarray, shape (n_ok, 3)
        Range of each replicate along its matched axes.
    nugget, total_sill : ndarray, shape (n_ok,)
    sills : ndarray, shape (n_ok, n_structures)
        NaN where a replicate has a different number of structures.
    counts : ndarray or None, shape (n_ok, n_groups)
        Block counts of each replicate (block bootstrap).
    experimental : ndarray or None, shape (n_ok, n_lags+1, n_coarse)
        Experimental variogram of each replicate in the coarse directions.
    n_requested, n_failed : int
    failures : list of str
        First few failure messages (a failed refit is counted, never hidden).
    blocks : dict or None
        The block grouping used (see :class:`BlockGrouping`).
    seed, seconds, warnings
    recentred : bool
        The reference model comes from another estimator than the
        replicates' refits (the likelihood's model, while each replicate
        refits the variogram): the replicates then say how far their
        estimator spreads about its own centre, not where the reference's
        interval lies, so each replicate interval and band is carried to the
        reference, ``estimate * quantile / median`` of the replicates
        (percentile ratios; no BCa).
    rival_angles : dict or None
        Per axis, the angle (degrees) to a rival frame the likelihood cannot
        tell from the reported one; the cone is widened to hold it and a cone
        as wide around it (the angle plus the cone).
    rival_nugget : tuple or None
        ``(value, what)``: a second estimate of the nugget by another rule
        (the likelihood's, where the fit holds the down-hole nugget). The
        nugget's interval is joined with the replicates' spread carried to
        it, and with one structure the sill's with that carried to the total
        sill less it, with a note where that widens it: two estimates that
        disagree both stay inside the band.
    information : anisotropy.fitting.information.ReportedInformation or None
        The likelihood's observed information in the reported model's terms
        (:meth:`anisotropy.fitting.refine.FrameRefinement.likelihood_information`).
        Its cone of an axis is that axis's cone unless the replicates
        exchange the axis with another more often than ``1 - confidence``,
        or the likelihood has a rival frame (then every axis keeps the
        replicates' cone), or :attr:`variogram_gap` says otherwise;
        the trend and plunge intervals of such an axis are read from its
        Wald frames. The range intervals stay the replicates' on every
        layout: the Wald range intervals held the true semi-major and minor
        ranges in 83-89 % at a nominal 90 % (``benchmarks/RESULTS.md``,
        *Range intervals*). Where its share-logit standard deviations are
        given, the nugget's and sills' intervals are the Wald intervals of
        their shares on the logit scale, times the reported total sill.
    variogram_gap : dict or None
        Per axis name, the angle (degrees) between the reported axis (the
        likelihood's) and the variogram fit's axis matching it: two
        estimates of one frame. The information's cone is kept only where
        the gap is no larger than the spread their difference should have
        (:meth:`gap_check`); otherwise the cone is the wider of the
        replicates' and the information's. None: no such comparison (the
        information's cone is kept as above).
    open_axes : dict or None
        Per axis name, the narrowest cone (degrees) an axis may have whose
        direction the diagnosis finds unresolved by the sampling
        (:meth:`anisotropy.discovery.Discovery.open_cone_floors`: twice the
        fan's angular tolerance). Such an axis's cone is widened to it, and
        its trend and plunge intervals to the cone's extents: the replicates
        refit the same estimator, so they share its blind spot, and a cone
        narrower than the directions the sweep can tell apart would claim
        what the sampling cannot show. An axis whose cone exceeds it is
        itself called unresolved (:func:`anisotropy.discovery.diagnose.with_bootstrap`),
        so the two statements agree.
    """

    method: str
    confidence: float
    reference: object
    models: list
    objectives: np.ndarray
    axes: np.ndarray
    permutations: np.ndarray
    ranges: np.ndarray
    nugget: np.ndarray
    total_sill: np.ndarray
    sills: np.ndarray
    counts: np.ndarray | None = None
    experimental: np.ndarray | None = None
    coarse_directions: np.ndarray | None = None
    distances: np.ndarray | None = None
    n_requested: int = 0
    n_failed: int = 0
    failures: list = field(default_factory=list)
    blocks: dict | None = None
    seed: object = 0
    seconds: float = 0.0
    warnings: list = field(default_factory=list)
    cone_calibration: float = 1.0
    range_calibration: float = 1.0
    interval_method: str = "percentile"
    recentred: bool = False
    group_of_block: np.ndarray | None = None
    rival_angles: dict | None = None
    rival_nugget: tuple | None = None
    information: ReportedInformation | None = None
    variogram_gap: dict | None = None
    open_axes: dict | None = None

    # -- derived -----------------------------------------------------------
    @property
    def n_replicates(self) -> int:
        return int(len(self.models))

    @property
    def reference_frame(self):
        return np.asarray(self.reference.frame, dtype=float)

    @property
    def reference_ranges(self):
        return _model_ranges_along(self.reference, self.reference_frame)

    def swap_rates(self) -> dict:
        """Share of replicates whose axes trade places with the reference's.

        ``major_semi_major``: the replicate's longest axis matched to the
        reference semi-major axis, or its semi-major to the reference major
        (the two in-plane axes are not resolved); ``semi_major_minor``
        likewise; ``any``: any permutation other than the identity.
        """
        p = self.permutations
        if len(p) == 0:
            return {"major_semi_major": math.nan, "semi_major_minor": math.nan, "any": math.nan}
        ms = (p[:, 0] == 1) | (p[:, 1] == 0)
        sm = (p[:, 1] == 2) | (p[:, 2] == 1)
        anyp = np.any(p != np.arange(3)[None, :], axis=1)
        return {"major_semi_major": float(ms.mean()), "semi_major_minor": float(sm.mean()),
                "any": float(anyp.mean())}

    @property
    def swap_rate(self) -> float:
        """Share of replicates in which major and semi-major trade places."""
        return self.swap_rates()["major_semi_major"]

    def angles_to_reference(self):
        """(n_ok, 3) angles in degrees between each matched replicate axis and the reference."""
        ref = self.reference_frame
        return np.stack([_axis_angle(self.axes[:, :, i], ref[:, i][None, :]) for i in range(3)],
                        axis=1)

    @property
    def longest_lag(self):
        """The longest pair distance the lags reach (m), or None when unknown."""
        d = None if self.distances is None else np.asarray(self.distances, dtype=float)
        if d is None or d.size < 2:
            return None
        return float(d[-1] + 0.5 * (d[1] - d[0]))

    def axis_summary(self, i, confidence=None) -> dict:
        """Cone, trend, plunge and range bands of reference axis ``i``.

        The range interval always holds the reported range, and a bound
        beyond the longest lag is None (unbounded), with a ``range_note``.
        """
        conf = self.confidence if confidence is None else confidence
        ref = self.reference_frame[:, i]
        reps = self.axes[:, :, i]
        mean = axis_cone(reps, ref, conf)[0]
        cone, source, replicate_cone = self.cone(i, conf)
        # a rival frame's axis with a cone as wide around it: the smallest cone about the
        # reported axis holding both is the two angles summed (triangle inequality)
        rival = float((self.rival_angles or {}).get(AXIS_NAMES[i], 0.0))
        reach = min(90.0, rival + cone) if rival > 0 else 0.0
        widened_to_rival = reach > cone
        cone = max(cone, reach)
        drawn = reps
        axes = None if self.information is None else self.information.axes
        if source == "likelihood information" and axes is not None:
            drawn = axes[:, :, i]     # intervals agreeing with the cone
        widened = widened_to_rival or source == OPEN_SOURCE
        trend, plunge, note = trend_plunge_intervals(drawn, ref, conf, cone_deg=cone,
                                                     reach=widened)
        est = self.reference_ranges[i]
        rng, how = self._interval(self.ranges[:, i], est, conf)
        rng = self._calibrate(rng, est)
        rng, widened = holding_estimate(rng, est)
        rng, beyond = bounded_by_lags(rng, self.longest_lag)
        mt, mp = _trend_plunge(mean)
        out = {"cone_deg": float(cone), "cone_source": source,
               "replicate_cone_deg": float(replicate_cone),
               "trend": trend, "plunge": plunge, "range": rng,
               "range_interval": how + (", widened to hold the estimate" if widened else ""),
               "mean_axis": {"vector": [float(x) for x in mean], "trend": float(mt),
                             "plunge": float(mp)}}
        if note:
            out["trend_note"] = note
        if beyond:
            out["range_note"] = beyond
        info = self._information("cones", AXIS_NAMES[i])
        check = None if info is None else self.gap_check(i, replicate_cone, min(90.0, info))
        if check is not None:
            out["variogram_gap"] = check
        if widened_to_rival:
            out["cone_rival_deg"] = rival
            out["cone_note"] = (f"widened to {cone:.0f} degrees to hold a rival frame the "
                                f"likelihood cannot tell from this one ({rival:.1f} degrees "
                                "away) and a cone as wide around it")
        elif source == OPEN_SOURCE:
            out["cone_note"] = (f"widened to {cone:.0f} degrees (the replicates' cone is "
                                f"{replicate_cone:.0f}): the sampling leaves this direction "
                                "unresolved, and no narrower cone than the directions the "
                                "sweep can tell apart (twice its angular tolerance) is "
                                "claimed for it")
        return out

    def cone(self, i, confidence=None):
        """Cone radius (degrees) of reference axis ``i``, before any widening to a rival frame.

        At least the floor of :attr:`open_axes` for an axis the sampling
        leaves open; otherwise as :meth:`_estimated_cone`.

        Returns
        -------
        cone : float
        source : str
            "replicates", "likelihood information" or "unresolved direction"
            (:data:`OPEN_SOURCE`: the floor).
        replicate_cone : float
        """
        cone, source, replicate_cone = self._estimated_cone(i, confidence)
        floor = float((self.open_axes or {}).get(AXIS_NAMES[i], 0.0))
        if cone < floor:
            return min(90.0, floor), OPEN_SOURCE, replicate_cone
        return cone, source, replicate_cone

    def _estimated_cone(self, i, confidence=None):
        """The cone from the replicates or the likelihood's information (see :meth:`cone`).

        The replicates' cone (calibrated), or the likelihood's information
        cone where one was given at this confidence, the replicates do not
        exchange the axis with another more often than ``1 - confidence``,
        the likelihood has no rival frame (:attr:`rival_angles`: with two
        maxima the curvature at one does not describe the uncertainty), and
        the likelihood's and the variogram's axes agree within the spread of
        their difference (:meth:`gap_check`); where they do not, the wider of
        the two cones.

        Returns
        -------
        cone : float
        source : str
            "replicates" or "likelihood information".
        replicate_cone : float
        """
        conf = self.confidence if confidence is None else confidence
        ref = self.reference_frame[:, i]
        cone = axis_cone(self.axes[:, :, i], ref, conf)[1]
        # the cone also holds the replicates' own axis of the same rank (their own major
        # for the major): where replicates exchange two axes more often than 1 - confidence,
        # it reaches the other mode instead of hiding the exchange by matching
        ranked = self._ranked_axes(i)
        if ranked is not None:
            cone = max(cone, axis_cone(ranked, ref, conf)[1])
        cone = min(90.0, cone * self.cone_calibration)
        info = self._information("cones", AXIS_NAMES[i])
        if (info is None or conf != self.confidence or self._exchanged(i, conf)
                or self.rival_angles):  # a second maximum: its curvature at one says little
            return cone, "replicates", cone
        info = min(90.0, float(info))
        check = self.gap_check(i, cone, info)
        if check is None or check["within"] or info >= cone:
            return info, "likelihood information", cone
        return cone, "replicates", cone

    def gap_check(self, i, replicate_cone, information_cone) -> dict | None:
        """Whether the likelihood's and the variogram's axis ``i`` agree as their spreads say.

        Two estimators of one axis: the likelihood (efficient under the
        model, spread: the information's cone) and the variogram fit
        (spread: the replicates' cone, which are variogram refits). Under the
        model the difference of an efficient and a consistent estimator has
        the variance of the consistent one less the efficient one's (Hausman
        1978, *Econometrica* 46, lemma 2.1; recalled from memory). So the
        angle between the two axes should lie within
        ``sqrt(replicate_cone**2 - information_cone**2)`` (cones of the same
        confidence scale as standard deviations). Where it does not, the
        model behind the information's cone is contradicted by the data's
        two estimates, and the information's cone is not trusted alone.

        Returns
        -------
        dict or None
            ``{"gap_deg", "allowed_deg", "within"}``; None without a gap for
            this axis (:attr:`variogram_gap`).
        """
        gap = (self.variogram_gap or {}).get(AXIS_NAMES[i])
        if gap is None or not np.isfinite(gap):
            return None
        allowed = float(np.sqrt(max(replicate_cone ** 2 - information_cone ** 2, 0.0)))
        return {"gap_deg": float(gap), "allowed_deg": allowed, "within": bool(gap <= allowed)}

    def _information(self, what, name):
        """``self.information``'s entry ``name`` of its field ``what``, or None."""
        return (getattr(self.information, what, None) or {}).get(name)

    def _scalar_band(self, name, conf, notes):
        """Interval of "nugget", "total_sill" or "sill<k>" (None where held fixed).

        The Wald interval of its share of the total sill on the logit scale,
        times the reported total sill, where the likelihood's information
        gives the share's standard deviation; else the replicates', joined
        with their spread about a rival nugget where one is given
        (:attr:`rival_nugget`).
        """
        est = self._estimate_of(name)
        wald = _share_wald(est, float(self.reference.total_sill),
                           self._information("logit_share_sd", name), conf)
        if wald is not None:
            return wald
        what = {"nugget": "nugget", "total_sill": "total sill"}.get(name) or \
            f"sill of structure {int(name[4:]) + 1}"
        band = self._held_or_interval(self._replicates_of(name), est, conf, what, notes)
        return self._holding_rival_nugget(name, band, conf, notes)

    def _holding_rival_nugget(self, name, band, conf, notes):
        """``band`` joined with the replicates' spread carried to the rival nugget (with one
        structure, to the sill the total leaves beside it), with a note where that widens it.

        Both estimates then stay inside the band, each with the replicates'
        spread about it (:func:`~anisotropy.uncertainty.intervals.carried_interval`),
        and the rival nugget also with its own Wald interval where the
        likelihood's information gives it
        (``information.likelihood_logit_share_sd``); unchanged without a
        rival or a band.
        """
        if self.rival_nugget is None or band is None:
            return band
        value, what = self.rival_nugget
        if name == "nugget":
            target = float(value)
        elif name == "sill0" and len(self.reference.structures) == 1:
            target = float(self.reference.total_sill) - float(value)
        else:
            return band
        if not np.isfinite(target):
            return band
        other = carried_interval(self._replicates_of(name), target, conf)[0]
        lo = float(min(band[0], other[0], target))
        hi = float(max(band[1], other[1], target))
        own = self._rival_wald(name, target, conf)
        if own is not None:   # the rival estimate's own spread, from the likelihood
            lo, hi = float(min(lo, own[0])), float(max(hi, own[1]))
        spread = ("the replicates' spread and its own Wald interval" if own is not None
                  else "the replicates' spread")
        if name == "nugget" and (lo < band[0] or hi > band[1]):
            notes.append(f"the nugget interval is widened to hold {what} ({value:.3g}) too, "
                         f"with {spread} about it: two estimates of the nugget")
        return [lo, hi]

    def _rival_wald(self, name, target, conf):
        """The Wald interval (logit scale of its share, times the total sill) of the rival
        nugget from the likelihood's own information, or None."""
        if name != "nugget":
            return None
        return _share_wald(target, float(self.reference.total_sill),
                           self._information("likelihood_logit_share_sd", "nugget"), conf)

    def _exchanged(self, i, conf):
        """True when the replicates exchange axis ``i`` with another in more than ``1 - conf``."""
        rates = self.swap_rates()
        return any(np.isfinite(rates[k]) and rates[k] > 1.0 - conf
                   for k, axes in SWAP_AXES.items() if AXIS_NAMES[i] in axes)

    def _ranked_axes(self, i):
        """Axis ``i`` of each replicate's own frame (ordered by its ranges), or None."""
        frames = [np.asarray(getattr(m, "frame", None), dtype=float) for m in self.models]
        if not frames or any(F.shape != (3, 3) for F in frames):
            return None
        return np.stack([F[:, i] for F in frames])

    def _held_or_interval(self, replicates, estimate, conf, what, notes):
        """Interval holding the estimate, or None with a note when the value was held fixed."""
        if held_fixed(replicates, estimate):
            notes.append(f"the {what} is held fixed in every replicate fit (it is not "
                         "re-estimated), so it has no interval here")
            return None
        return holding_estimate(self._interval(replicates, estimate, conf)[0], estimate)[0]

    def _interval(self, replicates, estimate, conf):
        if self.recentred:
            return carried_interval(replicates, estimate, conf)
        return _scalar_interval(replicates, estimate, conf, self.counts,
                                prefer_bca=self.interval_method == "bca")

    def _calibrate(self, interval, estimate):
        """Widen a range interval by ``range_calibration`` on the log scale around the estimate."""
        c = self.range_calibration
        if c == 1.0 or not np.all(np.isfinite(interval)) or not estimate > 0 \
                or min(interval) <= 0:
            return interval
        lo, hi = interval
        return [float(estimate * (lo / estimate) ** c), float(estimate * (hi / estimate) ** c)]

    def interval(self, name, confidence=None):
        """Interval of "nugget", "total_sill", "sill0", "sill1", ... or an axis range.

        Every interval holds its estimate; None for a value held fixed in the
        replicate fits (see :func:`held_fixed`).
        """
        conf = self.confidence if confidence is None else confidence
        if name in AXIS_NAMES:
            return self.axis_summary(AXIS_NAMES.index(name), conf)["range"]
        if name in self._scalar_names():
            return self._scalar_band(name, conf, [])
        raise InputError(f"no interval called {name!r}")

    @property
    def confidence_interval(self) -> ConfidenceInterval:
        """The bands at ``confidence``, in the manner of :func:`scipy.stats.bootstrap`."""
        names, est, low, high, notes, cones = [], [], [], [], {}, {}
        for i, axis in enumerate(AXIS_NAMES):
            summ = self.axis_summary(i)
            band = summ["range"] or (None, None)
            names.append(axis)
            est.append(self.reference_ranges[i])
            low.append(np.nan if band[0] is None else band[0])
            high.append(np.nan if band[1] is None else band[1])
            cones[axis] = summ["cone_deg"]
            if "range_note" in summ:
                notes[axis] = summ["range_note"]
        for name in self._scalar_names():
            held = []
            band = self._scalar_band(name, self.confidence, held)
            names.append(name)
            est.append(self._estimate_of(name))
            low.append(np.nan if band is None else band[0])
            high.append(np.nan if band is None else band[1])
            if held:
                notes[name] = held[0]
        return ConfidenceInterval(names=tuple(names), low=np.array(low, float),
                                  high=np.array(high, float), estimate=np.array(est, float),
                                  cone_deg=cones, confidence_level=float(self.confidence),
                                  notes=notes)

    def _scalar_names(self) -> tuple:
        return ("nugget", "total_sill") + tuple(f"sill{k}" for k in
                                                 range(len(self.reference.structures)))

    def _replicates_of(self, name):
        if name in ("nugget", "total_sill"):
            return getattr(self, name)
        return self.sills[:, int(name[4:])]

    def _estimate_of(self, name):
        if name in ("nugget", "total_sill"):
            return getattr(self.reference, name)
        return self.reference.structures[int(name[4:])].sill

    def variogram_bands(self, directions, distances, confidence=None):
        """Bands on the fitted model curves along given directions.

        Parameters
        ----------
        directions : array_like, shape (n_dir, 3)
        distances : array_like, shape (n_dist,)
        confidence : float, optional

        Returns
        -------
        dict
            ``distance`` (n_dist,), ``model`` (n_dir, n_dist) of the reference,
            ``lo``, ``hi`` (n_dir, n_dist) percentile bands of the replicates.
        """
        conf = self.confidence if confidence is None else confidence
        dirs = _unit(np.asarray(directions, dtype=float).reshape(-1, 3))
        d = np.asarray(distances, dtype=float)
        curves = np.empty((len(self.models), len(dirs), len(d)))
        for k, m in enumerate(self.models):
            for j, u in enumerate(dirs):
                curves[k, j] = m.variogram_along(u, d)
        ref = np.stack([self.reference.variogram_along(u, d) for u in dirs])
        if self.recentred:   # the replicates' relative spread, carried to the reference
            lo, hi = _carried(curves, ref, conf)
        else:
            lo, hi = percentile_interval(curves, conf, axis=0)
        return {"distance": d, "model": ref, "lo": lo, "hi": hi}

    def experimental_bands(self, confidence=None):
        """Percentile bands on every experimental point of the coarse directions.

        Returns
        -------
        dict or None
            ``directions`` (n_coarse, 3), ``lo``, ``hi``, ``median``
            (n_lags+1, n_coarse); None when the replicates kept no
            experimental variograms.
        """
        if self.experimental is None:
            return None
        conf = self.confidence if confidence is None else confidence
        lo, hi = percentile_interval(self.experimental, conf, axis=0)
        with _warnings.catch_warnings():
            _warnings.simplefilter("ignore", RuntimeWarning)
            med = np.nanmedian(self.experimental, axis=0)
        return {"directions": self.coarse_directions, "distance": self.distances,
                "lo": lo, "hi": hi, "median": med}

    def summary(self) -> str:
        d = self.to_dict()
        lines = [f"uncertainty: {d['method'].replace('_', ' ')}, {d['replicates']} replicates "
                 f"({d['failed']} failed), {100 * d['confidence']:.0f} % bands"]
        for name in AXIS_NAMES:
            a = d[name]
            tr = "undefined" if a["trend"] is None else f"{a['trend'][0]:.0f}-{a['trend'][1]:.0f}"
            lines.append(f"  {name:<10} cone {a['cone_deg']:5.1f} deg  trend {tr}  plunge "
                         f"{a['plunge'][0]:.0f}-{a['plunge'][1]:.0f}  range "
                         f"{range_text(a['range'], self.longest_lag)}")
        nug = d["nugget"]
        nug = "held fixed" if nug is None else f"{nug[0]:.3g}-{nug[1]:.3g}"
        lines.append(f"  nugget {nug}; "
                     f"major/semi-major swap rate {d['swap_rate']['major_semi_major']:.2f}")
        if d.get("blocks"):
            lines.append(f"  blocks: {d['blocks']['rule']}")
        for w in d["warnings"]:
            lines.append(f"  caution: {w}")
        return "\n".join(lines)

    def to_dict(self) -> dict:
        """The ``uncertainty`` block of discovery.json (plain Python types)."""
        conf = float(self.confidence)
        out = {"method": f"{self.method}_bootstrap", "replicates": self.n_replicates,
               "requested": int(self.n_requested), "failed": int(self.n_failed),
               "confidence": conf, "seed": self.seed if isinstance(self.seed, (int, type(None)))
               else str(self.seed)}
        if self.n_replicates < 2:
            out["warnings"] = list(self.warnings) + [
                "fewer than 2 successful replicates: no bands"]
            return out
        for i, name in enumerate(AXIS_NAMES):
            out[name] = self.axis_summary(i, conf)
        notes = []
        ref = self.reference
        out["nugget"] = self._scalar_band("nugget", conf, notes)
        out["sills"] = [self._scalar_band(f"sill{k}", conf, notes)
                        for k in range(len(ref.structures))]
        out["total_sill"] = self._scalar_band("total_sill", conf, notes)
        out["share_interval"] = ("likelihood information (Wald, logit scale of the share, "
                                 "times the total sill)"
                                 if self._information("logit_share_sd", "nugget") is not None
                                 else "replicates")
        out["notes"] = notes
        out["swap_rate"] = self.swap_rates()
        out["interval_method"] = self.interval_method
        out["interval_note"] = (
            ("BCa (Efron & Tibshirani 1993, ch. 14) where the bias correction is finite, "
             "percentile otherwise" if self.interval_method == "bca" else
             "percentile (Efron & Tibshirani 1993, ch. 13)")
            + ("; the reported model is the likelihood's and each replicate refits the "
               "variogram, so replicate intervals and bands are the replicates' percentiles "
               "carried to the reported value (times it, over their median)"
               if self.recentred else "")
            + "; cones: the confidence quantile of replicate-to-reported axis angles")
        out["recentred"] = bool(self.recentred)
        out["calibration"] = {"cone": float(self.cone_calibration),
                              "range_log": float(self.range_calibration),
                              "source": "benchmarks/RESULTS.md, uncertainty coverage study"}
        if self.blocks is not None:
            out["blocks"] = self.blocks
        out["seconds"] = float(self.seconds)
        out["failures"] = list(self.failures)
        out["warnings"] = list(self.warnings)
        return out
