"""Batch: the whole chain for every domain of a sample table.

For each domain: read its samples, discover the continuity (with bootstrap
bands), check the interpretation the config gives for that domain, and write
the result, the check and the HTML report into a folder of its own. A domain
that is too small or fails is recorded with its reason and never stops the
others. The run ends with ``summary.csv``, ``summary.json`` and
``index.html`` in the output folder.

Every file is written atomically (temporary file in the same folder, then
rename), and a domain's completion marker is written last, so an interrupted
batch leaves no half-written file and ``resume=True`` picks up where it
stopped.

The config file (TOML) has this layout (all keys optional)::

    [options]              # discover options for every domain
    bootstrap = 100
    transform = "normal_score"

    [domain."oxide"]       # overrides for one domain (name quoted as in the table)
    transform = "log"
    topcut = 25.0          # top-cut grade applied before the transform, or "auto"
    topcut_mode = "cap"    # "cap" grades above it (default) or "exclude" those samples
    units = "g/t"          # grade units for the record and the figure labels
    lag = 10.0
    n_lags = 12
    estimator = "correlogram"
    skip = false           # true: record the domain as skipped

    [domain."oxide".interpretation]
    plane = "150/70"       # dip direction / dip of the plane of greatest continuity
                           # (or "strike:060/70", strike / dip by the right-hand rule)
    pitch = 35             # optional pitch of the major axis in that plane, 0-180 from
                           # the strike (or "40E": 0-90 from the strike line's east end)
    # or: major = "045/20" (trend/plunge) and optionally minor = "..."
"""

from __future__ import annotations

import hashlib
import inspect
import json
import os
import sys
import time
import traceback
from dataclasses import dataclass, field
from pathlib import Path
from typing import Mapping, Sequence

import pandas as pd

from anisotropy import safe_io as S
from anisotropy import parallel
from anisotropy.check import (Interpretation, check_interpretation, parse_orientation, parse_pitch,
                             parse_plane)
from anisotropy.constants import AXES as _AXES
from anisotropy.constants import DEMO_TABLE, MIN_SAMPLES, demo_paths
from anisotropy.pipeline import discover
from anisotropy.errors import AnisotropyError, InputError, InsufficientDataError
from anisotropy.progress import note
from anisotropy.report.html import render_report
from anisotropy.report.index import render_index
from anisotropy.samples import domain_codes, domain_values, find_column, read_table
from anisotropy.transform import parse_top_cut

try:
    import tomllib
except ImportError:  # pragma: no cover - Python 3.10
    import tomli as tomllib

__all__ = ["run_batch", "BatchResult", "load_config", "SUMMARY_COLUMNS", "SUMMARY_HEADINGS",
           "summary_heading", "MIN_SAMPLES"]

MARKER = ".complete"
ROW_FILE = "row.json"

SUMMARY_COLUMNS = (
    "domain", "status", "reason", "folder",
    "n_samples", "n_used",
    "plane_dip_direction", "plane_dip", "plane_pitch",
    "major_trend", "major_plunge", "semi_major_trend", "semi_major_plunge",
    "minor_trend", "minor_plunge",
    "range_major", "range_semi_major", "range_minor",
    "nugget", "total_sill", "n_structures", "transform", "estimator", "topcut", "n_capped",
    "topcut_mode", "n_excluded",
    "cone_major", "cone_semi_major", "cone_minor", "replicates",
    "verdict", "warnings", "seconds",
    # the model to take into estimation (model.json has it in full)
    "plane_strike", "rotation_azimuth", "rotation_plunge", "rotation_rotation", "sill_units",
    *(f"s{k}_{f}" for k in (1, 2, 3)
      for f in ("kind", "sill", "range_major", "range_semi_major", "range_minor")),
    "grade_method", "grade_sill_units", "grade_nugget",
    *(f"grade_s{k}_sill" for k in (1, 2, 3)),
    # the grade model's ranges: the analysed ones (Hermite) or refitted with the frame held
    *(f"grade_s{k}_range_{a}" for k in (1, 2, 3) for a in ("major", "semi_major", "minor")),
    "flags",
    # audit trail
    "run_utc", "version", "input_sha256", "seed",
)

