"""A synthetic but valid handbook for the build benchmark, seeded and reproducible.

Species are CcHhNnOo gases with two-piece NASA 7-coefficient Cp fits (McBride, Zehe & Gordon
2002, NASA/TP-2002-211556, eqs. 1-3) whose a6/a7 are solved so each fit reproduces the
species' own ΔfH° and S° at 298.15 K and the upper piece joins the lower at 1000 K in Cp, H
and S.  Heat capacities rise with temperature towards the classical limit of the molecule's
atom count; every value is invented and says so.  Reactions are balanced by construction:
one species is turned into another with the element reference substances making up the
difference (integer coefficients throughout).
"""

from __future__ import annotations

import math
import random
from pathlib import Path

R = 8.314462618  # J/(mol K), CODATA 2018 exact value of the molar gas constant
T_REF = 298.15
T_MID = 1000.0
ELEMENTS = ("C", "H", "N", "O")
# Element reference substances: (id, formula, phase, name, atoms per formula unit, S°, Cp fit)
REFERENCES = {
    "C": ("graphite", "C", "cr", "carbon (graphite)", 1, 5.74),
    "H": ("hydrogen", "H2", "g", "hydrogen", 2, 130.68),
    "N": ("nitrogen", "N2", "g", "nitrogen", 2, 191.61),
    "O": ("oxygen", "O2", "g", "oxygen", 2, 205.15),
}  # S° in J/(mol K) from memory (CODATA Key Values for Thermodynamics, 1989)

HANDBOOK = """\
title: Synthetic Benchmark Handbook
edition: "bench"
organisation: Benchmark (synthetic data)
standard_pressure: 1 bar
temperatures: [298.15, 300, 400, 500, 600, 700, 800, 900, 1000, 1100, 1200, 1300, 1400, 1500]
units: {energy: kJ/mol, entropy: J/(mol*K), temperature: K}
caution: >-
  Synthetic benchmark data: every value here is invented and means nothing.
"""

REFERENCES_YAML = """\
- key: synthetic
  citation: Generated benchmark data (invented values, not a source of any number).
  kind: estimate
  standard_pressure: 1 bar
"""


def formula(counts: dict[str, int]) -> str:
    """Hill order: C, H, then the rest alphabetically; a count of 1 is not written."""
    return "".join(f"{el}{counts[el] if counts[el] > 1 else ''}" for el in ELEMENTS
                   if counts.get(el))


def _poly(a: list[float], T: float) -> tuple[float, float, float]:
    """Cp/R, H/(RT) and S/R of NASA 7 coefficients ``a`` at ``T`` (NASA/TP-2002-211556)."""
    cp = a[0] + a[1] * T + a[2] * T**2 + a[3] * T**3 + a[4] * T**4
    h = a[0] + a[1] * T / 2 + a[2] * T**2 / 3 + a[3] * T**3 / 4 + a[4] * T**4 / 5 + a[5] / T
    s = (a[0] * math.log(T) + a[1] * T + a[2] * T**2 / 2 + a[3] * T**3 / 3 + a[4] * T**4 / 4
         + a[6])
    return cp, h, s


def nasa7_pieces(atoms: int, dfH: float, S: float, rng: random.Random
                 ) -> tuple[list[float], list[float]]:
    """Lower (200-1000 K) and upper (1000-3000 K) fits anchored at dfH (kJ/mol), S (J/mol/K)."""
    cp_lo = 3.5 + 0.6 * (atoms - 2) * rng.uniform(0.8, 1.2)  # Cp/R at 298 K
    cp_hi = max(cp_lo + 0.5, 3.0 * atoms - 2.5) * rng.uniform(0.9, 1.0)  # near 3000 K
    # lower: Cp/R = a1 + a2 T + a3 T^2, rising and flattening towards 1000 K
    slope = (cp_hi - cp_lo) / 1400.0
    a3 = -slope / 2600.0
    a2 = slope - a3 * (T_REF + 1000.0)
    a1 = cp_lo - a2 * T_REF - a3 * T_REF**2
    lo = [a1, a2, a3, 0.0, 0.0, 0.0, 0.0]
    _, h, s = _poly(lo, T_REF)
    lo[5] = (dfH * 1000.0 / (R * T_REF) - h) * T_REF
    lo[6] = S / R - s
    # upper: Cp/R = b1 + b2 T, equal to the lower piece's Cp at 1000 K, reaching cp_hi at 3000 K
    cp_mid = _poly(lo, T_MID)[0]
    b2 = (cp_hi - cp_mid) / 2000.0
    up = [cp_mid - b2 * T_MID, b2, 0.0, 0.0, 0.0, 0.0, 0.0]
    _, h_lo, s_lo = _poly(lo, T_MID)
    _, h_up, s_up = _poly(up, T_MID)
    up[5] = (h_lo - h_up) * T_MID
    up[6] = s_lo - s_up
    return lo, up


