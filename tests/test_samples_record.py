"""Tests of anisotropy.samples.record: the sample set's record is JSON-ready.

Outside reference: the standard library's json.
"""

from __future__ import annotations

import json

from anisotropy.samples import SampleSet, samples_from_frame
from samples_helpers import DUPS


def test_to_dict_is_json_ready():
    s = samples_from_frame(DUPS, value="v", duplicates="average")
    d = s.to_dict()
    json.dumps(d, allow_nan=False)  # must not raise
    assert d["n_read"] == 7 and d["n_used"] == 4
    assert {"dropped", "changed", "duplicates", "warnings", "origin", "planar"} <= set(d)
    full = s.to_dict(include_data=True)
    json.dumps(full, allow_nan=False)
    assert len(full["values"]) == 4
    assert isinstance(s, SampleSet) and "used" in s.summary()
