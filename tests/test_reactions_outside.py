"""Reaction properties against published key values and an independent reference library.

Published inputs: CODATA Key Values for Thermodynamics (Cox, Wagman & Medvedev 1989), from
memory.  Independent library: cantera's own evaluation of the NASA polynomials it ships in
``nasa_gas.yaml`` and ``nasa_condensed.yaml`` (McBride, Gordon & Reno 1993, NASA TM-4513;
the shipped files hold 7-coefficient fits).  Expected values are computed here by hand
arithmetic from the published inputs, never with the code under test.
"""

from __future__ import annotations

import functools
import math

import numpy as np
import pytest

from generator.model import CpPiece, Quantity, Species, Value
from generator.thermo.reactions import crossover_temperatures, reaction_functions

# CODATA 2018 (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010): N_A, k_B and e are exact
# since the 2019 SI, so R = N_A k_B = 8.314462618... J/(mol K), F = N_A e = 96485.33212... C/mol.
R_CODATA = 6.02214076e23 * 1.380649e-23  # J/(mol K)
F_CODATA = 6.02214076e23 * 1.602176634e-19  # C/mol
T0 = 298.15


def make_species(sid: str, formula: str, phase: str, elements, *, dfH, S,
                 cp: tuple[CpPiece, ...] = ()) -> Species:
    """A Species from the model classes; dfH and S given as (value, unc)."""
    standard = {
        "dfH": Quantity("dfH", (Value(dfH[0], "kJ/mol", dfH[1]),)),
        "S": Quantity("S", (Value(S[0], "J/(mol*K)", S[1]),)),
    }
    return Species(sid, formula, phase, sid, tuple(elements), 0, 0.0, standard, cp=cp)


def constant_cp(value: float) -> tuple[CpPiece, ...]:
    return (CpPiece("constant", 200.0, 1500.0, (value,)),)


# --- CODATA 1989 key values --------------------------------------------------------------

@pytest.fixture(scope="module")
def codata() -> dict[str, Species]:
    """CODATA Key Values (Cox, Wagman & Medvedev 1989), from memory.  Elements in their
    reference states: dfH = 0 by definition, entered as exact (unc 0).  The constant Cp
    values (298.15 K, from memory) only shape the curves away from 298.15 K."""
    return {
        "H2O(l)": make_species("water-liquid", "H2O", "l", [("H", 2), ("O", 1)],
                               dfH=(-285.830, 0.040), S=(69.95, 0.03), cp=constant_cp(75.3)),
        "H2O(g)": make_species("water-gas", "H2O", "g", [("H", 2), ("O", 1)],
                               dfH=(-241.826, 0.040), S=(188.835, 0.010),
                               cp=constant_cp(33.6)),
        "CO2": make_species("carbon-dioxide", "CO2", "g", [("C", 1), ("O", 2)],
                            dfH=(-393.51, 0.13), S=(213.785, 0.010), cp=constant_cp(37.1)),
        "H2": make_species("hydrogen", "H2", "g", [("H", 2)],
                           dfH=(0.0, 0.0), S=(130.680, 0.003), cp=constant_cp(28.8)),
        "O2": make_species("oxygen", "O2", "g", [("O", 2)],
                           dfH=(0.0, 0.0), S=(205.152, 0.005), cp=constant_cp(29.4)),
        "C": make_species("graphite", "C", "cr", [("C", 1)],
                          dfH=(0.0, 0.0), S=(5.74, 0.10), cp=constant_cp(8.5)),
    }


