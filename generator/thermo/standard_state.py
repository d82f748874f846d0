"""Standard-pressure conversion of cited values (ideal gases), recorded on each value.

A value quoted at p_ref is moved to the handbook's standard pressure p° with
S(p°) = S(p_ref) + R ln(p_ref/p°) for a gaseous species, and for a formation or reaction
Gibbs energy dG(p°) = dG(p_ref) - dn(gas) R T ln(p_ref/p°), dn(gas) being the change in
moles of gas of the formation (or the stated) reaction; enthalpies and Cp of ideal gases do
not depend on pressure.  For 1 atm -> 1 bar, R ln(1.01325) = 0.1094 J/(mol K) per mole of
gas (the conversion given with the change of standard pressure, e.g. Wagman et al. 1982,
J. Phys. Chem. Ref. Data 11 Suppl. 2, introduction; from memory).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping

from generator.model import Handbook, Quantity, Reaction, Species, Value
from generator.thermo.constants import T_REF, R
from generator.thermo.species_props import formation_coefficients


def _pressure_label(p: float) -> str:
    if abs(p - 101325.0) < 1e-6:
        return "1 atm"
    if abs(p - 1.0e5) < 1e-6:
        return "1 bar"
    return f"{p:g} Pa"


def formation_gas_change(sp: Species, element_refs: Mapping[str, Species]) -> float | None:
    """dn(gas) of the formation reaction of ``sp`` from its elements' reference states."""
    dn = 1.0 if sp.phase == "g" else 0.0
    for el, n in formation_coefficients(sp).items():
        ref = element_refs.get(el)
        if ref is None:
            return None
        if ref.phase == "g":
            dn -= n / ref.element_counts[el]
    return dn


def _convert(v: Value, name: str, ln_ratio: float, dn_gas: float, T: float, p_ref: float,
             p_std: float) -> Value:
    if name in ("S", "drS"):
        delta = R * ln_ratio * dn_gas
    elif name in ("dfG", "drG"):
        delta = -dn_gas * R * T * ln_ratio / 1000.0
    elif name == "K":
        factor = math.exp(dn_gas * ln_ratio)  # K(p°) = K(p_ref) (p_ref/p°)^dn
        return dataclasses.replace(
            v, value=v.value * factor, unc=None if v.unc is None else v.unc * factor,
            conversion=f"from {_pressure_label(p_ref)} to {_pressure_label(p_std)}: K × "
            f"{factor:.6f}", conversion_delta=v.value * (factor - 1))
    else:
        return v
    if delta == 0.0:
        return v
    unit = "J/(mol*K)" if name in ("S", "drS") else "kJ/mol"
    return dataclasses.replace(
        v, value=v.value + delta, conversion=f"from {_pressure_label(p_ref)} to "
        f"{_pressure_label(p_std)}: {delta:+.4f} {unit}", conversion_delta=delta)


def to_standard_pressure(handbook: Handbook, element_refs: Mapping[str, Species]) -> Handbook:
    """The handbook with every value quoted at another pressure moved to p°."""
    p_std = handbook.settings.standard_pressure
    refs = handbook.references

    def ratio(v: Value) -> tuple[float, float] | None:
        ref = refs.get(v.ref or "")
        if ref is None or abs(ref.standard_pressure - p_std) < 1e-9:
            return None
        return math.log(ref.standard_pressure / p_std), ref.standard_pressure

    species: dict[str, Species] = {}
    for sid, sp in handbook.species.items():
        standard: dict[str, Quantity] = {}
        for name, q in sp.standard.items():
            values = []
            for v in q.values:
                r = ratio(v)
                if r is None or name not in ("S", "dfG"):
                    values.append(v)
                    continue
                if name == "S":
                    dn = 1.0 if sp.phase == "g" else 0.0
                else:
                    dn = formation_gas_change(sp, element_refs)
                    if dn is None:
                        values.append(v)
                        continue
                values.append(_convert(v, name, r[0], dn, T_REF, r[1], p_std))
            # an object with nothing moved is kept as it is (copying every one cost more
            # than the whole conversion in a large handbook)
            standard[name] = q if all(a is b for a, b in zip(values, q.values, strict=True)) \
                else dataclasses.replace(q, values=tuple(values))
        unchanged = all(standard[name] is q for name, q in sp.standard.items())
        species[sid] = sp if unchanged else dataclasses.replace(sp, standard=standard)

    reactions: dict[str, Reaction] = {}
    for rid, rx in handbook.reactions.items():
        measured = []
        dn = sum(n for s, n in rx.stoichiometry.items() if handbook.species[s].phase == "g")
        for m in rx.measured:
            r = ratio(m.value)
            if r is None or m.quantity == "drH":
                measured.append(m)
                continue
            measured.append(dataclasses.replace(
                m, value=_convert(m.value, m.quantity, r[0], dn, m.T, r[1], p_std)))
        reactions[rid] = rx if all(a is b for a, b in zip(measured, rx.measured, strict=True)) \
            else dataclasses.replace(rx, measured=tuple(measured))
    return dataclasses.replace(handbook, species=species, reactions=reactions)
