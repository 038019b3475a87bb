"""The command line: ``anisotropy <command> ...``.

Commands: ``explore`` (statistics before variography), ``discover`` (the
continuity proposal for one domain), ``check`` (an interpretation held
against the data), ``batch`` (every domain), ``demo`` (the bundled
invented deposit end to end).

Exit codes: 0 success, 2 bad input (the message says what to fix),
1 internal error.

Each command lives in its own ``_cmd_<name>`` function with its own
``_add_<name>`` argument builder; shared option groups are built by the
``_add_*_options`` helpers so that every command spells them the same way.
"""

from __future__ import annotations

import argparse
import sys
import traceback

from anisotropy.errors import AnisotropyError, InputError

EXIT_OK = 0
EXIT_INTERNAL = 1
EXIT_BAD_INPUT = 2


# ---------------------------------------------------------------------------
# shared option groups
# ---------------------------------------------------------------------------

_Z_HELP = ("elevation column (detected if omitted; a table with no elevation column and "
           "none named like one is read as two-dimensional, on one plane at z = 0, with a "
           "warning; 'none' asks for that)")


def _add_input_options(p: argparse.ArgumentParser, *, value_required: bool = True) -> None:
    """The sample-table options every data command takes."""
    p.add_argument("file", help="sample table: CSV (any common separator) or Parquet")
    g = p.add_argument_group("columns")
    g.add_argument("--value", required=value_required, metavar="COL",
                   help="grade column to study")
    g.add_argument("--x", metavar="COL", help="easting column (detected if omitted)")
    g.add_argument("--y", metavar="COL", help="northing column (detected if omitted)")
    g.add_argument("--z", metavar="COL", help=_Z_HELP)
    g.add_argument("--domain", metavar="COL", help="domain column")
    g.add_argument("--domain-value", metavar="VALUE",
                   help="study only the samples of this domain")
    g.add_argument("--hole", metavar="COL",
                   help="hole or string identifier (enables down-hole spacing)")
    g = p.add_argument_group("assay codes and duplicates")
    g.add_argument("--missing-codes", choices=["missing", "keep"], default="missing",
                   help="values <= -90 (e.g. -99, -999): treat as missing (default) or keep")
    g.add_argument("--below-detection", choices=["half", "missing", "keep"], default="half",
                   help="other negative values (-DL codes): replace by DL/2 (default, "
                        "common practice), treat as missing, or keep")
    g.add_argument("--duplicates", choices=["keep", "average", "drop"], default="keep",
                   help="samples sharing a location: keep all (default), average them, "
                        "or drop all but the first")


#: Replicates by default when a command asks for bands: enough for stable 90 %
#: percentile bands at a refit per replicate (common practice; Efron &
#: Tibshirani 1993, ch. 19, ask for more for very precise intervals).
DEFAULT_BOOTSTRAP = 200


def _add_bootstrap_options(p: argparse.ArgumentParser, *, default: int = DEFAULT_BOOTSTRAP):
    """The bootstrap option group (``--bootstrap``, ``--confidence``, ``--jobs``, ``--scheduler``); returns it."""
    g = p.add_argument_group("uncertainty")
    g.add_argument("--bootstrap", type=int, default=default, metavar="N",
                   help=f"block-bootstrap replicates for the confidence cones and intervals "
                        f"(default {default}: enough for stable 90 %% bands, common practice; "
                        "0 = off; the same default in discover, check and batch, the demo "
                        "takes fewer from its config)")
    g.add_argument("--confidence", type=float, default=0.9, metavar="P",
                   help="confidence of the cones and intervals (default 0.9)")
    g.add_argument("--jobs", type=int, default=1, metavar="N",
                   help="processes for the bootstrap (default 1; -1 = every core)")
    g.add_argument("--scheduler", metavar="ADDRESS",
                   help="run the bootstrap replicates on the Dask cluster at this address "
                        "(e.g. tcp://scheduler-host:8786)")
    return g


_KIND_HELP = ("structure kind, one of: spherical (reaches its sill at the range), exponential "
              "and gaussian (ranges are practical ranges, 95%% of the sill), cubic (reaches "
              "its sill at the range); repeat once per structure, e.g. --kind spherical "
              "--kind exponential (default: the better fit of spherical and exponential)")


