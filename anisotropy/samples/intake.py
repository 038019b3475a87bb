"""The intake: a table to a :class:`~anisotropy.samples.record.SampleSet`, row rules in order.

The rules and their order are those of :mod:`anisotropy.samples`; each
excluded or altered sample is counted once, under the first reason that
applies.
"""

from __future__ import annotations

import difflib
import os

import numpy as np
import pandas as pd

from anisotropy.errors import ColumnError, DataError, InputError, InsufficientDataError
from anisotropy.samples.columns import (_available, _domain_strings, _find_column, _natural_key,
                                        detect_coordinate_columns)
from anisotropy.samples.conventions import (DUPLICATE_TOLERANCE, MISSING_CODE_THRESHOLD,
                                            PLANAR_ABSOLUTE, PLANAR_RELATIVE, R_BDL_HALF,
                                            R_BDL_MISSING, R_BLANK_COORD, R_BLANK_VALUE,
                                            R_DUP_AVERAGED, R_DUP_AVERAGE_CHANGED, R_DUP_DROPPED,
                                            R_MISSING_CODE, R_MISSING_TEXT, _AXIS_WORDS, _POLICIES)
from anisotropy.samples.numbers import _hole_like_column, _numeric, _plural, _rows_phrase
from anisotropy.samples.reading import _looks_numeric, check_unique_columns, read_table
from anisotropy.samples.record import SampleSet


def _check_policy(name, value):
    allowed = _POLICIES[name]
    if value not in allowed:
        raise InputError(f"{name}={value!r} is not a known policy; use one of "
                         f"{', '.join(repr(a) for a in allowed)}.")


def samples_from_frame(df, *, value, x=None, y=None, z=None, domain=None, domain_value=None,
                       hole=None, missing_codes="missing", below_detection="half",
                       duplicates="keep", source="<table>") -> SampleSet:
    """Validate a table of samples and return a :class:`SampleSet`.

    Parameters
    ----------
    df : pandas.DataFrame
        One row per sample.
    value : str
        The grade column.
    x, y, z : str, optional
        Coordinate columns; detected from their names when omitted (see
        :func:`detect_coordinate_columns`).
    domain : str, optional
        Domain column.
    domain_value : str, optional
        Keep only the rows whose domain is this value (compared as text;
        case-insensitively if that is unique). Needs ``domain``.
    hole : str, optional
        Hole or string identifier column (for down-hole spacing).
    missing_codes : {"missing", "keep"}
        Grades <= -90 (-99, -999, ...): leave the sample out, or keep the
        number as it is.
    below_detection : {"half", "missing", "keep"}
        Other negative grades, read as below-detection codes -DL: replace by
        DL/2 (common practice), leave the sample out, or keep as is.
    duplicates : {"keep", "average", "drop"}
        Samples sharing a location (to the nearest millimetre): keep all,
        keep one with the mean grade, or keep the first only.
    source : str
        Name of the file, for messages and the record.

    Returns
    -------
    SampleSet

    Raises
    ------
    ColumnError
        A column is missing, or coordinate detection found none or several.
    DataError
        Cells that are not numbers in a numeric column; a domain value that
        does not exist.
    InsufficientDataError
        No samples left.
    InputError
        Unknown policy, or ``domain_value`` without ``domain``.

    Notes
    -----
    The order of the checks, the reasons used in ``dropped`` and
    ``changed``, the local origin and the planarity test are described in
    the module docstring. Each step is one helper below, called in that
    order; every warning is appended to one list, so their order is the
    order of the steps.
    """
    policies = {"missing_codes": missing_codes, "below_detection": below_detection,
                "duplicates": duplicates}
    df, source, table_info = _checked_frame(df, policies, source)
    cols = _resolve_columns(df, value=value, x=x, y=y, z=z, domain=domain, hole=hole,
                            source=source)
    warnings: list[str] = []
    if cols["hole"] is None:
        _warn_unnamed_hole(df, cols, warnings)
    df, data_rows, selected_domain = _select_domain(df, cols["domain"], domain_value,
                                                    source, warnings)
    n_read = int(len(df))
    if n_read == 0:
        raise InsufficientDataError(f"'{source}' has no data rows"
                                    + (f" in domain {selected_domain!r}." if selected_domain
                                       else ". Give a table with one row per sample."))
    parsed, v, tally = _tallied_values(df, cols, z=z, source=source, data_rows=data_rows,
                                       decimal=table_info.get("decimal") or ".",
                                       policies=policies, warnings=warnings)
    kept = _kept_samples(df, cols, parsed, v, tally, source=source, domain=selected_domain,
                         duplicates=duplicates, warnings=warnings)
    return SampleSet(
        coords=np.ascontiguousarray(kept["coords"], dtype=np.float64),
        values=np.ascontiguousarray(kept["values"], dtype=np.float64),
        origin=kept["origin"].astype(np.float64),
        holes=kept["holes"],
        domain=selected_domain,
        source=source,
        columns=cols,
        n_read=n_read,
        dropped=tally.dropped,
        changed=tally.changed,
        duplicates=kept["duplicates"],
        warnings=warnings,
        planar=kept["planar"],
        rows=np.asarray(kept["rows"], dtype=np.int64),
        policies=policies,
        table=table_info,
        dropped_rows=tally.dropped_rows,
        changed_rows=tally.changed_rows,
    )


