"""The YAML 1.1 traps of PyYAML are closed (PLATFORM.md lists them); locations are 1-based."""

from __future__ import annotations

import time
from pathlib import Path

import pytest

from generator import yamlsource
from generator.yamlsource import YList, YMap, parse_yaml_text


def load(text: str):
    value, findings = parse_yaml_text(text, "f.yaml")
    return value, [f.code for f in findings]


def test_scientific_notation_without_dot_is_a_number():
    value, codes = load("a: 1e-3\nb: 6.02e23\nc: 6.02214076e23\nd: -1.5E+2\n")
    assert codes == []
    assert value == {"a": 1e-3, "b": 6.02e23, "c": 6.02214076e23, "d": -150.0}


def test_yes_no_on_off_stay_strings_and_only_true_false_are_booleans():
    value, _ = load("a: no\nb: on\nc: yes\nd: off\ne: true\nf: False\n")
    assert value == {"a": "no", "b": "on", "c": "yes", "d": "off", "e": True, "f": False}


def test_leading_zero_is_decimal_and_sexagesimal_is_text():
    value, _ = load("a: 012\nb: 12:30\nc: 0x1F\n")
    assert value == {"a": 12, "b": "12:30", "c": 31}


def test_dates_stay_text():
    value, _ = load("date: 2026-10-02\n")
    assert value == {"date": "2026-10-02"}


def test_quoted_numbers_stay_text():
    value, _ = load("edition: \"2026.10\"\n")
    assert value == {"edition": "2026.10"}


def test_non_finite_floats_are_kept_as_text_for_the_reader_to_refuse():
    value, _ = load("a: .inf\nb: .nan\n")
    assert value == {"a": ".inf", "b": ".nan"}


def test_duplicate_key_names_both_lines():
    _, findings = parse_yaml_text("a: 1\nb: 2\na: 3\n", "f.yaml")
    assert [f.format() for f in findings] == [
        "f.yaml:3:1: error: duplicate key 'a' (first at line 1, again at line 3) (a key may "
        "appear once in a mapping; YAML would keep only the last)"
    ]


def test_alias_bomb_is_refused_quickly():
    bomb = "a: &a ['lol','lol','lol','lol','lol','lol','lol','lol','lol']\n"
    for i, name in enumerate("bcdefghi"):
        prev = "abcdefghi"[i]
        bomb += f"{name}: &{name} [" + ",".join([f"*{prev}"] * 9) + "]\n"
    start = time.perf_counter()
    value, codes = load(bomb)
    assert time.perf_counter() - start < 0.5
    assert value is None and codes == ["yaml-anchor"]


def test_alias_alone_is_refused():
    _, codes = load("a: *missing\n")
    assert codes in (["yaml-alias"], ["yaml-syntax"])


def test_nesting_1000_deep_is_a_clean_error_not_recursion():
    value, codes = load("[" * 1000 + "]" * 1000)
    assert value is None and codes == ["yaml-too-deep"]


def test_locations_are_one_based_and_point_inside_quotes():
    value, _ = parse_yaml_text('x:\n  eq: "A -> B"\n  n: 3\n', "f.yaml")
    assert str(value["x"].where("eq")) == "f.yaml:2:8"
    assert str(value["x"].where("n")) == "f.yaml:3:6"
    assert str(value["x"].key_where("n")) == "f.yaml:3:3"


def test_several_documents_are_an_error():
    _, codes = load("a: 1\n---\nb: 2\n")
    assert codes == ["yaml-syntax"]


def _tree(value):
    """A value with every location it remembers, for comparing two parses."""
    if isinstance(value, YMap):
        return ("map", value.loc, sorted(value.key_locs.items()),
                sorted(value.value_locs.items()), [(k, _tree(v)) for k, v in value.items()])
    if isinstance(value, YList):
        return ("list", value.loc, list(value.item_locs), [_tree(v) for v in value])
    return (type(value).__name__, value)


@pytest.mark.skipif(yamlsource.CParser is None, reason="PyYAML built without libyaml")
def test_libyaml_and_pure_python_parsers_agree_on_every_bundled_file():
    root = Path(__file__).resolve().parents[1]
    files = sorted((root / "sources").rglob("*.yaml")) + sorted((root / "tests").rglob("*.yaml"))
    assert len(files) > 100
    for file in files:
        text = file.read_bytes().decode("utf-8", "replace")
        fast = yamlsource.parse_yaml_text(text, str(file))
        pure = yamlsource._parse_pure(text, str(file))
        assert [f.to_json() for f in fast[1]] == [f.to_json() for f in pure[1]], file
        assert _tree(fast[0]) == _tree(pure[0]), file


@pytest.mark.skipif(yamlsource.CParser is None, reason="PyYAML built without libyaml")
def test_input_libyaml_stops_at_is_reported_by_the_pure_parser():
    text = "a: 1\nb: [1, 2\n"
    assert yamlsource._fast_node(text) is False
    _value, findings = parse_yaml_text(text, "x.yaml")
    assert findings == yamlsource._parse_pure(text, "x.yaml")[1]
    assert findings[0].code == "yaml-syntax"
