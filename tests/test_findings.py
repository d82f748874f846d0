"""Each engine finding on a small fixture that triggers it, and on one that does not."""

from __future__ import annotations

from pathlib import Path

import pytest

from conftest import assemble
from generator.compute import compute_handbook
from generator.load import load_handbook


def _codes(root: Path) -> dict[str, list]:
    handbook, findings = load_handbook(root)
    assert handbook is not None, [f.format() for f in findings]
    out: dict[str, list] = {}
    for f in compute_handbook(handbook).findings:
        out.setdefault(f.code, []).append(f)
    return out


def _edit(root: Path, rel: str, old: str, new: str) -> None:
    p = root / rel
    text = p.read_text(encoding="utf-8")
    assert old in text, old
    p.write_text(text.replace(old, new), encoding="utf-8")


@pytest.fixture
def hb(tmp_path: Path) -> Path:
    return assemble(tmp_path / "hb")


def test_clean_fixture_has_none_of_the_warnings(hb: Path):
    codes = _codes(hb)
    for code in ("gibbs-inconsistent", "polynomial-H", "polynomial-S", "cp-jump", "h-jump",
                 "s-jump", "hess-gap", "implausible-dfH", "negative-entropy", "nonphysical-cp"):
        assert code not in codes


def test_gibbs_consistency(hb: Path):
    # dfG(H2O, g) = -228.582 kJ/mol (CODATA 1989-derived, from memory): consistent.
    _edit(hb, "species/water-gas.yaml", "  S:", "  dfG: \"-228.58 kJ/mol\"\n  S:")
    assert "gibbs-inconsistent" not in _codes(hb)
    _edit(hb, "species/water-gas.yaml", "-228.58 kJ/mol", "-225.0 kJ/mol")
    [f] = _codes(hb)["gibbs-inconsistent"]
    assert f.location.line == 8 and "by +3.58 kJ/mol" in f.message


def test_polynomial_disagreeing_with_standard_block(hb: Path):
    # GRI-Mech 3.0 (Smith et al. 1999) H2O low-range NASA7 coefficients, as shipped in
    # cantera's gri30.yaml; its own H(298.15)/R T and S(298.15)/R match CODATA within
    # about 0.1 kJ/mol and 0.1 J/(mol K).
    nasa = ("  - nasa7: [4.19864056, -2.0364341e-03, 6.52040211e-06, -5.48797062e-09, "
            "1.77197817e-12, -3.02937267e+04, -0.849032208]\n    T: [200, 1000]\n")
    _edit(hb, "species/water-gas.yaml", "  - constant: 33.6\n    T: [298.15, 1500]\n", nasa)
    codes = _codes(hb)
    assert "polynomial-H" not in codes and "polynomial-S" not in codes
    _edit(hb, "species/water-gas.yaml", "-241.826 ± 0.040", "-239.826 ± 0.040")
    _edit(hb, "species/water-gas.yaml", "188.835 ± 0.010", "190.835 ± 0.010")
    codes = _codes(hb)
    assert codes["polynomial-H"][0].location.line == 10
    assert "polynomial-S" in codes


def test_jumps_between_pieces(hb: Path):
    two = "  - constant: 33.6\n    T: [298.15, 1000]\n  - constant: 33.9\n    T: [1000, 1500]\n"
    _edit(hb, "species/water-gas.yaml", "  - constant: 33.6\n    T: [298.15, 1500]\n", two)
    assert "cp-jump" not in _codes(hb)
    _edit(hb, "species/water-gas.yaml", "constant: 33.9", "constant: 40.0")
    [f] = _codes(hb)["cp-jump"]
    assert "33.60 to 40.00" in f.message and f.location.line == 12


def test_nasa_pieces_that_do_not_join_in_H_and_S(hb: Path):
    # GRI-Mech 3.0 H2O pieces (low 200-1000 K, high 1000-3500 K), from cantera's gri30.yaml.
    low = ("[4.19864056, -2.0364341e-03, 6.52040211e-06, -5.48797062e-09, 1.77197817e-12, "
           "-3.02937267e+04, -0.849032208]")
    high = ("[3.03399249, 2.17691804e-03, -1.64072518e-07, -9.7041987e-11, 1.68200992e-14, "
            "-3.00042971e+04, 4.9667701]")
    pieces = (f"  - nasa7: {low}\n    T: [200, 1000]\n  - nasa7: {high}\n    T: [1000, 3500]\n")
    _edit(hb, "species/water-gas.yaml", "  - constant: 33.6\n    T: [298.15, 1500]\n", pieces)
    codes = _codes(hb)
    assert "h-jump" not in codes and "s-jump" not in codes
    _edit(hb, "species/water-gas.yaml", "-3.00042971e+04", "-2.99042971e+04")
    _edit(hb, "species/water-gas.yaml", "4.9667701", "5.9667701")
    codes = _codes(hb)
    assert "h-jump" in codes and "s-jump" in codes