def test_water_vaporisation_codata(codata):
    rf = reaction_functions({"H2O(l)": -1.0, "H2O(g)": 1.0}, codata, [T0])
    # drH = -241.826 - (-285.830) = 44.004 kJ/mol; u = sqrt(0.040^2 + 0.040^2) = 0.05657
    assert rf.drH[0] == pytest.approx(44.004, abs=1e-9)
    assert rf.u_drH[0] == pytest.approx(math.sqrt(2.0) * 0.040, abs=1e-9)
    # drS = 188.835 - 69.95 = 118.885 J/(mol K); u = sqrt(0.010^2 + 0.03^2) = 0.031623
    assert rf.drS[0] == pytest.approx(118.885, abs=1e-9)
    assert rf.u_drS[0] == pytest.approx(math.sqrt(0.010**2 + 0.03**2), abs=1e-9)
    # drG = 44.004 - 298.15 * 0.118885 = 44.004 - 35.44556 = 8.55844 kJ/mol
    assert rf.drG[0] == pytest.approx(44.004 - 298.15 * 118.885 / 1000.0, abs=1e-9)
    assert rf.drG[0] == pytest.approx(8.56, abs=0.01)  # about +8.56 kJ/mol, from memory
    # u(drG) = sqrt(0.05657^2 + (298.15 * 0.031623 / 1000)^2) = 0.05735 kJ/mol (GUM eq. 10)
    u_G = math.sqrt(2 * 0.040**2 + (298.15 * math.sqrt(0.001) / 1000.0) ** 2)
    assert rf.u_drG[0] == pytest.approx(u_G, abs=1e-9)
    # drCp = 33.6 - 75.3 = -41.7 J/(mol K) (the constant Cp values above)
    assert rf.drCp[0] == pytest.approx(-41.7, abs=1e-9)
    assert not rf.extrapolated[0]


def test_graphite_combustion_codata(codata):
    rf = reaction_functions({"C": -1.0, "O2": -1.0, "CO2": 1.0}, codata, [T0])
    # drH = dfH(CO2) = -393.51 +- 0.13 kJ/mol (elements exact)
    assert rf.drH[0] == pytest.approx(-393.51, abs=1e-9)
    assert rf.u_drH[0] == pytest.approx(0.13, abs=1e-9)
    # drS = 213.785 - 5.74 - 205.152 = 2.893 J/(mol K); u = sqrt(.010^2 + .10^2 + .005^2)
    assert rf.drS[0] == pytest.approx(2.893, abs=1e-9)
    assert rf.u_drS[0] == pytest.approx(math.sqrt(0.010**2 + 0.10**2 + 0.005**2), abs=1e-9)
    # drG = -393.51 - 298.15 * 0.002893 = -394.3725 kJ/mol; dfG(CO2) about -394.37 kJ/mol
    # (CODATA-consistent, from memory)
    assert rf.drG[0] == pytest.approx(-393.51 - 298.15 * 2.893 / 1000.0, abs=1e-9)
    assert rf.drG[0] == pytest.approx(-394.37, abs=0.01)
    # dn(gas) = 1 - 1 = 0, so drU = drH
    assert rf.drU[0] == pytest.approx(rf.drH[0], abs=1e-12)


def test_water_electrolysis_cell_voltages(codata):
    """H2O(l) -> H2 + 1/2 O2, n = 2.  Reversible 1.229 V and thermoneutral 1.481 V in
    magnitude (common practice, no source).  The engine's convention E = -drG/(nF) gives
    E < 0 for this non-spontaneous direction: E = -1.229 V, Etn = drH/(nF) = +1.481 V."""
    rf = reaction_functions({"H2O(l)": -1.0, "H2": 1.0, "O2": 0.5}, codata, [T0],
                            electrons=2)
    # drH = 285.830 kJ/mol; drS = 130.680 + 0.5 * 205.152 - 69.95 = 163.306 J/(mol K)
    # drG = 285.830 - 298.15 * 0.163306 = 237.1403 kJ/mol
    drG = 285.830 - 298.15 * (130.680 + 0.5 * 205.152 - 69.95) / 1000.0
    assert rf.drG[0] == pytest.approx(drG, abs=1e-9)
    # E = -237140.3 / (2 * 96485.33212) = -1.22889 V; Etn = 285830 / 192970.66 = 1.48121 V
    assert rf.E is not None and rf.Etn is not None
    assert rf.E[0] == pytest.approx(-1000.0 * drG / (2 * F_CODATA), abs=1e-9)
    assert rf.E[0] == pytest.approx(-1.229, abs=0.002)
    assert rf.Etn[0] == pytest.approx(285830.0 / (2 * F_CODATA), abs=1e-9)
    assert rf.Etn[0] == pytest.approx(1.481, abs=0.002)


