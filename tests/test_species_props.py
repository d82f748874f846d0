"""Species and formation properties at T against published tables and cantera."""

from __future__ import annotations

import functools
import math
import os

import numpy as np
import pytest
import yaml

from generator.model import CpPiece, Quantity, Species, Value
from generator.thermo import species_props as spp
from generator.thermo.constants import LN10, R


def make_species(sid, formula, phase, elements, *, dfH=None, S=None, Cp=None, cp=(),
                 charge=0, form=None):
    """A Species straight from the model classes; values as (value, unc) or value."""
    units = {"dfH": "kJ/mol", "S": "J/(mol*K)", "Cp": "J/(mol*K)"}
    standard = {}
    for name, given in (("dfH", dfH), ("S", S), ("Cp", Cp)):
        if given is None:
            continue
        v, u = given if isinstance(given, tuple) else (given, None)
        standard[name] = Quantity(name, (Value(v, units[name], u),))
    return Species(sid, formula, phase, sid, tuple(elements), charge, 0.0, standard,
                   cp=tuple(cp), form=form)


@functools.cache
def _mechanism(file: str) -> dict:
    ct = pytest.importorskip("cantera")
    path = os.path.join(os.path.dirname(ct.__file__), "data", file)
    with open(path, encoding="utf-8") as fh:
        return yaml.load(fh, Loader=yaml.BaseLoader)  # all scalars as strings


def _nasa_pieces(file: str, name: str) -> list[CpPiece]:
    """NASA7 pieces of one species from a cantera-shipped mechanism file."""
    th = next(s for s in _mechanism(file)["species"] if s["name"] == name)["thermo"]
    Ts = [float(x) for x in th["temperature-ranges"]]
    return [CpPiece("nasa7", Ts[i], Ts[i + 1], tuple(float(x) for x in c))
            for i, c in enumerate(th["data"])]


@pytest.fixture(scope="module")
def gri():
    """Species with GRI-Mech 3.0 NASA7 pieces (Smith et al. 1999, gri30.yaml), anchored
    at CODATA Key Values 1989 (Cox, Wagman & Medvedev; from memory)."""
    return {
        "N2": make_species("nitrogen", "N2", "g", [("N", 2)], dfH=(0.0, None),
                           S=(191.609, 0.004), cp=_nasa_pieces("gri30.yaml", "N2")),
        "O2": make_species("oxygen", "O2", "g", [("O", 2)], dfH=(0.0, None),
                           S=(205.152, 0.005), cp=_nasa_pieces("gri30.yaml", "O2")),
        "H2": make_species("hydrogen", "H2", "g", [("H", 2)], dfH=(0.0, None),
                           S=(130.680, 0.003), cp=_nasa_pieces("gri30.yaml", "H2")),
        "CO2": make_species("carbon-dioxide", "CO2", "g", [("C", 1), ("O", 2)],
                            dfH=(-393.51, 0.13), S=(213.785, 0.010),
                            cp=_nasa_pieces("gri30.yaml", "CO2")),
        "H2O": make_species("water-gas", "H2O", "g", [("H", 2), ("O", 1)],
                            dfH=(-241.826, 0.040), S=(188.835, 0.010),
                            cp=_nasa_pieces("gri30.yaml", "H2O")),
        # graphite: NASA7 from nasa_condensed.yaml (McBride et al.); S CODATA 1989.
        "C": make_species("graphite", "C", "cr", [("C", 1)], dfH=(0.0, None),
                          S=(5.74, 0.10), cp=_nasa_pieces("nasa_condensed.yaml", "C(gr)"),
                          form="graphite"),
    }


# Chase 1998, JANAF Thermochemical Tables 4th ed., 1 bar; all from memory.
# (T, H - H298 [kJ/mol], S [J/(mol K)])
JANAF = {
    "N2": [(500.0, 5.912, 206.739), (1000.0, 21.463, 228.170), (1500.0, 38.405, 241.880)],
    "CO2": [(500.0, 8.305, 234.901), (1000.0, 33.397, 269.299), (1500.0, 61.705, 292.199)],
}