def _top_cut_arg(text):
    """``--top-cut`` value: a positive grade or 'auto' (argparse type)."""
    from anisotropy.transform import parse_top_cut

    try:
        return parse_top_cut(text)[0]
    except InputError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None


def _add_top_cut_options(p: argparse.ArgumentParser, *, per_domain: bool = False):
    """``--top-cut GRADE|auto`` and ``--top-cut-mode cap|exclude``; returns the group."""
    g = p.add_argument_group("top-cut")
    over = (" The config's topcut and topcut_mode keys override these per domain."
            if per_domain else "")
    g.add_argument("--top-cut", type=_top_cut_arg, default=None, metavar="GRADE|auto",
                   help="top-cut the grades before the transform: a grade in the grade's "
                        "units, or 'auto' to take the exploration's suggestion (the "
                        "log-probability break, else the 99%% quantile, never one removing "
                        "more than 10%% of the metal when another does not), with the reason "
                        "printed. The samples affected are counted in the record and the "
                        "report. Default: none." + over)
    g.add_argument("--top-cut-mode", choices=["cap", "exclude"], default=None,
                   help="cap: grades above the top-cut are set to it (default); exclude: "
                        "those samples are left out (the older practice)" + over)
    return g


def _add_units_option(p: argparse.ArgumentParser) -> None:
    p.add_argument("--units", metavar="TEXT", default=None,
                   help="grade units, e.g. g/t or %%: written to the record "
                        "(diagnostics.grade_units) and used in the report's figure labels")


def _record_units(result, units) -> None:
    """Put ``--units`` in the discovery record (diagnostics.grade_units)."""
    if units:
        result.grade_units = str(units)


def _add_output_option(p: argparse.ArgumentParser, default: str) -> None:
    p.add_argument("--out", metavar="DIR", default=default,
                   help=f"folder for the results (default: {default})")


def _check_scheduler(address, *, timeout=15):
    """Refuse an unreachable ``--scheduler`` address before any long work."""
    if not address:
        return
    # imported here, as the CLI's other commands are: `anisotropy --help` must not load
    # the compiled engine that the dispatcher module brings in
    from anisotropy.parallel import dask_client

    with dask_client(address, timeout=timeout):
        pass


def _output_folder(out):
    """Make the ``--out`` folder before any long work; refuse a file or an unwritable place."""
    import os
    from pathlib import Path

    out = Path(out)
    if out.exists() and not out.is_dir():
        raise InputError(f"The output folder '{out}' is an existing file; give a folder "
                         "name with --out.")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"Cannot create the output folder '{out}' ({exc.strerror}); give "
                         "another folder with --out.") from None
    if not os.access(out, os.W_OK):
        raise InputError(f"The output folder '{out}' is not writable; give another folder "
                         "with --out.")
    return out


def _read_samples_from_args(args):
    """Read and validate the sample table named on the command line."""
    from anisotropy.samples import read_samples

    return read_samples(
        args.file, value=args.value, x=args.x, y=args.y, z=args.z,
        domain=args.domain, domain_value=args.domain_value, hole=args.hole,
        missing_codes=args.missing_codes, below_detection=args.below_detection,
        duplicates=args.duplicates,
    )


# ---------------------------------------------------------------------------
# commands (each section owned by its issue)
# ---------------------------------------------------------------------------

# >>> explore
_EXPLORE_SCHEMA = "anisotropy.explore/1"

_POLICY_REASONS = {
    ("missing_codes", "missing"): "values <= -90 are the usual missing-value codes (-99, -999)",
    ("missing_codes", "keep"): "values <= -90 kept as real grades, as asked",
    ("below_detection", "half"): "negative values are below-detection codes -DL, replaced by "
                                 "DL/2 (common practice)",
    ("below_detection", "missing"): "below-detection codes left out as missing, as asked",
    ("below_detection", "keep"): "negative values kept as they are, as asked",
    ("duplicates", "keep"): "every sample kept; samples sharing a location add zero-distance "
                            "pairs, which show in the nugget",
    ("duplicates", "average"): "one sample per location, with the mean grade, as asked",
    ("duplicates", "drop"): "the first sample at each location kept, as asked",
}
_POLICY_DEFAULTS = {"missing_codes": "missing", "below_detection": "half", "duplicates": "keep"}


