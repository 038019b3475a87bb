"""Generate the invented Fenwright Hollow demo deposit.

Fenwright Hollow is an imaginary gold deposit made up for the demos and tests
of ``anisotropy``; it resembles no real mine, company or person. The script
lays out three mineralised domains with known (seeded) grade continuity in one
local grid, drills them with inclined holes on collar grids, composites the
holes to 2 m, covers the supergene blanket with a grade-control blast-hole
pattern on five benches, simulates the grades with an unconditional Gaussian
field that has each domain's true nested variogram model, maps the field
through a lognormal transform, sprinkles in the assay codes and duplicates
that real tables carry, and writes

``fenwright_composites.csv``
    ``hole_id, from_m, to_m, mid_x, mid_y, mid_z, au_gpt, domain``
``fenwright_blastholes.csv``
    ``blast_id, bench, x, y, z, au_gpt, domain``
``fenwright_collars.csv``
    ``hole_id, x, y, z, azimuth, dip, depth_m, target``
``truth.json``
    the generating models, frames, planes, pitches, grade transforms,
    layout parameters, seeds and the exact counts of every code.

Run ``python examples/make_demo.py`` to regenerate the bundled files in
``anisotropy/data/``; ``--out DIR``, ``--seed N`` and ``--scale S`` change the
destination, the seed and the size (``scale`` multiplies the mineralised
volume, and so roughly the number of samples).
"""

from __future__ import annotations

import argparse
import json
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

__all__ = ["make_demo", "demo_truth", "demo_layout", "DEFAULT_SEED", "DOMAINS", "main"]

DEFAULT_SEED = 20261201
"""Seed of the bundled files."""

ORIGIN = (412_000.0, 7_318_000.0, 0.0)
"""Easting, northing and RL of the local grid origin (invented projected coordinates)."""

COMPOSITE_LENGTH = 2.0
BELOW_DETECTION_CODE = -0.01
MISSING_CODE = -99.0
ASSAY_PRECISION = 0.01
MAX_HOLE_LENGTH = 800.0
EXACT_MAX = 6000
"""Domains with up to this many points are simulated exactly (Cholesky); larger ones spectrally."""

COMPOSITE_COLUMNS = ["hole_id", "from_m", "to_m", "mid_x", "mid_y", "mid_z", "au_gpt", "domain"]
BLASTHOLE_COLUMNS = ["blast_id", "bench", "x", "y", "z", "au_gpt", "domain"]
COLLAR_COLUMNS = ["hole_id", "x", "y", "z", "azimuth", "dip", "depth_m", "target"]

# How many of each code every domain's table carries (exact counts; see truth.json).
CODES = {
    "composites": {"below_detection": 6, "missing": 4, "blank": 3, "duplicated_locations": 2},
    "blastholes": {"below_detection": 5, "missing": 3, "blank": 3, "duplicated_locations": 2},
}