@pytest.mark.parametrize("name", ["N2", "CO2"])
def test_janaf_H_and_S(gri, name):
    # Tolerances 0.05 kJ/mol and 0.1 J/(mol K): GRI fits and JANAF differ by ~0.01-0.02
    # (the fits are not to JANAF exactly); the recalled values were checked against an
    # independent (cantera) evaluation of the same polynomials before use.  gri30's N2
    # starts at 300 K: its 298.15 K anchor uses the documented 1.85 K extension.
    T = np.array([row[0] for row in JANAF[name]])
    f = spp.species_functions(gri[name], T)
    np.testing.assert_allclose(f.H_minus_H298, [r[1] for r in JANAF[name]], atol=0.05)
    np.testing.assert_allclose(f.S, [r[2] for r in JANAF[name]], atol=0.1)
    assert not f.extrapolated.any()
    assert f.covered == {"N2": (300.0, 5000.0), "CO2": (200.0, 3500.0)}[name]


def test_species_curves_match_cantera_across_the_piece_boundary():
    ct = pytest.importorskip("cantera")
    gas = ct.Solution("gri30.yaml")
    th = gas.species("CH4").thermo
    # Anchored at cantera's own h, s at 298.15 K, the cumulative curves follow cantera's
    # absolute polynomials on both sides of 1000 K (check values: cantera evaluation).
    sp = make_species("methane", "CH4", "g", [("C", 1), ("H", 4)],
                      dfH=th.h(298.15) / 1e6, S=th.s(298.15) / 1e3,
                      cp=_nasa_pieces("gri30.yaml", "CH4"))
    T = np.array([250.0, 298.15, 700.0, 1000.0, 1800.0, 3000.0])
    f = spp.species_functions(sp, T)
    np.testing.assert_allclose(f.H, [th.h(t) / 1e6 for t in T], atol=1e-4)
    np.testing.assert_allclose(f.S, [th.s(t) / 1e3 for t in T], atol=1e-6)
    np.testing.assert_allclose(f.Cp, [th.cp(t) / 1e3 for t in T], rtol=1e-6)
    g = [(th.h(t) - t * th.s(t)) / 1e6 for t in T]
    np.testing.assert_allclose(f.G, g, atol=1e-4)
    gef = [-(gg - th.h(298.15) / 1e6) * 1000 / t for gg, t in zip(g, T, strict=True)]
    np.testing.assert_allclose(f.gef, gef, atol=1e-6)


def test_extrapolation_flags_and_anchor_extension():
    # A piece starting at 300 K: 298.15 K is the (unflagged) anchor, 299 K is flagged.
    p = CpPiece("constant", 300.0, 1000.0, (30.0,))
    sp = make_species("x", "X", "g", [("X", 1)], dfH=1.0, S=100.0, cp=[p])
    T = np.array([250.0, 298.15, 299.0, 300.0, 1000.0, 1200.0])
    f = spp.species_functions(sp, T)
    assert f.extrapolated.tolist() == [True, False, True, False, False, True]
    assert f.covered == (300.0, 1000.0)
    # Constant Cp: analytic H - H298 = Cp (T - 298.15), S = S298 + Cp ln(T/298.15).
    np.testing.assert_allclose(f.H_minus_H298, 30.0 * (T - 298.15) / 1000.0, atol=1e-12)
    np.testing.assert_allclose(f.S, 100.0 + 30.0 * np.log(T / 298.15), atol=1e-12)
    np.testing.assert_allclose(f.H, 1.0 + f.H_minus_H298)
    # gef = S - (H - H298)/T (definition).
    np.testing.assert_allclose(f.gef, f.S - 1000.0 * f.H_minus_H298 / T)


def test_pieces_joined_cumulatively_and_gap_midpoint():
    # Two constant pieces with a gap [500, 600]: the switch is at 550 K (nearest piece),
    # analytic integrals on either side; the gap is flagged.
    pieces = [CpPiece("constant", 250.0, 500.0, (20.0,)),
              CpPiece("constant", 600.0, 900.0, (40.0,))]
    sp = make_species("x", "X", "g", [("X", 1)], dfH=0.0, S=50.0, cp=pieces[::-1])
    T = np.array([400.0, 540.0, 560.0, 800.0])
    f = spp.species_functions(sp, T)
    below = 20.0 * (T - 298.15)
    above = 20.0 * (550.0 - 298.15) + 40.0 * (T - 550.0)
    np.testing.assert_allclose(f.H_minus_H298 * 1000, np.where(T < 550, below, above))
    S_above = 50 + 20.0 * math.log(550 / 298.15) + 40.0 * np.log(T / 550.0)
    np.testing.assert_allclose(f.S, np.where(T < 550, 50 + 20 * np.log(T / 298.15), S_above))
    np.testing.assert_allclose(f.Cp, [20.0, 20.0, 40.0, 40.0])
    assert f.extrapolated.tolist() == [False, True, True, False]


