"""Electrochemical quantities: water electrolysis against published values, the voltage-
efficiency convention, and ``calc --voltage``.

Data: CODATA Key Values for Thermodynamics (Cox, Wagman & Medvedev 1989), from memory:
H2O(l) dfH = -285.830 kJ/mol, S = 69.95 J/(mol K), Cp = 75.3 J/(mol K) held constant;
H2(g) S = 130.680, O2(g) S = 205.152 J/(mol K).  The Cp(T) of H2 and O2 are the NASA7 fits of
GRI-Mech 3.0 (Smith et al. 1999, cantera's gri30.yaml), anchored at those CODATA values.
"""

from __future__ import annotations

import json

import pytest

from conftest import REPO
from generator.cli import main
from generator.model import CpPiece, Quantity, Species, Value
from generator.thermo.electrochem import cell_voltages, voltage_efficiency

DEMO = REPO / "sources"


def _species(sid, phase, elements, dfH, S, cp):
    standard = {"dfH": Quantity("dfH", (Value(dfH, "kJ/mol"),)),
                "S": Quantity("S", (Value(S, "J/(mol*K)"),))}
    return Species(sid, sid, phase, sid, elements, 0, 0.0, standard, cp=cp)


@pytest.fixture(scope="module")
def water_species():
    ct = pytest.importorskip("cantera")
    by_name = {s.name: s for s in ct.Species.list_from_file("gri30.yaml")}

    def nasa(name):
        s = by_name[name]
        c = s.thermo.coeffs
        return (CpPiece("nasa7", s.thermo.min_temp, c[0], tuple(c[8:15])),
                CpPiece("nasa7", c[0], s.thermo.max_temp, tuple(c[1:8])))

    return {
        "h2o-l": _species("h2o-l", "l", (("H", 2), ("O", 1)), -285.830, 69.95,
                          (CpPiece("constant", 273.15, 373.15, (75.3,)),)),
        "h2": _species("h2", "g", (("H", 2),), 0.0, 130.680, nasa("H2")),
        "o2": _species("o2", "g", (("O", 2),), 0.0, 205.152, nasa("O2")),
    }


NU = {"h2o-l": -1.0, "h2": 1.0, "o2": 0.5}  # H2O(l) -> H2(g) + 1/2 O2(g), n = 2


def test_water_electrolysis_25_C(water_species):
    cv = cell_voltages(NU, water_species, [298.15], 2)
    # 1.229 V reversible, 1.481 V thermoneutral at 25 °C (common practice, from memory).
    assert cv.E[0] == pytest.approx(-1.229, abs=0.002)
    assert cv.Etn[0] == pytest.approx(1.481, abs=0.002)
    assert cv.mode == ("electrolysis",)
    # T drS = 285.830 - 237.14 = 48.69 kJ/mol absorbed reversibly (CODATA values above).
    assert cv.reversible_heat[0] == pytest.approx(48.69, abs=0.1)
    assert cv.reversible_heat_V[0] == pytest.approx(1.481 - 1.229, abs=0.003)


def test_water_electrolysis_80_C(water_species):
    cv = cell_voltages(NU, water_species, [353.15], 2)
    # About 1.18 V reversible and 1.47 V thermoneutral at 80 °C (from memory), ±0.01 V.
    assert abs(cv.E[0]) == pytest.approx(1.18, abs=0.01)
    assert cv.Etn[0] == pytest.approx(1.47, abs=0.01)


def test_voltage_efficiency_convention():
    # Electrolysis: |E|/V = 1.2/1.8 = 0.6667, Etn/V = 1.48/1.8 = 0.8222 (hand arithmetic).
    e = voltage_efficiency(-1.2, 1.48, 1.8)
    assert e.mode == "electrolysis"
    assert e.eta_V == pytest.approx(1.2 / 1.8) and e.eta_thermal == pytest.approx(1.48 / 1.8)
    # Galvanic cell: V/E = 0.7/1.2 = 0.5833, V/|Etn| = 0.7/1.48 (hand arithmetic).
    g = voltage_efficiency(1.2, -1.48, 0.7)
    assert g.mode == "galvanic"
    assert g.eta_V == pytest.approx(0.7 / 1.2) and g.eta_thermal == pytest.approx(0.7 / 1.48)
    with pytest.raises(ValueError):
        voltage_efficiency(-1.2, 1.48, 0.0)


def test_calc_voltage_json(capsys):
    assert main(["calc", "chlor-alkali-cell", "--sources", str(DEMO), "--voltage", "3.1",
                 "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    (row,) = doc["voltage_efficiency"]
    assert set(row) == {"T", "V", "mode", "eta_V", "eta_thermal"}
    # eta_V = |E°|/V for an electrolysis, by the convention of generator.thermo.electrochem.
    assert row["mode"] == "electrolysis"
    assert row["eta_V"] == pytest.approx(abs(doc["rows"][0]["E"]) / 3.1, rel=1e-9)


def test_calc_voltage_needs_electrons(capsys):
    assert main(["calc", "water-gas-shift", "--sources", str(DEMO), "--voltage", "1.5"]) == 2
    assert "--electrons" in capsys.readouterr().err