# The seeded truth. Planes are (dip direction, dip); pitch is the angle, inside
# the plane, from the strike direction (right-hand rule) to the major axis.
# Models are in normal-score units (total sill 1). Regions are given in local
# grid metres (centre) and half-extents along the region's own axes:
#   slab: (along strike, down dip, across the plane) of the domain's plane;
#   pipe: (along the major axis, along the semi-major axis, along the minor
#         axis), elliptical cross-section.
DOMAINS = {
    "vein_corridor": {
        "description": (
            "steep tabular quartz-vein corridor, about 30 m thick; grade is most "
            "continuous along a shoot direction plunging inside the vein plane"
        ),
        "plane": {"dip_direction": 135.0, "dip": 72.0},
        "pitch": 40.0,
        "model": {
            "nugget": 0.20,
            "structures": [{"kind": "spherical", "sill": 0.80, "ranges": [140.0, 70.0, 10.0]}],
        },
        "grade": {"mean_gpt": 3.2, "cv": 1.8},
        "region": {"shape": "slab", "centre": [250.0, 450.0, 440.0], "half_extents": [200.0, 150.0, 15.0]},
        "drilling": {"azimuth": 315.0, "dip": -62.0, "spacing": [35.0, 30.0]},
    },
    "blanket": {
        "description": (
            "gently dipping supergene blanket, about 40 m thick; long ranges in "
            "the horizontal, short vertical range"
        ),
        "plane": {"dip_direction": 200.0, "dip": 5.0},
        "pitch": 30.0,
        "model": {
            "nugget": 0.10,
            "structures": [{"kind": "exponential", "sill": 0.90, "ranges": [180.0, 110.0, 8.0]}],
        },
        "grade": {"mean_gpt": 1.1, "cv": 1.0},
        "region": {"shape": "slab", "centre": [450.0, 950.0, 555.0], "half_extents": [230.0, 190.0, 20.0]},
        "drilling": {"azimuth": 20.0, "dip": -67.0, "spacing": [40.0, 40.0]},
        "blastholes": {
            "pattern": [6.0, 5.0],
            "extent": [150.0, 120.0],
            "bench_height": 5.0,
            "bench_floors": [545.0, 550.0, 555.0, 560.0, 565.0],
        },
    },
    "shoot": {
        "description": (
            "plunging high-grade ore shoot in a shear dipping 60 degrees; two "
            "nested structures: a short one (tens of metres) and a long one along the plunge"
        ),
        "plane": {"dip_direction": 160.0, "dip": 60.0},
        "pitch": 45.0,
        "model": {
            "nugget": 0.15,
            "structures": [
                {"kind": "spherical", "sill": 0.35, "ranges": [25.0, 15.0, 8.0]},
                {"kind": "spherical", "sill": 0.50, "ranges": [160.0, 60.0, 25.0]},
            ],
        },
        "grade": {"mean_gpt": 5.5, "cv": 2.2},
        "region": {"shape": "pipe", "centre": [800.0, 400.0, 420.0], "half_extents": [200.0, 60.0, 30.0]},
        "drilling": {"azimuth": 340.0, "dip": -58.0, "spacing": [30.0, 25.0]},
    },
}

HOLE_JITTER = {"collar_m": 2.0, "azimuth_deg": 4.0, "dip_deg": 2.5}
BLASTHOLE_JITTER_M = 0.3


def _topography(x, y):
    """Surface RL (m) at local grid coordinates: a gentle invented relief about 610 m."""
    return 610.0 + 6.0 * np.sin(np.asarray(x) / 170.0) + 4.0 * np.cos(np.asarray(y) / 230.0)


# --------------------------------------------------------------------------- frames


def _geometry():
    from anisotropy import geometry

    return geometry


def _domain_frame(spec):
    """True continuity frame (columns major, semi-major, minor) from plane and pitch."""
    g = _geometry()
    dd, dip = spec["plane"]["dip_direction"], spec["plane"]["dip"]
    major = np.asarray(g.line_from_pitch(dd, dip, spec["pitch"]), float)
    minor = np.asarray(g.plane_to_pole(dd, dip), float)
    return np.asarray(g.canonical_frame(g.frame_from_axes(major, minor)), float)


def _region_axes(spec):
    """Axes of the region box: slab = strike, down-dip, pole; pipe = the continuity frame."""
    g = _geometry()
    if spec["region"]["shape"] == "pipe":
        return _domain_frame(spec)
    dd, dip = spec["plane"]["dip_direction"], spec["plane"]["dip"]
    strike = np.asarray(g.line_to_vector(g.strike_of(dd), 0.0), float)
    down = np.asarray(g.line_to_vector(dd, dip), float)
    pole = np.cross(strike, down)
    return np.column_stack([strike, down, pole])


@dataclass
class _Region:
    name: str
    shape: str
    centre: np.ndarray
    axes: np.ndarray
    half: np.ndarray

    def contains(self, p):
        q = (np.asarray(p, float) - self.centre) @ self.axes
        q = q / self.half
        if self.shape == "slab":
            return np.all(np.abs(q) <= 1.0, axis=-1)
        return (np.abs(q[..., 0]) <= 1.0) & (q[..., 1] ** 2 + q[..., 2] ** 2 <= 1.0)


def _scaled_half_extents(spec, scale):
    half = np.array(spec["region"]["half_extents"], float)
    if spec["region"]["shape"] == "slab":
        half[:2] *= np.sqrt(scale)
    else:
        half[0] *= scale
    return half


def _regions(scale):
    return [
        _Region(
            name,
            spec["region"]["shape"],
            np.array(spec["region"]["centre"], float),
            _region_axes(spec),
            _scaled_half_extents(spec, scale),
        )
        for name, spec in DOMAINS.items()
    ]


