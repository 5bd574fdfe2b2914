"""The TOML writer, read back by the standard library's tomllib (an independent parser)."""

import datetime as dt
import math
import os
import tomllib

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rcsim import loads
from rcsim.tomlwrite import dumps

from conftest import SCENARIOS

keys = st.text(min_size=0, max_size=8)
scalars = st.one_of(
    st.booleans(),
    st.integers(min_value=-2**63, max_value=2**63 - 1),
    st.floats(allow_nan=False),
    st.text(max_size=12),
    st.dates(),
    st.datetimes(),
    st.datetimes(timezones=st.just(dt.timezone(dt.timedelta(hours=2)))),
    st.times(),
)
values = st.recursive(scalars, lambda inner: st.one_of(
    st.lists(inner, max_size=4), st.dictionaries(keys, inner, max_size=4)), max_leaves=12)
documents = st.dictionaries(keys, values, max_size=5)


@settings(max_examples=300, deadline=None)
@given(documents)
def test_any_document_reads_back_identically(doc):
    assert tomllib.loads(dumps(doc)) == doc


@pytest.mark.parametrize("depth", [0, 1, 2, 5])
def test_header_depth_changes_layout_not_content(depth):
    doc = {"a": {"b": {"c": {"d": 1}}, "x": [{"y": 2.5}]}, "t": "s"}
    assert tomllib.loads(dumps(doc, header_depth=depth)) == doc


def test_special_floats_and_escapes():
    doc = {"inf": math.inf, "ninf": -math.inf, "tiny": 5e-324, "s": 'q"\\\n\t\x01é',
           "key with space": 1, "": 2, "0\n": {}, "a\n": [1]}
    back = tomllib.loads(dumps(doc))
    assert back == doc
    assert math.isnan(tomllib.loads(dumps({"n": math.nan}))["n"])


def test_refuses_what_toml_cannot_hold():
    with pytest.raises(TypeError, match="NoneType"):
        dumps({"a": None})
    with pytest.raises(TypeError, match="keys are strings"):
        dumps({1: 2})


def test_bundled_scenarios_round_trip():
    for name in sorted(os.listdir(SCENARIOS)):
        if not name.endswith(".toml"):
            continue
        sc = loads(open(os.path.join(SCENARIOS, name), encoding="utf-8").read(), name=name,
                   base_dir=SCENARIOS)
        again = loads(dumps(sc.data), name=name, base_dir=SCENARIOS)
        assert again.data == sc.data
        assert again.network.assemble().K.toarray().tolist() == \
            sc.network.assemble().K.toarray().tolist()