def _add_explore(p: argparse.ArgumentParser) -> None:
    _add_input_options(p)
    p.add_argument("--units", metavar="TEXT", default="",
                   help="grade units for the figure labels, e.g. g/t or %%")
    _add_output_option(p, "anisotropy_explore")


def _intake_lines(samples, args) -> list:
    """What the intake decided and why, for the printed summary."""
    lines = ["Reading the table", "-----------------"]
    given = {"x": args.x, "y": args.y, "z": args.z}
    for role in ("x", "y", "z"):
        if samples.columns.get(role) is None:
            lines.append(f"  {role}: none, the table is read as two-dimensional (z = 0)")
            continue
        how = f"given with --{role}" if given[role] is not None else "detected from its name"
        lines.append(f"  {role}: column {samples.columns[role]!r} ({how})")
    lines.append(f"  grade: column {samples.columns['value']!r}")
    if samples.columns.get("domain"):
        sel = (f"domain {samples.domain!r} selected" if samples.domain is not None
               else "no domain selected: all domains pooled")
        lines.append(f"  domain: column {samples.columns['domain']!r}, {sel}")
    if samples.columns.get("hole"):
        lines.append(f"  hole id: column {samples.columns['hole']!r}")
    else:
        lines.append("  hole id: none given (down-hole spacing needs --hole)")
    t = samples.table or {}
    if t.get("format") == "csv":
        lines.append(f"  file read as CSV, {t.get('separator')}-separated, decimal mark "
                     f"{t.get('decimal')!r}")
    elif t.get("format"):
        lines.append(f"  file read as {t.get('format')}")
    lines.append(f"  rows read: {samples.n_read}, samples used: {samples.n}")
    pol = samples.policies or {}
    for name, flag in (("missing_codes", "--missing-codes"), ("below_detection", "--below-detection"),
                       ("duplicates", "--duplicates")):
        val = pol.get(name, _POLICY_DEFAULTS[name])
        tag = "default" if val == _POLICY_DEFAULTS[name] else "chosen"
        lines.append(f"  {flag} {val} ({tag}): {_POLICY_REASONS.get((name, val), '')}")
    d = samples.duplicates
    lines.append(f"  duplicate locations: {d.get('locations', 0)} holding "
                 f"{d.get('samples', 0)} samples")
    lines.append("  local origin subtracted from x, y, z (minimum rounded down to a metre): "
                 + ", ".join(f"{o:.0f}" for o in samples.origin))
    if samples.planar:
        lines.append("  planar: yes, the samples lie on one plane or line (see the warnings)")
    return lines


def _save_figure_atomic(make, path, *args, dpi=110, **kwargs):
    """Draw a figure with ``make(*args, path=None, **kwargs)``; write the PNG atomically."""
    import io

    from anisotropy.safe_io import atomic_write_bytes

    fig = make(*args, path=None, **kwargs)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    atomic_write_bytes(path, buf.getvalue())
    return path


def _cmd_explore(args) -> int:
    """Statistics to know before variography: grades, declustering, top-cut, spacing, trend."""
    from pathlib import Path

    from anisotropy.safe_io import atomic_write_json
    from anisotropy.exploration import explore

    out = Path(args.out)
    if out.exists() and not out.is_dir():
        raise InputError(f"The output folder '{out}' is an existing file; give a folder "
                         "name with --out.")
    samples = _read_samples_from_args(args)
    ex = explore(samples)
    out = _output_folder(out)   # made only once the input has been read without error

    from anisotropy.report import figures

    label = samples.columns.get("value") or "grade"
    where = f", domain {samples.domain}" if samples.domain is not None else ""
    dpi = getattr(figures, "DPI", 110)
    _save_figure_atomic(figures.histogram_figure, out / "histogram.png", samples.values,
                        title=f"Histogram of {label}{where}", units=args.units,
                        topcut=ex.topcut, value_name=label, dpi=dpi)
    _save_figure_atomic(figures.logprob_figure, out / "logprob.png", samples.values,
                        title=f"Log-probability plot of {label}{where}", units=args.units,
                        candidates=ex.topcut, value_name=label, dpi=dpi)

    record = {"schema": _EXPLORE_SCHEMA}
    record.update(ex.to_dict())
    record["samples"] = samples.to_dict()
    record["figures"] = {"histogram": "histogram.png", "logprob": "logprob.png"}
    atomic_write_json(out / "explore.json", record)

    print("\n".join(_intake_lines(samples, args)))
    print()
    print(ex.summary())
    print()
    print(f"Written: {out / 'explore.json'}, {out / 'histogram.png'}, {out / 'logprob.png'}")
    return EXIT_OK


