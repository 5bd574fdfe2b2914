"""The TOML writer (tomlkit), read back by the standard library's tomllib (an independent parser):
new documents from data, and the user's own text edited to hold new values with its comments and
layout kept."""

import datetime as dt
import math
import os
import re
import tomllib

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rcsim import loads
from rcsim.tomlwrite import dumps, same, update

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


@pytest.mark.slow
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


# -- the user's own text, edited ------------------------------------------------------------
# comments everywhere, dotted keys, tables out of order, a super-table, literal strings, an
# inline table spread over lines in an array, odd spacing and Windows line ends in one place
ODD = """\
# cold box, first guess   (a comment before anything)
title = 'box'        # literal string

[nodes.payload]   # the load
capacity   =   "8 kJ/K"    # from the data sheet
initial = 5.0

[links]
skin.between = ["payload", "room"]
skin.resistance = 0.5  # K/W, a guess

  [links.wall]     # indented header
  between = [ "payload", "room" ]
  parts = [
    { conduction = { k = 0.03, thickness = "50 mm" } },   # foam
    # a comment inside the array
    { contact = { resistance = "0.01 m^2*K/W" } },
  ]
  area = "1.2 m^2"\r
[nodes.other]   # a table after [links]: out of order
capacity = 1200
initial = 20
"""

# (key path as tokens, new value, old value text, new value text)
CHANGES = [
    (["nodes", "payload", "capacity"], "8.43 kJ/K", '"8 kJ/K"', '"8.43 kJ/K"'),
    (["links", "skin", "resistance"], 0.61, "0.5", "0.61"),
    (["links", "wall", "parts", 0, "conduction", "thickness"], "55.5 mm", '"50 mm"', '"55.5 mm"'),
    (["nodes", "other", "initial"], 18.25, "20", "18.25"),
    (["title"], "box 2", "'box'", "'box 2'"),
]


def _set(data, tokens, value):
    for t in tokens[:-1]:
        data = data[t]
    data[tokens[-1]] = value


def test_edit_keeps_comments_and_layout_and_changes_only_the_values():
    data = tomllib.loads(ODD)
    for tokens, value, _, _ in CHANGES:
        _set(data, tokens, value)
    out = update(ODD, data)
    assert tomllib.loads(out) == data  # the values read back (tomllib, an independent parser)
    old_lines, new_lines = ODD.split("\n"), out.split("\n")
    assert len(old_lines) == len(new_lines)
    changed = 0
    for old, new in zip(old_lines, new_lines):
        if old == new:
            continue
        # a changed line differs in its value only: comment, key and spacing are the same
        hits = [(a, b) for _, _, a, b in CHANGES if a in old and old.replace(a, b, 1) == new]
        assert hits, (old, new)
        changed += 1
    assert changed == len(CHANGES)
    assert "# a comment inside the array" in out and "\r\n" in out


def test_edit_without_changes_returns_the_text_as_it_was():
    assert update(ODD, tomllib.loads(ODD)) == ODD


def test_edit_adds_and_removes_keys_and_reads_back():
    data = tomllib.loads(ODD)
    del data["nodes"]["other"]["initial"]
    data["nodes"]["payload"]["mass"] = "6 kg"
    data["links"]["wall"]["parts"].append({"film": {"h": 8}})
    out = update(ODD, data)
    assert tomllib.loads(out) == data
    assert "# from the data sheet" in out and "# foam" in out


def test_edit_refuses_text_that_is_not_toml():
    with pytest.raises(ValueError, match="not TOML"):
        update("a = = 1", {"a": 1})


@pytest.mark.slow
@settings(max_examples=150, deadline=None)
@given(documents, st.data())
def test_any_document_edited_reads_back_as_the_new_data(doc, draw):
    # start from a generated document, replace some values (any type), edit the text
    text = dumps(doc)
    new = tomllib.loads(text)
    leaves = []

    def walk(node, path):
        items = node.items() if isinstance(node, dict) else enumerate(node)
        for k, v in items:
            if isinstance(v, (dict, list)) and v:
                walk(v, path + [k])
            else:
                leaves.append(path + [k])

    walk(new, [])
    for tokens in leaves:
        if draw.draw(st.booleans()):
            _set(new, tokens, draw.draw(scalars))
    assert tomllib.loads(update(text, new)) == new


NUMBER = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")


