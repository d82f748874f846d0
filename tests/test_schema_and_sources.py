"""`thermofolio schema` describes the real source files; the demo handbook is clean;
BibTeX references are read beside references.yaml."""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema
import pytest
import yaml

from conftest import REPO, assemble
from generator.cli import main
from generator.load import load_handbook
from generator.units import UnitError, parse_compact, parse_pressure, to_canonical_factor

DEMO = REPO / "sources"


def _plain(path: Path):
    # BaseLoader keeps every scalar as text; the schema only checks structure, so coerce
    # numbers the way thermofolio's own reader does.
    from generator.yamlsource import read_yaml_file

    value, findings = read_yaml_file(path, str(path))
    assert not findings
    return json.loads(json.dumps(value))


def test_schema_command_writes_schemas_the_demo_validates_against(tmp_path: Path, capsys):
    assert main(["schema", "-o", str(tmp_path)]) == 0
    schemas = {p.name: json.loads(p.read_text()) for p in tmp_path.glob("*.json")}
    assert set(schemas) == {"handbook.schema.json", "references.schema.json",
                            "species.schema.json", "reaction.schema.json"}
    jsonschema.validate(_plain(DEMO / "handbook.yaml"), schemas["handbook.schema.json"])
    jsonschema.validate(_plain(DEMO / "references.yaml"), schemas["references.schema.json"])
    for f in sorted((DEMO / "species").glob("*.yaml")):
        jsonschema.validate(_plain(f), schemas["species.schema.json"])
    for f in sorted((DEMO / "reactions").glob("*.yaml")):
        jsonschema.validate(_plain(f), schemas["reaction.schema.json"])


def test_schema_rejects_a_misspelled_field(tmp_path: Path):
    main(["schema", "-o", str(tmp_path)])
    schema = json.loads((tmp_path / "species.schema.json").read_text())
    doc = _plain(DEMO / "species" / "methane.yaml")
    doc["fromula"] = doc.pop("formula")
    try:
        jsonschema.validate(doc, schema)
    except jsonschema.ValidationError:
        return
    raise AssertionError("schema accepted a misspelled field")


def test_demo_handbook_checks_clean():
    handbook, findings = load_handbook(DEMO)
    assert handbook is not None, [f.format() for f in findings]
    assert main(["check", str(DEMO)]) == 0


def test_demo_meets_the_brief_counts():
    handbook, _ = load_handbook(DEMO)
    assert len(handbook.species) >= 30 and len(handbook.reactions) >= 15
    assert len(handbook.references) >= 6
    assert any(r.combine for r in handbook.reactions.values())
    assert any(r.electrons for r in handbook.reactions.values())
    assert sum(s.phase == "aq" and s.charge != 0 for s in handbook.species.values()) >= 3
    atoms = [s for s in handbook.species.values() if s.phase == "g" and len(s.elements) == 1
             and s.elements[0][1] == 1 and s.charge == 0]
    assert len(atoms) >= 3
    from generator.thermo import resolve_reference_states

    _refs, findings = resolve_reference_states(handbook.species)
    assert not [f for f in findings if f.code == "no-reference-state"]


def test_demo_leaves_out_the_stock_examples():
    handbook, _ = load_handbook(DEMO)
    for r in handbook.reactions.values():
        nu = {handbook.species[s].formula + handbook.species[s].phase: n
              for s, n in r.stoichiometry.items()}
        assert set(nu) not in ({"H2g", "O2g", "H2Ol"}, {"H2g", "O2g", "H2Og"}), r.id
        assert set(nu) != {"H2Ol", "H+aq", "OH-aq"}, r.id


def test_bibtex_entries_become_references(tmp_path: Path):
    root = assemble(tmp_path / "hb")
    (root / "references.bib").write_text(
        "@article{lab-2026,\n  author = {A. Tester},\n  title = {A measured value},\n"
        "  journal = {J. Test},\n  year = {2026},\n  standard_pressure = {1 atm}\n}\n",
        encoding="utf-8")
    handbook, findings = load_handbook(root)
    assert handbook is not None, [f.format() for f in findings]
    ref = handbook.references["lab-2026"]
    assert ref.kind == "article" and ref.origin == "bib"
    assert ref.standard_pressure == 101325.0
    assert "A measured value" in ref.citation and ref.location.line == 1


def test_demo_reads_its_bib_file():
    handbook, _ = load_handbook(DEMO)
    assert any(r.origin == "bib" for r in handbook.references.values())


def test_common_unit_spellings_convert_as_pint_converts_them():
    from generator import units

    for dimension, table in units.COMMON.items():
        for unit, factor in table.items():
            assert units._pint_factor(unit, dimension) == factor, (unit, dimension)
    # the common table is not a way around the dimension check
    with pytest.raises(UnitError):
        to_canonical_factor("bar", "energy")


def test_units_convert_and_refuse_wrong_dimensions():
    # 1 kcal (thermochemical) = 4.184 kJ exactly; 1 atm = 101325 Pa exactly (SI Brochure,
    # 9th ed., 2019, from memory).
    assert to_canonical_factor("kcal/mol", "energy") == 4.184
    assert to_canonical_factor("J/mol", "energy") == 0.001
    assert to_canonical_factor("cal/(mol*K)", "entropy") == 4.184
    assert to_canonical_factor("J K-1 mol-1", "entropy") == 1.0
    assert parse_pressure("1 atm") == 101325.0
    w = parse_compact("−285.83 +- 0.04 kJ/mol")
    assert (w.value, w.unc, w.unit) == (-285.83, 0.04, "kJ/mol")
    for unit, dim in (("kJ/mol", "entropy"), ("J/(mol*K)", "energy"), ("bar", "energy")):
        try:
            to_canonical_factor(unit, dim)
        except UnitError as exc:
            assert "is not a unit of" in exc.message
        else:
            raise AssertionError(f"{unit} accepted as {dim}")


def test_yaml_plain_loader_and_ours_agree_on_demo_structure():
    data = yaml.safe_load((DEMO / "handbook.yaml").read_text(encoding="utf-8"))
    assert "title" in data and "edition" in data