# <<< explore

# >>> discover
def _add_discover(p: argparse.ArgumentParser) -> None:
    """Options of ``anisotropy discover``."""
    _add_input_options(p)
    g = p.add_argument_group("variography")
    g.add_argument("--transform", default="auto",
                   choices=["auto", "normal_score", "raw", "log", "indicator"],
                   help="transform before variography (default auto: normal scores when the "
                        "grades are skewed, CV > 1 or skewness > 1)")
    g.add_argument("--threshold", type=float, metavar="GRADE",
                   help="indicator threshold (with --transform indicator; default the median)")
    g.add_argument("--estimator", default="semivariogram",
                   choices=["semivariogram", "correlogram", "pairwise_relative", "madogram",
                            "robust"],
                   help="experimental estimator (default semivariogram)")
    g.add_argument("--structures", default="auto", choices=["auto", "1", "2", "3"],
                   help="number of nested structures (default auto: chosen by a penalised "
                        "criterion)")
    g.add_argument("--kind", action="append", metavar="KIND",
                   choices=["spherical", "exponential", "gaussian", "cubic"], help=_KIND_HELP)
    g.add_argument("--shared-ratios", action="store_true",
                   help="nested structures share one anisotropy shape, each with its own "
                        "scale (default: each structure has its own three ranges)")
    g.add_argument("--lag", type=float, metavar="M", help="unit lag in metres (default from "
                   "the sample spacing)")
    g.add_argument("--n-lags", type=int, metavar="N", help="number of lags (default: out to "
                   "half the domain extent)")
    g.add_argument("--angular-tolerance", type=float, metavar="DEG",
                   help="half-angle of the fan's direction cones (default 15, widened to 30 "
                        "where pairs are thin)")
    g.add_argument("--bandwidth", type=float, metavar="M", help="fan bandwidth in metres")
    g.add_argument("--seed", type=int, default=0, help="seed of every random step (default 0)")
    g = _add_bootstrap_options(p)
    g.add_argument("--bootstrap-method", choices=["block", "model"], default="block",
                   help="block: resample spatial blocks of the data (default, calibrated by "
                        "the coverage study in benchmarks/RESULTS.md); model: simulate fields "
                        "with the fitted model at the data locations (slower: a pass over the "
                        "pairs per replicate; a check on the block bands)")
    _add_top_cut_options(p)
    _add_units_option(p)
    _add_output_option(p, "discovery")
    p.add_argument("--no-report", action="store_true",
                   help="write the JSON result only, without report.html and its figures")


def _command_line(args) -> str:
    """The command line as typed (for the audit trail)."""
    import shlex

    return "anisotropy " + shlex.join(getattr(args, "argv_", None) or sys.argv[1:])


