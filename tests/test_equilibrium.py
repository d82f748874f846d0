"""Equilibrium of one reaction: closed-form cases, an independent library, the demo, the CLI.

Independent library: cantera 3.2's own Gibbs minimiser (``ThermoPhase.equilibrate("TP")``)
on species built from GRI-Mech 3.0 (Smith et al. 1999, the ``gri30.yaml`` shipped with
cantera); the engine gets the same NASA polynomials, anchored at cantera's own h and s at
298.15 K, so both use the same data and the comparison tests only the solvers.
"""

from __future__ import annotations

import json
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from conftest import REPO
from generator.cli import main
from generator.model import CpPiece, Quantity, Species, Value
from generator.thermo.equilibrium import equilibrium, equilibrium_curves, extent_bounds

R = 6.02214076e23 * 1.380649e-23  # CODATA 2018: R = N_A k_B exactly, J/(mol K)
DEMO = REPO / "sources"
ATM = 101325.0  # Pa, the reference pressure of cantera's gri30 species thermo


def make(sid: str, phase: str, dfH: float, S: float, cp: float = 30.0,
         elements=(("X", 1),), molar_mass: float = 0.0) -> Species:
    """A species with constant Cp over 100-3000 K; dfH kJ/mol, S J/(mol K)."""
    standard = {"dfH": Quantity("dfH", (Value(dfH, "kJ/mol", 0.0),)),
                "S": Quantity("S", (Value(S, "J/(mol*K)", 0.0),))}
    return Species(sid, sid, phase, sid, tuple(elements), 0, molar_mass, standard,
                   cp=(CpPiece("constant", 100.0, 3000.0, (cp,)),))


def lnQ(nu, res, P, gas, aq=(), w=1.0):
    """ln Q from the returned amounts, computed here from the definitions."""
    n_gas = sum(res.n[s] for s in gas)
    total = 0.0
    for s, v in nu.items():
        if s in gas:
            total += v * math.log(res.n[s] / n_gas * P / 1e5)
        elif s in aq:
            total += v * math.log(res.n[s] / w)
    return total


# --- closed forms (hand algebra; K chosen through drS with drH = 0, drCp = 0) -------------

def test_isomerisation_K4_gives_80_percent():
    # A(g) = B(g), drH = 0, drS = R ln 4 -> K = 4 at every T; y_B / y_A = 4 -> X = 0.8.
    sp = {"a": make("a", "g", 0.0, 100.0), "b": make("b", "g", 0.0, 100.0 + R * math.log(4))}
    res = equilibrium({"a": -1, "b": 1}, sp, {"a": 1.0}, [500.0, 1500.0], 3e5)
    for r in res:
        assert r.conversion == pytest.approx(0.8, abs=1e-12)
        assert r.x["b"] == pytest.approx(0.8, abs=1e-12)
        assert r.limited_by is None and r.note == ""


def test_reverse_direction_from_products():
    # Same K = 4 from pure B: xi = -0.2 (B -> A until y_B/y_A = 4); A absent -> no conversion.
    sp = {"a": make("a", "g", 0.0, 100.0), "b": make("b", "g", 0.0, 100.0 + R * math.log(4))}
    (r,) = equilibrium({"a": -1, "b": 1}, sp, {"b": 1.0}, 800.0, 1e5)
    assert r.extent == pytest.approx(-0.2, abs=1e-12)
    assert r.conversion is None
    assert extent_bounds({"a": -1, "b": 1}, {"b": 1.0}) == (-1.0, 0.0)


def test_dissociation_K1_at_1_bar():
    # A2(g) = 2 A(g), K = 1: 4 xi^2 / (1 - xi^2) = 1 -> xi = 1/sqrt(5) = 0.4472136.
    sp = {"a2": make("a2", "g", 0.0, 100.0), "a": make("a", "g", 0.0, 50.0, cp=15.0)}
    (r,) = equilibrium({"a2": -1, "a": 2}, sp, {"a2": 1.0}, 1000.0, 1e5)
    assert r.extent == pytest.approx(1 / math.sqrt(5), rel=1e-12)


def test_trace_dissociation_keeps_relative_precision():
    # K = 1e-40: 4 xi^2 / (1 - xi^2) = 1e-40 -> xi = 5e-21 to first order (xi^2 << 1).
    lnK = math.log(1e-40)
    sp = {"a2": make("a2", "g", 0.0, 100.0), "a": make("a", "g", 0.0, 50.0 + R * lnK / 2,
                                                       cp=15.0)}
    (r,) = equilibrium({"a2": -1, "a": 2}, sp, {"a2": 1.0}, 1000.0, 1e5)
    assert r.extent == pytest.approx(5e-21, rel=1e-9)
    assert r.x["a"] == pytest.approx(1e-20, rel=1e-9)