def _tallied_values(df, cols, *, z, source, data_rows, decimal, policies, warnings):
    """The numbers of every column, and the grade policies applied, each drop counted.

    Returns the parsed columns, the grades after the below-detection policy
    and the :class:`_Tally` of what was left out or changed.
    """
    parsed, v, v_blank, v_text = _parse_numbers(
        df, cols, z=z, source=source, data_rows=data_rows, decimal=decimal, warnings=warnings)
    tally = _Tally(data_rows)
    _drop_blanks(tally, parsed, v_blank, v_text, warnings)
    _apply_missing_codes(tally, v, policies["missing_codes"], warnings)
    v = _apply_below_detection(tally, v, policies["below_detection"], warnings)
    return parsed, v, tally


def _kept_samples(df, cols, parsed, v, tally, *, source, domain, duplicates, warnings) -> dict:
    """The samples still alive: local coordinates, grades, rows, holes, duplicates, planarity."""
    idx = np.flatnonzero(tally.alive)
    world = np.column_stack([parsed[a][0][idx] for a in "xyz"]).astype(np.float64)
    values = v[idx].astype(np.float64)
    rows = tally.data_rows[idx]
    holes = _hole_ids(df, cols["hole"], idx, rows, warnings)
    if len(values) == 0:
        raise InsufficientDataError(
            f"In '{source}': no samples are left to study"
            + (f" in domain {domain!r}" if domain else "")
            + f" after leaving out {', '.join(f'{c} ({r})' for r, c in tally.dropped.items())}. "
            "Check the grade column and the assay-code options.")
    # local origin, before any other arithmetic
    origin = np.floor(world.min(axis=0))
    coords, values, rows, holes, dup = _apply_duplicates(
        tally, world - origin, values, rows, holes, duplicates, warnings)
    planar = True if cols["z"] is None else _planarity(coords, warnings)
    if len(values) > 1 and np.ptp(values) == 0:
        warnings.append(f"All {len(values)} grades are equal ({values[0]:g}); there is no "
                        "variability to study.")
    return {"coords": coords, "values": values, "origin": origin, "rows": rows,
            "holes": holes, "duplicates": dup, "planar": planar}


def _checked_frame(df, policies: dict, source) -> tuple[pd.DataFrame, str, dict]:
    """Refuse unknown policies and unusable tables; a shallow copy with text column names.

    Returns the copy, ``source`` as text and how the file was read
    (``df.attrs["table"]``).
    """
    for name, val in policies.items():
        _check_policy(name, val)
    if not isinstance(df, pd.DataFrame):
        raise InputError("samples_from_frame needs a pandas DataFrame.")
    source = str(source)
    if len(df.columns) == 0:
        raise InputError(f"'{source}' has no columns.")
    table_info = dict(df.attrs.get("table", {}))
    check_unique_columns(df.columns, source)
    df = df.copy(deep=False)
    df.columns = [str(c) for c in df.columns]
    return df, source, table_info


