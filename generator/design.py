"""Compute stage, design reference: equilibrium conversion, adiabatic temperature, cell
voltages, family lines and element ladders, evaluated once per build.  Pure: numbers from
generator.thermo and the computed handbook; no file, template or chart access (render only
formats what this produced).

* Equilibrium conversion: generator.thermo.equilibrium (ideal activities; Smith, Van Ness &
  Abbott, Introduction to Chemical Engineering Thermodynamics, 7th ed., ch. 13).
* Adiabatic temperature: generator.thermo.adiabatic (first-law balance, ibid. sec. 4.7).
* Cell voltages: generator.thermo.electrochem, E° = −ΔrG°/(nF), Etn = ΔrH°/(nF).
* Family lines: ΔrG°(T)/|ν_per| of each member; the crossover of two members is where the
  difference of their normalised lines changes sign, placed by linear interpolation.
* Element ladders: ΔfH° and ΔfG° at 298.15 K per atom of the element, X/n_X.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from generator.formula import FormulaError, parse_formula
from generator.model import Family, Handbook
from generator.thermo.adiabatic import AdiabaticResult, adiabatic_caution, adiabatic_temperature
from generator.thermo.constants import T_REF
from generator.thermo.electrochem import (
    CellVoltages,
    VoltageEfficiency,
    cell_voltages,
    voltage_efficiency,
)
from generator.thermo.equilibrium import EquilibriumCurve, equilibrium_curves, stoichiometric_feed

if TYPE_CHECKING:
    from generator.compute import Computed, ReactionResult
    from generator.results_cache import ResultStore

CHART_T_POINTS = 61  # points of an equilibrium conversion curve on its chart
STOICHIOMETRIC = "stoichiometric reactants"


def _ref_index(T: np.ndarray) -> int | None:
    """Index of 298.15 K in ``T``, or None."""
    hits = np.flatnonzero(np.abs(np.asarray(T, dtype=float) - T_REF) < 1e-6)
    return int(hits[0]) if hits.size else None


def pressure_label(P: float) -> str:
    """A total pressure in bar for a legend: "1 bar", "20 bar", "0.5 bar"."""
    return f"{P / 1.0e5:g} bar"


# --- equilibrium conversion ------------------------------------------------------------------


def shows_equilibrium(rr: ReactionResult) -> bool:
    """A reaction with ``conditions:`` other than just the operating voltage."""
    c = rr.reaction.conditions
    if c is None:
        return False
    return bool(c.feeds) or c.T_range is not None or tuple(c.pressures) != (1.0e5,) \
        or c.voltage is None


def feeds(rr: ReactionResult) -> list[tuple[str, dict[str, float]]]:
    """(label, feed) of every feed of ``conditions``, else the stoichiometric reactants."""
    c = rr.reaction.conditions
    if c is not None and c.feeds:
        return [(f.label, f.amounts) for f in c.feeds]
    return [(STOICHIOMETRIC, stoichiometric_feed(rr.nu))]


def first_reactant(rr: ReactionResult) -> str | None:
    return next((t.species for t in rr.reaction.reactants if rr.nu.get(t.species, 0) < 0),
                None)


@dataclass(frozen=True)
class ConversionSet:
    """Equilibrium conversion curves of one reaction, each with its legend label."""

    reactant: str
    labels: tuple[str, ...]
    curves: tuple[EquilibriumCurve, ...]


def conversion_curves(rr: ReactionResult, computed: Computed, T: Sequence[float]
                      ) -> ConversionSet | None:
    """One curve per (feed, pressure) over ``T``; None when the sheet shows none."""
    if not shows_equilibrium(rr):
        return None
    c = rr.reaction.conditions
    fs = feeds(rr)
    first = first_reactant(rr)
    if first is None:
        return None
    hb = computed.handbook
    try:
        curves = equilibrium_curves(rr.nu, hb.species, [f for _l, f in fs], T,
                                    c.pressures, standard_pressure=hb.settings.standard_pressure,
                                    first_reactant=first)
    except ValueError:
        return None
    labels = []
    for label, _f in fs:
        for P in c.pressures:
            labels.append(f"{label}, {pressure_label(P)}" if len(fs) > 1
                          else f"P = {pressure_label(P)}")
    return ConversionSet(first, tuple(labels), tuple(curves))


def chart_temperatures(rr: ReactionResult, computed: Computed) -> np.ndarray:
    """CHART_T_POINTS over ``conditions.T``, else the handbook's grid."""
    c = rr.reaction.conditions
    if c is not None and c.T_range is not None:
        return np.linspace(c.T_range[0], c.T_range[1], CHART_T_POINTS)
    return np.asarray(computed.handbook.settings.temperatures, dtype=float)