def _label(points, regions):
    """Domain name of each point ('' outside every region); regions do not overlap."""
    labels = np.full(len(points), "", dtype=object)
    for region in regions:
        inside = region.contains(points) & (labels == "")
        labels[inside] = region.name
    return labels


# --------------------------------------------------------------------------- layout


def _check_args(seed, scale):
    from anisotropy.errors import InputError

    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise InputError(f"make_demo: seed must be a non-negative integer, got {seed!r}.")
    if not np.isfinite(scale) or not (0.01 <= float(scale) <= 4.0):
        raise InputError(
            f"make_demo: scale must lie between 0.01 and 4 (1 = the bundled size), got {scale!r}."
        )


def _streams(seed):
    """Independent generators for layout, each domain's field, and the codes."""
    root = np.random.SeedSequence(int(seed))
    layout, fields, codes = root.spawn(3)
    field_seeds = {
        name: int(s.generate_state(1, dtype=np.uint32)[0])
        for name, s in zip(DOMAINS, fields.spawn(len(DOMAINS)))
    }
    return np.random.default_rng(layout), field_seeds, np.random.default_rng(codes)


def demo_layout(*, seed=DEFAULT_SEED, scale=1.0):
    """Drill holes, composites and blast holes of the demo (no grades).

    Parameters
    ----------
    seed : int
        Master seed; the layout uses its own stream spawned from it.
    scale : float
        Multiplies the mineralised volume of each domain (1 = bundled size).

    Returns
    -------
    dict
        ``collars`` (DataFrame, local coordinates), ``composites`` (DataFrame
        with local ``mid_x/mid_y/mid_z``), ``blastholes`` (DataFrame, local
        coordinates), ``excluded`` (counts of drilled items that fell outside
        every domain) and ``field_seeds`` (seed of each domain's field).
    """
    _check_args(seed, scale)
    g = _geometry()
    rng, field_seeds, _ = _streams(seed)
    regions = _regions(scale)
    collars, composites, drilled = _drill(regions, g, rng)
    blastholes, n_blast_outside = _blast(regions, rng, scale)
    _check_sizes(composites, blastholes, scale)
    return {
        "collars": collars,
        "composites": composites,
        "blastholes": blastholes,
        "excluded": {
            "collar_candidates_not_drilled": drilled["candidates"] - drilled["holes"],
            "composites_outside_domains": drilled["composites_outside"],
            "blastholes_outside_domain": n_blast_outside,
        },
        "field_seeds": field_seeds,
    }


def _collar_grid(region, drill, g):
    """Centre, along/across unit vectors, spacings and grid indices of a domain's collars."""
    az0, dip0 = drill["azimuth"], drill["dip"]
    s_along, s_across = drill["spacing"]
    u0 = np.asarray(g.line_to_vector(az0, -dip0), float)
    # collar-grid centre: back from the region centre along the hole to the surface
    depth = _topography(*region.centre[:2]) - region.centre[2]
    back = depth / np.tan(np.radians(-dip0))
    centre_xy = region.centre[:2] - back * u0[:2] / np.hypot(*u0[:2])
    across = u0[:2] / np.hypot(*u0[:2])
    along = np.array([across[1], -across[0]])
    reach = float(np.linalg.norm(region.half)) + 60.0
    ia = np.arange(-np.ceil(reach / s_along), np.ceil(reach / s_along) + 1)
    ic = np.arange(-np.ceil(reach / s_across), np.ceil(reach / s_across) + 1)
    return centre_xy, along, across, (s_along, s_across), (ia, ic)


def _drill(regions, g, rng):
    """Every domain's holes, in domain order: collars, composites and the counts."""
    collar_rows, composite_blocks = [], []
    counts = {"candidates": 0, "holes": 0, "composites_outside": 0}
    for region, (name, spec) in zip(regions, DOMAINS.items()):
        drill = spec["drilling"]
        centre_xy, along, across, (s_along, s_across), (ia, ic) = _collar_grid(region, drill, g)
        for c in ic:
            for a in ia:
                counts["candidates"] += 1
                xy = centre_xy + a * s_along * along + c * s_across * across
                hole = _drill_hole(xy, drill, name, regions, g, rng, counts)
                if hole is not None:
                    collar_rows.append(hole[0])
                    composite_blocks.append(hole[1])
    collars = pd.DataFrame(collar_rows, columns=COLLAR_COLUMNS)
    composites = (
        pd.concat(composite_blocks, ignore_index=True)
        if composite_blocks
        else pd.DataFrame(columns=["hole_id", "from_m", "to_m", "mid_x", "mid_y", "mid_z", "domain"])
    )
    return collars, composites, counts