def _resolve_columns(df, *, value, x, y, z, domain, hole, source: str) -> dict:
    """The column used for each role, in the order ``x, y, z, value, domain, hole``.

    ``z`` is None for a two-dimensional table; ``domain`` and ``hole`` are
    None when not given. A column given for two roles is refused.
    """
    if value is None:
        raise InputError("Name the grade column (--value COL, value= in Python). Available "
                         f"columns: {_available(df)}.")
    vcol = _find_column(df, value, "grade", "--value (value= in Python)", source)
    dcol = _find_column(df, domain, "domain", "--domain (domain= in Python)", source) \
        if domain is not None else None
    hcol = _find_column(df, hole, "hole id", "--hole (hole= in Python)", source) \
        if hole is not None else None
    xyz = detect_coordinate_columns(df, x=x, y=y, z=z, exclude=(vcol, dcol, hcol), source=source)
    roles = {"x": xyz["x"], "y": xyz["y"], "z": xyz["z"], "value": vcol}
    seen = {}
    for r, c in roles.items():
        if c is None:
            continue
        if c in seen:
            raise ColumnError(f"In '{source}': column {c!r} is given both as {seen[c]} and as "
                              f"{r}. Give a different column for each.")
        seen[c] = r
    return {**roles, "domain": dcol, "hole": hcol}


def _warn_unnamed_hole(df, cols: dict, warnings: list) -> None:
    """Warn when no hole column was named but one column looks like it."""
    like = _hole_like_column(df, exclude=(cols["value"], cols["domain"],
                                          cols["x"], cols["y"], cols["z"]))
    if like is not None:
        warnings.append(
            f"Column {like!r} looks like a hole identifier (its values repeat over "
            "several rows) but no hole column was given: down-hole spacing, the down-hole "
            "nugget and the drill-hole pair weights are then unavailable, which can change "
            f"the answer a great deal. Name it with --hole {like} (hole= in Python) if it "
            "is one.")


def _select_domain(df, dcol, domain_value, source: str, warnings: list):
    """Keep the rows of the selected domain.

    Returns the rows kept, their data row numbers (1 = first row under the
    header) and the selected domain (None when all rows are studied).
    """
    data_rows = np.arange(1, len(df) + 1)
    if domain_value is not None and dcol is None:
        raise InputError("A domain value was given without a domain column; name the column "
                         "with --domain (domain= in Python).")
    if dcol is None:
        return df, data_rows, None
    dstr = _domain_strings(df[dcol])
    present = sorted(dstr.dropna().unique().tolist(), key=_natural_key)
    if domain_value is not None:
        want = _domain_wanted(domain_value, present, dcol, source, warnings)
        keep = (dstr == want).to_numpy()
        return df.loc[keep], data_rows[keep], want
    if len(present) == 1:
        keep = (dstr == present[0]).to_numpy()
        n_blank = int((~keep).sum())
        if n_blank:
            warnings.append(f"{n_blank} {_plural(n_blank, 'row has', 'rows have')} a blank "
                            f"domain and {_plural(n_blank, 'was', 'were')} not read; the only "
                            f"domain present, {present[0]!r}, was used.")
        return df.loc[keep], data_rows[keep], present[0]
    if not present:
        warnings.append(f"The domain column {dcol!r} is blank in every row; all rows are "
                        "studied together.")
    else:
        warnings.append(
            f"No domain was selected, so all {len(present)} domains in column {dcol!r} "
            f"({', '.join(repr(v) for v in present[:10])}{', ...' if len(present) > 10 else ''})"
            " are studied together; continuity usually differs between domains, so pick "
            "one with --domain-value.")
    return df, data_rows, None


def _domain_wanted(domain_value, present: list, dcol: str, source: str, warnings: list) -> str:
    """The domain code (as written in the column) that ``domain_value`` names.

    ``1.0`` names code ``1``; a unique match ignoring case is used with a
    warning; anything else is refused with the closest code and the list.
    """
    want = str(domain_value).strip()
    if isinstance(domain_value, float) and float(domain_value).is_integer():
        want = str(int(domain_value))
    if want not in present and _looks_numeric(want) and float(want).is_integer() \
            and str(int(float(want))) in present:
        want = str(int(float(want)))  # "1.0" names domain code 1
    if want in present:
        return want
    ci = [v for v in present if v.lower() == want.lower()]
    if len(ci) == 1:
        warnings.append(f"Domain {want!r} does not occur in column {dcol!r} as "
                        f"written; {ci[0]!r}, its only match ignoring upper and "
                        "lower case, was used.")
        return ci[0]
    close = difflib.get_close_matches(want, present, n=1, cutoff=0.5)
    hint = f" The closest is {close[0]!r}." if close else ""
    shown = ", ".join(repr(v) for v in present[:50])
    if len(present) > 50:
        shown += f", ... ({len(present)} in all)"
    raise DataError(
        f"In '{source}': domain {want!r} does not occur in column {dcol!r}."
        f"{hint} The domains present are: {shown or '(none: the column is blank)'}."
        " Give one of these with --domain-value.")