def table_temperatures(rr: ReactionResult, computed: Computed) -> list[float]:
    """The handbook grid inside ``conditions.T`` with its ends, else the whole grid."""
    grid = [float(t) for t in computed.handbook.settings.temperatures]
    c = rr.reaction.conditions
    if c is None or c.T_range is None:
        return grid
    lo, hi = c.T_range
    inside = sorted({lo, hi, *(t for t in grid if lo <= t <= hi)})
    if len(inside) < 3:
        inside = [float(t) for t in np.linspace(lo, hi, 5)]
    return inside


# --- adiabatic temperature -------------------------------------------------------------------


def adiabatic_feed(rr: ReactionResult) -> tuple[str, dict[str, float], float]:
    """(label, feed, T_in): the first feed of ``conditions`` else the stoichiometric
    reactants; T_in from ``conditions`` (298.15 K by default)."""
    c = rr.reaction.conditions
    T_in = c.T_in if c is not None else 298.15
    if c is not None and c.feeds:
        return c.feeds[0].label, c.feeds[0].amounts, T_in
    return STOICHIOMETRIC, stoichiometric_feed(rr.nu), T_in


@dataclass(frozen=True)
class AdiabaticDesign:
    """The adiabatic outlet of the sheet's feed, or ``error`` when it cannot be balanced."""

    feed: str
    result: AdiabaticResult | None
    error: str | None
    caution: str | None  # the process-safety caution of generator.thermo.adiabatic


def adiabatic_design(rr: ReactionResult, computed: Computed) -> AdiabaticDesign:
    label, feed, T_in = adiabatic_feed(rr)
    hb = computed.handbook
    try:
        res = adiabatic_temperature(rr.nu, hb.species, feed, T_in)
    except ValueError as exc:
        return AdiabaticDesign(label, None, str(exc), None)
    return AdiabaticDesign(label, res, None,
                           adiabatic_caution(res.rise, hb.settings.adiabatic_caution_K))


# --- cell voltages ---------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class CellDesign:
    """E°, Etn and the reversible heat on the handbook grid; the efficiencies at the
    operating ``voltage`` (None where it is not set or E°/Etn is unknown)."""

    voltages: CellVoltages
    voltage: float | None
    efficiencies: tuple[VoltageEfficiency | None, ...]


def cell_design(rr: ReactionResult, computed: Computed) -> CellDesign | None:
    n = rr.reaction.electrons
    if not n:
        return None
    hb = computed.handbook
    T = np.asarray(hb.settings.temperatures, dtype=float)
    try:
        cv = cell_voltages(rr.nu, hb.species, T, n)
    except ValueError:
        return None
    c = rr.reaction.conditions
    V = c.voltage if c is not None else None
    effs = []
    for i in range(len(T)):
        eff = None
        if V is not None and np.isfinite(cv.E[i]) and np.isfinite(cv.Etn[i]):
            eff = voltage_efficiency(float(cv.E[i]), float(cv.Etn[i]), V)
        effs.append(eff)
    return CellDesign(cv, V, tuple(effs))


# --- per reaction ----------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class DesignResult:
    """The design-reference numbers of one reaction sheet."""

    chart_T: np.ndarray
    chart_conversion: ConversionSet | None  # at chart_T
    table_T: tuple[float, ...]
    table_conversion: ConversionSet | None  # at table_T
    feed_labels: tuple[str, ...]
    first_reactant: str | None
    adiabatic: AdiabaticDesign
    cell: CellDesign | None


def reaction_design(rr: ReactionResult, computed: Computed) -> DesignResult:
    chart_T = chart_temperatures(rr, computed)
    table_T = table_temperatures(rr, computed)
    return DesignResult(
        chart_T=chart_T, chart_conversion=conversion_curves(rr, computed, chart_T),
        table_T=tuple(table_T), table_conversion=conversion_curves(rr, computed, table_T),
        feed_labels=tuple(label for label, _f in feeds(rr)), first_reactant=first_reactant(rr),
        adiabatic=adiabatic_design(rr, computed), cell=cell_design(rr, computed))


