"""The ``Discovery`` result: the stage records of one run, the record, the summary.

A :class:`Discovery` is composed of the typed records the stages returned
(:mod:`anisotropy.discovery`); its familiar attributes (``model``, ``frame``,
``samples``, ``lags``, ``diagnostics``...) are read from them.  Its
:meth:`~Discovery.bootstrap` resamples the volume's blocks (or simulates from
the model) and refits with :class:`RefitState`, without a new pass over the
pairs for the block bootstrap.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from anisotropy.errors import FitError, InputError
from anisotropy.safe_io import json_ready
from anisotropy.directional import Fan
from anisotropy.exploration import Exploration
from anisotropy.fitting import (DirectionRanges, EllipsoidFit, FitBins, NestedFit,
                                bins_from_sums, fit_nested)
from anisotropy.geometry import (angles_from_frame, pitch_of, pole_to_plane, strike_of,
                                 vector_to_line)
from anisotropy.models import NestedModel
from anisotropy.pairs import LagVolume
from anisotropy.samples import SampleSet
from anisotropy.transform import TransformResult
from anisotropy.uncertainty import (DEFAULT_REPLICATES, BootstrapResult, block_bootstrap,
                                    model_bootstrap)

from anisotropy.discovery.bins import ReplicateNugget, WeightedBins, information_weight
from anisotropy.discovery.diagnose import AXES, Diagnostics
from anisotropy.discovery.fan import FanRanges
from anisotropy.discovery.grades import GradeRefit, refit_grades
from anisotropy.discovery.lags import LagChoice, PairVolume, build_volume
from anisotropy.discovery.params import DiscoverParams
from anisotropy.discovery.prepare import Prepared, SillChoice, TransformChoice
from anisotropy.discovery.search import FitSettings, Search, Start
from anisotropy.discovery.structures import Refinement, ordered_model

SCHEMA = "anisotropy.discovery/1"

CAUTION = ("Automated continuity suggestions support, and do not replace, the judgement of "
           "the competent or qualified person responsible under the public reporting code "
           "that applies (JORC, NI 43-101, SAMREC, PERC or the local equivalent). The result "
           "depends on the domaining: a domain that mixes populations or styles of "
           "mineralisation gives a mixed answer.")

PLANAR_CAUTION = ("The samples lie in one plane (one bench or level): only the azimuths of "
                  "continuity within that plane are resolved; the axis across the plane and "
                  "its range are not, and are reported only to complete the frame.")


def _as_start(model):
    """(frame, nugget, sills, ranges (K, 3), kinds) of a NestedModel (a fit's start)."""
    st = list(model.structures)
    return (np.asarray(model.frame, float), float(model.nugget),
            np.array([s.sill for s in st], float),
            np.array([list(s.ranges) for s in st], float), tuple(s.kind for s in st))


@dataclass(frozen=True)
class RefitState:
    """Everything a bootstrap replicate's refit shares with the main fit.

    Calling it, ``refit(coarse_sums, *, fixed_frame=None, start=None,
    block_weights=None) -> (NestedModel, objective)``, rebuilds the fit bins
    from (re-weighted) coarse sums, re-applies the main fit's information
    weights (per bin, as a ratio to the pair count), and refits the same
    number and kinds of structures, warm-started from ``start`` (default: the
    main fit), with the same nugget policy (a held down-hole nugget is read
    again from the replicate's ``block_weights`` where ``downhole`` is set,
    see :meth:`for_volume`), one re-weighting pass (the Cressie denominators of the
    warm start) and a relative cost tolerance of 1e-5; ``fixed_frame`` holds
    the frame (for checking an interpretation).  No pass over the pairs.  The
    returned model's frame is ordered and canonical like the main one.  Where
    the main frame was refined by the likelihood, each replicate's frame is
    turned by the same rotation (``frame_correction``; the refinement needs
    the samples, which a re-weighted replicate does not have).
    """

    model: NestedModel
    estimator: str
    min_pairs: float
    weight_ratio: np.ndarray
    settings: FitSettings
    max_nfev: int
    shared_ratios: bool
    frame_correction: np.ndarray | None = None
    downhole: ReplicateNugget | None = None

    @classmethod
    def of(cls, refinement: Refinement, weighted: WeightedBins, settings: FitSettings, *,
           estimator, shared_ratios) -> "RefitState":
        fit = refinement.fit
        Q = refinement.correction
        return cls(model=refinement.model, estimator=estimator, min_pairs=weighted.min_pairs,
                   weight_ratio=weighted.ratio, settings=settings,
                   # a refined fit held its frame: replicates free it (3 more parameters)
                   max_nfev=60 * (fit.n_params + 1 + (3 if Q is not None else 0)),
                   shared_ratios=shared_ratios, frame_correction=Q)

    def for_volume(self, weighted: WeightedBins, volume, coords, values) -> "RefitState":
        """This refit, re-reading a held down-hole nugget in each replicate of ``volume``'s
        blocks (itself where no nugget is held)."""
        rule = ReplicateNugget.of(weighted, volume, coords, values,
                                  total=self.settings.total_sill, estimator=self.estimator)
        return self if rule is None else replace(self, downhole=rule)

    def __call__(self, coarse_sums, *, fixed_frame=None, start=None, block_weights=None):
        bins = bins_from_sums(coarse_sums, estimator=self.estimator, min_pairs=self.min_pairs)
        bins.weight = information_weight(bins, self.weight_ratio)
        if bins.n < 3:
            raise FitError("a replicate has fewer than 3 fit bins with enough pairs")
        main = self.model
        s0 = start if start is not None else main
        Q = self.frame_correction
        turn = Q is not None and fixed_frame is None
        if turn:
            # the main frame was refined by the likelihood: the replicate's variogram fit
            # starts from the variogram's own frame and is turned by the same rotation
            s0 = _as_start(s0) if not isinstance(s0, tuple) else s0
            s0 = (Q.T @ np.asarray(s0[0], float),) + tuple(s0[1:])
        st = self.settings
        nugget = st.fixed_nugget
        if self.downhole is not None and block_weights is not None:
            nugget = self.downhole(block_weights)
        f = fit_nested(bins, s0, n_structures=len(main.structures),
                       kinds=tuple(x.kind for x in main.structures),
                       fixed_frame=fixed_frame, fixed_nugget=nugget,
                       total_sill=st.total_sill, max_nfev=self.max_nfev,
                       min_range=st.min_range, max_range=st.max_range,
                       planar=st.planar, ftol=1e-5, outer=1,
                       shared_ratios=self.shared_ratios, make_model=False)
        if turn:
            f.frame = Q @ np.asarray(f.frame, float)
        model = ordered_model(f, keep_frame=fixed_frame is not None, planar=st.planar)
        return model, float(f.objective)


@dataclass
class Discovery:
    """The continuity proposal for one domain and variable, composed of the stage records.

    Attributes
    ----------
    params : DiscoverParams
        The settings of the run.
    prepared : Prepared
        The samples and their exploration.
    transform_choice : TransformChoice
    sill_choice : SillChoice
    lag_choice : LagChoice
    pair_volume : PairVolume
        The lag-vector volume (with bootstrap blocks when the run asked for a
        block bootstrap; see :meth:`volume_with_blocks`).
    weighted : WeightedBins
        The fit bins with their information weights.
    fan_ranges : FanRanges
    starts : tuple of Start
    search : Search
        The orientation search.
    refinement : Refinement
        The nested model after the likelihood refinement.
    diagnosis : Diagnostics
    refit : RefitState
        The refit of a bootstrap replicate (callable).
    uncertainty : BootstrapResult or None
    warnings : list of str
    choices : list of dict
        Every choice made, with its reason.
    seconds : dict
        Seconds per stage, and ``total``.
    run : dict
        The audit trail (``run{utc, version, options, command, input_sha256,
        seed}``), see :func:`anisotropy.audit.run_record`.
    grade_units : str or None
        Units of the grade, as given by the user (``--units``), for labels.

    Derived (read from the records): ``model`` (nugget and structures in the
    transformed variable's units; frame columns major, semi-major, minor),
    ``frame`` (right-handed, canonical), ``samples``, ``exploration``,
    ``transform``, ``lags``, ``estimator``, ``planar``, ``diagnostics`` and
    the working objects ``volume_``, ``fan_``, ``bins_``, ``ranges_``,
    ``ellipsoid_``, ``fit_``.
    """

    params: DiscoverParams
    prepared: Prepared
    transform_choice: TransformChoice
    sill_choice: SillChoice
    lag_choice: LagChoice
    pair_volume: PairVolume
    weighted: WeightedBins
    fan_ranges: FanRanges
    starts: tuple[Start, ...]
    search: Search
    refinement: Refinement
    diagnosis: Diagnostics
    refit: RefitState
    uncertainty: BootstrapResult | None = None
    warnings: list[str] = field(default_factory=list)
    choices: list[dict] = field(default_factory=list)
    seconds: dict[str, float] = field(default_factory=dict)
    run: dict = field(default_factory=dict)
    grade_units: str | None = None
    _grade_refit: GradeRefit | None = field(default=None, init=False, repr=False,
                                            compare=False)
    _blocked_volume: PairVolume | None = field(default=None, init=False, repr=False,
                                               compare=False)

    # -- read from the records -------------------------------------------------
    @property
    def model(self) -> NestedModel:
        return self.refinement.model

    @property
    def frame(self) -> np.ndarray:
        return self.refinement.frame

    @property
    def samples(self) -> SampleSet:
        return self.prepared.samples

    @property
    def exploration(self) -> Exploration:
        return self.prepared.exploration

    @property
    def transform(self) -> TransformResult:
        return self.transform_choice.result

    @property
    def lags(self) -> dict:
        return self.lag_choice.record()

    @property
    def estimator(self) -> str:
        return self.params.estimator

    @property
    def planar(self) -> bool:
        return self.prepared.planar

    @property
    def volume_(self) -> LagVolume:
        return self.pair_volume.volume

    @property
    def fan_(self) -> Fan:
        return self.fan_ranges.fan

    @property
    def bins_(self) -> FitBins:
        return self.weighted.bins

    @property
    def ranges_(self) -> DirectionRanges:
        return self.diagnosis.direction_ranges

    @property
    def ellipsoid_(self) -> EllipsoidFit | None:
        return self.fan_ranges.ellipsoid

    @property
    def fit_(self) -> NestedFit:
        return self.refinement.fit

    @property
    def diagnostics(self) -> dict:
        """pairs, directions, selection, ``residuals_by_direction``, seconds, ..."""
        fan, volume = self.fan_ranges, self.pair_volume.volume
        return {
            "pairs": self.pair_volume.n_pairs,
            "pairs_estimated": self.lag_choice.pairs_estimated,
            "directions": {"n": int(len(fan.directions)), "thin": int(fan.ranges.n_thin),
                           "widened": int(fan.widened.sum()),
                           "angular_tolerance": fan.tolerance,
                           "usable": int(fan.ranges.usable.sum())},
            "bins": self.weighted.bins.to_dict(),
            "units": self.sill_choice.units,
            "unresolved_axes": self.diagnosis.unresolved_axes,
            "unresolved_ranges": self.diagnosis.unresolved_ranges,
            "ambiguous_axes": list(self.diagnosis.ambiguous_axes),
            "resolved_down_hole": list(self.diagnosis.resolved_down_hole),
            "continuity": self.diagnosis.continuity,
            "frame_candidates": (self.refinement.record or {}).get("frame_candidates"),
            "selection": self.refinement.selection.to_dict(),
            "frame_refinement": self.refinement.record,
            "starts": self.search.tried,
            "kinds": self.search.kinds,
            "ellipsoid": None if fan.ellipsoid is None else fan.ellipsoid.to_dict(),
            "direction_ranges": self.diagnosis.direction_ranges.to_dict(),
            "residuals_by_direction": self.diagnosis.residuals,
            "downhole": self.weighted.downhole,
            "volume": {"seconds": float(getattr(volume, "seconds", 0.0)),
                       "memory_bytes": int(getattr(volume, "memory_bytes", 0) or 0),
                       "coarse_directions": int(self.pair_volume.coarse_directions.shape[0])},
            "seconds": dict(self.seconds),
            **({"grade_units": self.grade_units} if self.grade_units else {}),
        }

    # -- derived geometry ------------------------------------------------------
    def axes(self) -> dict:
        """Axis vectors, trend/plunge and range (longest-range structure)."""
        out = {}
        longest = max(self.model.structures, key=lambda s: s.ranges[0])
        for i, name in enumerate(AXES):
            v = self.frame[:, i]
            t, p = vector_to_line(v)
            out[name] = {"vector": [float(x) for x in v], "trend": float(t), "plunge": float(p),
                         "range": float(longest.ranges[i])}
        return out

    def plane(self) -> dict:
        """Plane of greatest continuity (pole = minor axis) and the major axis's pitch."""
        dd, dip = pole_to_plane(self.frame[:, 2])
        dd, dip = float(dd), float(dip)
        pitch = float(pitch_of(self.frame[:, 0], dd, dip))
        return {"dip_direction": dd, "dip": dip, "strike": float(strike_of(dd)),
                "pitch": pitch}

    def angles(self) -> dict:
        a, p, r = angles_from_frame(self.frame)
        return {"azimuth": float(a), "plunge": float(p), "rotation": float(r),
                "convention": "azimuth and plunge of the major axis, then rotation of the "
                              "semi-major axis about the major axis away from horizontal "
                              "(anisotropy.geometry.frame_from_angles)"}

    # -- record ------------------------------------------------------------------
    def _input_record(self) -> dict:
        s = self.samples
        cols = getattr(s, "columns", {}) or {}
        origin = getattr(s, "origin", None)
        return {"file": str(getattr(s, "source", "<table>")), "value": cols.get("value"),
                "domain": getattr(s, "domain", None), "n_samples": getattr(s, "n_read", None),
                "n_used": int(s.n), "dropped": dict(getattr(s, "dropped", {}) or {}),
                "changed": dict(getattr(s, "changed", {}) or {}),
                "columns": dict(cols),
                "origin": [float(o) for o in np.ravel(origin if origin is not None else [])]}

    def _transform_record(self) -> dict:
        """The transform's record, with the top-cut applied before it (if any)."""
        out = dict(self.transform.record) if self.transform is not None else {}
        if self.prepared.top_cut is not None:
            out["top_cut"] = self.prepared.top_cut.to_dict()
        return out

    def to_dict(self) -> dict:
        """The result record, schema ``anisotropy.discovery/1`` (design.md)."""
        structures = [{"type": st.kind, "sill": float(st.sill),
                       "ranges": {"major": float(st.ranges[0]),
                                  "semi_major": float(st.ranges[1]),
                                  "minor": float(st.ranges[2])}}
                      for st in self.model.structures]
        unc = {} if self.uncertainty is None else self.uncertainty.to_dict()
        d = {
            "schema": SCHEMA,
            "input": self._input_record(),
            "transform": self._transform_record(),
            "estimator": self.estimator,
            "lags": self.lags,
            "axes": self.axes(),
            "plane": self.plane(),
            "rotation": {"matrix": self.frame.tolist(), "angles": self.angles()},
            "model": {"nugget": float(self.model.nugget), "structures": structures,
                      "total_sill": float(self.model.total_sill),
                      "units": self.sill_choice.units},
            "uncertainty": unc,
            "run": dict(self.run),
            "diagnostics": dict(self.diagnostics, warnings=list(self.warnings),
                                choices=list(self.choices)),
            "planar": bool(self.planar),
            "cautions": [CAUTION] + ([PLANAR_CAUTION] if self.planar else []),
        }
        return json_ready(d, default=None)

    def to_json(self, path) -> Path:
        """Write :meth:`to_dict` as JSON, atomically."""
        from anisotropy.safe_io import atomic_write_json

        path = Path(path)
        atomic_write_json(path, self.to_dict())
        return path

    def summary(self) -> str:
        """The proposal in the geologist's words."""
        return _summary(self)

    def grade_refit(self) -> GradeRefit:
        """The grades' semivariogram refitted with the discovered frame held (computed once).

        The grades are the samples' values as used (after the top-cut, if
        any); the lag classes, direction cells, fewest pairs per bin, range
        bounds, planar rule and shared-ratio setting are the run's (see
        :func:`anisotropy.discovery.grades.refit_grades`).
        """
        if self._grade_refit is None:
            s, st = self.samples, self.refit.settings
            self._grade_refit = refit_grades(
                s.coords, self.prepared.values, self.model, self.lag_choice, holes=s.holes,
                spacing=self.prepared.spacing, min_pairs=self.params.min_pairs_bin,
                coarse_spacing=self.params.coarse_spacing, min_range=st.min_range,
                max_range=st.max_range, planar=self.planar,
                shared_ratios=self.params.shared_ratios, source=str(s.source))
        return self._grade_refit

    # -- uncertainty -------------------------------------------------------------
    def volume_with_blocks(self) -> LagVolume:
        """The lag volume with block sums for the block bootstrap (built once on request).

        One more pass over the pairs (the fit's pass keeps no blocks), on the
        same samples, values, lag classes and direction cells, with blocks
        sized for the bootstrap. Its fine sums are those of ``volume_`` up to
        the order of the floating-point additions.
        """
        if self._blocked_volume is None:
            s = self.samples
            self._blocked_volume = build_volume(
                s.coords, self.transform_choice.values, self.lag_choice,
                estimator=self.estimator, coarse_spacing=self.params.coarse_spacing,
                progress=self.params.progress, source=str(s.source), blocks=True)
        return self._blocked_volume.volume

    def refit_function(self, volume=None) -> RefitState:
        """The refit of a bootstrap replicate (see :class:`RefitState`).

        Given the volume whose blocks a block bootstrap resamples, a held
        down-hole nugget is read again in each replicate from its re-weighted
        down-hole pairs (:meth:`RefitState.for_volume`).
        """
        if volume is None:
            return self.refit
        return self.refit.for_volume(self.weighted, volume, self.samples.coords,
                                     self.transform_choice.values)

    def bootstrap(self, n_resamples=DEFAULT_REPLICATES, *, method="block",
                  confidence_level=0.9, rng=0, n_jobs=1, scheduler=None,
                  progress=False) -> BootstrapResult:
        """Bands on the axes, ranges, nugget and sills by resampling (after scipy.stats.bootstrap).

        Parameters
        ----------
        n_resamples : int
            Replicates.
        method : {"block", "model"}
            "block": spatial blocks of the volume resampled by re-weighting the
            pair engine's block sums (no new pass over pairs), calibrated by
            the coverage study. "model": fields simulated at the data locations
            with the fitted model, a new pass over pairs and a refit per
            replicate (uncalibrated; not for indicators).
        confidence_level : float
            Confidence of the cones and intervals.
        rng : int
            Seed of the resampling.
        n_jobs, scheduler, progress
            Parallel settings and progress messages.

        Returns
        -------
        anisotropy.uncertainty.result.BootstrapResult
            Its ``confidence_interval`` holds the bands (low and high per
            quantity, cones per axis). Not stored on the result
            (``discover(bootstrap=n)`` stores it as ``uncertainty``).
        """
        if method not in ("block", "model"):
            raise InputError(f"bootstrap method {method!r} is not known; use 'block' "
                             "(default, calibrated) or 'model' (simulation from the fitted "
                             "model)")
        kw = dict(n_replicates=int(n_resamples), confidence=confidence_level, seed=rng,
                  n_jobs=n_jobs, scheduler=scheduler, progress=progress)
        if method == "model":
            if self.transform.kind == "indicator":
                raise InputError("the model-based bootstrap simulates Gaussian fields, which "
                                 "indicators are not; use the block bootstrap for indicator "
                                 "variograms")
            res = model_bootstrap(self.samples.coords, self.model, self.refit,
                                  volume=self.volume_, **kw)
        else:
            vol = self.volume_with_blocks()
            res = block_bootstrap(vol, self.refit_function(vol), self.model,
                                  estimator=self.estimator, **kw)
        res.rival_angles = self.rival_angles()
        res.rival_nugget = self.rival_nugget()
        fr = self.refinement.frame_refinement
        res.recentred = fr is not None and fr.reports_likelihood_model
        res.information = self.likelihood_information(confidence_level)
        res.variogram_gap = self.variogram_gap()
        res.open_axes = self.open_cone_floors()
        return res

    def open_cone_floors(self) -> dict | None:
        """The narrowest cone each axis the diagnosis leaves open may have (degrees).

        Twice the fan's angular tolerance for every axis in
        ``diagnostics["unresolved_axes"]``: two directions that far apart
        share no pair in their directional variograms, so a narrower cone
        would claim a resolution the sampling does not give (the converse of
        the rule that a wider cone makes an axis unresolved,
        :func:`anisotropy.discovery.diagnose.with_bootstrap`). None when every
        direction is resolved.
        """
        axes = list(self.diagnosis.unresolved_axes or [])
        if not axes:
            return None
        floor = 2.0 * float(self.fan_ranges.tolerance)
        return {a: floor for a in axes}

    def likelihood_information(self, confidence=0.9):
        """Cones and Wald intervals of the reported model from the likelihood's information.

        The cones from the likelihood's information hold the true axes at
        about the stated confidence where the likelihood's and the variogram
        fit's frames agree within the spread of their difference; where they
        do not (on drill holes, mostly the worst realisations), the
        information's cone alone missed the truth, and the bootstrap takes
        the wider of it and the replicates' cone (:meth:`variogram_gap`,
        :meth:`anisotropy.uncertainty.result.BootstrapResult.gap_check`;
        ``benchmarks/RESULTS.md``, *Which cone*).

        Returns
        -------
        anisotropy.fitting.information.ReportedInformation or None
            None without a likelihood refinement, or where its information
            is not positive definite. Its cones are per reported axis; its
            standard deviations of the share logits (Wald intervals) are None
            where the reported model is a variogram refit's, not the
            likelihood's. The range intervals are the replicates' on every
            layout (the Wald range intervals under-covered: *Range intervals*
            in ``benchmarks/RESULTS.md``).
        """
        fr = self.refinement.frame_refinement
        if fr is None:
            return None
        return fr.likelihood_information(self.frame, confidence, seed=self.params.seed)

    def variogram_gap(self) -> dict | None:
        """Angle (degrees) from each reported axis to the variogram fit's matching axis.

        The reported frame is the likelihood's; the variogram fit's (the
        structure selection's best, before the likelihood) estimates the
        same frame another way. Axes are matched by direction (largest
        absolute cosine). None without a likelihood refinement.
        """
        if self.refinement.frame_refinement is None:
            return None
        V = np.asarray(self.refinement.selection.best.frame, float)
        cos = np.clip(np.abs(self.frame.T @ V).max(axis=1), 0.0, 1.0)
        return {a: float(np.degrees(np.arccos(c))) for a, c in zip(AXES, cos)}

    def rival_nugget(self) -> tuple | None:
        """The likelihood's nugget, where the fit holds the down-hole one: a second estimate.

        On drill holes the fit holds the nugget read from the first down-hole
        lags, a straight line through two points that a curved structure
        biases; the likelihood estimates the nugget with the structures from
        every sample, and can give part of it to a short structure. Neither
        is better everywhere, so the bootstrap's nugget band holds both, each
        with the replicates' spread about it, and the likelihood's with its
        own Wald interval too
        (:class:`anisotropy.uncertainty.result.BootstrapResult`).

        Returns
        -------
        tuple or None
            ``(value, what)``; None where the nugget is fitted, or without a
            likelihood refinement.
        """
        fr = self.refinement.frame_refinement
        share = ((fr.record or {}) if fr is not None else {}).get("nugget_share")
        if self.weighted.fixed_nugget is None or share is None:
            return None
        return float(self.model.total_sill) * float(share), "the likelihood's nugget"

    def rival_angles(self) -> dict | None:
        """Angle (degrees) from each reported axis to a rival frame's, where one is as likely.

        The replicates refit the variogram and are turned like the main frame,
        so they cannot see a second maximum of the likelihood; the cones are
        widened to these angles (see
        :class:`anisotropy.uncertainty.result.BootstrapResult`) so that they hold both.
        """
        cand = (self.refinement.record or {}).get("frame_candidates") or {}
        if not cand.get("ambiguous_axes"):
            return None
        return dict(cand.get("rival_angles") or {})


def _worst_direction_line(rows):
    """One summary line: the typical and the worst fit among well-sampled fan directions.

    Well sampled: not thin, with a residual, and at least the median pairs of
    such directions.  None when no direction qualifies.
    """
    ok = [r for r in rows or [] if r.get("flag") != "thin"
          and r.get("rms_relative_residual") is not None]
    if not ok:
        return None
    med_pairs = float(np.median([r["pairs"] for r in ok]))
    well = [r for r in ok if r["pairs"] >= med_pairs]
    w = max(well, key=lambda r: r["rms_relative_residual"])
    med_rms = float(np.median([r["rms_relative_residual"] for r in ok]))
    rms, mean = 100 * w["rms_relative_residual"], 100 * w["mean_relative_residual"]
    return (f"fit along the fan: median RMS relative residual {100 * med_rms:.0f} % over "
            f"{len(ok)} directions; worst of the better-sampled half: trend "
            f"{w['trend']:05.1f}, plunge {w['plunge']:4.1f}, RMS {rms:.0f} % "
            f"(mean {mean:+.0f} %) over {w['n_lags']} lags, {w['pairs']:,} pairs")


#: Units printed after the numeric value of a choice in the summary.
_CHOICE_UNITS = {"unit lag": "m", "lag tolerance": "m", "angular tolerance": "degrees",
                 "bootstrap blocks": "m", "bandwidth": "m", "maximum distance": "m"}


def _summary(D: "Discovery") -> str:
    return "\n".join(_summary_model(D) + _summary_run(D))


def _summary_model(D: "Discovery") -> list:
    """The axes, the plane and the model."""
    a = D.axes()
    pl = D.plane()
    m = D.model
    t = D.transform.kind if D.transform is not None else "raw"
    units = D.diagnostics.get("units", "")
    s = D.samples
    head = f"Continuity proposal for {getattr(s, 'columns', {}).get('value', 'grade')}"
    if getattr(s, "domain", None) is not None:
        head += f", domain {s.domain}"
    L = [head, "=" * len(head)]
    L.append(f"samples used: {s.n} of {getattr(s, 'n_read', s.n)} ({getattr(s, 'source', '')})")
    L.append(f"transform: {t}; estimator: {D.estimator}; values in {units}")
    L.append("")
    if D.planar:
        L.append("PLANAR DATA: only the azimuths within the plane are resolved.")
    L.append(f"Plane of greatest continuity: dip direction {pl['dip_direction']:05.1f}, "
             f"dip {pl['dip']:4.1f} (strike {pl['strike']:05.1f}, right-hand rule)")
    L.append(f"Major axis:      trend {a['major']['trend']:05.1f}, plunge "
             f"{a['major']['plunge']:4.1f}, pitch {pl['pitch']:5.1f} in the plane; "
             f"range {a['major']['range']:.4g} m")
    L.append(f"Semi-major axis: trend {a['semi_major']['trend']:05.1f}, plunge "
             f"{a['semi_major']['plunge']:4.1f}; range {a['semi_major']['range']:.4g} m")
    minor_range = (f"range {a['minor']['range']:.4g} m" if not D.planar else
                   f"range not resolved (planar data; {a['minor']['range']:.4g} m is a "
                   "placeholder equal to the semi-major)")
    L.append(f"Minor axis:      trend {a['minor']['trend']:05.1f}, plunge "
             f"{a['minor']['plunge']:4.1f} (pole to the plane); {minor_range}")
    L.append("")
    L.append(f"Model ({units}): nugget {m.nugget:.3g} of total sill {m.total_sill:.3g} "
             f"({100 * m.nugget / max(m.total_sill, 1e-300):.0f} %)")
    for i, st in enumerate(m.structures, 1):
        L.append(f"  structure {i}: {st.kind}, sill {st.sill:.3g}, ranges "
                 f"{st.ranges[0]:.4g} / {st.ranges[1]:.4g} / {st.ranges[2]:.4g} m "
                 "(major / semi-major / minor"
                 + ("; practical range" if st.kind in ("exponential", "gaussian") else "") + ")")
    return L


def _summary_run(D: "Discovery") -> list:
    """The run's figures, the bands, the choices, the warnings and the caution."""
    dg = D.diagnostics
    L = [""]
    L.append(f"pairs: {dg.get('pairs', 0):,}; fan directions: "
             f"{dg.get('directions', {}).get('n', 0)}"
             f" ({dg.get('directions', {}).get('thin', 0)} too thin to use); "
             f"fit bins: {dg.get('bins', {}).get('bins', 0)}; "
             f"run time {D.seconds.get('total', 0):.1f} s")
    worst = _worst_direction_line(dg.get("residuals_by_direction"))
    if worst:
        L.append(worst)
    if D.uncertainty is not None and hasattr(D.uncertainty, "to_dict"):
        u = D.uncertainty.to_dict()
        for ax in AXES:
            if ax in u and isinstance(u[ax], dict) and u[ax].get("cone_deg") is not None:
                L.append(f"  {ax.replace('_', '-')} axis within {u[ax]['cone_deg']:.1f} degrees "
                         f"({100 * u.get('confidence', 0.9):.0f} % of replicates)")
    L.append("")
    L.append("Choices made (override with the options named):")
    for c in D.choices:
        v = c["value"]
        v = f"{v:.4g}" if isinstance(v, float) else str(v)
        unit = _CHOICE_UNITS.get(c["choice"])
        if unit and isinstance(c["value"], (int, float)) and not isinstance(c["value"], bool):
            v = f"{v} {unit}"
        L.append(f"  - {c['choice']}: {v} - {c['reason']}")
    if D.warnings:
        L.append("")
        L.append("Warnings:")
        for w in D.warnings:
            L.append(f"  ! {w}")
    L.append("")
    L.append("Caution: " + CAUTION)
    if D.planar:
        L.append(PLANAR_CAUTION)
    return L