def test_standard_cp_only_and_no_cp_and_missing_S():
    sp = make_species("w", "H2O", "l", [("H", 2), ("O", 1)], dfH=-285.83, S=69.95, Cp=75.3)
    f = spp.species_functions(sp, [298.15, 350.0])
    assert f.basis == "constant-Cp" and f.covered is None
    assert f.extrapolated.tolist() == [False, True]
    assert f.H[1] == pytest.approx(-285.83 + 75.3 * (350 - 298.15) / 1000)

    bare = make_species("w", "H2O", "l", [("H", 2), ("O", 1)], dfH=-285.83, S=69.95)
    f = spp.species_functions(bare, np.array([298.15, 350.0]))
    assert f.basis == "none"
    assert f.H[0] == -285.83 and f.S[0] == 69.95 and f.H_minus_H298[0] == 0.0
    assert np.isnan(f.H[1]) and np.isnan(f.S[1]) and np.isnan(f.Cp).all()
    assert f.extrapolated.tolist() == [False, True]

    no_S = make_species("w", "H2O", "l", [("H", 2), ("O", 1)], dfH=-285.83, Cp=75.3)
    f = spp.species_functions(no_S, 400.0)
    assert f.T.shape == () and np.isnan(f.S) and np.isnan(f.G) and np.isfinite(f.H)


def test_dfG_of_liquid_water_at_298():
    # CODATA Key Values 1989 (from memory): H2O(l) dfH -285.830 +- 0.040, S 69.95 +- 0.03;
    # H2(g) S 130.680 +- 0.003; O2(g) S 205.152 +- 0.005.  dfG(H2O, l) = -237.14 kJ/mol
    # (CODATA 1989 / Wagman et al. 1982, from memory).
    water = make_species("water", "H2O", "l", [("H", 2), ("O", 1)],
                         dfH=(-285.830, 0.040), S=(69.95, 0.03))
    refs = {"H": make_species("hydrogen", "H2", "g", [("H", 2)], dfH=0.0, S=(130.680, 0.003)),
            "O": make_species("oxygen", "O2", "g", [("O", 2)], dfH=0.0, S=(205.152, 0.005))}
    f = spp.formation_functions(water, refs, 298.15)
    assert float(f.dfH) == pytest.approx(-285.830, abs=1e-9)
    assert float(f.dfG) == pytest.approx(-237.14, abs=0.02)
    # log10 Kf = 237.14e3 / (R 298.15 ln 10) = 41.545 (hand arithmetic, CODATA 2018 R).
    assert float(f.log10Kf) == pytest.approx(41.545, abs=0.005)
    # GUM eq. (10), hand arithmetic: sqrt(0.040^2 + 0.29815^2 (0.03^2 + 0.003^2 + 0.0025^2))
    assert float(f.u_dfG) == pytest.approx(0.041004, abs=2e-6)
    assert float(f.u_dfH) == pytest.approx(0.040)
    assert dict(f.terms) == {"hydrogen": 1.0, "oxygen": 0.5}
    assert f.missing == ()


# Chase 1998, JANAF 4th ed., at 1000 K (from memory): (dfH, dfG kJ/mol, log10 Kf).
JANAF_FORMATION_1000 = {"CO2": (-394.623, -395.886, 20.679), "H2O": (-247.857, -192.590, 10.060)}