# --- families --------------------------------------------------------------------------------


def family_names(computed: Computed) -> list[str]:
    """Every family tagged on a reaction or listed in handbook.yaml, sorted."""
    return handbook_family_names(computed.handbook)


def handbook_family_names(hb: Handbook) -> list[str]:
    tagged = {fam for r in hb.reactions.values() for fam in r.family}
    return sorted(tagged | set(hb.settings.families))


def family_of(computed: Computed, name: str) -> Family:
    return handbook_family(computed.handbook, name)


def handbook_family(hb: Handbook, name: str) -> Family:
    return hb.settings.families.get(name) or Family(name, name, None)


def family_members(hb: Handbook, name: str, per: str | None
                   ) -> tuple[list[tuple[str, float]], list[str]]:
    """([(reaction id, |ν_per|)], skipped ids) of the family's reactions, sorted by id;
    |ν_per| is 1 when the family has no ``per`` species; skipped lack that species."""
    members, skipped = [], []
    for rid in sorted(rid for rid, r in hb.reactions.items() if name in r.family):
        nu = abs(float(hb.reactions[rid].stoichiometry.get(per, 0.0))) if per else 1.0
        if nu == 0.0:
            skipped.append(rid)
        else:
            members.append((rid, nu))
    return members, skipped


def per_label(hb: Handbook, fam: Family) -> str:
    """"per mol O₂(g)" or "per mole of reaction as written"."""
    sp = hb.species.get(fam.per) if fam.per else None
    if sp is None:
        return "per mole of reaction as written"
    try:
        text = parse_formula(sp.formula).unicode()
    except FormulaError:
        text = sp.formula
    return f"per mol {text}({sp.phase})"


@dataclass(frozen=True)
class FamilyCurves:
    family: Family
    per_label: str  # "per mol O₂(g)" or "per mole of reaction as written"
    members: tuple[str, ...]  # reaction ids on the chart
    skipped: tuple[str, ...]  # members without the ``per`` species
    T: np.ndarray
    curves: Mapping[str, np.ndarray]  # reaction id → ΔrG°/|ν_per|, kJ/mol
    crossings: tuple[tuple[str, str, float, float], ...]  # (a, b, T, y)
    nu_per: Mapping[str, float] | None = None  # reaction id → |ν_per| (1 without ``per``)
    drG_ref: Mapping[str, float | None] | None = None  # ΔrG°(298.15 K)/|ν_per| on the grid


def _crossings(T: np.ndarray, a: np.ndarray, b: np.ndarray) -> list[tuple[float, float]]:
    """Where a − b changes sign, by linear interpolation between neighbouring points."""
    d = a - b
    out = []
    for i in range(len(T) - 1):
        d0, d1 = d[i], d[i + 1]
        if not (np.isfinite(d0) and np.isfinite(d1)):
            continue
        if d0 == 0.0 and (i == 0 or not np.isfinite(d[i - 1]) or d[i - 1] != 0.0):
            out.append((float(T[i]), float(a[i])))
        elif d0 * d1 < 0:
            f = d0 / (d0 - d1)
            t = T[i] + f * (T[i + 1] - T[i])
            out.append((float(t), float(a[i] + f * (a[i + 1] - a[i]))))
    return out


def line_crossings(T: np.ndarray, curves: Mapping[str, np.ndarray], members: Sequence[str]
                   ) -> tuple[tuple[str, str, float, float], ...]:
    """(a, b, T, y) for every pair of members whose lines cross over ``T``, by T."""
    out = []
    for i, a in enumerate(members):
        for b in members[i + 1:]:
            if len(curves[a]) != len(curves[b]):
                continue
            out += [(a, b, t, y) for t, y in _crossings(T, curves[a], curves[b])]
    out.sort(key=lambda c: (c[2], c[0], c[1]))
    return tuple(out)