def _parse_numbers(df, cols: dict, *, z, source: str, data_rows, decimal: str, warnings: list):
    """Coordinates and grades as numbers.

    Returns ``parsed`` (axis to ``(values, blank, missing_text)``, see
    :func:`_numeric`; a two-dimensional table gets ``z = 0`` everywhere,
    with a warning) and the grade's ``values, blank, missing_text``.
    """
    n_read = len(df)
    parsed = {}
    two_d = cols["z"] is None
    if two_d:   # no elevation: every sample on the plane z = 0
        none = np.zeros(n_read, dtype=bool)
        parsed["z"] = (np.zeros(n_read), none, none)
        warnings.append(_two_d_warning(z))
    for axis in ("xy" if two_d else "xyz"):
        parsed[axis] = _numeric(df[cols[axis]], column=cols[axis],
                                role=f"{_AXIS_WORDS[axis][0]} ({axis})",
                                option=f"--{axis}", source=source, data_rows=data_rows,
                                decimal=decimal)
    vcol = cols["value"]
    v, v_blank, v_text = _numeric(df[vcol], column=vcol, role="grade", option="--value",
                                  source=source, data_rows=data_rows, decimal=decimal)
    return parsed, v, v_blank, v_text


class _Tally:
    """The samples still in, and those left out or altered, counted by reason.

    ``alive`` marks the rows still in; ``dropped``/``changed`` map a reason
    to a count and ``dropped_rows``/``changed_rows`` to the data row numbers,
    in the order the reasons first occurred.
    """

    def __init__(self, data_rows: np.ndarray):
        self.data_rows = data_rows
        self.alive = np.ones(len(data_rows), dtype=bool)
        self.dropped: dict[str, int] = {}
        self.changed: dict[str, int] = {}
        self.dropped_rows: dict[str, list] = {}
        self.changed_rows: dict[str, list] = {}

    def drop(self, mask, reason):
        """Leave out the rows of ``mask`` still in; their mask and count."""
        m = mask & self.alive
        k = int(m.sum())
        if k:
            self.dropped[reason] = self.dropped.get(reason, 0) + k
            self.dropped_rows.setdefault(reason, []).extend(int(r) for r in self.data_rows[m])
            self.alive[m] = False
        return m, k


def _drop_blanks(tally: _Tally, parsed: dict, v_blank, v_text, warnings: list) -> None:
    """Leave out rows with a blank coordinate, a blank grade or missing-value text."""
    data_rows = tally.data_rows
    coord_blank = parsed["x"][1] | parsed["x"][2] | parsed["y"][1] | parsed["y"][2] \
        | parsed["z"][1] | parsed["z"][2]
    m, k = tally.drop(coord_blank, R_BLANK_COORD)
    if k:
        warnings.append(f"{k} {_plural(k, 'sample has', 'samples have')} a blank coordinate and "
                        f"{_plural(k, 'was', 'were')} left out ({_rows_phrase(data_rows[m])}).")
    m, k = tally.drop(v_blank, R_BLANK_VALUE)
    if k:
        warnings.append(f"{k} {_plural(k, 'sample has', 'samples have')} no grade (blank cell) "
                        f"and {_plural(k, 'was', 'were')} left out "
                        f"({_rows_phrase(data_rows[m])}).")
    m, k = tally.drop(v_text, R_MISSING_TEXT)
    if k:
        warnings.append(f"{k} {_plural(k, 'grade is', 'grades are')} missing-value text such as "
                        f"NA and {_plural(k, 'was', 'were')} left out "
                        f"({_rows_phrase(data_rows[m])}).")


def _apply_missing_codes(tally: _Tally, v, missing_codes: str, warnings: list) -> None:
    """Grades <= -90: leave them out (``"missing"``) or keep them with a warning."""
    codes = tally.alive & (v <= MISSING_CODE_THRESHOLD)
    kc = int(codes.sum())
    if not kc:
        return
    if missing_codes == "missing":
        tally.drop(codes, R_MISSING_CODE)
        shown = ", ".join(f"{c:g}" for c in np.unique(v[codes])[:5])
        warnings.append(f"{kc} {_plural(kc, 'grade is a', 'grades are')} missing-value "
                        f"{_plural(kc, 'code', 'codes')} (<= -90: {shown}) and "
                        f"{_plural(kc, 'was', 'were')} left out "
                        f"({_rows_phrase(tally.data_rows[codes])}).")
    else:
        warnings.append(f"{kc} {_plural(kc, 'grade', 'grades')} at or below -90 "
                        f"{_plural(kc, 'was', 'were')} kept as real values (missing_codes="
                        "'keep'); if they are missing-value codes they will distort every "
                        "statistic.")