def _cmd_discover(args) -> int:
    """Propose the 3D continuity model of one grade in one domain."""
    from anisotropy.pipeline import discover

    if args.bootstrap < 0:
        raise InputError(f"--bootstrap must be zero or a positive number; got {args.bootstrap}")
    if not 0 < args.confidence < 1:
        raise InputError(f"--confidence must lie between 0 and 1; got {args.confidence}")
    samples = _read_samples_from_args(args)
    out = _output_folder(args.out)   # refuse a bad --out before the long run
    if args.bootstrap:
        _check_scheduler(args.scheduler)
    structures = "auto" if args.structures == "auto" else int(args.structures)
    result = discover(samples, transform=args.transform, estimator=args.estimator,
                      structures=structures, kinds=args.kind, lag=args.lag, n_lags=args.n_lags,
                      angular_tolerance=args.angular_tolerance, bandwidth=args.bandwidth,
                      bootstrap=args.bootstrap, confidence=args.confidence, seed=args.seed,
                      n_jobs=args.jobs, scheduler=args.scheduler, threshold=args.threshold,
                      shared_ratios=args.shared_ratios, progress=True,
                      bootstrap_method=args.bootstrap_method, top_cut=args.top_cut,
                      top_cut_mode=args.top_cut_mode or "cap")
    _record_units(result, args.units)
    print(result.summary())
    result.run["command"] = _command_line(args)
    path = result.to_json(out / "discovery.json")
    from anisotropy.modelfile import write_model_files
    print("written: " + ", ".join(str(p) for p in write_model_files(result, out).values()))
    if not args.no_report:
        from anisotropy.report.html import render_report

        print(f"written: {render_report(result, out)}")
    print(f"\nwritten: {path}")
    return EXIT_OK
# <<< discover

# >>> check
def _add_check(p: argparse.ArgumentParser) -> None:
    """Options of ``anisotropy check``: the discover options plus the interpretation."""
    _add_discover(p)
    have = {a.dest: a for a in p._actions}
    have["bootstrap"].help = (f"block-bootstrap replicates the check weighs the "
                              f"interpretation against (default {DEFAULT_BOOTSTRAP}, "
                              "common practice; at least 20)")
    if "out" in have:
        have["out"].default = "check"
        have["out"].help = "folder for discovery.json and check.json (default: check)"
    g = p.add_argument_group("interpretation (structural notation, degrees)")
    from anisotropy.constants import PITCH_FORMS, PLANE_FORMS

    g.add_argument("--plane", metavar="DIPDIR/DIP|strike:STRIKE/DIP",
                   help="plane of greatest continuity, as " + PLANE_FORMS.replace("%", "%%"))
    g.add_argument("--pitch", metavar="DEG|DEG<side>",
                   help="pitch of the major axis in the plane, as "
                        + PITCH_FORMS.replace("%", "%%"))
    g.add_argument("--major", metavar="TREND/PLUNGE",
                   help="major axis, e.g. 060/20 (with --plane: must lie in the plane)")
    g.add_argument("--minor", metavar="TREND/PLUNGE",
                   help="minor axis (with --major; must be perpendicular to it)")


def _interpretation_from_args(args):
    from anisotropy.check import Interpretation, parse_pitch, parse_plane

    if args.plane is None and args.major is None:
        raise InputError("give the interpretation: --plane DIPDIR/DIP (or strike:STRIKE/DIP) "
                         "[--pitch DEG] or --major TREND/PLUNGE [--minor TREND/PLUNGE]")
    if args.plane is not None:
        if args.minor is not None:
            raise InputError("--minor goes with --major, not with --plane (the plane's pole "
                             "is the minor axis)")
        dd, dip = parse_plane(args.plane)
        return Interpretation.from_plane(dd, dip, pitch=parse_pitch(args.pitch, dd, dip),
                                         major=args.major)
    if args.pitch is not None:
        raise InputError("--pitch needs --plane (a pitch is measured inside a plane)")
    return Interpretation.from_axes(args.major, args.minor)


