"""`thermofolio calc --element`: the element ladder, per atom of the element."""

from __future__ import annotations

import json

import pytest

from conftest import REPO
from generator.cli import main
from generator.load import load_handbook

DEMO = REPO / "sources"


def test_ladder_values_are_the_cited_values_per_atom(capsys):
    assert main(["calc", "--element", "O", "--sources", str(DEMO), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    handbook, _ = load_handbook(DEMO)
    by_id = {row["id"]: row for row in doc["species"]}
    for sid, sp in handbook.species.items():
        n = dict(sp.elements).get("O")
        if not n:
            assert sid not in by_id
            continue
        # dfH per atom straight from the cited value, divided by the atom count.
        assert by_id[sid]["dfH_per_atom"] == pytest.approx(
            sp.standard["dfH"].preferred.value / n, abs=1e-6)
    # CO2(g): -393.51 kJ/mol over 2 O atoms (CODATA Key Values 1989, from memory).
    assert by_id["carbon-dioxide"]["dfH_per_atom"] == pytest.approx(-393.51 / 2, abs=0.01)
    values = [r["dfH_per_atom"] for r in doc["species"]]
    assert values == sorted(values)
    assert doc["caution"]


def test_unknown_element_is_a_clean_error(capsys):
    assert main(["calc", "--element", "Xx", "--sources", str(DEMO)]) == 1
    assert "no species contains 'Xx'" in capsys.readouterr().err


def test_element_goes_alone(capsys):
    assert main(["calc", "lime-burning", "--element", "C", "--sources", str(DEMO)]) == 2
