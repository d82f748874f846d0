"""Exported JSON: one row per line, the same bytes in handbook.json as in each item's file."""

from __future__ import annotations

import importlib
import json
import math

import pytest

from generator.compute import compute_handbook
from generator.exports import json_text
from generator.load import load_handbook
from generator.site import pages

publish = importlib.import_module("generator.site.publish")  # the module, not the function


def test_rounding_a_column():
    import numpy as np

    from generator.exports import num, nums

    values = [1 / 3, -0.0, 0.0, 1e-300, -2.5e300, float("nan"), float("inf"), 298.15,
              123456789.123456789]
    # 10 significant digits, written out by hand; -0.0 as 0.0; non-finite as null.
    expected = [0.3333333333, 0.0, 0.0, 1e-300, -2.5e300, None, None, 298.15, 123456789.1]
    assert nums(values) == expected
    assert nums(np.array(values)) == expected
    assert num(None) is None and num(np.float64(2 / 3)) == 0.6666666667


def test_json_text_round_trips_and_puts_each_deep_container_on_one_line():
    doc = {"b": [{"T": 298.15, "x": None}, {"T": 300.0, "x": [1, 2]}], "a": "ΔfH°",
           "c": {}, "d": {"k": {"deep": [1]}}}
    text = json_text(doc, 2)
    assert json.loads(text) == doc
    lines = text.splitlines()
    assert lines[0] == "{" and lines[-1] == "}"
    assert '  {"T": 298.15, "x": null},' in lines  # a row is one line, two levels in
    assert ' "a": "ΔfH°",' in lines  # keys sorted, text kept as written (no \\u escapes)
    assert '  "k": {"deep": [1]}' in lines
    # the same keys and values as the standard library's fully indented text
    assert json.loads(json.dumps(doc, indent=1, sort_keys=True)) == json.loads(text)


def test_json_text_refuses_non_finite_numbers():
    try:
        json_text({"a": [{"x": math.inf}]}, 1)
    except ValueError:
        return
    raise AssertionError("inf was written")


def test_handbook_json_is_the_item_documents_byte_for_byte(mini):
    handbook, findings = load_handbook(mini)
    computed = compute_handbook(handbook)
    every = pages.all_findings(computed, findings)
    files = publish.export_files(computed, every)
    whole = files["data/handbook.json"].decode("utf-8")
    assert whole == json_text(publish.handbook_doc(computed, every),
                              publish.HANDBOOK_DEPTH) + "\n"
    for sid in computed.species:
        item = files[f"species/{sid}.json"].decode("utf-8")
        assert json.loads(item) == json.loads(whole)["species"][sorted(computed.species)
                                                               .index(sid)]
        rows = json.loads(item)["rows"]
        assert sum(line.startswith('  {"Cp"') for line in item.splitlines()) == len(rows)


def test_inline_scalars_are_written_as_the_json_encoder_writes_them():
    """The direct path for strings, None, bools, ints and finite floats gives the encoder's
    own text; non-finite floats are still refused."""
    from generator.exports import _INLINE, _inline

    values = ["a\"b\\c\n\u2212é\x00\x1f", "", None, True, False, 0, -5, 10**30, 1.5, -0.0,
              1e300, 5e-324, 0.1, 298.15, [1, {"b": 2}], {"x": [1.0, None]}]
    for v in values:
        assert _inline(v) == _INLINE.encode(v), v
    for bad in (float("nan"), float("inf"), -float("inf")):
        with pytest.raises(ValueError):
            _inline(bad)