#: units of the summary columns, added to the headings of summary.csv
#: (``sill`` columns are in the units named by ``sill_units`` / ``grade_sill_units``)
_UNITS = {"deg": ("plane_dip_direction", "plane_dip", "plane_pitch", "plane_strike",
                  "major_trend", "major_plunge", "semi_major_trend", "semi_major_plunge",
                  "minor_trend", "minor_plunge", "rotation_azimuth", "rotation_plunge",
                  "rotation_rotation", "cone_major", "cone_semi_major", "cone_minor"),
          "m": ("range_major", "range_semi_major", "range_minor",
                *(f"{g}s{k}_range_{a}" for g in ("", "grade_") for k in (1, 2, 3)
                  for a in ("major", "semi_major", "minor"))),
          "s": ("seconds",),
          "in_sill_units": ("nugget", "total_sill", *(f"s{k}_sill" for k in (1, 2, 3))),
          "in_grade_sill_units": ("grade_nugget", *(f"grade_s{k}_sill" for k in (1, 2, 3)))}


def summary_heading(column: str) -> str:
    """Heading of a summary column in ``summary.csv``: the key with its unit (``range_major_m``)."""
    for unit, cols in _UNITS.items():
        if column in cols:
            return f"{column}_{unit}"
    return column


#: headings of summary.csv, in the order of :data:`SUMMARY_COLUMNS`
SUMMARY_HEADINGS = tuple(summary_heading(c) for c in SUMMARY_COLUMNS)

# config keys that are ours, not discover's
_OWN_KEYS = {"skip", "interpretation", "topcut", "topcut_mode", "min_samples", "units"}


# ---------------------------------------------------------------------------
# config
# ---------------------------------------------------------------------------


def load_config(config: str | os.PathLike | Mapping | None) -> dict:
    """Read a batch config (TOML path or an already-parsed mapping).

    Parameters
    ----------
    config : path-like, mapping or None

    Returns
    -------
    dict
        ``{"options": {...}, "domain": {name: {...}}}``.

    Raises
    ------
    InputError
        The file cannot be read or parsed, or has unknown top-level tables.
    """
    if config is None:
        return {"options": {}, "domain": {}}
    if isinstance(config, Mapping):
        data = dict(config)
        source = "<config>"
    else:
        source = str(config)
        try:
            with open(config, "rb") as fh:
                data = tomllib.load(fh)
        except FileNotFoundError:
            raise InputError(f"config file '{source}' does not exist; check the --config path") from None
        except tomllib.TOMLDecodeError as exc:
            raise InputError(f"config file '{source}' is not valid TOML: {exc}; fix the line named") from None
    unknown = set(data) - {"options", "domain"}
    if unknown:
        raise InputError(
            f"config '{source}': unknown section(s) {sorted(unknown)}; only [options] and "
            "[domain.\"NAME\"] tables are read")
    options = data.get("options", {}) or {}
    domains = data.get("domain", {}) or {}
    if not isinstance(options, Mapping) or not isinstance(domains, Mapping):
        raise InputError(f"config '{source}': [options] and [domain.\"NAME\"] must be tables")
    for name, over in domains.items():
        if not isinstance(over, Mapping):
            raise InputError(f"config '{source}': [domain.\"{name}\"] must be a table of options")
        interp = over.get("interpretation")
        if interp is not None and not isinstance(interp, Mapping):
            raise InputError(f"config '{source}': [domain.\"{name}\".interpretation] must be a table")
    return {"options": dict(options), "domain": {str(k): dict(v) for k, v in domains.items()},
            "source": source}