def test_hess_cycle_that_does_not_close(hb: Path):
    # Vaporisation enthalpy of water at 298.15 K: 44.004 kJ/mol (CODATA 1989, from memory).
    (hb / "reactions" / "vaporisation.yaml").write_text(
        'ref: codata-1989\nid: vaporisation\nname: v\nequation: "H2O(l) -> H2O(g)"\n'
        "measured:\n  - {quantity: drH, value: 44.0, unc: 0.1, unit: kJ/mol, T: 298.15}\n",
        encoding="utf-8")
    assert "hess-gap" not in _codes(hb)
    _edit(hb, "reactions/vaporisation.yaml", "value: 44.0,", "value: 40.0,")
    [f] = _codes(hb)["hess-gap"]
    assert f.location.line == 6 and "-4.00 kJ/mol" in f.message


def test_hess_check_on_K(hb: Path):
    # K of vaporisation at 298.15 K = p_sat/p° = 3.17 kPa / 100 kPa = 0.0317 (steam tables,
    # saturation pressure of water at 25 °C, from memory).
    (hb / "reactions" / "vaporisation.yaml").write_text(
        'ref: codata-1989\nid: vaporisation\nname: v\nequation: "H2O(l) -> H2O(g)"\n'
        "measured:\n  - {quantity: K, value: 0.0317, T: 298.15}\n", encoding="utf-8")
    assert "hess-gap" not in _codes(hb)
    _edit(hb, "reactions/vaporisation.yaml", "value: 0.0317", "value: 0.317")
    assert "hess-gap" in _codes(hb)


def test_implausible_values(hb: Path):
    _edit(hb, "species/water-gas.yaml", "-241.826 ± 0.040 kJ/mol", "-241826 kJ/mol")
    [f] = _codes(hb)["implausible-dfH"]
    assert "J/mol written as kJ/mol" in f.hint
    _edit(hb, "species/water-gas.yaml", "188.835 ± 0.010", "-188.835 ± 0.010")
    assert "negative-entropy" in _codes(hb)


def test_nonphysical_cp(hb: Path):
    # An ideal gas has Cp >= 5/2 R = 20.79 J/(mol K) (kinetic theory, common practice).
    _edit(hb, "species/water-gas.yaml", "constant: 33.6", "constant: 20.9")
    assert "nonphysical-cp" not in _codes(hb)
    _edit(hb, "species/water-gas.yaml", "constant: 20.9", "constant: 12.0")
    assert "nonphysical-cp" in _codes(hb)
    _edit(hb, "species/water-liquid.yaml", "constant: 75.3", "constant: -1.0")
    assert len(_codes(hb)["nonphysical-cp"]) == 2


def test_no_reference_state_is_reported(hb: Path):
    (hb / "species" / "carbon-atom.yaml").write_text(
        "ref: codata-1989\nid: carbon-atom\nformula: C\nphase: g\nname: carbon atom\n"
        "standard:\n  dfH: \"716.68 ± 0.45 kJ/mol\"\n  S: \"158.100 ± 0.003 J/(mol*K)\"\n",
        encoding="utf-8")
    [f] = _codes(hb)["no-reference-state"]
    assert "element C" in f.message


def test_one_atmosphere_values_are_converted_and_the_conversion_recorded(hb: Path):
    # S(1 bar) - S(1 atm) = R ln(101325/100000) = 8.31446 J/(mol K) x 0.013240 = 0.1094
    # J/(mol K) for an ideal gas (the 1982 change of standard pressure; Wagman et al. 1982,
    # J. Phys. Chem. Ref. Data 11 Suppl. 2, introduction: 0.109 J/(mol K), from memory).
    _edit(hb, "species/water-gas.yaml", 'S: "188.835 ± 0.010 J/(mol*K)"',
          "S: {value: 188.726, unc: 0.010, unit: J/(mol*K), ref: old-atm}")
    handbook, _ = load_handbook(hb)
    v = compute_handbook(handbook).handbook.species["water-gas"].standard["S"].preferred
    assert v.value == pytest.approx(188.726 + 0.1094, abs=2e-4)
    assert v.conversion == "from 1 atm to 1 bar: +0.1094 J/(mol*K)"
    # A liquid's entropy does not change with the standard pressure.
    _edit(hb, "species/water-liquid.yaml", 'S: "69.95 ± 0.03 J/(mol*K)"',
          "S: {value: 69.95, unit: J/(mol*K), ref: old-atm}")
    handbook, _ = load_handbook(hb)
    v = compute_handbook(handbook).handbook.species["water-liquid"].standard["S"].preferred
    assert v.value == 69.95 and v.conversion == ""