@pytest.mark.parametrize("name", ["CO2", "H2O"])
def test_formation_at_1000K_against_janaf(gri, name):
    # Tolerance 0.1 kJ/mol and 0.01 in log10 K: the GRI/NASA fits and the CODATA anchors
    # differ from JANAF's own data by a few 0.01 kJ/mol.
    refs = {"H": gri["H2"], "O": gri["O2"], "C": gri["C"]}
    f = spp.formation_functions(gri[name], refs, np.array([1000.0]))
    dfH, dfG, logK = JANAF_FORMATION_1000[name]
    assert f.dfH[0] == pytest.approx(dfH, abs=0.1)
    assert f.dfG[0] == pytest.approx(dfG, abs=0.1)
    assert f.log10Kf[0] == pytest.approx(logK, abs=0.01)
    assert f.log10Kf[0] == pytest.approx(-1000 * f.dfG[0] / (R * 1000.0 * LN10), rel=1e-12)
    assert not f.extrapolated.any()


def test_element_in_reference_state_is_zero(gri):
    f = spp.formation_functions(gri["O2"], {"O": gri["O2"]}, np.array([298.15, 1500.0]))
    np.testing.assert_allclose(f.dfH, 0.0, atol=1e-12)
    np.testing.assert_allclose(f.dfG, 0.0, atol=1e-12)
    assert np.isnan(f.u_dfG[1])  # the dfH of O2 was given without an uncertainty


def test_ions_balance_against_hydrogen_ion():
    # Convention: H+(aq) has zero dfH, dfG, S, Cp at all T (Wagman et al. 1982).
    # Cl-(aq): CODATA 1989 dfH -167.080 +- 0.10, S 56.60 +- 0.20; Cl2(g) S 223.081;
    # H2(g) S 130.680 (from memory).  dfG(Cl-, aq) = -131.228 kJ/mol (Wagman et al. 1982,
    # from memory).
    h2 = make_species("hydrogen", "H2", "g", [("H", 2)], dfH=0.0, S=130.680, Cp=28.836)
    cl2 = make_species("chlorine", "Cl2", "g", [("Cl", 2)], dfH=0.0, S=223.081, Cp=33.907)
    cl = make_species("chloride", "Cl-", "aq", [("Cl", 1)], dfH=(-167.080, 0.10),
                      S=(56.60, 0.20), charge=-1)
    refs = {"H": h2, "Cl": cl2}
    f = spp.formation_functions(cl, refs, 298.15)
    assert float(f.dfG) == pytest.approx(-131.228, abs=0.02)
    assert dict(f.terms) == {"chlorine": 0.5, "hydrogen": 0.5}

    hplus = make_species("proton", "H+", "aq", [("H", 1)], dfH=0.0, S=0.0, Cp=0.0, charge=1)
    f = spp.formation_functions(hplus, {}, np.array([298.15, 350.0]))
    np.testing.assert_allclose(f.dfH, 0.0)
    np.testing.assert_allclose(f.dfG, 0.0)
    assert f.terms == () and f.missing == ()


def test_missing_reference_gives_nan():
    sp = make_species("salt", "NaCl", "cr", [("Na", 1), ("Cl", 1)], dfH=-411.0, S=72.1)
    f = spp.formation_functions(sp, {}, 298.15)
    assert np.isnan(f.dfH) and np.isnan(f.dfG)
    assert set(f.missing) == {"Na", "Cl"}


def test_u_linear_gum_eq10():
    # GUM JCGM 100:2008 eq. (10), hand arithmetic: sqrt((1*0.3)^2 + (2*0.2)^2) = 0.5.
    assert spp.u_linear([1.0, -2.0], [0.3, 0.2]) == pytest.approx(0.5)
    assert math.isnan(spp.u_linear([1.0, 1.0], [0.3, None]))
    assert spp.u_linear([1.0, 0.0], [0.3, None]) == pytest.approx(0.3)
    np.testing.assert_allclose(spp.u_linear([1.0, 1.0], [0.3, np.array([0.4, 0.0])]),
                               [0.5, 0.3])


def _demo_species() -> list[Species]:
    from pathlib import Path

    from generator.load import load_handbook

    handbook, _ = load_handbook(Path(__file__).resolve().parents[1] / "sources")
    return list(handbook.species.values())


FIELDS = ("Cp", "H_minus_H298", "H", "S", "G", "gef", "extrapolated")