def _coeffs(a: list[float]) -> str:
    return "[" + ", ".join(f"{x:.10g}" for x in a) + "]"


def species_yaml(sid: str, counts: dict[str, int], dfH: float, S: float,
                 rng: random.Random) -> str:
    atoms = sum(counts.values())
    lo, up = nasa7_pieces(atoms, dfH, S, rng)
    return (f"ref: synthetic\nid: {sid}\nformula: \"{formula(counts)}\"\nphase: g\n"
            f"name: synthetic species {sid[1:]}\n"
            f"standard:\n  dfH: \"{dfH:.3f} ± {rng.uniform(0.1, 2.0):.2f} kJ/mol\"\n"
            f"  S: \"{S:.3f} ± {rng.uniform(0.05, 1.0):.2f} J/(mol*K)\"\n"
            f"cp:\n  - nasa7: {_coeffs(lo)}\n    T: [200.0, 1000.0]\n"
            f"  - nasa7: {_coeffs(up)}\n    T: [1000.0, 3000.0]\n"
            f"review:\n  status: draft\n  by: \"benchmark\"\n  date: \"2026-01-01\"\n"
            f"  note: \"Invented values for the build benchmark.\"\n"
            f"notes: |\n  Synthetic species {sid}: {formula(counts)}, invented for the build "
            f"benchmark.\n")


def _reference_yaml(el: str) -> str:
    sid, form, phase, name, n, S = REFERENCES[el]
    rng = random.Random(el)
    lo, up = nasa7_pieces(n, 0.0, S, rng)
    cp = (f"cp:\n  - nasa7: {_coeffs(lo)}\n    T: [200.0, 1000.0]\n"
          f"  - nasa7: {_coeffs(up)}\n    T: [1000.0, 3000.0]\n")
    return (f"ref: synthetic\nid: {sid}\nformula: \"{form}\"\nphase: {phase}\nname: {name}\n"
            f"standard:\n  dfH: \"0 kJ/mol\"\n  S: \"{S} ± 0.10 J/(mol*K)\"\n{cp}")


def _side(terms: list[tuple[int, str]]) -> str:
    return " + ".join(f"{n} {f}" if n != 1 else f for n, f in terms if n)


def reaction_equation(a: dict[str, int], b: dict[str, int]) -> str:
    """2 A -> 2 B + element references (or the references on the left when B is bigger)."""
    left: list[tuple[int, str]] = [(2, f"{formula(a)}(g)")]
    right: list[tuple[int, str]] = [(2, f"{formula(b)}(g)")]
    for el in ELEMENTS:
        sid, form, phase, _name, per, _S = REFERENCES[el]
        diff = 2 * (a.get(el, 0) - b.get(el, 0))  # atoms of el to move
        if diff == 0:
            continue
        n = diff // per
        term = (abs(n), f"{form}({phase})")
        (right if diff > 0 else left).append(term)
    return f"{_side(left)} -> {_side(right)}"


def generate(root: Path, n_species: int, n_reactions: int, seed: int = 1) -> dict[str, dict]:
    """Write the handbook under ``root``; returns the synthetic species' element counts."""
    rng = random.Random(seed)
    (root / "species").mkdir(parents=True, exist_ok=True)
    (root / "reactions").mkdir(parents=True, exist_ok=True)
    (root / "handbook.yaml").write_text(HANDBOOK, encoding="utf-8")
    (root / "references.yaml").write_text(REFERENCES_YAML, encoding="utf-8")
    for el in ELEMENTS:
        (root / "species" / f"{REFERENCES[el][0]}.yaml").write_text(_reference_yaml(el),
                                                                    encoding="utf-8")
    seen = {formula({"H": 2}), formula({"N": 2}), formula({"O": 2})}
    made: dict[str, dict] = {}
    while len(made) < n_species:
        c, n = rng.randint(1, 9), rng.randint(0, 3)
        counts = {"C": c, "H": rng.randint(0, 2 * c + 2 + n), "N": n, "O": rng.randint(0, 5)}
        f = formula(counts)
        if f in seen:
            continue
        seen.add(f)
        sid = f"s{len(made) + 1:05d}"
        atoms = sum(counts.values())
        dfH = rng.uniform(-120.0, 60.0) * math.sqrt(atoms)
        S = 150.0 + 18.0 * atoms * rng.uniform(0.85, 1.15)
        (root / "species" / f"{sid}.yaml").write_text(
            species_yaml(sid, counts, dfH, S, rng), encoding="utf-8")
        made[sid] = counts
    ids = sorted(made)
    for i in range(n_reactions):
        a, b = rng.sample(ids, 2)
        rid = f"r{i + 1:05d}"
        text = (f"id: {rid}\nname: synthetic reaction {i + 1}\n"
                f"equation: \"{reaction_equation(made[a], made[b])}\"\n")
        (root / "reactions" / f"{rid}.yaml").write_text(text, encoding="utf-8")
    return made