def test_huge_K_leaves_a_trace_of_the_limiting_reactant():
    # A(g) = B(g) with K = 1e30: n_A = 1/(1 + K) = 1e-30 from 1 mol of A.
    sp = {"a": make("a", "g", 0.0, 100.0), "b": make("b", "g", 0.0, 100.0 + R * math.log(1e30))}
    (r,) = equilibrium({"a": -1, "b": 1}, sp, {"a": 1.0}, 700.0, 1e5)
    assert r.n["a"] == pytest.approx(1e-30, rel=1e-9)
    assert r.conversion == 1.0


def _decomposition(lnK: float) -> dict[str, Species]:
    # AB(cr) = A(cr) + B(g) with drH = 0, drS = R lnK, drCp = 0: K = p_B / P°.
    return {"ab": make("ab", "cr", 0.0, 50.0, cp=45.0), "a": make("a", "cr", 0.0, 20.0, 15.0),
            "b": make("b", "g", 0.0, 30.0 + R * lnK), "n": make("n", "g", 0.0, 150.0)}


def test_condensed_reactant_used_up_below_decomposition_pressure():
    # K = p_B/P° = 0.5; pure B gas at 0.4 bar: Q = 0.4 < K for every extent -> AB used up.
    sp = _decomposition(math.log(0.5))
    (r,) = equilibrium({"ab": -1, "a": 1, "b": 1}, sp, {"ab": 2.0}, 1000.0, 0.4e5)
    assert r.extent == pytest.approx(2.0, abs=1e-12)
    assert r.limited_by == "ab" and "used up" in r.note


def test_condensed_reactant_stays_above_decomposition_pressure():
    # Pure B gas at 1 bar: Q = 1 > K = 0.5 -> no decomposition.
    sp = _decomposition(math.log(0.5))
    (r,) = equilibrium({"ab": -1, "a": 1, "b": 1}, sp, {"ab": 2.0}, 1000.0, 1e5)
    assert abs(r.extent) < 1e-12 and r.conversion == pytest.approx(0.0, abs=1e-12)


def test_condensed_decomposition_into_an_inert_gas():
    # With 1 mol of inert gas at 1 bar: y_B = xi / (1 + xi) = K = 0.5 -> xi = 1 mol.
    sp = _decomposition(math.log(0.5))
    (r,) = equilibrium({"ab": -1, "a": 1, "b": 1}, sp, {"ab": 2.0, "n": 1.0}, 1000.0, 1e5)
    assert r.extent == pytest.approx(1.0, rel=1e-12) and r.limited_by is None
    # x over all species: AB 1, A 1, B 1, N 1 -> 0.25 each.
    assert r.x["ab"] == pytest.approx(0.25, rel=1e-12)


def test_ideal_aqueous_dissociation():
    # A(aq) = B(aq) + C(aq), K = 0.01, 0.1 mol A in 1 kg water (55.5084 mol at 18.01528
    # g/mol, IUPAC 2013): xi^2/(0.1 - xi) = 0.01 -> xi = (-0.01 + sqrt(0.0041))/2 = 0.0270156.
    water = make("w", "l", -285.83, 69.95, 75.3, (("H", 2), ("O", 1)), molar_mass=18.01528)
    sp = {"a": make("a", "aq", 0.0, 0.0), "b": make("b", "aq", 0.0, R * math.log(0.01)),
          "c": make("c", "aq", 0.0, 0.0), "w": water}
    (r,) = equilibrium({"a": -1, "b": 1, "c": 1}, sp, {"a": 0.1, "w": 1000 / 18.01528},
                       298.15, 1e5)
    assert r.extent == pytest.approx((-0.01 + math.sqrt(0.0041)) / 2, rel=1e-10)


def test_aqueous_without_water_is_refused():
    sp = {"a": make("a", "aq", 0.0, 0.0), "b": make("b", "aq", 0.0, 0.0)}
    with pytest.raises(ValueError, match="solvent"):
        equilibrium({"a": -1, "b": 1}, sp, {"a": 1.0}, 298.15, 1e5)


@settings(max_examples=60, deadline=None)
@given(lnK=st.floats(-30, 30), n_a2=st.floats(0.0, 5.0), n_a=st.floats(0.0, 5.0),
       inert=st.floats(0.0, 5.0), P=st.floats(1e3, 1e7))