def test_species_table_gives_each_species_the_bits_it_gets_alone(monkeypatch):
    """Batches of every size and order, threads or not: the same numbers, bit for bit."""
    demo = _demo_species()
    kinds = {p.kind for sp in demo for p in sp.cp}
    assert {"nasa7", "nasa9", "table"} <= kinds  # several layouts, so several groups
    mixed = demo + [make_species("c", "X", "g", (("X", 1),), dfH=1.0, S=2.0, Cp=30.0),
                    make_species("n", "Y", "g", (("Y", 1),), dfH=1.0, S=2.0),
                    make_species("t", "Z", "g", (("Z", 1),), dfH=0.5, S=3.0, cp=(CpPiece(
                        "table", 250.0, 900.0, table_T=(250.0, 500.0, 900.0),
                        table_Cp=(20.0, 25.0, 27.0)),))]
    T = np.array([298.15, 250.0, 700.0, 1500.0, 420.0, 5000.0])  # unsorted on purpose
    alone = {sp.id: spp.species_functions(sp, T) for sp in mixed}
    monkeypatch.setattr(spp, "THREADED_VALUES", 1)  # threads even for this small table
    for order in (mixed, mixed[::-1], mixed[::3] + mixed[1::3] + mixed[2::3]):
        table = spp.species_table(order, T)
        for i, sp in enumerate(order):
            for name in FIELDS:
                assert np.array_equal(getattr(table, name)[i], getattr(alone[sp.id], name),
                                      equal_nan=True), (sp.id, name)
            assert table.covered[i] == alone[sp.id].covered
            assert table.basis[i] == alone[sp.id].basis


def test_species_enthalpies_are_species_tables_H_bit_for_bit():
    """The enthalpy-only path (the adiabatic search's) gives species_table's H and
    extrapolation flags, bit for bit, whatever the batch, sorted or unsorted T."""
    demo = _demo_species()
    mixed = demo + [make_species("c", "X", "g", (("X", 1),), dfH=1.0, S=2.0, Cp=30.0),
                    make_species("n", "Y", "g", (("Y", 1),), dfH=1.0, S=2.0),
                    make_species("t", "Z", "g", (("Z", 1),), dfH=0.5, S=3.0, cp=(CpPiece(
                        "table", 250.0, 900.0, table_T=(250.0, 500.0, 900.0),
                        table_Cp=(20.0, 25.0, 27.0)),))]
    for T in (np.array([298.15, 250.0, 700.0, 1500.0, 420.0, 5000.0]),
              np.linspace(100.0, 6000.0, 129), np.array([298.15])):
        for order in (mixed, mixed[::-1], mixed[::3] + mixed[1::3] + mixed[2::3], mixed[:1]):
            table = spp.species_table(order, T)
            H, extrapolated = spp.species_enthalpies(order, T)
            assert np.array_equal(H, table.H, equal_nan=True)
            assert np.array_equal(extrapolated, table.extrapolated)


def test_polynomial_forms_agree_with_each_models_own_formulas():
    """The batched path's c_n T^n form against cp_models' Horner forms of each kind."""
    from generator.thermo import cp_models

    T = np.linspace(250.0, 3000.0, 57)
    shomate = CpPiece("shomate", 298.0, 3000.0,  # arbitrary coefficients: a form check only
                      coeffs=(30.1, 6.8, 6.8, -2.5, 0.08, -250.9, 223.4, -241.8))
    for sp in [*_demo_species(), make_species("s", "X", "g", (("X", 1),), cp=(shomate,))]:
        for piece in sp.cp:
            c = spp.poly_coefficients(piece)
            if c is None:
                continue
            h, s = spp.poly_forms(c[None, :])
            out = np.empty((1, T.size))
            assert np.allclose(spp._poly_cp(c[None, :], T, out)[0], cp_models.cp(piece, T),
                               rtol=1e-12, atol=1e-9)
            dh = spp._poly_h(h, T, out.copy())[0]
            ref = cp_models.h_antiderivative(piece, T)
            assert np.allclose(dh - dh[0], ref - ref[0], rtol=1e-10, atol=1e-8)
            ds = spp._poly_s(s, T, out.copy())[0]
            ref = cp_models.s_antiderivative(piece, T)
            assert np.allclose(ds - ds[0], ref - ref[0], rtol=1e-10, atol=1e-8)
