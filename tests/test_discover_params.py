"""Tests of ``DiscoverParams``: the settings of a run, checked once.

The keyword list is compared with :func:`inspect.signature` of
``anisotropy.discover`` (the Python standard library), so the record and the
function cannot drift apart.
"""

import dataclasses
import inspect

import pytest

import anisotropy
from anisotropy.discovery import DiscoverParams
from anisotropy.errors import InputError


def test_every_keyword_of_discover_is_a_field_and_defaults_agree():
    sig = inspect.signature(anisotropy.discover)
    kw = {n: p.default for n, p in sig.parameters.items()
          if p.kind == p.KEYWORD_ONLY}
    fields = {f.name: f for f in dataclasses.fields(DiscoverParams)}
    assert set(kw) == set(fields) - {"intake"}
    p = DiscoverParams()
    for name, default in kw.items():
        assert getattr(p, name) == default, name


def test_unknown_keywords_go_to_the_reader_and_kinds_become_a_tuple():
    p = DiscoverParams.from_kwargs(value="au", missing_codes=[-99], kinds=["spherical"])
    assert p.value == "au" and p.intake == {"missing_codes": [-99]}
    assert p.kinds == ("spherical",) and p.kind_list == ("spherical",)
    assert DiscoverParams().kind_list == ("spherical", "exponential")


def test_the_record_is_frozen():
    with pytest.raises(dataclasses.FrozenInstanceError):
        DiscoverParams().seed = 3


def test_derived_settings():
    assert DiscoverParams().n_structures is None
    assert DiscoverParams(structures=2).n_structures == 2
    assert DiscoverParams().min_pairs_bin == 10 and DiscoverParams().min_pairs_fan == 30
    assert DiscoverParams(min_pairs=5).min_pairs_bin == DiscoverParams(min_pairs=5).min_pairs_fan == 5
    assert DiscoverParams(bootstrap=None).n_bootstrap == 0


@pytest.mark.parametrize("kw, words", [
    ({"bootstrap_method": "jackknife"}, "bootstrap method"),
    ({"bootstrap_method": "model", "transform": "indicator", "bootstrap": 10}, "indicators"),
    ({"structures": 4}, "structures must be 1, 2, 3"),
    ({"structures": "two"}, "structures must be 1, 2, 3"),
    ({"estimator": "variogram"}, "unknown estimator"),
    ({"estimator": "pairwise_relative", "transform": "log"}, "--transform raw"),
])
def test_bad_settings_are_refused_before_any_work(kw, words):
    with pytest.raises(InputError, match=words):
        DiscoverParams.from_kwargs(**kw)
    # and by discover itself, before the data are read (the path does not exist)
    with pytest.raises(InputError, match=words):
        anisotropy.discover("/nonexistent/samples.csv", value="g", **kw)