def family_curves(computed: Computed, name: str) -> FamilyCurves:
    """The members' ΔrG°/|ν_per| on their chart curves, with the crossovers."""
    hb = computed.handbook
    fam = family_of(computed, name)
    pairs, skipped = family_members(hb, name, fam.per)
    i_ref = _ref_index(np.asarray(hb.settings.temperatures, dtype=float))
    curves, drG_ref = {}, {}
    T = np.zeros(0)
    for rid, nu in pairs:
        rr = computed.reactions[rid]
        T = np.asarray(rr.curve.T, dtype=float)
        curves[rid] = np.asarray(rr.curve.drG, dtype=float) / nu
        drG_ref[rid] = None if i_ref is None else float(rr.grid.drG[i_ref]) / nu
    members = [rid for rid, _nu in pairs]
    return FamilyCurves(fam, per_label(hb, fam), tuple(members), tuple(skipped), T, curves,
                        line_crossings(T, curves, members), dict(pairs), drG_ref)


# --- element ladders -------------------------------------------------------------------------


@dataclass(frozen=True)
class LadderPoint:
    species: str
    atoms: int
    dfH: float | None  # kJ per mol of atoms of the element
    dfG: float | None


def element_symbols(computed: Computed) -> list[str]:
    return sorted({el for sr in computed.species.values() for el, _n in sr.species.elements})


def ladder_points(computed: Computed, symbol: str) -> list[LadderPoint]:
    """Every species containing ``symbol``, with ΔfH° and ΔfG° (298.15 K) per atom of it,
    lowest ΔfH° per atom first."""
    out = []
    for sid in sorted(computed.species):
        sr = computed.species[sid]
        n = sr.species.element_counts.get(symbol)
        if not n:
            continue
        q = sr.species.standard.get("dfH")
        dfH = float(q.preferred.value) / n if q is not None else None
        i = _ref_index(sr.formation.T)
        g = float(sr.formation.dfG[i]) if i is not None else None
        if g is None or not np.isfinite(g):
            gq = sr.species.standard.get("dfG")
            g = float(gq.preferred.value) if gq is not None else None
        out.append(LadderPoint(sid, n, dfH if dfH is not None and np.isfinite(dfH) else None,
                               None if g is None else g / n))
    return sorted(out, key=lambda p: (p.dfH if p.dfH is not None else np.inf, p.species))


# --- the whole design reference --------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class Design:
    """Every design-reference number of the handbook: by reaction id, family name (sorted)
    and element symbol (sorted)."""

    reactions: Mapping[str, DesignResult]
    families: Mapping[str, FamilyCurves]
    ladders: Mapping[str, tuple[LadderPoint, ...]]


def _reaction_design(views: Mapping[str, Computed], rid: str) -> DesignResult:
    return reaction_design(views[rid].reactions[rid], views[rid])


def compute_design(computed: Computed, jobs: int = 1, results: ResultStore | None = None
                   ) -> Design:
    """The design reference of a computed handbook, once per build: each reaction's part
    from its own cut (generator.neighbourhood.reaction_view), kept in ``results`` under the
    digest of that cut, the rest split over ``jobs`` forked processes (generator.parallel);
    then the families and element ladders."""
    from generator.neighbourhood import digester_for, reaction_view
    from generator.results_cache import kept_or_made

    views = {rid: reaction_view(computed, rid) for rid in computed.reactions}
    digester = digester_for(computed.handbook)
    digests = {rid: digester.view(v, "design", rid) for rid, v in views.items()}
    done = kept_or_made(results, "design", digests, DesignResult, _reaction_design, views, jobs)
    if results is not None:
        for rid, d in done.items():
            digester.know(digests[rid], d, "chart_conversion", "table_conversion", "adiabatic",
                          "cell")
    return Design(
        reactions={rid: done[rid] for rid in computed.reactions},
        families={name: family_curves(computed, name) for name in family_names(computed)},
        ladders={el: tuple(ladder_points(computed, el)) for el in element_symbols(computed)})


def design_of(computed: Computed) -> Design:
    """``computed.design``, computed here for a Computed built without it."""
    return computed.design if computed.design is not None else compute_design(computed)


__all__ = ["AdiabaticDesign", "CHART_T_POINTS", "CellDesign", "ConversionSet", "Design",
           "DesignResult", "FamilyCurves", "LadderPoint", "adiabatic_feed", "chart_temperatures",
           "compute_design", "conversion_curves", "design_of", "element_symbols", "family_curves",
           "family_members", "family_names", "family_of", "first_reactant", "handbook_family",
           "handbook_family_names", "ladder_points", "line_crossings", "per_label",
           "pressure_label", "shows_equilibrium", "table_temperatures"]
