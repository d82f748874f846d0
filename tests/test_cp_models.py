"""Cp models against an independent evaluator (cantera) and exact integrals.

Coefficients are read from the published mechanism files shipped with cantera:
gri30.yaml (GRI-Mech 3.0, Smith et al. 1999, NASA7), airNASA9.yaml and nasa_condensed.yaml
(McBride, Zehe & Gordon 2002, NASA/TP-2002-211556, NASA9).  The check values are cantera's
own evaluation of the same coefficients (cantera 3, ``Species.thermo.cp/h/s``).
"""

from __future__ import annotations

import math
import os

import numpy as np
import pytest
import yaml

from generator.model import CpPiece
from generator.thermo import cp_models
from generator.thermo.constants import R

RTOL = 1e-6  # the brief's agreement target with cantera


def _cantera():
    return pytest.importorskip("cantera")


def _data_file(name: str) -> str:
    ct = _cantera()
    return os.path.join(os.path.dirname(ct.__file__), "data", name)


def _pieces_from_yaml(path: str, names: list[str]) -> dict[str, list[CpPiece]]:
    """CpPiece objects from a cantera YAML mechanism's ``thermo`` blocks (NASA7/NASA9)."""
    with open(path, encoding="utf-8") as fh:
        # BaseLoader: every scalar a string (YAML 1.1 would read the name NO as false).
        doc = yaml.load(fh, Loader=yaml.BaseLoader)
    out: dict[str, list[CpPiece]] = {}
    for sp in doc["species"]:
        if sp["name"] not in names:
            continue
        th = sp["thermo"]
        kind = {"NASA7": "nasa7", "NASA9": "nasa9"}[th["model"]]
        Ts = [float(x) for x in th["temperature-ranges"]]
        out[sp["name"]] = [
            CpPiece(kind, Ts[i], Ts[i + 1], tuple(float(x) for x in c))
            for i, c in enumerate(th["data"])
        ]
    assert set(out) == set(names)
    return out


def _piece_at(pieces: list[CpPiece], T: float) -> CpPiece:
    return next(p for p in pieces if p.Tmin <= T <= p.Tmax)


def _compare(pieces: list[CpPiece], ct_thermo, temps: list[float]) -> None:
    for T in temps:
        p = _piece_at(pieces, T)
        cp = float(cp_models.cp(p, T))
        H, S = (float(x) for x in cp_models.absolute_H_S(p, T))
        # cantera: J/kmol/K and J/kmol; ours J/(mol K) and kJ/mol.
        assert cp == pytest.approx(ct_thermo.cp(T) / 1000.0, rel=RTOL)
        assert S == pytest.approx(ct_thermo.s(T) / 1000.0, rel=RTOL)
        # H crosses zero (elements near 298 K): relative to max(|H|, RT).
        h_ct = ct_thermo.h(T) / 1e6
        assert abs(H - h_ct) <= RTOL * max(abs(h_ct), R * T / 1000.0)


GRI_SPECIES = ["CH4", "H2O", "CO2", "H2", "O2"]


def test_nasa7_gri30_matches_cantera():
    ct = _cantera()
    pieces = _pieces_from_yaml(_data_file("gri30.yaml"), GRI_SPECIES)
    gas = ct.Solution("gri30.yaml")
    for name in GRI_SPECIES:
        _compare(pieces[name], gas.species(name).thermo, [300.0, 650.0, 999.0, 1500.0, 2800.0])


def test_nasa9_air_and_condensed_match_cantera():
    ct = _cantera()
    gas = _pieces_from_yaml(_data_file("airNASA9.yaml"), ["N2", "O2", "NO"])
    cond = _pieces_from_yaml(_data_file("nasa_condensed.yaml"), ["Cr(cr)"])
    ct_species = {s.name: s for s in ct.Species.list_from_file("airNASA9.yaml")}
    ct_species.update({s.name: s for s in ct.Species.list_from_file("nasa_condensed.yaml")})
    for name in ["N2", "O2", "NO"]:
        _compare(gas[name], ct_species[name].thermo, [300.0, 800.0, 2500.0, 7000.0, 15000.0])
    _compare(cond["Cr(cr)"], ct_species["Cr(cr)"].thermo, [250.0, 298.15, 600.0, 1500.0, 2100.0])


# Illustrative Shomate coefficients (made up for the test, not a published fit).
SHOMATE = (30.0, 6.5, -1.2, 0.15, 0.12, -10.0, 220.0, 0.0)


def test_shomate_matches_cantera():
    ct = _cantera()
    # cantera's ShomatePoly2 takes [Tmid, A..G (low), A..G (high)], H in kJ/mol.
    coeffs = [1000.0, *SHOMATE[:7], *SHOMATE[:7]]
    ct_thermo = ct.ShomatePoly2(250.0, 3000.0, 1e5, coeffs)
    pieces = [CpPiece("shomate", 250.0, 3000.0, SHOMATE)]
    _compare(pieces, ct_thermo, [298.15, 450.0, 900.0, 1700.0, 2900.0])