# --- cantera's NASA polynomials ----------------------------------------------------------

GAS = ("CH4", "H2O", "CO", "CO2", "H2", "O2", "N2", "NH3")
CONDENSED = ("CaCO3(caL)", "CaO(s)")  # calcite and lime as named in nasa_condensed.yaml

REACTIONS: dict[str, dict[str, float]] = {
    "water-formation": {"H2": -1.0, "O2": -0.5, "H2O": 1.0},
    "steam-reforming": {"CH4": -1.0, "H2O": -1.0, "CO": 1.0, "H2": 3.0},
    "water-gas-shift": {"CO": -1.0, "H2O": -1.0, "CO2": 1.0, "H2": 1.0},
    "ammonia-synthesis": {"N2": -0.5, "H2": -1.5, "NH3": 1.0},
    "calcination": {"CaCO3(caL)": -1.0, "CaO(s)": 1.0, "CO2": 1.0},
}


@functools.cache
def _cantera_species() -> dict:
    ct = pytest.importorskip("cantera")
    out = {s.name: s for s in ct.Species.list_from_file("nasa_gas.yaml") if s.name in GAS}
    out.update({s.name: s for s in ct.Species.list_from_file("nasa_condensed.yaml")
                if s.name in CONDENSED})
    return out


def _engine_species(name: str, ct_sp) -> Species:
    """The same fit as engine input: NASA7 pieces from the file, standard block at 298.15 K
    from cantera's own h(298.15) and s(298.15) (the data set's standard values)."""
    th = ct_sp.input_data["thermo"]
    assert th["model"] == "NASA7"
    Ts = [float(x) for x in th["temperature-ranges"]]
    pieces = tuple(CpPiece("nasa7", Ts[i], Ts[i + 1], tuple(float(c) for c in coeffs))
                   for i, coeffs in enumerate(th["data"]))
    dfH = ct_sp.thermo.h(T0) / 1.0e6  # J/kmol -> kJ/mol
    S = ct_sp.thermo.s(T0) / 1.0e3  # J/(kmol K) -> J/(mol K)
    phase = "cr" if name in CONDENSED else "g"
    return make_species(name, name, phase, tuple(ct_sp.composition.items()),
                        dfH=(dfH, 0.0), S=(S, 0.0), cp=pieces)


@pytest.fixture(scope="module")
def nasa() -> tuple[dict, dict[str, Species]]:
    ct_species = _cantera_species()
    assert set(ct_species) == set(GAS) | set(CONDENSED)
    return ct_species, {n: _engine_species(n, s) for n, s in ct_species.items()}


def _cantera_drG(ct_species: dict, nu: dict[str, float], T: float) -> float:
    """drG = sum nu_i (h_i - T s_i) from cantera's own evaluation, kJ/mol."""
    return sum(n * (ct_species[s].thermo.h(T) - T * ct_species[s].thermo.s(T))
               for s, n in nu.items()) / 1.0e6


@pytest.mark.parametrize("rid", sorted(REACTIONS))
@pytest.mark.parametrize("T", [298.15, 1000.0])
def test_drG_and_log10K_against_cantera(nasa, rid, T):
    ct_species, species = nasa
    nu = REACTIONS[rid]
    expected_G = _cantera_drG(ct_species, nu, T)
    expected_log10K = -1000.0 * expected_G / (R_CODATA * T * math.log(10.0))
    rf = reaction_functions(nu, species, [T])
    assert rf.drG[0] == pytest.approx(expected_G, abs=0.01)
    assert rf.log10K[0] == pytest.approx(expected_log10K, abs=1e-3)
    assert not rf.extrapolated[0]