def _cmd_check(args) -> int:
    """Hold an interpreted continuity orientation against the data."""
    from anisotropy.safe_io import atomic_write_json
    from anisotropy.check import check_interpretation
    from anisotropy.pipeline import discover

    interpretation = _interpretation_from_args(args)   # refuse before the long run
    if args.bootstrap < 20:
        raise InputError(f"the check needs bootstrap replicates to weigh the interpretation "
                         f"against (--bootstrap {args.bootstrap} given; use at least 20, "
                         f"default {DEFAULT_BOOTSTRAP})")
    if not 0 < args.confidence < 1:
        raise InputError(f"--confidence must lie between 0 and 1; got {args.confidence}")
    samples = _read_samples_from_args(args)
    out = _output_folder(args.out)   # refuse a bad --out before the long run
    scheduler = getattr(args, "scheduler", None)
    _check_scheduler(scheduler)
    structures = "auto" if args.structures == "auto" else int(args.structures)
    result = discover(samples, transform=args.transform, estimator=args.estimator,
                      structures=structures, kinds=args.kind, lag=args.lag, n_lags=args.n_lags,
                      angular_tolerance=args.angular_tolerance, bandwidth=args.bandwidth,
                      bootstrap=args.bootstrap, confidence=args.confidence, seed=args.seed,
                      n_jobs=args.jobs, scheduler=scheduler, threshold=args.threshold,
                      shared_ratios=args.shared_ratios, progress=True,
                      bootstrap_method=args.bootstrap_method, top_cut=args.top_cut,
                      top_cut_mode=args.top_cut_mode or "cap")
    checked = check_interpretation(result, interpretation,
                                   thresholds={"confidence": args.confidence},
                                   n_jobs=args.jobs, scheduler=scheduler, progress=True)
    _record_units(result, args.units)
    print(result.summary())
    print()
    print(checked.summary())
    result.run["command"] = _command_line(args)
    p1 = result.to_json(out / "discovery.json")
    from anisotropy.modelfile import write_model_files
    print("written: " + ", ".join(str(p) for p in write_model_files(result, out).values()))
    p2 = atomic_write_json(out / "check.json", checked.to_dict())
    print(f"\nwritten: {p1}\nwritten: {p2}")
    if not args.no_report:
        from anisotropy.report.html import render_report

        print(f"written: {render_report(result, out, check=checked)}")
    return EXIT_OK
# <<< check

# >>> batch
def _add_batch_chain_options(p: argparse.ArgumentParser) -> None:
    """Discover options of the batch and demo commands (config values override them)."""
    g = p.add_argument_group("discovery (for every domain; the config can override per domain)")
    g.add_argument("--transform", default=None,
                   choices=["auto", "normal_score", "raw", "log", "indicator"],
                   help="variable the variograms are computed on (default: auto)")
    g.add_argument("--estimator", default=None,
                   choices=["semivariogram", "correlogram", "pairwise_relative", "madogram", "robust"],
                   help="experimental estimator (default: semivariogram)")
    g.add_argument("--lag", type=float, default=None, metavar="M",
                   help="unit lag in metres (default: from the sample spacing)")
    g.add_argument("--n-lags", type=int, default=None, metavar="N", help="number of lags")
    g.add_argument("--angular-tolerance", type=float, default=None, metavar="DEG",
                   help="half-angle of the direction cones in degrees")
    g.add_argument("--bandwidth", type=float, default=None, metavar="M",
                   help="fan bandwidth in metres (default: none)")
    g.add_argument("--threshold", type=float, default=None, metavar="GRADE",
                   help="indicator threshold (with --transform indicator; default the median)")
    g.add_argument("--structures", default=None, choices=["auto", "1", "2", "3"],
                   help="number of nested structures (default: auto, a penalised criterion)")
    g.add_argument("--kind", action="append", default=None, metavar="KIND",
                   choices=["spherical", "exponential", "gaussian", "cubic"], help=_KIND_HELP)
    g.add_argument("--shared-ratios", action="store_true",
                   help="nested structures share one anisotropy shape, each with its own scale")
    g.add_argument("--bootstrap", type=int, default=None, metavar="N",
                   help=f"block-bootstrap replicates per domain (default {DEFAULT_BOOTSTRAP}, "
                        "as for discover and check: enough for stable 90%% bands, common "
                        "practice; 0 for none)")
    g.add_argument("--bootstrap-method", choices=["block", "model"], default=None,
                   help="block: resample spatial blocks of the data (default, as for "
                        "discover); model: simulate fields with the fitted model at the data "
                        "locations (slower; a check on the block bands)")
    g.add_argument("--confidence", type=float, default=None, metavar="P",
                   help="confidence level of the bands (default: 0.9)")
    g.add_argument("--seed", type=int, default=0, help="random seed (default: 0)")
    g.add_argument("--min-samples", type=int, default=None, metavar="N",
                   help="domains with fewer samples are recorded as skipped (default: 30)")
    _add_top_cut_options(p, per_domain=True)
    g = p.add_argument_group("running")
    g.add_argument("--domains", metavar="A,B", default=None,
                   help="only these domains (comma-separated, as written in the table)")
    g.add_argument("--jobs", type=int, default=1, metavar="N",
                   help="domains run at once on local processes (default: 1; -1: all cores)")
    g.add_argument("--scheduler", metavar="ADDRESS", default=None,
                   help="run the domains on an existing Dask cluster (tcp://host:8786)")
    g.add_argument("--config", metavar="FILE.toml", default=None,
                   help="per-domain overrides and interpretations to check (TOML)")
    g.add_argument("--resume", action="store_true",
                   help="skip domains already complete in --out with the same options")
    g.add_argument("--no-report", action="store_true",
                   help="write results only, no HTML report per domain")
    _add_units_option(p)


