"""Element reference states: the table and its resolution against handbook species."""

from __future__ import annotations

from generator.diagnostics import Location, Severity
from generator.model import Quantity, Species, Value
from generator.thermo.reference_states import (
    REFERENCE_STATES,
    elements_needed,
    reference_state,
    resolve_reference_states,
)


def make_species(sid, formula, phase, elements, *, dfH=None, charge=0, form=None):
    standard = {}
    if dfH is not None:
        loc = Location(f"species/{sid}.yaml", 7, 8)
        standard["dfH"] = Quantity("dfH", (Value(dfH, "kJ/mol", location=loc),))
    return Species(sid, formula, phase, sid, tuple(elements), charge, 0.0, standard,
                   form=form, location=Location(f"species/{sid}.yaml", 1, 1))


def _by_id(*species: Species) -> dict[str, Species]:
    return {s.id: s for s in species}


def test_table_conventions():
    # Wagman et al. 1982 (J. Phys. Chem. Ref. Data 11 Suppl. 2) and CODATA Key Values 1989
    # reference-state conventions, from memory.
    assert REFERENCE_STATES["O"] == ("O2", "g", None, 2)
    assert REFERENCE_STATES["Br"] == ("Br2", "l", None, 2)
    assert REFERENCE_STATES["I"] == ("I2", "cr", None, 2)
    assert REFERENCE_STATES["C"] == ("C", "cr", "graphite", 1)
    assert REFERENCE_STATES["P"] == ("P", "cr", "white", 1)
    assert REFERENCE_STATES["Hg"] == ("Hg", "l", None, 1)
    assert REFERENCE_STATES["Ar"] == ("Ar", "g", None, 1)
    assert REFERENCE_STATES["Fe"] == ("Fe", "cr", None, 1)
    assert reference_state("Pr") == ("Pr", "cr", None, 1)  # default: element in phase cr


def test_resolution_picks_formula_phase_and_form():
    sp = _by_id(
        make_species("hydrogen", "H2", "g", [("H", 2)], dfH=0.0),
        make_species("oxygen", "O2", "g", [("O", 2)], dfH=0.0),
        make_species("ozone", "O3", "g", [("O", 3)], dfH=142.7),
        make_species("oxygen-liquid", "O2", "l", [("O", 2)]),
        make_species("diamond", "C", "cr", [("C", 1)], dfH=1.895, form="diamond"),
        make_species("graphite", "C", "cr", [("C", 1)], dfH=0.0, form="Graphite"),
        make_species("carbon-cr", "C", "cr", [("C", 1)], dfH=0.0),
        make_species("water", "H2O", "l", [("H", 2), ("O", 1)], dfH=-285.83),
        make_species("co2", "CO2", "g", [("C", 1), ("O", 2)], dfH=-393.51),
    )
    refs, findings = resolve_reference_states(sp)
    assert {el: s.id for el, s in refs.items()} == {"H": "hydrogen", "O": "oxygen",
                                                    "C": "graphite"}
    assert findings == []


def test_form_less_species_accepted_when_no_named_form():
    sp = _by_id(make_species("carbon", "C", "cr", [("C", 1)], dfH=0.0),
                make_species("diamond", "C", "cr", [("C", 1)], dfH=1.895, form="diamond"))
    refs, findings = resolve_reference_states(sp)
    assert refs["C"].id == "carbon" and findings == []


def test_solid_phase_fallback():
    sp = _by_id(make_species("iron", "Fe", "s", [("Fe", 1)], dfH=0.0))
    refs, _ = resolve_reference_states(sp)
    assert refs["Fe"].id == "iron"


def test_missing_reference_and_not_zero_findings():
    sp = _by_id(
        make_species("sodium", "Na", "cr", [("Na", 1)], dfH=0.5),
        make_species("salt", "NaCl", "cr", [("Na", 1), ("Cl", 1)], dfH=-411.12),
        make_species("bleach", "NaClO", "aq", [("Na", 1), ("Cl", 1), ("O", 1)]),
    )
    refs, findings = resolve_reference_states(sp)
    assert set(refs) == {"Na"}
    codes = sorted((f.code, f.item, f.severity) for f in findings)
    assert codes == [
        ("no-reference-state", "bleach", Severity.WARNING),  # Cl: first user by id
        ("no-reference-state", "bleach", Severity.WARNING),  # O
        ("reference-state-not-zero", "sodium", Severity.WARNING),
    ]
    not_zero = next(f for f in findings if f.code == "reference-state-not-zero")
    assert not_zero.location == Location("species/sodium.yaml", 7, 8)
    assert not_zero.quantity == "dfH"
    missing = [f for f in findings if f.code == "no-reference-state"]
    assert all(f.location == Location("species/bleach.yaml", 1, 1) for f in missing)
    assert any("Cl2(g)" in f.message for f in missing)


def test_ions_need_hydrogen_and_ambiguity_note():
    chloride = make_species("chloride", "Cl-", "aq", [("Cl", 1)], charge=-1)
    proton = make_species("proton", "H+", "aq", [("H", 1)], charge=1)
    assert sorted(elements_needed(chloride)) == ["Cl", "H"]
    assert elements_needed(proton) == []  # H+ balances against itself
    sp = _by_id(chloride, proton,
                make_species("chlorine", "Cl2", "g", [("Cl", 2)], dfH=0.0),
                make_species("chlorine-b", "Cl2", "g", [("Cl", 2)], dfH=0.0))
    refs, findings = resolve_reference_states(sp)
    assert refs["Cl"].id == "chlorine"
    assert sorted(f.code for f in findings) == ["no-reference-state",
                                                "reference-state-ambiguous"]
    assert next(f for f in findings if f.code == "no-reference-state").item == "chloride"