def _drill_hole(xy, drill, name, regions, g, rng, counts):
    """One jittered collar: its row and composites, or None when it never reaches its domain."""
    jit = rng.uniform(-1.0, 1.0, size=4)
    xy = np.round(xy + HOLE_JITTER["collar_m"] * jit[:2], 2)
    z = round(float(_topography(*xy)), 2)
    az = round(float((drill["azimuth"] + HOLE_JITTER["azimuth_deg"] * jit[2]) % 360.0), 2)
    dip = round(float(drill["dip"] + HOLE_JITTER["dip_deg"] * jit[3]), 2)
    collar = np.array([xy[0], xy[1], z])
    u = np.asarray(g.line_to_vector(az, -dip), float)
    frm = np.arange(0.0, MAX_HOLE_LENGTH, COMPOSITE_LENGTH)
    mids = collar + np.outer(frm + COMPOSITE_LENGTH / 2.0, u)
    labels = _label(mids, regions)
    hit = labels != ""
    if not np.any(labels == name):
        return None  # this collar never reaches its target: not drilled
    counts["holes"] += 1
    hole_id = f"FH{counts['holes']:04d}"
    last_to = frm[hit][-1] + COMPOSITE_LENGTH
    depth_m = float(last_to + rng.integers(10, 31))
    in_hole = frm + COMPOSITE_LENGTH <= depth_m
    counts["composites_outside"] += int(np.count_nonzero(in_hole & ~hit))
    row = {"hole_id": hole_id, "x": xy[0], "y": xy[1], "z": z, "azimuth": az, "dip": dip,
           "depth_m": depth_m, "target": name}
    block = pd.DataFrame({"hole_id": hole_id, "from_m": frm[hit],
                          "to_m": frm[hit] + COMPOSITE_LENGTH, "mid_x": mids[hit, 0],
                          "mid_y": mids[hit, 1], "mid_z": mids[hit, 2],
                          "domain": labels[hit].astype(str)})
    return row, block


def _blast(regions, rng, scale):
    """Grade-control blast holes over the domains that have them (the blanket)."""
    blocks, n_blast_outside = [], 0
    for region, (name, spec) in zip(regions, DOMAINS.items()):
        bh = spec.get("blastholes")
        if bh is None:
            continue
        sx, sy = bh["pattern"]
        ex, ey = np.array(bh["extent"], float) * np.sqrt(scale)
        xs = region.centre[0] + np.arange(-ex / 2.0, ex / 2.0 + 1e-9, sx)
        ys = region.centre[1] + np.arange(-ey / 2.0, ey / 2.0 + 1e-9, sy)
        gx, gy = np.meshgrid(xs, ys, indexing="xy")
        for floor in bh["bench_floors"]:
            jit = rng.uniform(-BLASTHOLE_JITTER_M, BLASTHOLE_JITTER_M, size=(gx.size, 2))
            x = np.round(gx.ravel() + jit[:, 0], 2)
            y = np.round(gy.ravel() + jit[:, 1], 2)
            z = np.full(x.size, floor + bh["bench_height"] / 2.0)
            inside = region.contains(np.column_stack([x, y, z]))
            n_blast_outside += int(np.count_nonzero(~inside))
            bench = int(round(floor))
            blocks.append(pd.DataFrame({
                "blast_id": [f"GC{bench}-{k + 1:04d}" for k in range(int(inside.sum()))],
                "bench": bench, "x": x[inside], "y": y[inside], "z": z[inside],
                "domain": name}))
    blastholes = (pd.concat(blocks, ignore_index=True) if blocks
                  else pd.DataFrame(columns=BLASTHOLE_COLUMNS))
    return blastholes, n_blast_outside