def test_bundled_scenarios_keep_their_text_when_every_quantity_changes():
    # every number of every bundled scenario changed (plain numbers and numbers with units):
    # each line reads the same once numbers are blanked out, so comments, keys, units, spacing
    # and order are kept, and the file reads back as the new data
    for name in sorted(os.listdir(SCENARIOS)):
        if not name.endswith(".toml"):
            continue
        text = open(os.path.join(SCENARIOS, name), encoding="utf-8").read()
        data = tomllib.loads(text)
        count = 0

        def bump(node):
            nonlocal count
            items = list(node.items()) if isinstance(node, dict) else list(enumerate(node))
            for k, v in items:
                if isinstance(v, (dict, list)):
                    bump(v)
                elif isinstance(v, float) or (isinstance(v, int) and not isinstance(v, bool)):
                    node[k] = v * 1.5 + 0.25
                    count += 1
                elif isinstance(v, str) and re.fullmatch(r"\s*" + NUMBER.pattern + r"\s*[^\d\s].*", v):
                    node[k] = NUMBER.sub(lambda m: repr(float(m.group()) * 1.5 + 0.25), v, 1)
                    count += 1

        bump(data)
        out = update(text, data)
        assert tomllib.loads(out) == data, name
        old_lines, new_lines = text.splitlines(), out.splitlines()
        assert len(old_lines) == len(new_lines), name
        for old, new in zip(old_lines, new_lines):
            assert NUMBER.sub("N", old) == NUMBER.sub("N", new), (name, old, new)
        assert count > 3 and out != text, name


def test_same_tells_toml_types_apart():
    # Python calls 1 == 1.0 == True; TOML writes them differently
    assert not same(1, 1.0) and not same(True, 1) and not same(0.0, -0.0)
    assert same(math.nan, math.nan) and same({"a": [1, "x"]}, {"a": [1, "x"]})
    assert not same(dt.date(2024, 1, 1), dt.datetime(2024, 1, 1))


# -- a scenario written elsewhere: the files it names -----------------------------------------
def test_files_a_written_scenario_names_stay_in_its_folder(tmp_path):
    from rcsim.tomlwrite import place_files

    src, out = tmp_path / "src", tmp_path / "out"
    (src / "data").mkdir(parents=True)
    out.mkdir()
    (src / "a.csv").write_text("time,x\n0,1\n")
    (src / "data" / "a.csv").write_text("time,x\n0,2\n")      # another file of the same name
    (src / "w.csv").write_text("time,T\n0,20\n")
    (out / "w.csv").write_text("time,T\n0,20\n")               # an identical file already there
    data = {"boundaries": {"x": {"temperature": {"csv": {"file": "a.csv", "column": "x"}}}},
            "links": {"l": {"parts": [{"csv": {"file": "data/a.csv"}},
                                      {"csv": {"file": "./a.csv"}}]}},
            "weather": {"file": "w.csv"}}
    placed, plans = place_files(data, src, out)
    assert placed["boundaries"]["x"]["temperature"]["csv"]["file"] == "a.csv"
    assert placed["links"]["l"]["parts"][0]["csv"]["file"] == "a-2.csv"
    assert placed["links"]["l"]["parts"][1]["csv"]["file"] == "a.csv"   # the same file: one copy
    assert placed["weather"]["file"] == "w.csv"
    real = os.path.realpath
    assert sorted(plans) == sorted([(real(src / "a.csv"), "a.csv", False),
                                    (real(src / "data" / "a.csv"), "a-2.csv", False),
                                    (real(src / "w.csv"), "w.csv", True)])
    assert data["weather"]["file"] == "w.csv" and data["links"]["l"]["parts"][1]["csv"][
        "file"] == "./a.csv"                                   # the caller's data untouched
    # into the source's own folder nothing moves; into the folder above, paths lead down
    assert place_files(data, src, src) == (data, [])
    above, plans = place_files(data, src, tmp_path)
    assert plans == [] and above["links"]["l"]["parts"][0]["csv"]["file"] == "src/data/a.csv"
    assert above["weather"]["file"] == "src/w.csv"


def test_a_written_scenario_that_fails_its_check_leaves_no_copy(tmp_path):
    from rcsim.tomlwrite import write_scenario

    src, out = tmp_path / "src", tmp_path / "out"
    src.mkdir()
    out.mkdir()
    (src / "in.csv").write_text("time,T\n0,20\n3600,21\n")
    data = {"nodes": {"n": {"capacity": "1 kJ/K", "initial": "20 degC"}},
            "boundaries": {"b": {"temperature": {"csv": {"file": "in.csv", "column": "T"}}}},
            "links": {"l": {"between": ["n", "b"], "resistance": "1 K/W"}}}

    def refuse(scenario):
        assert scenario.value("boundaries.b.temperature.csv.file") == "in.csv"
        raise RuntimeError("refused")

    with pytest.raises(RuntimeError, match="refused"):
        write_scenario(out / "s.toml", data, src, dumps, refuse)
    assert os.listdir(out) == []
    written = write_scenario(out / "s.toml", data, src, dumps)
    assert sorted(os.listdir(out)) == ["in.csv", "s.toml"] and len(written.copied) == 1
    assert loads(open(written).read(), base_dir=str(out)).network.boundaries  # no option needed
