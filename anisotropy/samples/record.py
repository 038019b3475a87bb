"""The checked sample set: coordinates, values, holes, and every sample left out or changed."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


@dataclass
class SampleSet:
    """Validated samples of one domain, ready for exploration and variography.

    Attributes
    ----------
    coords : ndarray, shape (n, 3)
        East, north, up in metres, relative to ``origin`` (float64).
    values : ndarray, shape (n,)
        Grades after the assay-code and duplicate policies.
    origin : ndarray, shape (3,)
        The local origin that was subtracted (minimum of each axis rounded
        down to a whole metre). Add it back for real-world coordinates.
    holes : ndarray of object, shape (n,), or None
        Hole or string identifiers as text, when a hole column was given.
        Samples with a blank identifier get a unique placeholder
        ``"<no hole id, data row k>"`` so that they never join another hole.
    domain : str or None
        The selected domain value, or None when all rows were used.
    source : str
        The file (or ``"<table>"``) the samples came from.
    columns : dict
        Role (``"x"``, ``"y"``, ``"z"``, ``"value"``, ``"domain"``,
        ``"hole"``) to the column name used.
    n_read : int
        Rows in the selected domain before any exclusion.
    dropped : dict
        Reason to number of samples left out. ``n_read == n + sum(dropped)``.
    changed : dict
        Reason to number of samples whose grade was altered.
    duplicates : dict
        ``{"locations": int, "samples": int, "policy": str}``: locations
        holding more than one sample, and the samples at those locations
        (counted before the policy was applied).
    warnings : list of str
        Plain sentences for the geologist.
    planar : bool
        True when the samples lie (nearly) on one plane, such as one bench.
    rows : ndarray of int, shape (n,)
        Data row number (1 = first row under the header) of each sample in
        the table; for averaged duplicates, the first row at the location.
    policies : dict
        The assay-code and duplicate policies that were applied.
    table : dict
        How the file was read (format, separator, decimal mark), if known.
    dropped_rows, changed_rows : dict
        Reason to the data row numbers of the samples left out or altered,
        so that a reviewer can find each one in the table.
    """

    coords: np.ndarray
    values: np.ndarray
    origin: np.ndarray
    holes: np.ndarray | None
    domain: str | None
    source: str
    columns: dict
    n_read: int
    dropped: dict = field(default_factory=dict)
    changed: dict = field(default_factory=dict)
    duplicates: dict = field(default_factory=lambda: {"locations": 0, "samples": 0,
                                                      "policy": "keep"})
    warnings: list = field(default_factory=list)
    planar: bool = False
    rows: np.ndarray | None = None
    policies: dict = field(default_factory=dict)
    table: dict = field(default_factory=dict)
    dropped_rows: dict = field(default_factory=dict)
    changed_rows: dict = field(default_factory=dict)

    @property
    def n(self) -> int:
        """Number of samples kept."""
        return int(len(self.values))

    @property
    def world_coords(self) -> np.ndarray:
        """Coordinates with the origin added back, shape (n, 3)."""
        return self.coords + self.origin

    def to_dict(self, include_data: bool = False) -> dict:
        """The intake record as plain JSON-ready Python types.

        Parameters
        ----------
        include_data : bool, default False
            Also include the coordinates, grades and hole ids of every sample
            (large for big tables).

        Returns
        -------
        dict
        """
        d = {
            "source": str(self.source),
            "domain": None if self.domain is None else str(self.domain),
            "columns": {str(k): (None if v is None else str(v)) for k, v in self.columns.items()},
            "n_read": int(self.n_read),
            "n_used": self.n,
            "dropped": {str(k): int(v) for k, v in self.dropped.items()},
            "changed": {str(k): int(v) for k, v in self.changed.items()},
            "dropped_rows": {str(k): [int(r) for r in v] for k, v in self.dropped_rows.items()},
            "changed_rows": {str(k): [int(r) for r in v] for k, v in self.changed_rows.items()},
            "duplicates": {"locations": int(self.duplicates.get("locations", 0)),
                           "samples": int(self.duplicates.get("samples", 0)),
                           "policy": str(self.duplicates.get("policy", "keep"))},
            "warnings": [str(w) for w in self.warnings],
            "planar": bool(self.planar),
            "origin": [float(v) for v in np.asarray(self.origin, dtype=float)],
            "policies": {str(k): str(v) for k, v in self.policies.items()},
            "table": {str(k): (None if v is None else str(v)) for k, v in self.table.items()},
        }
        if self.n:
            lo = self.coords.min(axis=0)
            hi = self.coords.max(axis=0)
            d["extent"] = {a: [float(lo[i]), float(hi[i])] for i, a in enumerate("xyz")}
        else:
            d["extent"] = None
        if include_data:
            d["coords"] = [[float(c) for c in row] for row in self.coords]
            d["values"] = [float(v) for v in self.values]
            d["holes"] = None if self.holes is None else [str(h) for h in self.holes]
            d["rows"] = None if self.rows is None else [int(r) for r in self.rows]
        return d

    def summary(self) -> str:
        """A few readable lines: what was read, left out, changed and why.

        Returns
        -------
        str
        """
        lines = []
        where = f" (domain {self.domain!r})" if self.domain is not None else ""
        lines.append(f"Samples: {self.n_read} rows read from {self.source}{where}; "
                     f"{self.n} used.")
        cols = ", ".join(f"{k}={v}" for k, v in self.columns.items() if v is not None)
        lines.append(f"  columns: {cols}")
        if self.dropped:
            lines.append("  left out:")
            for k, v in self.dropped.items():
                lines.append(f"    {v:>8d}  {k}")
        else:
            lines.append("  left out: none")
        if self.changed:
            lines.append("  changed:")
            for k, v in self.changed.items():
                lines.append(f"    {v:>8d}  {k}")
        else:
            lines.append("  changed: none")
        dup = self.duplicates
        lines.append(f"  duplicate locations: {dup.get('locations', 0)} "
                     f"({dup.get('samples', 0)} samples), policy {dup.get('policy')!r}")
        lines.append("  local origin (subtracted from x, y, z): "
                     + ", ".join(f"{v:.3f}" for v in self.origin))
        if self.planar:
            lines.append("  planar: yes (see warnings)")
        return "\n".join(lines)
