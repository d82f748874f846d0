"""Unit tests of the reaction engine on small invented species with constant Cp.

With constant drCp the curves have closed forms (Kirchhoff's law, e.g. Atkins & de Paula,
Physical Chemistry, any edition):
    drH(T) = drH(298.15) + drCp (T - 298.15),  drS(T) = drS(298.15) + drCp ln(T / 298.15).
Expected values below are written out from these forms, never taken from the engine.
The species and their numbers are invented for the tests (no source needed).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

from generator.model import CpPiece, Quantity, Species, Value
from generator.thermo.reactions import (
    character,
    crossover_temperatures,
    gas_change,
    hess_sum,
    reaction_functions,
)

# CODATA 2018 (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010): N_A, k_B and e are exact
# since the 2019 SI, so R = N_A k_B = 8.314462618... J/(mol K), F = N_A e = 96485.33212... C/mol.
R_CODATA = 6.02214076e23 * 1.380649e-23  # J/(mol K)
F_CODATA = 6.02214076e23 * 1.602176634e-19  # C/mol
T0 = 298.15


def sp(sid: str, phase: str, dfH, S, pieces: tuple[CpPiece, ...]) -> Species:
    """An invented species; dfH and S as (value, unc) with unc possibly None."""
    standard = {
        "dfH": Quantity("dfH", (Value(dfH[0], "kJ/mol", dfH[1]),)),
        "S": Quantity("S", (Value(S[0], "J/(mol*K)", S[1]),)),
    }
    return Species(sid, sid, phase, sid, ((sid, 1),), 0, 0.0, standard, cp=pieces)


def const(cp: float, lo: float = 100.0, hi: float = 3000.0) -> tuple[CpPiece, ...]:
    return (CpPiece("constant", lo, hi, (cp,)),)


# 2 A(g) + X(cr) -> B(g):
#   drH298 = -50 - 2(-100) - (-20) = 170 kJ/mol;  drS298 = 250 - 2(200) - 10 = -160 J/(mol K)
#   drCp = 40 - 2(30) - 25 = -45 J/(mol K);  dn(gas) = 1 - 2 = -1
#   u(drH) = sqrt(2^2 0.3^2 + 0.2^2 + 0.5^2) = sqrt(0.65)
#   u(drS) = sqrt(2^2 0.4^2 + 0.1^2 + 1.2^2) = sqrt(2.09)
SPECIES = {
    "A": sp("A", "g", (-100.0, 0.3), (200.0, 0.4), const(30.0)),
    "B": sp("B", "g", (-50.0, 0.5), (250.0, 1.2), const(40.0)),
    "X": sp("X", "cr", (-20.0, 0.2), (10.0, 0.1), const(25.0)),
}
NU = {"A": -2.0, "X": -1.0, "B": 1.0}
T = np.array([298.15, 500.0, 1000.0, 2000.0])


def kirchhoff(dH298: float, dS298: float, dCp: float, t):
    """(drH kJ/mol, drS J/(mol K), drG kJ/mol) for constant drCp."""
    t = np.asarray(t, dtype=float)
    dH = dH298 + dCp * (t - T0) / 1000.0
    dS = dS298 + dCp * np.log(t / T0)
    return dH, dS, dH - t * dS / 1000.0


def test_closed_form_curves():
    rf = reaction_functions(NU, SPECIES, T)
    dH, dS, dG = kirchhoff(170.0, -160.0, -45.0, T)
    np.testing.assert_allclose(rf.drH, dH, atol=1e-9)
    np.testing.assert_allclose(rf.drS, dS, atol=1e-9)
    np.testing.assert_allclose(rf.drG, dG, atol=1e-9)
    np.testing.assert_allclose(rf.drCp, -45.0, atol=1e-9)


def test_drU_is_drH_minus_dn_gas_RT():
    assert gas_change(NU, SPECIES) == -1.0
    rf = reaction_functions(NU, SPECIES, T)
    dH, _dS, _dG = kirchhoff(170.0, -160.0, -45.0, T)
    np.testing.assert_allclose(rf.drU, dH + R_CODATA * T / 1000.0, atol=1e-9)


def test_TdrS():
    rf = reaction_functions(NU, SPECIES, T)
    _dH, dS, _dG = kirchhoff(170.0, -160.0, -45.0, T)
    np.testing.assert_allclose(rf.TdrS, T * dS / 1000.0, atol=1e-9)


def test_uncertainties_gum():
    rf = reaction_functions(NU, SPECIES, T)
    np.testing.assert_allclose(rf.u_drH, math.sqrt(0.65), atol=1e-12)
    np.testing.assert_allclose(rf.u_drS, math.sqrt(2.09), atol=1e-12)
    u_G = np.sqrt(0.65 + (T * math.sqrt(2.09) / 1000.0) ** 2)
    np.testing.assert_allclose(rf.u_drG, u_G, atol=1e-12)
    # u(log10 K) = u(drG) / (R T ln 10)
    np.testing.assert_allclose(rf.u_log10K, 1000.0 * u_G / (R_CODATA * T * math.log(10.0)),
                               rtol=1e-12)


def test_reference_element_without_stated_unc_counts_as_exact():
    """Element reference states have dfH = 0 exactly by definition; the demo sources write
    them as "0 kJ/mol" with no uncertainty.  u(drH) of C + O2 -> CO2 should then be
    u(dfH(CO2)) = 0.13 kJ/mol (CODATA 1989, from memory)."""
    species = {
        "C": sp("C", "cr", (0.0, None), (5.74, 0.10), const(8.5)),
        "O2": sp("O2", "g", (0.0, None), (205.152, 0.005), const(29.4)),
        "CO2": sp("CO2", "g", (-393.51, 0.13), (213.785, 0.010), const(37.1)),
    }
    rf = reaction_functions({"C": -1.0, "O2": -1.0, "CO2": 1.0}, species, [T0])
    assert rf.u_drH[0] == pytest.approx(0.13, abs=1e-12)


def test_K_and_log10K():
    rf = reaction_functions(NU, SPECIES, T)
    _dH, _dS, dG = kirchhoff(170.0, -160.0, -45.0, T)
    log10K = -1000.0 * dG / (R_CODATA * T * math.log(10.0))
    np.testing.assert_allclose(rf.log10K, log10K, rtol=1e-12)
    np.testing.assert_allclose(rf.K, 10.0**log10K, rtol=1e-9)


def test_overflowing_K_stays_finite_in_log10K():
    # P(g) with dfH = -3000 kJ/mol: A -> P has drG(298.15) = -3000 - (-100) = -2900 kJ/mol
    # (drS = 200 - 200 = 0),
    # log10 K = 2.9e6 / (8.314462618 * 298.15 * ln 10) = 508.05, beyond a double.
    species = dict(SPECIES, P=sp("P", "g", (-3000.0, 0.1), (200.0, 0.1), const(30.0)))
    log10K = 2.9e6 / (R_CODATA * T0 * math.log(10.0))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        fwd = reaction_functions({"A": -1.0, "P": 1.0}, species, [T0])
        rev = reaction_functions({"P": -1.0, "A": 1.0}, species, [T0])
    assert np.isfinite(fwd.log10K[0]) and fwd.log10K[0] == pytest.approx(log10K, rel=1e-12)
    assert np.isinf(fwd.K[0]) and fwd.K[0] > 0
    assert rev.log10K[0] == pytest.approx(-log10K, rel=1e-12)
    assert rev.K[0] == 0.0


def test_electrons():
    rf = reaction_functions(NU, SPECIES, T, electrons=2)
    dH, _dS, dG = kirchhoff(170.0, -160.0, -45.0, T)
    np.testing.assert_allclose(rf.E, -1000.0 * dG / (2 * F_CODATA), rtol=1e-12)
    np.testing.assert_allclose(rf.Etn, 1000.0 * dH / (2 * F_CODATA), rtol=1e-12)
    plain = reaction_functions(NU, SPECIES, T)
    assert plain.E is None and plain.Etn is None


def test_scalar_temperature():
    rf = reaction_functions(NU, SPECIES, 500.0)
    assert rf.drG.shape == (1,)
    assert rf.drG[0] == pytest.approx(float(kirchhoff(170.0, -160.0, -45.0, 500.0)[2]))


# --- character ---------------------------------------------------------------------------

@pytest.mark.parametrize(("drH", "drS", "drG", "enthalpy", "entropy", "gibbs", "driver"), [
    (-10.0, 5.0, -11.5, "exothermic", "entropy rising", "exergonic",
     "favoured by both the enthalpy and the entropy term"),
    (-10.0, -5.0, -8.5, "exothermic", "entropy falling", "exergonic",
     "enthalpy-driven; the entropy term opposes"),
    (10.0, 50.0, -4.9, "endothermic", "entropy rising", "exergonic",
     "entropy-driven; the enthalpy term opposes"),
    (10.0, -5.0, 11.5, "endothermic", "entropy falling", "endergonic",
     "opposed by both the enthalpy and the entropy term"),
    (-10.0, -50.0, 4.9, "exothermic", "entropy falling", "endergonic",
     "held back by the entropy term despite the favourable enthalpy"),
    (10.0, 5.0, 8.5, "endothermic", "entropy rising", "endergonic",
     "held back by the enthalpy term despite the favourable entropy"),
    (0.0, 0.0, 0.0, "thermoneutral", "entropy unchanged", "at equilibrium",
     "the enthalpy and entropy terms balance"),
])
def test_character_words(drH, drS, drG, enthalpy, entropy, gibbs, driver):
    words = character(drH, drS, drG)
    assert words == {"enthalpy": enthalpy, "entropy": entropy, "gibbs": gibbs,
                     "driver": driver}


# --- crossover ---------------------------------------------------------------------------

def _bisect(f, lo: float, hi: float, tol: float = 1e-9) -> float:
    f_lo = f(lo)
    assert f_lo * f(hi) < 0.0
    while hi - lo > tol:
        mid = 0.5 * (lo + hi)
        if f_lo * f(mid) <= 0.0:
            hi = mid
        else:
            lo, f_lo = mid, f(mid)
    return 0.5 * (lo + hi)


def test_crossover_on_curved_data():
    # C -> D: drH298 = 50 kJ/mol, drS298 = 50 J/(mol K), drCp = +30 J/(mol K).
    # The 298.15 K estimate drH/drS = 1000 K; the real root is near 820 K.
    species = {"C": sp("C", "g", (0.0, 0.1), (100.0, 0.1), const(10.0)),
               "D": sp("D", "g", (50.0, 0.1), (150.0, 0.1), const(40.0))}
    nu = {"C": -1.0, "D": 1.0}
    roots = crossover_temperatures(nu, species, 300.0, 2000.0)
    expected = _bisect(lambda t: float(kirchhoff(50.0, 50.0, 30.0, t)[2]), 300.0, 2000.0)
    assert len(roots) == 1
    assert roots[0] == pytest.approx(expected, abs=1e-4)
    assert abs(roots[0] - 1000.0) > 100.0  # far from the 298.15 K estimate
    at_root = reaction_functions(nu, species, roots)
    assert abs(at_root.drG[0]) < 1e-6


def test_two_crossovers():
    # E -> F: drH298 = 10 kJ/mol, drS298 = 50 J/(mol K), drCp = -100 J/(mol K):
    # drG > 0 at 100 K, < 0 at 298.15 K (10 - 14.9), > 0 at 1000 K: two roots.
    species = {"E": sp("E", "g", (0.0, 0.1), (100.0, 0.1), const(120.0)),
               "F": sp("F", "g", (10.0, 0.1), (150.0, 0.1), const(20.0))}
    roots = crossover_temperatures({"E": -1.0, "F": 1.0}, species, 100.0, 2000.0)

    def g(t: float) -> float:
        return float(kirchhoff(10.0, 50.0, -100.0, t)[2])

    assert len(roots) == 2
    assert roots[0] == pytest.approx(_bisect(g, 100.0, T0), abs=1e-4)
    assert roots[1] == pytest.approx(_bisect(g, T0, 1000.0), abs=1e-4)


def test_no_crossover_when_none():
    # exothermic with rising entropy and drCp = 0: drG < 0 at every T
    species = {"G": sp("G", "g", (0.0, 0.1), (100.0, 0.1), const(30.0)),
               "H": sp("H", "g", (-40.0, 0.1), (120.0, 0.1), const(30.0))}
    assert crossover_temperatures({"G": -1.0, "H": 1.0}, species, 200.0, 3000.0) == []


# --- Hess's law --------------------------------------------------------------------------

# Invented-but-plausible constant Cp (no source needed); dfH, S of the CODATA 1989 kind.
HESS = {
    "C": sp("C", "cr", (0.0, 0.0), (5.74, 0.10), const(8.5)),
    "O2": sp("O2", "g", (0.0, 0.0), (205.152, 0.005), const(29.4)),
    "CO": sp("CO", "g", (-110.53, 0.17), (197.66, 0.004), const(29.1)),
    "CO2": sp("CO2", "g", (-393.51, 0.13), (213.785, 0.010), const(37.1)),
}
STEP1 = {"C": -1.0, "O2": -0.5, "CO": 1.0}  # C + 1/2 O2 -> CO
STEP2 = {"CO": -1.0, "O2": -0.5, "CO2": 1.0}  # CO + 1/2 O2 -> CO2


@pytest.mark.parametrize(("f1", "f2", "net"), [
    (1.0, 1.0, {"C": -1.0, "O2": -1.0, "CO2": 1.0}),  # C + O2 -> CO2
    (1.0, -1.0, {"C": -1.0, "CO2": -1.0, "CO": 2.0}),  # C + CO2 -> 2 CO
])
def test_hess_sum_equals_net_stoichiometry(f1, f2, net):
    t = np.array([298.15, 600.0, 1200.0])
    parts = [(f1, reaction_functions(STEP1, HESS, t)), (f2, reaction_functions(STEP2, HESS, t))]
    summed = hess_sum(parts)
    direct = reaction_functions(net, HESS, t)
    for name in ("drH", "drS", "drG", "drCp", "drU"):
        np.testing.assert_allclose(summed[name], getattr(direct, name), atol=1e-9,
                                   err_msg=name)


def test_hess_sum_combustion_value():
    # -110.53 + (-393.51 + 110.53) = -393.51 kJ/mol at 298.15 K
    parts = [(1.0, reaction_functions(STEP1, HESS, [T0])),
             (1.0, reaction_functions(STEP2, HESS, [T0]))]
    assert hess_sum(parts)["drH"][0] == pytest.approx(-393.51, abs=1e-9)


# --- extrapolation flags and covered range -----------------------------------------------

def test_extrapolated_flags():
    # Q: one piece 300-1000 K; W: pieces 200-500 and 600-1500 K (a gap at 500-600 K).
    species = {
        "Q": sp("Q", "g", (0.0, 0.1), (100.0, 0.1), const(30.0, 300.0, 1000.0)),
        "W": sp("W", "g", (-10.0, 0.1), (110.0, 0.1),
                const(30.0, 200.0, 500.0) + const(31.0, 600.0, 1500.0)),
    }
    t = np.array([250.0, 298.15, 299.0, 400.0, 550.0, 1000.0, 1200.0, 1600.0])
    # Q outside 300-1000 except 298.15 itself: 250, 299, 1200, 1600; W: 550 (gap), 1600.
    expected = np.array([True, False, True, False, True, False, True, True])
    rf = reaction_functions({"Q": -1.0, "W": 1.0}, species, t)
    np.testing.assert_array_equal(rf.extrapolated, expected)


def test_covered_range():
    species = {
        "Q": sp("Q", "g", (0.0, 0.1), (100.0, 0.1), const(30.0, 300.0, 1000.0)),
        "W": sp("W", "g", (-10.0, 0.1), (110.0, 0.1), const(30.0, 200.0, 1500.0)),
        "N": sp("N", "g", (-5.0, 0.1), (105.0, 0.1), ()),  # no Cp pieces
        "Z": sp("Z", "g", (-5.0, 0.1), (105.0, 0.1), const(30.0, 1200.0, 2000.0)),
    }
    assert reaction_functions({"Q": -1.0, "W": 1.0}, species, [T0]).covered == (300.0, 1000.0)
    assert reaction_functions({"Q": -1.0, "N": 1.0}, species, [T0]).covered is None
    assert reaction_functions({"Q": -1.0, "Z": 1.0}, species, [T0]).covered is None


def test_character_at_298_is_the_same_with_or_without_the_grid_point():
    """compute reads the 298.15 K character from the grid when the grid holds 298.15 K; a
    handbook whose grid lacks it evaluates 298.15 K on its own: the words are the same, and
    the grid's numbers at 298.15 K are bit for bit those of a one-point evaluation."""
    from dataclasses import replace
    from pathlib import Path

    from generator.compute import compute_handbook
    from generator.load import load_handbook
    from generator.thermo.constants import T_REF

    hb, _ = load_handbook(Path(__file__).resolve().parent.parent / "sources")
    assert hb is not None and T_REF in hb.settings.temperatures
    with_point = compute_handbook(hb)
    grid = tuple(t for t in hb.settings.temperatures if t != T_REF)
    without = compute_handbook(replace(hb, settings=replace(hb.settings, temperatures=grid)))
    for rid, rr in with_point.reactions.items():
        assert rr.character == without.reactions[rid].character
        one = reaction_functions(rr.nu, with_point.handbook.species, [T_REF])
        k = list(rr.grid.T).index(T_REF)
        assert (rr.grid.drH[k], rr.grid.drS[k], rr.grid.drG[k]) == (
            one.drH[0], one.drS[0], one.drG[0])