def _check_sizes(composites, blastholes, scale):
    """Every domain needs enough rows to carry its codes; say so if the scale is too small."""
    from anisotropy.errors import InputError

    for table, df, names in (
        ("composites", composites, list(DOMAINS)),
        ("blastholes", blastholes, [n for n, s in DOMAINS.items() if "blastholes" in s]),
    ):
        need = 2 * sum(CODES[table].values())
        for name in names:
            n = int(np.count_nonzero(df["domain"].to_numpy() == name)) if len(df) else 0
            if n < need:
                raise InputError(
                    f"make_demo: at scale {scale:g} the {name} domain gets only {n} {table} "
                    f"(at least {need} are needed to carry its assay codes); use a larger --scale "
                    "(0.1 or more is safe)."
                )


# --------------------------------------------------------------------------- grades


def _lognormal_parameters(mean, cv):
    sigma = float(np.sqrt(np.log1p(cv * cv)))
    mu = float(np.log(mean) - 0.5 * sigma * sigma)
    return mu, sigma


def _nested_model(spec):
    from anisotropy.models import NestedModel, Structure

    frame = _domain_frame(spec)
    structures = [
        Structure(s["kind"], float(s["sill"]), ranges=tuple(float(r) for r in s["ranges"]))
        for s in spec["model"]["structures"]
    ]
    return NestedModel(float(spec["model"]["nugget"]), structures, frame)


def _simulation_method(n_points):
    return "cholesky" if n_points <= EXACT_MAX else "spectral"


def _simulate_grades(layout):
    """Unconditional Gaussian field per domain, on all its points at once, to g/t."""
    from anisotropy.simulate import simulate_field

    comp, blast = layout["composites"], layout["blastholes"]
    au_comp = np.full(len(comp), np.nan)
    au_blast = np.full(len(blast), np.nan)
    for name, spec in DOMAINS.items():
        ic = np.flatnonzero(comp["domain"].to_numpy() == name)
        ib = np.flatnonzero(blast["domain"].to_numpy() == name) if len(blast) else np.array([], int)
        pts = np.vstack(
            [
                comp[["mid_x", "mid_y", "mid_z"]].to_numpy(float)[ic],
                blast[["x", "y", "z"]].to_numpy(float)[ib] if len(ib) else np.empty((0, 3)),
            ]
        )
        y = np.asarray(
            simulate_field(pts, _nested_model(spec), n_realisations=1, seed=layout["field_seeds"][name],
                           method=_simulation_method(len(pts))),
            float,
        ).reshape(-1)
        mu, sigma = _lognormal_parameters(spec["grade"]["mean_gpt"], spec["grade"]["cv"])
        au = np.round(np.exp(mu + sigma * y), 2)
        au = np.maximum(au, ASSAY_PRECISION)  # reported to 0.01 g/t
        au_comp[ic] = au[: len(ic)]
        au_blast[ib] = au[len(ic):]
    return au_comp, au_blast


def _apply_codes(df, au, counts, rng, *, id_column, duplicate_suffix):
    """Assay codes and duplicates, per domain, in exactly the stated counts.

    The lowest assays of each domain are reported as below detection (-0.01);
    others, drawn at random, as not assayed (-99) or left blank; a couple of
    rows are duplicated at the same location with a re-assay grade.
    """
    df = df.copy()
    df["au_gpt"] = au
    code = np.full(len(df), "", dtype=object)
    dup_rows = []
    for name in DOMAINS:
        idx = np.flatnonzero(df["domain"].to_numpy() == name)
        if idx.size == 0:
            continue
        order = idx[np.argsort(au[idx], kind="stable")]
        bdl = order[: counts["below_detection"]]
        code[bdl] = "bdl"
        rest = rng.permutation(np.setdiff1d(idx, bdl))
        k = 0
        for kind in ("missing", "blank"):
            code[rest[k : k + counts[kind]]] = kind
            k += counts[kind]
        dup_rows.extend(int(i) for i in np.sort(rest[k : k + counts["duplicated_locations"]]))
    df.loc[code == "bdl", "au_gpt"] = BELOW_DETECTION_CODE
    df.loc[code == "missing", "au_gpt"] = MISSING_CODE
    df.loc[code == "blank", "au_gpt"] = np.nan
    # duplicated locations: the same interval or point again, re-assayed (about 15 % precision)
    pieces, last = [], 0
    for i in dup_rows:
        pieces.append(df.iloc[last : i + 1])
        dup = df.iloc[[i]].copy()
        dup["au_gpt"] = max(round(float(df["au_gpt"].iat[i]) * float(np.exp(rng.normal(0.0, 0.15))), 2), 0.01)
        if duplicate_suffix:
            dup[id_column] = dup[id_column] + duplicate_suffix
        pieces.append(dup)
        last = i + 1
    pieces.append(df.iloc[last:])
    return pd.concat(pieces, ignore_index=True)