def test_cantera_agreement_across_the_range(nasa):
    """Also between and above the tabulated points (pieces switch at 1000 K)."""
    ct_species, species = nasa
    T = np.array([350.0, 600.0, 999.0, 1001.0, 1150.0])
    for nu in REACTIONS.values():
        rf = reaction_functions(nu, species, T)
        expected = [_cantera_drG(ct_species, nu, t) for t in T]
        np.testing.assert_allclose(rf.drG, expected, atol=0.01)


def test_published_sanity_values(nasa):
    _ct, species = nasa
    T = [298.15, 1000.0]
    wf = reaction_functions(REACTIONS["water-formation"], species, T)
    # dfG(H2O, g) = -228.58 kJ/mol at 298.15 K (CODATA 1989) and -192.59 kJ/mol at 1000 K
    # (Chase 1998, JANAF Thermochemical Tables 4th ed.); both from memory, tol 0.2 kJ/mol.
    assert wf.drG[0] == pytest.approx(-228.58, abs=0.2)
    assert wf.drG[1] == pytest.approx(-192.59, abs=0.2)
    # steam reforming drH(298.15) about +206 kJ/mol (from memory), tol 1 kJ/mol
    smr = reaction_functions(REACTIONS["steam-reforming"], species, T)
    assert smr.drH[0] == pytest.approx(206.0, abs=1.0)
    # water-gas shift drH(298.15) about -41.2 kJ/mol (from memory), tol 0.5 kJ/mol
    wgs = reaction_functions(REACTIONS["water-gas-shift"], species, T)
    assert wgs.drH[0] == pytest.approx(-41.2, abs=0.5)
    # ammonia synthesis per mol NH3: drH(298.15) = dfH(NH3, g) about -45.9 kJ/mol
    # (CODATA 1989 -45.94, from memory), tol 0.3 kJ/mol
    nh3 = reaction_functions(REACTIONS["ammonia-synthesis"], species, T)
    assert nh3.drH[0] == pytest.approx(-45.9, abs=0.3)
    # calcination drH(298.15) about +178 kJ/mol (from memory), tol 2 kJ/mol
    calc = reaction_functions(REACTIONS["calcination"], species, T)
    assert calc.drH[0] == pytest.approx(178.0, abs=2.0)


def _cantera_root(ct_species: dict, nu: dict[str, float], lo: float, hi: float) -> float:
    """Bisection on cantera's drG (independent of the engine)."""
    g_lo = _cantera_drG(ct_species, nu, lo)
    while hi - lo > 1e-6:
        mid = 0.5 * (lo + hi)
        g_mid = _cantera_drG(ct_species, nu, mid)
        if g_lo * g_mid <= 0.0:
            hi = mid
        else:
            lo, g_lo = mid, g_mid
    return 0.5 * (lo + hi)


def test_water_gas_shift_K_is_one_near_1100K(nasa):
    # K = 1 near 1100 K (common practice, no source); tol 50 K
    ct_species, species = nasa
    nu = REACTIONS["water-gas-shift"]
    roots = crossover_temperatures(nu, species, 300.0, 1500.0)
    assert len(roots) == 1
    assert roots[0] == pytest.approx(1100.0, abs=50.0)
    assert roots[0] == pytest.approx(_cantera_root(ct_species, nu, 300.0, 1500.0), abs=0.01)


def test_calcination_crossover(nasa):
    # drG = 0 (K = 1, p(CO2) = 1 bar) between 1100 and 1200 K (from memory)
    ct_species, species = nasa
    nu = REACTIONS["calcination"]
    roots = crossover_temperatures(nu, species, 300.0, 1200.0)
    assert len(roots) == 1
    assert 1100.0 < roots[0] < 1200.0
    assert roots[0] == pytest.approx(_cantera_root(ct_species, nu, 300.0, 1200.0), abs=0.01)
    # the 298.15 K estimate drH/drS (about 1111 K) is not the real root on these curves
    rf = reaction_functions(nu, species, [T0])
    estimate = 1000.0 * rf.drH[0] / rf.drS[0]
    assert abs(estimate - roots[0]) > 20.0