def _apply_below_detection(tally: _Tally, v, below_detection: str, warnings: list):
    """Negative grades above -90 (-DL codes): halve, leave out or keep; the grades after."""
    # codes at or below -90 kept on request stay as they are (not halved as -DL codes)
    bdl = tally.alive & (v < 0) & (v > MISSING_CODE_THRESHOLD)
    kb = int(bdl.sum())
    if not kb:
        return v
    if below_detection == "half":
        v = v.copy()
        example = float(v[bdl][0])
        v[bdl] = -v[bdl] / 2.0
        tally.changed[R_BDL_HALF] = kb
        tally.changed_rows[R_BDL_HALF] = [int(r) for r in tally.data_rows[bdl]]
        warnings.append(f"{kb} below-detection {_plural(kb, 'code', 'codes')} (negative "
                        f"grades -DL) {_plural(kb, 'was', 'were')} replaced by half the "
                        f"detection limit, DL/2 (common practice; {example:g} became "
                        f"{-example / 2:g}; {_rows_phrase(tally.data_rows[bdl])}).")
    elif below_detection == "missing":
        tally.drop(bdl, R_BDL_MISSING)
        warnings.append(f"{kb} below-detection {_plural(kb, 'code', 'codes')} (negative "
                        f"grades) {_plural(kb, 'was', 'were')} left out as missing.")
    else:
        warnings.append(f"{kb} negative {_plural(kb, 'grade', 'grades')} "
                        f"{_plural(kb, 'was', 'were')} kept as they are "
                        "(below_detection='keep'); a log transform cannot use them.")
    return v


def _hole_ids(df, hcol, idx, rows, warnings: list):
    """Hole ids of the kept rows as text, or None without a hole column.

    A blank id becomes ``"<no hole id, data row k>"`` (a hole of its own),
    with a warning.
    """
    if hcol is None:
        return None
    hraw = df[hcol].to_numpy(dtype=object)[idx]
    hstr = _domain_strings(pd.Series(hraw, dtype=object)).to_numpy(dtype=object)
    no_id = np.array([h is None for h in hstr], dtype=bool)
    if no_id.any():
        k = int(no_id.sum())
        hstr = hstr.copy()
        for i in np.flatnonzero(no_id):
            hstr[i] = f"<no hole id, data row {rows[i]}>"
        warnings.append(f"{k} {_plural(k, 'sample has', 'samples have')} a blank hole id "
                        f"({_rows_phrase(rows[no_id])}); each is treated as a hole "
                        "of its own.")
    return hstr.astype(object)


def _apply_duplicates(tally: _Tally, coords, values, rows, holes, duplicates: str,
                      warnings: list):
    """Count samples sharing a location and apply the duplicates policy.

    Returns ``coords, values, rows, holes`` after the policy and the record
    ``{"locations", "samples", "policy"}`` (counted before the policy).
    """
    key = np.round(coords / DUPLICATE_TOLERANCE).astype(np.int64)
    _, first, inverse, counts = np.unique(key, axis=0, return_index=True, return_inverse=True,
                                          return_counts=True)
    inverse = inverse.reshape(-1)
    multi = counts > 1
    dup_locations = int(multi.sum())
    dup_samples = int(counts[multi].sum())
    record = {"locations": dup_locations, "samples": dup_samples, "policy": duplicates}
    if not dup_locations:
        return coords, values, rows, holes, record
    where = f"{dup_locations} {_plural(dup_locations, 'location holds', 'locations hold')}"
    if duplicates == "keep":
        warnings.append(
            f"{where} more than one sample ({dup_samples} samples in all); all were kept, which "
            "adds pairs at zero distance. Use --duplicates average or drop to change this.")
        return coords, values, rows, holes, record
    keep_idx = np.sort(first)
    n_lost = len(values) - len(keep_idx)
    lost = np.ones(len(values), dtype=bool)
    lost[keep_idx] = False
    lost_rows = [int(r) for r in rows[lost]]
    if duplicates == "average":
        means = np.bincount(inverse, weights=values) / counts
        group_of_kept = inverse[keep_idx]
        new_values = means[group_of_kept]
        tally.changed[R_DUP_AVERAGE_CHANGED] = dup_locations
        tally.changed_rows[R_DUP_AVERAGE_CHANGED] = [
            int(r) for r in rows[keep_idx][counts[group_of_kept] > 1]]
        tally.dropped[R_DUP_AVERAGED] = n_lost
        tally.dropped_rows[R_DUP_AVERAGED] = lost_rows
        warnings.append(
            f"{where} more than one sample ({dup_samples} samples); each was replaced by one "
            "sample with the mean grade.")
    else:
        new_values = values[keep_idx]
        tally.dropped[R_DUP_DROPPED] = n_lost
        tally.dropped_rows[R_DUP_DROPPED] = lost_rows
        warnings.append(
            f"{where} more than one sample ({dup_samples} samples); only the first in table "
            f"order was kept at each, {n_lost} left out.")
    holes = holes[keep_idx] if holes is not None else None
    return (coords[keep_idx], np.asarray(new_values, dtype=np.float64), rows[keep_idx],
            holes, record)