# --------------------------------------------------------------------------- writing


def _fmt_au(v):
    if not np.isfinite(v):
        return ""
    if v == MISSING_CODE:
        return "-99"
    if v == BELOW_DETECTION_CODE:
        return "-0.01"
    return f"{v:.2f}"


def _to_world(df, cols):
    out = df.copy()
    for c, o in zip(cols, ORIGIN):
        out[c] = out[c].to_numpy(float) + o
    return out


def _write_csv(df, columns, path, formats):
    out = pd.DataFrame(index=df.index)
    for c in columns:
        f = formats.get(c)
        out[c] = df[c].map(f) if f is not None else df[c].astype(str)
    out.to_csv(path, index=False, lineterminator="\n")


def _r(x, nd=6):
    """Plain rounded float for the JSON (stable across machines)."""
    return float(round(float(x), nd)) + 0.0


def _truth_domain(name, spec, layout, scale):
    """The true model and everything that made one domain's samples, for truth.json."""
    out = {"description": spec["description"]}
    out.update(_truth_geometry(spec))
    out.update(_truth_making(spec, scale))
    out.update(_truth_counts(name, layout))
    out["field_seed"] = int(layout["field_seeds"][name])
    out["codes"] = {"composites": dict(CODES["composites"])}
    if "blastholes" in spec:
        bh = spec["blastholes"]
        out["blastholes"] = {
            "pattern_m": [_r(v) for v in bh["pattern"]],
            "extent_m": [_r(v * np.sqrt(scale)) for v in bh["extent"]],
            "bench_height_m": _r(bh["bench_height"]),
            "bench_floors": [int(v) for v in bh["bench_floors"]],
            "z": "mid-bench RL",
            "jitter_m": _r(BLASTHOLE_JITTER_M),
        }
        out["codes"]["blastholes"] = dict(CODES["blastholes"])
    return {k: out[k] for k in _TRUTH_ORDER if k in out}


#: The order of a domain's sections in truth.json (as the file has always had them).
_TRUTH_ORDER = ("description", "model", "axes", "rotation", "plane", "grade_transform", "region",
                "drilling", "field_seed", "simulation", "counts", "codes", "blastholes")


def _truth_geometry(spec):
    """The model, its axes, rotation and plane (as discovery.json writes them)."""
    g = _geometry()
    R = _domain_frame(spec)
    dd, dip = spec["plane"]["dip_direction"], spec["plane"]["dip"]
    # as in discovery.json: axes.<axis>.range is that of the longest-range structure
    longest = max(spec["model"]["structures"], key=lambda s: s["ranges"][0])
    axes = {}
    for k, axis in enumerate(("major", "semi_major", "minor")):
        t, p = g.vector_to_line(R[:, k])
        axes[axis] = {"vector": [_r(v, 12) for v in R[:, k]], "trend": _r(t, 3),
                      "plunge": _r(p, 3), "range": _r(longest["ranges"][k])}
    az, pl, rot = g.angles_from_frame(R)
    pole_dd, pole_dip = g.pole_to_plane(R[:, 2])
    structures = [
        {
            "type": s["kind"],
            "sill": _r(s["sill"]),
            "ranges": {"major": _r(s["ranges"][0]), "semi_major": _r(s["ranges"][1]), "minor": _r(s["ranges"][2])},
        }
        for s in spec["model"]["structures"]
    ]
    return {
        "model": {
            "units": "normal score",
            "nugget": _r(spec["model"]["nugget"]),
            "structures": structures,
            "total_sill": _r(spec["model"]["nugget"] + sum(s["sill"] for s in spec["model"]["structures"])),
            "range_convention": "spherical: range where the sill is reached; exponential/gaussian: practical range (95 % of sill)",
            "frame": [[_r(v, 12) for v in row] for row in R],
        },
        "axes": axes,
        "rotation": {
            "matrix": [[_r(v, 12) for v in row] for row in R],
            "angles": {"azimuth": _r(az, 3), "plunge": _r(pl, 3), "rotation": _r(rot, 3)},
        },
        "plane": {
            "dip_direction": _r(dd, 3),
            "dip": _r(dip, 3),
            "strike": _r(g.strike_of(dd), 3),
            "pitch": _r(g.pitch_of(R[:, 0], dd, dip), 3),
            "check_from_pole": {"dip_direction": _r(pole_dd, 3), "dip": _r(pole_dip, 3)},
        },
    }