def _interpretation(spec: Mapping, domain: str):
    """An Interpretation from a config table."""
    where = f"[domain.\"{domain}\".interpretation]"
    try:
        if "plane" in spec:
            dd, dip = parse_plane(str(spec["plane"]))   # "150/70" or "strike:060/70"
            pitch = spec.get("pitch")   # 0-180 from the strike, or "40E" (check.PITCH_FORMS)
            if pitch is not None and not isinstance(pitch, (int, float, str)) \
                    or isinstance(pitch, bool):
                raise InputError(f"{where}: pitch must be a number of degrees (0-180) or "
                                 f"text such as \"40E\"; got {pitch!r}")
            return Interpretation.from_plane(dd, dip, parse_pitch(pitch, dd, dip))
        if "major" in spec:
            major = parse_orientation(str(spec["major"]))
            minor = spec.get("minor")
            return Interpretation.from_axes(major, None if minor is None else parse_orientation(str(minor)))
    except AnisotropyError as exc:
        raise type(exc)(f"{where}: {exc}") from None
    raise InputError(f"{where} needs plane = \"DIPDIR/DIP\" (optionally pitch) or "
                     "major = \"TREND/PLUNGE\" (optionally minor)")


# ---------------------------------------------------------------------------
# one domain
# ---------------------------------------------------------------------------