def _two_d_warning(z) -> str:
    """The sentence saying a table was read as two-dimensional, and why."""
    why = (f"as asked (z={z!r})" if z is not None else
           "because it has no elevation column and no column named like one (z, elev, "
           "elevation, rl, mid_z, ...)")
    return (f"The table was read as two-dimensional {why}: every sample is placed at "
            "elevation 0 m, on one horizontal plane, and is studied as a single level. Only "
            "directions in the horizontal plane are meaningful; nothing can be said about "
            "continuity across it. If the table does have an elevation column, name it with "
            "--z COL (z= in Python).")


def _planarity(coords: np.ndarray, warnings: list) -> bool:
    """Flag samples lying on one plane (or one line); append a warning."""
    n = len(coords)
    if n < 4:
        warnings.append(f"Only {n} {_plural(n, 'sample', 'samples')}: far too few to study "
                        "continuity in three dimensions.")
        return n < 3 or bool(np.linalg.matrix_rank(coords - coords.mean(axis=0)) < 3)
    z = coords[:, 2]
    if np.ptp(z) <= PLANAR_ABSOLUTE:
        warnings.append(
            f"All samples lie at one elevation (they span {np.ptp(z):.2f} m vertically, within "
            f"the {PLANAR_ABSOLUTE:g} m tolerance), as on a single bench: the vertical "
            "direction cannot be studied, and only directions in the horizontal plane are "
            "meaningful.")
        return True
    centred = coords - coords.mean(axis=0)
    _, s, vt = np.linalg.svd(centred, full_matrices=False)
    rms = s / np.sqrt(n)
    if rms[1] <= max(PLANAR_ABSOLUTE, PLANAR_RELATIVE * rms[0]):
        warnings.append(
            f"All samples lie close to one line (rms distance {rms[1]:.2f} m from it), as in a "
            "single straight hole: only the direction along it can be studied.")
        return True
    if rms[2] <= max(PLANAR_ABSOLUTE, PLANAR_RELATIVE * rms[0]):
        nvec = vt[2]
        if nvec[2] < 0:
            nvec = -nvec  # upward normal: its horizontal part points down-dip
        dip = float(np.degrees(np.arccos(np.clip(abs(nvec[2]), 0.0, 1.0))))
        dipdir = float(np.degrees(np.arctan2(nvec[0], nvec[1])) % 360.0)
        warnings.append(
            f"All samples lie close to one plane (rms distance {rms[2]:.2f} m from it; dip "
            f"{dip:.0f} degrees towards {dipdir:.0f}): the direction across that plane cannot "
            "be studied, and only directions within it are meaningful.")
        return True
    return False


def read_samples(path, **kwargs) -> SampleSet:
    """Read a sample table and validate it.

    Parameters
    ----------
    path : str or path-like
        CSV or Parquet file (see :func:`read_table`).
    **kwargs
        As for :func:`samples_from_frame` (``value`` is required); ``source``
        defaults to the path.

    Returns
    -------
    SampleSet
    """
    df = read_table(path)
    kwargs.setdefault("source", os.fspath(path))
    return samples_from_frame(df, **kwargs)