def test_root_satisfies_lnQ_equals_lnK(lnK, n_a2, n_a, inert, P):
    """Any feed that can react: the returned amounts satisfy ln Q = ln K (definition)."""
    if n_a2 + n_a < 1e-3 or min(n_a2, n_a) == 0 and max(n_a2, n_a) < 1e-3:
        return
    sp = {"a2": make("a2", "g", 0.0, 100.0), "a": make("a", "g", 0.0, 50.0 + R * lnK / 2,
                                                       cp=15.0), "n": make("n", "g", 0, 1)}
    nu = {"a2": -1, "a": 2}
    (r,) = equilibrium(nu, sp, {"a2": n_a2, "a": n_a, "n": inert}, 1000.0, P)
    lo, hi = extent_bounds(nu, {"a2": n_a2, "a": n_a})
    assert lo <= r.extent <= hi
    if min(r.n["a2"], r.n["a"]) > 1e-250:
        assert lnQ(nu, r, P, ("a2", "a", "n")) == pytest.approx(lnK, abs=1e-6)


def test_curves_one_per_feed_and_pressure():
    sp = {"a2": make("a2", "g", 0.0, 100.0), "a": make("a", "g", 0.0, 50.0, cp=15.0)}
    curves = equilibrium_curves({"a2": -1, "a": 2}, sp, [{"a2": 1.0}], [800, 900, 1000],
                                [1e5, 1e6])
    assert [c.P for c in curves] == [1e5, 1e6]
    # Le Chatelier (common practice, no source): more moles of gas -> less at higher P.
    assert all(curves[1].conversion < curves[0].conversion)


# --- against cantera's equilibrium solver on the same data ------------------------------

def cantera_species(names: list[str]) -> tuple[dict[str, Species], list]:
    """Engine species from GRI-Mech 3.0 NASA7 fits (Smith et al. 1999, gri30.yaml), anchored
    at cantera's own h(298.15) and s(298.15)."""
    ct = pytest.importorskip("cantera")
    by_name = {s.name: s for s in ct.Species.list_from_file("gri30.yaml")}
    out, ct_species = {}, []
    for name in names:
        s = by_name[name]
        c = s.thermo.coeffs
        pieces = (CpPiece("nasa7", s.thermo.min_temp, c[0], tuple(c[8:15])),
                  CpPiece("nasa7", c[0], s.thermo.max_temp, tuple(c[1:8])))
        standard = {"dfH": Quantity("dfH", (Value(s.thermo.h(298.15) / 1e6, "kJ/mol"),)),
                    "S": Quantity("S", (Value(s.thermo.s(298.15) / 1e3, "J/(mol*K)"),))}
        out[name] = Species(name, name, "g", name, tuple(s.composition.items()), 0, 0.0,
                            standard, cp=pieces)
        ct_species.append(s)
    return out, ct_species


CASES = [  # (species in cantera's set, reaction nu, feed)
    (["N2", "H2", "NH3"], {"N2": -1, "H2": -3, "NH3": 2}, {"N2": 1.0, "H2": 3.0},
     [(700.0, 1e5), (700.0, 100e5), (800.0, 1e5), (800.0, 100e5)]),
    (["CH4", "H2O", "CO", "H2", "N2"], {"CH4": -1, "H2O": -1, "CO": 1, "H2": 3},
     {"CH4": 1.0, "H2O": 3.0, "N2": 0.1},
     [(900.0, 1e5), (900.0, 20e5), (1100.0, 1e5), (1100.0, 20e5)]),
]


@pytest.mark.parametrize("names,nu,feed,points", CASES, ids=["ammonia", "steam-reforming"])
def test_against_cantera_equilibrate(names, nu, feed, points):
    ct = pytest.importorskip("cantera")
    sp, ct_species = cantera_species(names)
    gas = ct.Solution(thermo="ideal-gas", species=ct_species)
    first = next(s for s, n in nu.items() if n < 0)
    for T, P in points:
        (r,) = equilibrium(nu, sp, feed, T, P, standard_pressure=ATM)
        gas.TPX = T, P, feed
        gas.equilibrate("TP")
        for name in names:
            assert r.x[name] == pytest.approx(gas[name].X[0], abs=1e-4), (T, P, name)
        # Conversion of the first reactant from cantera's mole fractions via the inert-free
        # element balance: n_total from the conserved amount of the first reactant's element.
        total_in = sum(feed.values())
        dn = sum(nu.values())
        # n_total = total_in + dn * xi and n_first = feed - |nu| xi give xi from x_first.
        x1, a = gas[first].X[0], -nu[first]
        xi = (feed[first] - x1 * total_in) / (a + x1 * dn)
        assert r.conversion == pytest.approx(a * xi / feed[first], abs=1e-3), (T, P)


