"""The rules every sample table is read by: codes, tolerances, reasons and column words.

The reasons are the keys of :attr:`~anisotropy.samples.record.SampleSet.dropped` and
:attr:`~anisotropy.samples.record.SampleSet.changed`; the column words are the names a
coordinate column is recognised by.
"""

from __future__ import annotations

import re


#: ``z=`` value (``--z none``) that reads a table without elevations as two-dimensional.
NO_ELEVATION = "none"
#: Grades at or below this are missing-value codes (-99, -999, ...).
MISSING_CODE_THRESHOLD = -90.0
#: Coordinates equal after rounding to this many metres share a location.
DUPLICATE_TOLERANCE = 1e-3
#: A set is planar if its rms distance from the best plane is at most this (m) ...
PLANAR_ABSOLUTE = 0.05
#: ... or at most this fraction of its rms spread along the longest axis.
PLANAR_RELATIVE = 0.005

_MISSING_TEXT = {"na", "n/a", "nan", "null", "none", "#n/a", "-", "--"}
_MAX_ROWS_SHOWN = 5

_POLICIES = {
    "missing_codes": ("missing", "keep"),
    "below_detection": ("half", "missing", "keep"),
    "duplicates": ("keep", "average", "drop"),
}

# reasons (keys of SampleSet.dropped / SampleSet.changed)
R_BLANK_COORD = "blank coordinate"
R_BLANK_VALUE = "blank value"
R_MISSING_TEXT = "missing-value text (NA, N/A, ...)"
R_MISSING_CODE = "missing-value code (<= -90)"
R_BDL_MISSING = "below-detection code (-DL), treated as missing"
R_BDL_HALF = "below-detection code (-DL) set to DL/2"
R_DUP_AVERAGED = "duplicate location, merged into the average"
R_DUP_AVERAGE_CHANGED = "duplicate location, grade set to the average"
R_DUP_DROPPED = "duplicate location, all but the first sample dropped"

_AXIS_WORDS = {
    "x": ("easting", ("x", "east", "easting", "eastings")),
    "y": ("northing", ("y", "north", "northing", "northings")),
    "z": ("elevation", ("z", "elev", "elevation", "rl", "elv")),
}
_DECORATIONS = ("mid", "midpoint", "centroid", "centre", "center", "coord", "coordinate")


def _norm(name) -> str:
    """Column name folded for matching: lower case, letters and digits only.

    A unit in brackets (``Easting (m)``, ``RL [m]``) or a trailing ``_m`` /
    `` m`` is removed first.
    """
    t = str(name).lower().strip()
    t = re.sub(r"[\(\[\{].*?[\)\]\}]", "", t)
    t = re.sub(r"[_\s.-]m$", "", t.strip())
    return re.sub(r"[^a-z0-9]", "", t)


def _axis_names(axis: str) -> set[str]:
    """All folded names accepted for one coordinate axis."""
    names = set()
    for base in _AXIS_WORDS[axis][1]:
        names.add(base)
        for d in _DECORATIONS:
            names.add(d + base)
            names.add(base + d)
    return names


_AXIS_NAMES = {a: _axis_names(a) for a in "xyz"}
