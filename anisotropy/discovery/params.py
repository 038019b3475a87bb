"""The settings of one discovery run, validated once (:class:`DiscoverParams`).

The defaults below are each reported with their reason when used (see the
``choices`` of a :class:`~anisotropy.discovery.Discovery`).  The same record is
built by :func:`anisotropy.discover` from its keywords; the command line and
the batch configuration reach it through those keywords.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import Any, Callable

from anisotropy.errors import InputError
from anisotropy.transform import parse_top_cut
from anisotropy.estimators import ESTIMATORS

# --- defaults (each one is reported with its reason when used) ------------
DEFAULT_FAN_SPACING = 5.0       # degrees between fan directions
DEFAULT_ANGULAR_TOLERANCE = 15.0  # degrees (common practice: 15-22.5)
WIDE_ANGULAR_TOLERANCE = 30.0   # degrees, for directions thin at the default
PAIR_BUDGET = 1.5e8             # pairs in the one pass, for automatic lags
N_RANDOM_STARTS = 8
#: Frame refinement by the nearest-neighbour likelihood
#: (:mod:`anisotropy.fitting.refine`), on scattered samples and drill-hole
#: strings alike (on strings it took the issue-4 drill-hole benchmarks from
#: 6-7 degree median errors to 2-3). Read at run time, so a benchmark may turn
#: it off by setting ``anisotropy.discovery.params.LIKELIHOOD_REFINEMENT``.
LIKELIHOOD_REFINEMENT = True
#: Fewest pairs of a fit bin and of a fan lag when ``min_pairs`` is not given.
MIN_PAIRS_BIN, MIN_PAIRS_FAN = 10, 30


@dataclass(frozen=True)
class DiscoverParams:
    """Every setting of :func:`anisotropy.discover`, checked once.

    The fields and their meaning are those of the keywords of
    :func:`anisotropy.discover`; ``intake`` holds the extra keywords passed
    to the sample reader (missing codes, below-detection rule, duplicates).
    Build it with :meth:`from_kwargs`.
    """

    value: str | None = None
    x: str | None = None
    y: str | None = None
    z: str | None = None
    domain: str | None = None
    domain_value: Any = None
    hole: str | None = None
    transform: str = "auto"
    estimator: str = "semivariogram"
    structures: int | str | None = "auto"
    lag: float | None = None
    n_lags: int | None = None
    angular_tolerance: float | None = None
    bandwidth: float | None = None
    bootstrap: int | None = 0
    confidence: float = 0.9
    seed: int | None = 0
    n_jobs: int = 1
    scheduler: Any = None       # a Dask scheduler address or Client
    progress: bool | Callable[[str], Any] = False
    kinds: tuple[str, ...] | None = None
    sill: str | float = "variance"
    threshold: float | None = None
    fan_spacing: float = DEFAULT_FAN_SPACING
    coarse_spacing: float | None = None
    min_pairs: float | None = None
    pair_budget: float | None = None
    shared_ratios: bool = False
    bootstrap_method: str = "block"
    top_cut: float | str | None = None
    top_cut_mode: str = "cap"
    intake: dict = field(default_factory=dict)

    @classmethod
    def from_kwargs(cls, **kwargs) -> "DiscoverParams":
        """The record from :func:`anisotropy.discover`'s keywords (unknown ones go to intake)."""
        names = {f.name for f in dataclasses.fields(cls)} - {"intake"}
        known = {k: v for k, v in kwargs.items() if k in names}
        intake = {k: v for k, v in kwargs.items() if k not in names}
        if known.get("kinds") is not None:
            known["kinds"] = tuple(known["kinds"])
        return cls(**known, intake=intake)

    def __post_init__(self):
        if self.bootstrap_method not in ("block", "model"):
            raise InputError(f"bootstrap method {self.bootstrap_method!r} is not known; use "
                             "'block' (default, calibrated) or 'model' (simulation from the "
                             "fitted model)")
        if self.bootstrap_method == "model" and self.transform == "indicator" and self.bootstrap:
            raise InputError("the model-based bootstrap simulates Gaussian fields, which "
                             "indicators are not; use the block bootstrap for indicator "
                             "variograms")
        parse_top_cut(self.top_cut, self.top_cut_mode)   # refused here, before any reading
        if self.structures not in ("auto", None):
            try:
                n = int(self.structures)
            except (TypeError, ValueError):
                n = 0
            if not 1 <= n <= 3:
                raise InputError(f"structures must be 1, 2, 3 or 'auto'; got "
                                 f"{self.structures!r}")
        if self.estimator not in ESTIMATORS:
            raise InputError(f"unknown estimator {self.estimator!r}; choose one of "
                             f"{', '.join(ESTIMATORS)}")
        if self.estimator == "pairwise_relative" and self.transform not in ("auto", "raw"):
            raise InputError(
                f"the pairwise relative estimator divides each squared difference by the "
                f"squared mean of its pair, so it needs positive raw grades; the "
                f"{self.transform} transform gives values near or below zero, which make it "
                "meaningless. Use --transform raw (or auto, which then picks raw) with "
                "--estimator pairwise_relative, or keep "
                f"--transform {self.transform} with another estimator.")

    # -- derived settings --------------------------------------------------
    @property
    def n_structures(self) -> int | None:
        """The number of structures asked for, None when the engine chooses."""
        return None if self.structures in ("auto", None) else int(self.structures)

    @property
    def kind_list(self) -> tuple[str, ...]:
        """Structure kinds tried for the orientation (the first, then the others)."""
        return (self.kinds[0],) if self.kinds is not None else ("spherical", "exponential")

    @property
    def min_pairs_bin(self) -> float:
        return MIN_PAIRS_BIN if self.min_pairs is None else float(self.min_pairs)

    @property
    def min_pairs_fan(self) -> float:
        return MIN_PAIRS_FAN if self.min_pairs is None else float(self.min_pairs)

    @property
    def n_bootstrap(self) -> int:
        return int(self.bootstrap) if self.bootstrap else 0