def _batch_options(args) -> dict:
    opts = {"seed": args.seed,
            "bootstrap": DEFAULT_BOOTSTRAP if args.bootstrap is None else args.bootstrap}
    for name in ("transform", "estimator", "lag", "n_lags", "angular_tolerance", "confidence",
                 "bandwidth", "threshold", "bootstrap_method"):
        v = getattr(args, name, None)
        if v is not None:
            opts[name] = v
    structures = getattr(args, "structures", None)
    if structures is not None:
        opts["structures"] = "auto" if structures == "auto" else int(structures)
    if getattr(args, "kind", None):
        opts["kinds"] = list(args.kind)
    if getattr(args, "shared_ratios", False):
        opts["shared_ratios"] = True
    if getattr(args, "top_cut", None) is not None:
        opts["top_cut"] = args.top_cut
    if getattr(args, "top_cut_mode", None) is not None:
        opts["top_cut_mode"] = args.top_cut_mode
    for name in ("missing_codes", "below_detection", "duplicates"):
        if hasattr(args, name):
            opts[name] = getattr(args, name)
    return opts


def _add_batch(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", help="sample table: CSV (any common separator) or Parquet")
    g = p.add_argument_group("columns")
    g.add_argument("--value", required=True, metavar="COL", help="grade column to study")
    g.add_argument("--domain", required=True, metavar="COL", help="domain column")
    g.add_argument("--x", metavar="COL", help="easting column (detected if omitted)")
    g.add_argument("--y", metavar="COL", help="northing column (detected if omitted)")
    g.add_argument("--z", metavar="COL", help=_Z_HELP)
    g.add_argument("--hole", metavar="COL",
                   help="hole or string identifier (enables down-hole spacing)")
    g = p.add_argument_group("assay codes and duplicates")
    g.add_argument("--missing-codes", choices=["missing", "keep"], default="missing",
                   help="values <= -90: treat as missing (default) or keep")
    g.add_argument("--below-detection", choices=["half", "missing", "keep"], default="half",
                   help="other negative values (-DL codes): DL/2 (default), missing, or keep")
    g.add_argument("--duplicates", choices=["keep", "average", "drop"], default="keep",
                   help="samples sharing a location: keep all (default), average, or drop")
    _add_batch_chain_options(p)
    _add_output_option(p, "anisotropy_batch")


def _cmd_batch(args) -> int:
    """Discover (and check) the continuity of every domain, with a report per domain."""
    from anisotropy.batch import MIN_SAMPLES, run_batch

    domains = None
    if args.domains:
        domains = [d.strip() for d in args.domains.split(",") if d.strip()]
    _output_folder(args.out)   # refuse a bad --out before any domain runs
    _check_scheduler(args.scheduler)
    print(f"batch: {args.file}, value {args.value}, domains from {args.domain} -> {args.out}",
          flush=True)
    res = run_batch(
        args.file, value=args.value, domain=args.domain, out=args.out, domains=domains,
        jobs=args.jobs, scheduler=args.scheduler, config=args.config, resume=args.resume,
        min_samples=args.min_samples or MIN_SAMPLES, report=not args.no_report, progress=True,
        x=args.x, y=args.y, z=args.z, hole=args.hole, units=args.units,
        command=_command_line(args),
        **_batch_options(args))
    print(res.summary())
    return EXIT_OK if any(r["status"] == "ok" for r in res.rows) else EXIT_INTERNAL
# <<< batch

# >>> demo
def _demo_bootstrap():
    """The bundled demo config's replicates (for the help text)."""
    try:  # read here, not through anisotropy.batch, so that --help does not load the engine
        try:
            import tomllib
        except ImportError:  # pragma: no cover - Python 3.10
            import tomli as tomllib
        from anisotropy.constants import demo_paths

        with open(demo_paths()["config"], "rb") as fh:
            return tomllib.load(fh).get("options", {}).get("bootstrap", "none")
    except Exception:  # noqa: BLE001 - the help must not fail on a damaged installation
        return "from the config"


def _add_demo(p: argparse.ArgumentParser) -> None:
    p.add_argument("--out", metavar="DIR", default="fenwright_demo",
                   help="folder for the results (default: fenwright_demo)")
    p.add_argument("--jobs", type=int, default=2, metavar="N",
                   help="domains run at once on local processes (default: 2)")
    p.add_argument("--bootstrap", type=int, default=None, metavar="N",
                   help=f"block-bootstrap replicates per domain (default: {_demo_bootstrap()}, "
                        f"from the bundled config: fewer than the {DEFAULT_BOOTSTRAP} of discover, check and "
                        "batch so that the demo finishes in minutes; its bands are a little "
                        f"rougher; give --bootstrap {DEFAULT_BOOTSTRAP} for the same bands)")
    p.add_argument("--resume", action="store_true",
                   help="skip domains already complete in --out")


def _cmd_demo(args) -> int:
    """Run the whole chain on the invented Fenwright Hollow deposit and print where the index is."""
    from anisotropy.batch import run_demo

    res = run_demo(args.out, jobs=args.jobs, bootstrap=args.bootstrap, resume=args.resume,
                   progress=True, command=_command_line(args))
    print(res.summary())
    return EXIT_OK if all(r["status"] == "ok" for r in res.rows) else EXIT_INTERNAL
# <<< demo


# ---------------------------------------------------------------------------
# entry point
# ---------------------------------------------------------------------------

def _commands():
    """(name, help, add_arguments, run) for every command that exists so far."""
    found = []
    g = globals()
    for name in ("explore", "discover", "check", "batch", "demo"):
        add = g.get(f"_add_{name}")
        run = g.get(f"_cmd_{name}")
        if add is not None and run is not None:
            found.append((name, (run.__doc__ or "").strip().splitlines()[0], add, run))
    return found


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="anisotropy",
        description="Discover 3D grade-continuity anisotropy in domained sample data.",
    )
    from anisotropy import __version__
    parser.add_argument("--version", action="version", version=f"anisotropy {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, help_text, add, run in _commands():
        p = sub.add_parser(name, help=help_text, description=help_text)
        add(p)
        p.set_defaults(_run=run)
    return parser


def main(argv=None) -> int:
    """Run the command line; return the exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
    args.argv_ = list(sys.argv[1:] if argv is None else argv)   # audit trail
    if getattr(args, "_run", None) is None:
        parser.print_help()
        return EXIT_BAD_INPUT
    import warnings

    def _show(message, category, filename, lineno, file=None, line=None):
        # a geologist needs the message, not our source file and line
        print(f"anisotropy {args.command}: note: {message}", file=sys.stderr)

    try:
        with warnings.catch_warnings():
            warnings.showwarning = _show
            return int(args._run(args) or EXIT_OK)
    except InputError as exc:
        print(f"anisotropy {args.command}: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except (FileExistsError, NotADirectoryError, PermissionError, IsADirectoryError) as exc:
        # writing the results failed where the user pointed (--out): say where and why
        where = exc.filename or getattr(args, "out", "")
        print(f"anisotropy {args.command}: cannot write '{where}' ({exc.strerror}); give "
              "another folder with --out.", file=sys.stderr)
        return EXIT_BAD_INPUT
    except AnisotropyError as exc:
        print(f"anisotropy {args.command}: {exc}", file=sys.stderr)
        return EXIT_INTERNAL
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except Exception:  # noqa: BLE001 - last resort: say it is ours, not the user's
        traceback.print_exc()
        print(f"anisotropy {args.command}: internal error (the trace above is for the "
              "developers; please report it with the command you ran)", file=sys.stderr)
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