def _fingerprint(task: Mapping) -> str:
    """Hash of what determines a domain's result (for resume)."""
    keys = {k: task[k] for k in ("domain", "value", "columns", "options", "interpretation",
                                 "n_rows", "min_samples", "report", "topcut", "skip",
                                 "data_hash")}
    text = json.dumps(S.json_ready(keys), sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()[:16]


def _empty_row(domain: str, folder: str) -> dict:
    row = {c: None for c in SUMMARY_COLUMNS}
    row.update(domain=domain, folder=folder, reason="", warnings=0)
    return row


def _flag_text(d: Mapping, model_file: Mapping | None) -> str:
    """Unresolved, ambiguous and extrapolated results in a few words ('' when none)."""
    diag = d.get("diagnostics", {}) or {}
    flags = []
    axes = list(diag.get("unresolved_axes") or [])
    if len(axes) >= 2:
        flags.append("ambiguous directions: " + " and ".join(axes))
    elif axes:
        flags.append(f"unresolved direction: {axes[0]}")
    if diag.get("unresolved_ranges"):
        flags.append("unresolved ranges: " + ", ".join(diag["unresolved_ranges"]))
    ext = ((model_file or {}).get("flags") or {}).get("extrapolated_ranges") or []
    if ext:
        flags.append("extrapolated ranges: " + ", ".join(
            f"s{e['structure']} {e['axis']}" for e in ext))
    return "; ".join(flags)


def _model_columns(row: dict, d: Mapping, model_file: Mapping | None) -> None:
    """Structures, rotation angles, grade-unit sills, flags and the audit trail of a row."""
    model = d.get("model", {}) or {}
    row["plane_strike"] = (d.get("plane", {}) or {}).get("strike")
    ang = ((d.get("rotation", {}) or {}).get("angles") or {})
    row["rotation_azimuth"], row["rotation_plunge"], row["rotation_rotation"] = (
        ang.get("azimuth"), ang.get("plunge"), ang.get("rotation"))
    row["sill_units"] = model.get("units")
    for k, st in enumerate((model.get("structures") or [])[:3], 1):
        r = st.get("ranges") or {}
        row.update({f"s{k}_kind": st.get("type"), f"s{k}_sill": st.get("sill"),
                    **{f"s{k}_range_{a}": r.get(a) for a in _AXES}})
    grade = (model_file or {}).get("grade_units") or {}
    row["grade_method"] = grade.get("method")
    if grade.get("structures"):
        row["grade_sill_units"] = grade.get("units")
        row["grade_nugget"] = grade.get("nugget")
        for k, st in enumerate(grade["structures"][:3], 1):
            row[f"grade_s{k}_sill"] = st.get("sill")
            r = st.get("practical_range_m") or {}
            row.update({f"grade_s{k}_range_{a}": r.get(a) for a in _AXES})
    row["flags"] = _flag_text(d, model_file)
    run = d.get("run", {}) or {}
    row["run_utc"], row["version"] = run.get("utc"), run.get("version")
    row["input_sha256"], row["seed"] = run.get("input_sha256"), run.get("seed")


def _row_from_result(row: dict, d: Mapping, check: Mapping | None,
                     model_file: Mapping | None = None) -> dict:
    """Fill a summary row from discovery.json (schema anisotropy.discovery/1), check.json
    and model.json."""
    inp = d.get("input", {})
    row["n_samples"] = inp.get("n_samples")
    row["n_used"] = inp.get("n_used")
    plane = d.get("plane", {}) or {}
    row["plane_dip_direction"] = plane.get("dip_direction")
    row["plane_dip"] = plane.get("dip")
    row["plane_pitch"] = plane.get("pitch")
    axes = d.get("axes", {}) or {}
    for a in _AXES:
        ax = axes.get(a, {}) or {}
        row[f"{a}_trend"] = ax.get("trend")
        row[f"{a}_plunge"] = ax.get("plunge")
        row[f"range_{a}"] = ax.get("range")
    model = d.get("model", {}) or {}
    row["nugget"] = model.get("nugget")
    row["total_sill"] = model.get("total_sill")
    row["n_structures"] = len(model.get("structures", []) or [])
    row["transform"] = (d.get("transform", {}) or {}).get("kind")
    row["estimator"] = d.get("estimator") or (d.get("diagnostics", {}) or {}).get("estimator")
    unc = d.get("uncertainty") or {}
    for a in _AXES:
        row[f"cone_{a}"] = (unc.get(a) or {}).get("cone_deg")
    row["replicates"] = unc.get("replicates")
    row["warnings"] = len((d.get("diagnostics", {}) or {}).get("warnings", []) or [])
    row["warning_list"] = list((d.get("diagnostics", {}) or {}).get("warnings", []) or [])
    if check is not None:
        row["verdict"] = check.get("verdict")
    _model_columns(row, d, model_file)
    for k, v in list(row.items()):
        if isinstance(v, float):
            row[k] = round(v, 4)
    return row


def _run_domain(task: Mapping, frame=None) -> dict:
    """Run the chain for one domain; never raises (the row says what happened).

    ``task`` is a plain dict (picklable for joblib and Dask): the column
    names, discover options, the interpretation spec, and the folder to
    write into; ``frame`` is the whole table (the domain is selected from it
    by discover, so that the data row numbers in every record and warning
    are those of the file). It runs with BLAS on one thread wherever it runs
    (:func:`anisotropy.parallel.run_tasks`).
    """
    start = time.perf_counter()
    domain, folder = task["domain"], task["folder"]
    dom_dir = Path(task["dom_dir"])
    row = _empty_row(domain, folder)
    dom_dir.mkdir(parents=True, exist_ok=True)
    marker = dom_dir / MARKER
    if marker.exists():
        marker.unlink()  # being re-run: not complete until the marker is written again
    try:
        if task.get("skip"):
            row.update(status="skipped", reason="skipped by the config (skip = true)",
                       n_samples=task["n_rows"])
        elif task["n_rows"] < task["min_samples"]:
            row.update(status="skipped", n_samples=task["n_rows"],
                       reason=f"too small: {task['n_rows']} samples, at least "
                              f"{task['min_samples']} needed")
        else:
            if task.get("interpretation"):
                # read before the expensive part, so a typo fails in a second
                _interpretation(task["interpretation"], domain)
            row = _discover_domain(task, frame, row, dom_dir)
    except InsufficientDataError as exc:
        row.update(status="skipped", reason=f"too small: {exc}")
    except AnisotropyError as exc:
        row.update(status="failed", reason=str(exc))
    except Exception as exc:  # noqa: BLE001 - one domain's bug must not stop the others
        row.update(status="failed", reason=f"internal error: {type(exc).__name__}: {exc}")
        S.atomic_write_text(dom_dir / "error.txt", traceback.format_exc())
    row["seconds"] = round(time.perf_counter() - start, 2)
    S.atomic_write_json(dom_dir / ROW_FILE, row)
    if row["status"] in ("ok", "skipped"):
        # written last: the domain is done only once everything else is on disk
        S.atomic_write_json(marker, {"fingerprint": task["fingerprint"], "status": row["status"]})
    return row


def _discover_domain(task: Mapping, df, row: dict, dom_dir: Path) -> dict:
    if not isinstance(df, pd.DataFrame):
        df = pd.DataFrame(df)
    source = task.get("source", "<table>")
    opts = dict(task["options"])
    cols = task["columns"]
    opts.setdefault("source", source)
    # a top-cut (options top_cut / top_cut_mode) is applied and counted by discover
    disc = discover(df, value=task["value"], domain=task["domain_column"],
                    domain_value=task["domain"], **cols, **opts)
    if task.get("units"):
        disc.grade_units = str(task["units"])
    disc.run["command"] = task.get("command")
    d = disc.to_dict()
    cut = (d.get("transform") or {}).get("top_cut")
    if cut:
        row.update(topcut=cut["threshold"], n_capped=cut["n_capped"],
                   topcut_mode=cut["mode"], n_excluded=cut["n_excluded"])
    if getattr(disc, "exploration", None) is not None:
        S.atomic_write_json(dom_dir / "explore.json", disc.exploration.to_dict())
    S.atomic_write_json(dom_dir / "discovery.json", d)
    from anisotropy.modelfile import write_model_files

    model_file = json.loads(write_model_files(disc, dom_dir)["model_json"].read_text("utf-8"))
    check = None
    check_dict = None
    if task.get("interpretation"):
        check = check_interpretation(disc, _interpretation(task["interpretation"], task["domain"]))
        check_dict = check.to_dict()
        S.atomic_write_json(dom_dir / "check.json", check_dict)
    if task.get("report", True):
        render_report(disc, dom_dir, check=check)
    row["status"] = "ok"
    return _row_from_result(row, d, check_dict, model_file)


# ---------------------------------------------------------------------------
# the batch
# ---------------------------------------------------------------------------


@dataclass
class BatchResult:
    """What a batch did.

    Attributes
    ----------
    rows : list of dict
        One summary row per domain (keys :data:`SUMMARY_COLUMNS`), in the
        order of the domains.
    out : Path
        The output folder.
    index : Path
        ``out/index.html``.
    ran : list of str
        Domains run in this call.
    resumed : list of str
        Domains found complete on disk and not re-run.
    seconds : float
    """

    rows: list
    out: Path
    index: Path
    ran: list = field(default_factory=list)
    resumed: list = field(default_factory=list)
    seconds: float = 0.0

    @property
    def statuses(self) -> dict:
        """``{domain: status}``."""
        return {r["domain"]: r["status"] for r in self.rows}

    def to_dict(self) -> dict:
        """JSON-ready form (the content of ``summary.json``)."""
        return S.json_ready({"schema": "anisotropy.batch/1", "out": str(self.out),
                             "domains": self.rows, "ran": self.ran, "resumed": self.resumed,
                             "seconds": round(self.seconds, 2)})

    def to_frame(self):
        """The summary as a pandas DataFrame."""
        return pd.DataFrame(self.rows, columns=list(SUMMARY_COLUMNS))

    def summary(self) -> str:
        """A few lines for the terminal."""
        counts = {}
        for r in self.rows:
            counts[r["status"]] = counts.get(r["status"], 0) + 1
        text = ", ".join(f"{v} {k}" for k, v in sorted(counts.items()))
        n = len(self.rows)
        lines = [f"{n} {'domain' if n == 1 else 'domains'}: {text} ({len(self.ran)} run, "
                 f"{len(self.resumed)} already done) in {self.seconds:.1f} s"]
        for r in self.rows:
            if r["status"] != "ok":
                lines.append(f"  {r['domain']}: {r['status']} - {r['reason']}")
        lines.append(f"index: {self.index}")
        return "\n".join(lines)


def _load_done(dom_dir: Path, fingerprint: str):
    """The saved row of a complete domain with the same inputs, else None."""
    try:
        marker = json.loads((dom_dir / MARKER).read_text(encoding="utf-8"))
        if marker.get("fingerprint") != fingerprint:
            return None
        return json.loads((dom_dir / ROW_FILE).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None


def run_batch(data, *, value, domain, out, domains=None, jobs=1, scheduler=None, config=None,
              resume=False, min_samples=MIN_SAMPLES, report=True, progress=False,
              x=None, y=None, z=None, hole=None, command=None,
              **discover_options) -> BatchResult:
    """Discover (and check) the continuity of every domain of a sample table.

    Parameters
    ----------
    data : path-like or pandas.DataFrame
        The sample table (CSV or Parquet path, or a DataFrame).
    value : str
        Grade column.
    domain : str
        Domain column.
    out : path-like
        Output folder (created). Each domain gets a sub-folder with a safe
        name (see :func:`anisotropy.safe_io.folder_names`).
    domains : sequence of str, optional
        Only these domains (as text, as in the table). Default: all.
    jobs : int
        Domains run at the same time on local processes (joblib); 1 runs
        them one after another in this process.
    scheduler : str or dask.distributed.Client, optional
        Address of an existing Dask scheduler (or a client): the domains run
        on that cluster instead of local processes.
    config : path-like or mapping, optional
        TOML config with per-domain overrides and interpretations (layout
        in the module docstring).
    resume : bool
        Skip domains already complete in ``out`` with the same inputs and
        options (a failed domain is always run again).
    min_samples : int
        Domains with fewer rows are recorded as skipped without running.
    report : bool
        Write ``report.html`` (and its PNGs) for every domain.
    progress : bool
        Print one line per finished domain.
    x, y, z, hole : str, optional
        Column names (detected when omitted, as in :func:`anisotropy.discover`).
    command : str, optional
        The command line of a command-line run, for the audit trail
        (``run`` in every ``discovery.json`` and in ``summary.json``).
    **discover_options
        Passed to :func:`anisotropy.discover` for every domain (for example
        ``bootstrap=100``, ``transform="log"``, ``lag=10``, ``seed=1``);
        config values override them.

    Returns
    -------
    BatchResult

    Raises
    ------
    InputError
        The table, columns, domain names or config cannot be used.
    """
    t0 = time.perf_counter()
    df, source = _batch_table(data)
    cfg = load_config(config)
    all_domains = domain_values(df, domain)
    if not all_domains:
        raise InputError(f"'{source}': the domain column '{domain}' has no values; "
                         "check the --domain column name")
    col = _domain_column(df, domain, source)
    selected = _selected_domains(domains, all_domains, source, col)
    unknown_cfg = sorted(set(cfg["domain"]) - set(all_domains))
    folders = S.folder_names(all_domains)
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    _check_option_names(discover_options, cfg)
    if unknown_cfg:
        note(progress, f"note: {_notes(unknown_cfg)[0]} (domains in the table: "
                       f"{', '.join(all_domains[:30])})")
    shared = {"value": value, "domain_column": col, "source": source, "command": command,
              "report": bool(report), "columns": {k: v for k, v in
                                                  {"x": x, "y": y, "z": z, "hole": hole}.items()
                                                  if v is not None}}
    codes = _domain_codes(df[col])
    tasks, rows, resumed = [], {}, []
    for name in selected:
        in_domain = (codes == name).to_numpy()
        task = _domain_task(name, cfg, discover_options, shared, folder=folders[name], out=out,
                            in_domain=in_domain, data_hash=_data_hash(df, in_domain),
                            min_samples=min_samples)
        done = _load_done(Path(task["dom_dir"]), task["fingerprint"]) if resume else None
        if done is not None:
            rows[name] = done
            resumed.append(name)
        else:
            tasks.append(task)
    for row in _execute(tasks, df, jobs=jobs, scheduler=scheduler, progress=progress):
        rows[row["domain"]] = row
    ordered = [rows[n] for n in selected]
    result = BatchResult(rows=ordered, out=out, index=out / "index.html",
                         ran=[t["domain"] for t in tasks], resumed=resumed,
                         seconds=time.perf_counter() - t0)
    _write_summaries(result, cfg, discover_options, shared, unknown_cfg)
    return result


def _batch_table(data):
    """The sample table and the name it goes by in the records."""
    if isinstance(data, pd.DataFrame):
        return data, data.attrs.get("source", "<table>")
    return read_table(data), str(data)


def _selected_domains(domains, all_domains, source, col):
    """The domains to run, in the order asked (all, in the table's order, by default)."""
    if domains is None:
        return list(all_domains)
    selected = list(dict.fromkeys(str(d) for d in domains))
    missing = [d for d in selected if d not in all_domains]
    if missing:
        raise InputError(f"'{source}': domain(s) {missing} are not in column '{col}'; "
                         f"the domains are: {', '.join(all_domains[:30])}")
    return selected


def _domain_task(name, cfg, discover_options, shared, *, folder, out, in_domain, data_hash,
                 min_samples) -> dict:
    """One domain's task: its discover options (the config's over the call's), its
    interpretation, skip and minimum, its folder, and the fingerprint resume compares."""
    over = dict(cfg["domain"].get(name, {}))
    options = {**dict(discover_options), **cfg["options"],
               **{k: v for k, v in over.items() if k not in _OWN_KEYS}}
    for k in ("skip", "interpretation", "min_samples"):
        over.setdefault(k, cfg["options"].get(k))
    topcut = _top_cut_options(options, over, cfg["options"], name)
    units = over.get("units", cfg["options"].get("units", options.get("units")))
    for k in ("units", "skip", "interpretation", "min_samples"):
        options.pop(k, None)   # grade units label the record; the rest are the batch's own
    options.setdefault("n_jobs", 1)
    task = {
        "domain": name, "folder": folder, "dom_dir": str(S.inside(out, folder)),
        "value": shared["value"], "domain_column": shared["domain_column"],
        "columns": shared["columns"], "options": options,
        "interpretation": over.get("interpretation"), "skip": bool(over.get("skip") or False),
        "n_rows": int(in_domain.sum()),
        "min_samples": int(over.get("min_samples") or min_samples), "report": shared["report"],
        "source": shared["source"], "topcut": topcut, "units": units,
        # resume must notice when the domain's data changed, not only the options
        "data_hash": data_hash, "command": shared["command"],
    }
    task["fingerprint"] = _fingerprint(task)
    return task


def _write_summaries(result, cfg, discover_options, shared, unknown_cfg):
    """summary.csv, summary.json (with the run record) and the index page."""
    from anisotropy.audit import run_record

    out, ordered, source = result.out, result.rows, shared["source"]
    summary = result.to_dict()
    summary.update(source=source, value=shared["value"], domain_column=shared["domain_column"],
                   config=cfg.get("source"), config_domains_not_in_table=unknown_cfg)
    options = {**dict(discover_options), **cfg["options"]}
    summary["run"] = run_record(source, options, options.get("seed", 0), shared["command"])
    S.atomic_write_csv(out / "summary.csv",
                       [{summary_heading(k): v for k, v in r.items()} for r in ordered],
                       SUMMARY_HEADINGS)
    S.atomic_write_json(out / "summary.json", summary)
    render_index(ordered, out / "index.html", source=source, value=shared["value"],
                 domain_column=shared["domain_column"], notes=_notes(unknown_cfg))


def _data_hash(df, mask) -> str:
    h = pd.util.hash_pandas_object(df.loc[mask], index=True).to_numpy()
    return hashlib.sha256(h.tobytes()).hexdigest()[:16]


#: options read by the sample intake (passed through discover's **intake)
_INTAKE_OPTIONS = {"missing_codes", "below_detection", "duplicates", "source"}


def _check_option_names(discover_options, cfg):
    """Refuse unknown discover options (a typo would otherwise fail every domain)."""
    params = inspect.signature(discover).parameters
    known = {n for n, p in params.items() if p.kind is not inspect.Parameter.VAR_KEYWORD}
    known = (known | _INTAKE_OPTIONS | _OWN_KEYS) - {"data", "value", "domain", "domain_value",
                                                     "x", "y", "z", "hole", "scheduler",
                                                     "progress"}
    where = [("options", discover_options), ("[options]", cfg["options"])]
    where += [(f'[domain."{n}"]', over) for n, over in cfg["domain"].items()]
    for label, opts in where:
        bad = sorted(set(opts) - known)
        if bad:
            raise InputError(f"{cfg.get('source', 'config')} {label}: unknown option(s) "
                             f"{', '.join(bad)}; known: {', '.join(sorted(known))}")


def _notes(unknown_cfg):
    if not unknown_cfg:
        return []
    return [f"the config names domain(s) not in the table, ignored: {', '.join(unknown_cfg)}"]


def _domain_column(df, domain, source):
    return find_column(df, domain, role="domain", option="--domain", source=source)


def _domain_codes(series):
    """Domain codes as text, compared the way
    :func:`anisotropy.samples.columns.domain_values` lists them."""
    return domain_codes(series)


def _top_cut_options(options, over, cfg_options, name):
    """Move the config's ``topcut``/``topcut_mode`` into discover's ``top_cut``/``top_cut_mode``.

    The domain's table wins over ``[options]``, which wins over the call's
    (command-line) options. Returns the top-cut setting (grade, "auto" or
    None) for the resume fingerprint; refuses a bad one before any domain runs.
    """
    for cfg_key, key in (("topcut", "top_cut"), ("topcut_mode", "top_cut_mode")):
        v = over.get(cfg_key, cfg_options.get(cfg_key))
        options.pop(cfg_key, None)
        if v is not None:
            options[key] = v
    try:
        topcut, mode = parse_top_cut(options.get("top_cut"), options.get("top_cut_mode", "cap"))
    except InputError as exc:
        raise InputError(f"domain {name!r}: {exc}") from None
    if topcut is not None:
        options["top_cut"] = topcut
    return topcut


def _execute(tasks: Sequence[Mapping], frame, *, jobs, scheduler, progress):
    """Run the domains (this process, local processes or a Dask cluster); rows in task order."""
    if not tasks:
        return []
    jobs = 1 if jobs is None else parallel.check_jobs(jobs)

    def say(k, row):
        note(progress, f"  {row['domain']}: {row['status']}"
                       + (f" ({row['reason']})" if row["reason"] else "")
                       + f" [{row['seconds']} s]", stream=sys.stdout)

    if scheduler is None and jobs != 1 and len(tasks) > 1:
        _warm_up(progress)
    # the table goes to a cluster's workers once, not once per domain
    return parallel.run_tasks(_run_domain, [(t,) for t in tasks], shared={"frame": frame},
                              n_jobs=jobs, scheduler=scheduler, on_result=say, label="domain")


def _warm_up(progress):
    """Compile the kernels once here, before the worker processes start (a fresh
    installation would otherwise compile them in every worker at once)."""
    seconds = parallel.warm_up()
    if seconds > 2.0:
        note(progress, f"  compiled the pair and likelihood kernels once for all workers "
                       f"({seconds:.0f} s, cached on disk for later runs)", stream=sys.stdout)


# ---------------------------------------------------------------------------
# the demo
# ---------------------------------------------------------------------------

def run_demo(out="fenwright_demo", *, jobs=2, bootstrap=None, resume=False, progress=False,
             **options) -> BatchResult:
    """Batch over every domain of the invented Fenwright Hollow deposit.

    Runs discover with bootstrap for each domain of the bundled composites
    and checks the interpretations stated in the bundled config
    (``anisotropy/data/demo_config.toml``).

    Parameters
    ----------
    out : path-like
        Output folder.
    jobs : int
        Local processes (domains at once).
    bootstrap : int, optional
        Replicates per domain (default: the config's).
    resume : bool
    progress : bool
    **options
        Further discover options.

    Returns
    -------
    BatchResult
    """
    paths = demo_paths()
    cfg = load_config(paths["config"])
    if bootstrap is not None:
        cfg["options"]["bootstrap"] = int(bootstrap)
        for over in cfg["domain"].values():
            over.pop("bootstrap", None)
    cfg.pop("source", None)
    table = read_table(paths["composites"])
    # a stable, machine-independent name in every record and page
    table.attrs["source"] = f"anisotropy/data/{DEMO_TABLE}"
    return run_batch(table, value="au_gpt", domain="domain", out=out,
                     hole="hole_id", jobs=jobs, config=cfg, resume=resume, progress=progress,
                     **options)