def _truth_making(spec, scale):
    """The grade transform, the region and the drilling that made the samples."""
    mu, sigma = _lognormal_parameters(spec["grade"]["mean_gpt"], spec["grade"]["cv"])
    return {
        "grade_transform": {
            "kind": "lognormal",
            "formula": "au_gpt = exp(mu + sigma * y), y the normal-score Gaussian field; rounded to 0.01 g/t, at least 0.01",
            "mean_gpt": _r(spec["grade"]["mean_gpt"]),
            "cv": _r(spec["grade"]["cv"]),
            "mu": _r(mu),
            "sigma": _r(sigma),
        },
        "region": {
            "shape": spec["region"]["shape"],
            "centre_local": [_r(v) for v in spec["region"]["centre"]],
            "centre_world": [_r(v + o) for v, o in zip(spec["region"]["centre"], ORIGIN)],
            "half_extents": [_r(v) for v in _scaled_half_extents(spec, scale)],
            "axes": "slab: along strike, down dip, across; pipe: major, semi-major, minor (elliptical section)",
        },
        "drilling": {
            "azimuth": _r(spec["drilling"]["azimuth"]),
            "dip": _r(spec["drilling"]["dip"]),
            "collar_spacing_m": [_r(v) for v in spec["drilling"]["spacing"]],
            "jitter": {k: _r(v) for k, v in HOLE_JITTER.items()},
        },
    }


def _truth_counts(name, layout):
    """How the domain's points were simulated, and how many holes, composites, blast holes."""
    comp = layout["composites"]
    blast = layout["blastholes"]
    n_comp = int(np.count_nonzero(comp["domain"].to_numpy() == name))
    n_blast = int(np.count_nonzero(blast["domain"].to_numpy() == name)) if len(blast) else 0
    holes = sorted(set(comp.loc[comp["domain"] == name, "hole_id"]))
    return {
        "simulation": {
            "function": "anisotropy.simulate.simulate_field",
            "method": _simulation_method(n_comp + n_blast),
            "points": n_comp + n_blast,
            "conditioning": "none (unconditional; composites and blast holes of the domain simulated together)",
        },
        "counts": {
            "holes": len(holes),
            "composites": n_comp + CODES["composites"]["duplicated_locations"],
            "blastholes": n_blast + (CODES["blastholes"]["duplicated_locations"] if n_blast else 0),
        },
    }


def _truth_from_layout(layout, seed, scale):
    return {
        "note": (
            "Fenwright Hollow is an invented deposit, made up for the demos and tests of "
            "anisotropy; it resembles no real mine, company or person. Coordinates are an "
            "invented projected grid."
        ),
        "schema": "anisotropy.demo_truth/1",
        "generator": "examples/make_demo.py",
        "seed": int(seed),
        "scale": _r(scale),
        "origin": [_r(v) for v in ORIGIN],
        "conventions": (
            "x east, y north, z up (RL), metres; trend clockwise from north, plunge below "
            "horizontal; dip direction/dip; strike = dip direction - 90; pitch from strike to "
            "the major axis inside the plane; rotation matrix columns major, semi-major, minor "
            "(anisotropy.geometry)"
        ),
        "codes": {
            "below_detection": BELOW_DETECTION_CODE,
            "missing": MISSING_CODE,
            "blank": "empty cell",
            "duplicated_locations": "same interval or point again with a re-assay grade",
            "rule": "the lowest assays of each domain are coded below detection; missing, blank and duplicated rows are drawn at random",
        },
        "composite_length_m": _r(COMPOSITE_LENGTH),
        "excluded": {k: int(v) for k, v in layout["excluded"].items()},
        "files": {
            "composites": {"name": "fenwright_composites.csv", "columns": COMPOSITE_COLUMNS,
                           "rows": int(len(layout["composites"]) + len(DOMAINS) * CODES["composites"]["duplicated_locations"])},
            "blastholes": {"name": "fenwright_blastholes.csv", "columns": BLASTHOLE_COLUMNS,
                           "rows": int(len(layout["blastholes"]) + sum(CODES["blastholes"]["duplicated_locations"] for s in DOMAINS.values() if "blastholes" in s))},
            "collars": {"name": "fenwright_collars.csv", "columns": COLLAR_COLUMNS, "rows": int(len(layout["collars"]))},
            "truth": {"name": "truth.json"},
        },
        "domains": {name: _truth_domain(name, spec, layout, scale) for name, spec in DOMAINS.items()},
    }