def test_shomate_H_minus_H298_form():
    # Chase 1998 convention: H - H298 = A t + ... - E/t + F - H; with H chosen so that the
    # form vanishes at 298.15 K, absolute H(298.15) equals the H coefficient.
    A, B, C, D, E, F_, G_, _ = SHOMATE
    t = 0.29815
    h_form = A * t + B * t**2 / 2 + C * t**3 / 3 + D * t**4 / 4 - E / t + F_
    piece = CpPiece("shomate", 250.0, 3000.0, (A, B, C, D, E, F_, G_, h_form))
    H, _S = cp_models.absolute_H_S(piece, 298.15)
    assert float(H) == pytest.approx(h_form, abs=1e-12)


@pytest.mark.parametrize(
    "piece",
    [
        CpPiece("constant", 200.0, 2000.0, (29.1,)),
        CpPiece("shomate", 200.0, 2000.0, SHOMATE),
        CpPiece("nasa7", 200.0, 2000.0, (3.5, 1e-3, -2e-7, 3e-11, -1e-15, -1000.0, 4.0)),
        CpPiece("nasa9", 200.0, 2000.0, (2e4, -380.0, 6.0, -8e-3, 1.3e-5, -9e-9, 2.5e-12,
                                         700.0, -10.0)),
        CpPiece("table", 200.0, 2000.0, table_T=(300.0, 500.0, 1000.0),
                table_Cp=(29.0, 31.0, 36.0)),
    ],
    ids=lambda p: p.kind,
)
def test_antiderivatives_differentiate_to_cp(piece):
    # Mathematical identity, no source needed: dH/dT = Cp, dS/dT = Cp/T.
    T = np.array([250.0, 420.0, 777.0, 1300.0, 1900.0])
    d = 1e-3
    dH = (cp_models.h_antiderivative(piece, T + d) - cp_models.h_antiderivative(piece, T - d))
    dS = (cp_models.s_antiderivative(piece, T + d) - cp_models.s_antiderivative(piece, T - d))
    cp = cp_models.cp(piece, T)
    np.testing.assert_allclose(1000.0 * dH / (2 * d), cp, rtol=1e-7)
    np.testing.assert_allclose(dS / (2 * d), cp / T, rtol=1e-7)


def test_constant_piece_exact():
    # Analytic: H2 - H1 = c (T2 - T1), S2 - S1 = c ln(T2/T1).
    p = CpPiece("constant", 273.15, 373.15, (75.3,))
    assert float(cp_models.delta_H(p, 300.0, 350.0)) == pytest.approx(75.3 * 50 / 1000, rel=1e-14)
    assert float(cp_models.delta_S(p, 300.0, 350.0)) == pytest.approx(
        75.3 * math.log(350 / 300), rel=1e-14)


def test_table_piece_exact_on_linear_cp():
    # Cp = a + b T sampled at the points: the interpolant is exact and so are the integrals,
    # H: a (T2 - T1) + b/2 (T2^2 - T1^2); S: a ln(T2/T1) + b (T2 - T1) (analytic).
    a, b = 20.0, 0.03
    Tk = (300.0, 400.0, 650.0, 1000.0)
    p = CpPiece("table", 300.0, 1000.0, table_T=Tk, table_Cp=tuple(a + b * t for t in Tk))
    T1 = np.array([300.0, 333.0, 400.0, 512.0])
    T2 = np.array([1000.0, 977.0, 401.0, 650.0])
    H_exact = (a * (T2 - T1) + b / 2 * (T2**2 - T1**2)) / 1000.0
    S_exact = a * np.log(T2 / T1) + b * (T2 - T1)
    np.testing.assert_allclose(cp_models.delta_H(p, T1, T2), H_exact, rtol=1e-12)
    np.testing.assert_allclose(cp_models.delta_S(p, T1, T2), S_exact, rtol=1e-12)
    np.testing.assert_allclose(cp_models.cp(p, T1), a + b * T1, rtol=1e-12)


def test_table_piece_held_constant_beyond_points():
    # Documented scheme: Cp held at the end values beyond the first and last point.
    p = CpPiece("table", 200.0, 1200.0, table_T=(300.0, 500.0), table_Cp=(30.0, 34.0))
    np.testing.assert_allclose(cp_models.cp(p, np.array([200.0, 1200.0])), [30.0, 34.0])
    assert float(cp_models.delta_H(p, 200.0, 300.0)) == pytest.approx(30.0 * 100 / 1000)
    assert float(cp_models.delta_S(p, 500.0, 1200.0)) == pytest.approx(34.0 * math.log(2.4))
    single = CpPiece("table", 300.0, 300.0, table_T=(300.0,), table_Cp=(29.0,))
    assert float(cp_models.delta_H(single, 300.0, 400.0)) == pytest.approx(2.9)


def test_invalid_input_raises():
    with pytest.raises(ValueError):
        cp_models.cp(CpPiece("nasa7", 200.0, 1000.0, (1.0, 2.0)), 300.0)
    with pytest.raises(ValueError):
        cp_models.cp(CpPiece("constant", 200.0, 1000.0, (29.0,)), np.array([300.0, 0.0]))
    with pytest.raises(ValueError):
        cp_models.cp(CpPiece("bogus", 200.0, 1000.0, (29.0,)), 300.0)
    with pytest.raises(ValueError):
        cp_models.absolute_H_S(CpPiece("constant", 200.0, 1000.0, (29.0,)), 300.0)
    with pytest.raises(ValueError):
        cp_models.cp(CpPiece("table", 200.0, 1000.0, table_T=(300.0, 300.0),
                             table_Cp=(1.0, 2.0)), 300.0)
