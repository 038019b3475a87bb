"""Tests of anisotropy.audit: the run record.

Outside references: the SHA-256 test vector for "abc" from FIPS 180-2,
appendix B.1 (ba7816bf...15ad, recalled from memory) and hashlib's sha256 of
a larger file; datetime (standard library) to parse the UTC stamp.
"""

import datetime as dt
import hashlib

from anisotropy.audit import file_sha256, run_record


def test_sha256_of_a_file_matches_the_fips_test_vector(tmp_path):
    p = tmp_path / "abc.csv"
    p.write_bytes(b"abc")
    assert file_sha256(p) == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    big = tmp_path / "big.csv"
    data = bytes(range(256)) * 20000          # more than one read block
    big.write_bytes(data)
    assert file_sha256(big) == hashlib.sha256(data).hexdigest()
    # a changed file gets a new hash (the cache is keyed by size and time)
    big.write_bytes(data + b"x")
    assert file_sha256(big) == hashlib.sha256(data + b"x").hexdigest()


def test_run_record_fields(tmp_path):
    from anisotropy import __version__

    p = tmp_path / "t.csv"
    p.write_text("x\n1\n")
    r = run_record(p, {"lag": 5.0, "kinds": ("spherical",), "scheduler": object()}, 7,
                   "anisotropy discover t.csv")
    assert set(r) >= {"utc", "version", "options", "command", "input_sha256", "seed"}
    when = dt.datetime.strptime(r["utc"], "%Y-%m-%dT%H:%M:%SZ")
    assert abs((dt.datetime.utcnow() - when).total_seconds()) < 120
    assert r["version"] == __version__ and r["seed"] == 7
    assert r["options"]["kinds"] == ["spherical"] and isinstance(r["options"]["scheduler"], str)
    assert r["input_sha256"] == hashlib.sha256(b"x\n1\n").hexdigest()
    r2 = run_record(None, {}, 0)
    assert r2["input_sha256"] is None and "memory" in r2["input_sha256_note"]