def demo_truth(*, seed=DEFAULT_SEED, scale=1.0):
    """The ``truth.json`` content the generator writes for this seed and scale.

    Computed from the layout alone (no simulation), so it is cheap.

    Returns
    -------
    dict
        JSON-ready truth record.
    """
    truth = _truth_from_layout(demo_layout(seed=seed, scale=scale), seed, scale)
    return json.loads(json.dumps(truth))


def make_demo(out_dir, *, seed=DEFAULT_SEED, scale=1.0):
    """Generate the Fenwright Hollow demo files into ``out_dir``.

    Parameters
    ----------
    out_dir : str or Path
        Destination directory (created if needed).
    seed : int
        Master seed; the same seed and scale give byte-identical files.
    scale : float
        Multiplies the mineralised volume (1 = the bundled size).

    Returns
    -------
    dict
        Paths of the written files keyed ``composites``, ``blastholes``,
        ``collars``, ``truth``.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    layout = demo_layout(seed=seed, scale=scale)
    _, _, code_rng = _streams(seed)
    au_comp, au_blast = _simulate_grades(layout)
    comp = _apply_codes(layout["composites"], au_comp, CODES["composites"], code_rng,
                        id_column="hole_id", duplicate_suffix="")
    blast = _apply_codes(layout["blastholes"], au_blast, CODES["blastholes"], code_rng,
                         id_column="blast_id", duplicate_suffix="D")
    comp = _to_world(comp, ["mid_x", "mid_y", "mid_z"])
    blast = _to_world(blast, ["x", "y", "z"])
    collars = _to_world(layout["collars"], ["x", "y", "z"])
    f2 = "{:.2f}".format
    f1 = "{:.1f}".format
    paths = {
        "composites": out / "fenwright_composites.csv",
        "blastholes": out / "fenwright_blastholes.csv",
        "collars": out / "fenwright_collars.csv",
        "truth": out / "truth.json",
    }
    _write_csv(comp, COMPOSITE_COLUMNS, paths["composites"],
               {"from_m": f1, "to_m": f1, "mid_x": f2, "mid_y": f2, "mid_z": f2, "au_gpt": _fmt_au})
    _write_csv(blast, BLASTHOLE_COLUMNS, paths["blastholes"],
               {"bench": str, "x": f2, "y": f2, "z": f2, "au_gpt": _fmt_au})
    _write_csv(collars, COLLAR_COLUMNS, paths["collars"],
               {"x": f2, "y": f2, "z": f2, "azimuth": f2, "dip": f2, "depth_m": f1})
    truth = _truth_from_layout(layout, seed, scale)
    paths["truth"].write_text(json.dumps(truth, indent=2) + "\n", encoding="utf-8")
    return {k: str(v) for k, v in paths.items()}


def main(argv=None):
    """Command line: ``python examples/make_demo.py [--out DIR] [--seed N] [--scale S]``."""
    default_out = Path(__file__).resolve().parent.parent / "anisotropy" / "data"
    p = argparse.ArgumentParser(description="Generate the invented Fenwright Hollow demo data.")
    p.add_argument("--out", default=str(default_out), help="destination directory (default: anisotropy/data)")
    p.add_argument("--seed", type=int, default=DEFAULT_SEED, help=f"master seed (default {DEFAULT_SEED})")
    p.add_argument("--scale", type=float, default=1.0, help="size multiplier of the mineralised volume (default 1)")
    args = p.parse_args(argv)
    from anisotropy.errors import InputError

    try:
        paths = make_demo(args.out, seed=args.seed, scale=args.scale)
    except InputError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    for key, path in paths.items():
        size = Path(path).stat().st_size
        print(f"{key:11s} {path}  ({size / 1024:.0f} KiB)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