# --- demo handbook and the water-gas shift -------------------------------------------------

def test_water_gas_shift_K_near_one_at_1100_K(capsys):
    main(["calc", "water-gas-shift", "--sources", str(DEMO), "-T", "1100", "--feed",
          "CO=1,H2O=1", "--json"])
    doc = json.loads(capsys.readouterr().out)
    # K of CO + H2O = CO2 + H2 is about 1 near 1100 K (common practice, no source).
    assert 0.8 < doc["rows"][0]["K"] < 1.25
    # With K = 1 and CO:H2O 1:1, xi^2/(1-xi)^2 = 1 gives conversion 0.5 (hand algebra), so
    # near 1100 K the conversion lies near one half.
    (eq,) = doc["equilibrium"]
    assert 0.45 < eq["conversion"] < 0.55


def test_calc_json_equilibrium_shape(capsys):
    code = main(["calc", "CH4(g) + H2O(g) -> CO(g) + 3 H2(g)", "--sources", str(DEMO),
                 "--feed", "CH4=1,H2O=3,N2=0.1", "--pressure", "20bar", "--pressure",
                 "1 bar", "-T", "1100", "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert code == 0
    assert [set(e) for e in doc["equilibrium"]] == [{"T", "P", "extent", "conversion",
                                                     "x"}] * 2
    assert [e["P"] for e in doc["equilibrium"]] == [20.0, 1.0]  # bar
    e20, e1 = doc["equilibrium"]
    assert set(e20["x"]) == {"CH4(g)", "H2O(g)", "CO(g)", "H2(g)", "N2"}
    assert sum(e20["x"].values()) == pytest.approx(1.0, abs=1e-9)
    assert e20["conversion"] == e20["extent"]  # 1 mol CH4, nu = -1
    # Le Chatelier (common practice, no source): reforming makes moles, so it goes further
    # at 1 bar than at 20 bar.
    assert e1["conversion"] > e20["conversion"]


def test_calc_text_names_the_used_up_reactant(capsys):
    # Limestone decomposes fully above about 1170 K under 1 bar of CO2 (common practice,
    # no source): at 1300 K the calcite is used up.
    assert main(["calc", "lime-burning", "--sources", str(DEMO), "-T", "1300", "--feed",
                 "{calcite}=1"]) == 0
    out = capsys.readouterr().out
    assert "equilibrium from feed" in out and "CaCO3(cr) is used up" in out


def test_calc_uses_the_reactions_conditions_feed(capsys):
    main(["calc", "ammonia-synthesis", "--sources", str(DEMO), "--pressure", "100 bar",
          "-T", "700", "--json"])
    (eq,) = json.loads(capsys.readouterr().out)["equilibrium"]
    # Demo feed N2:H2 = 1:3, so the gas keeps that ratio (stoichiometry).
    assert eq["x"]["H2(g)"] == pytest.approx(3 * eq["x"]["N2(g)"], rel=1e-9)


@pytest.mark.parametrize("args,code,text", [
    (["--pressure", "20"], 2, "needs a unit"),
    (["--feed", "CH4=1,H2O"], 2, "SPECIES=MOL"),
    (["--feed", "CH4=x"], 2, "not a number"),
    (["--feed", "CH4=1,Xe=1"], 1, "<feed>:1:7: error: no species with formula Xe"),
    (["--feed", "N2=1"], 1, "neither forwards nor backwards"),
])
def test_calc_feed_and_pressure_errors(args, code, text, capsys):
    assert main(["calc", "steam-methane-reforming", "--sources", str(DEMO), *args]) == code
    err = capsys.readouterr().err
    assert text in err and "Traceback" not in err


def test_demo_conditions_are_resolved():
    from generator.load import load_handbook

    hb, _ = load_handbook(DEMO)
    c = hb.reactions["steam-methane-reforming"].conditions
    assert c is not None and c.pressures == (1e5, 20e5) and c.T_range == (700.0, 1300.0)
    assert c.feeds[0].amounts == {"methane": 1.0, "water-gas": 3.0}
    air = hb.reactions["methane-combustion-vapour"].conditions.feeds[0].amounts
    assert air["nitrogen"] == pytest.approx(2 * 3.76)  # air as O2 + 3.76 N2 (common practice)
