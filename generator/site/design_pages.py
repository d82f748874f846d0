"""Design reference on the site: equilibrium conversion, adiabatic temperature, cell
voltages, family charts and element ladders.  Pure: numbers from generator.thermo and the
computed handbook, formatted by generator.site.pages; no file, clock or process access.

* Equilibrium conversion: generator.thermo.equilibrium (ideal activities; Smith, Van Ness &
  Abbott, Introduction to Chemical Engineering Thermodynamics, 7th ed., ch. 13).
* Adiabatic temperature: generator.thermo.adiabatic (first-law balance, ibid. sec. 4.7).
* Cell voltages: generator.thermo.electrochem, E° = −ΔrG°/(nF), Etn = ΔrH°/(nF).
* Family charts: ΔrG°(T)/|ν_per| of each member; the crossover of two members is where the
  difference of their normalised curves changes sign, placed by linear interpolation.
* Element ladders: ΔfH° and ΔfG° at 298.15 K per atom of the element, X/n_X.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from markupsafe import Markup

from generator.compute import Computed, ReactionResult
from generator.model import Family
from generator.site.pages import (
    MISSING,
    ChartView,
    Page,
    _base,
    _charts,
    _ref_index,
    equation_html,
    fixed,
    formula_text,
    species_label,
    temperature,
)
from generator.thermo.adiabatic import adiabatic_caution, adiabatic_temperature
from generator.thermo.electrochem import cell_voltages, voltage_efficiency
from generator.thermo.equilibrium import EquilibriumCurve, equilibrium_curves, stoichiometric_feed

CHART_T_POINTS = 61  # points of an equilibrium conversion curve on its chart
_SLUG = re.compile(r"[^a-z0-9._-]+")


def slug(name: str) -> str:
    """A file-name-safe form of a family name or element symbol."""
    return _SLUG.sub("-", name.lower()).strip("-") or "x"


def family_href(name: str) -> str:
    return f"families/{slug(name)}.html"


def element_href(symbol: str) -> str:
    return f"elements/{symbol}.html"


def percent(x: float | None) -> str:
    """A fraction as a percentage with one decimal ("87.3 %"); "—" if missing."""
    text = fixed(None if x is None else 100.0 * float(x), "pct")
    return MISSING if text == MISSING else f"{text} %"


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


def _feeds(rr: ReactionResult) -> list[tuple[str, dict[str, float]]]:
    c = rr.reaction.conditions
    if c is not None and c.feeds:
        return [(f.label, f.amounts) for f in c.feeds]
    return [("stoichiometric reactants", stoichiometric_feed(rr.nu))]


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
    feeds = _feeds(rr)
    first = first_reactant(rr)
    if first is None:
        return None
    hb = computed.handbook
    try:
        curves = equilibrium_curves(rr.nu, hb.species, [f for _l, f in feeds], T,
                                    c.pressures, standard_pressure=hb.settings.standard_pressure,
                                    first_reactant=first)
    except ValueError:
        return None
    labels = []
    for label, _f in feeds:
        for P in c.pressures:
            labels.append(f"{label}, {pressure_label(P)}" if len(feeds) > 1
                          else f"P = {pressure_label(P)}")
    return ConversionSet(first, tuple(labels), tuple(curves))


def chart_temperatures(rr: ReactionResult, computed: Computed) -> np.ndarray:
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


def equilibrium_context(rr: ReactionResult, computed: Computed) -> dict | None:
    """The small table beside the conversion chart."""
    T = table_temperatures(rr, computed)
    cs = conversion_curves(rr, computed, T)
    if cs is None:
        return None
    sp = computed.handbook.species[cs.reactant]
    rows = []
    for i, t in enumerate(T):
        rows.append({"T": temperature(t), "extrapolated": any(bool(c.extrapolated[i])
                                                                for c in cs.curves),
                     "cells": [percent(None if not np.isfinite(c.conversion[i])
                                       else c.conversion[i]) for c in cs.curves]})
    c = rr.reaction.conditions
    span = (f"{temperature(c.T_range[0])} – {temperature(c.T_range[1])} K"
            if c.T_range else "the handbook's temperature grid")
    return {"reactant": species_label(sp), "reactant_text": formula_text(sp.formula),
            "labels": list(cs.labels), "rows": rows, "span": span,
            "feeds": [label for label, _f in _feeds(rr)]}


# --- adiabatic temperature -------------------------------------------------------------------


def adiabatic_feed(rr: ReactionResult) -> tuple[str, dict[str, float], float]:
    """(label, feed, T_in): the first feed of ``conditions`` else the stoichiometric
    reactants; T_in from ``conditions`` (298.15 K by default)."""
    c = rr.reaction.conditions
    T_in = c.T_in if c is not None else 298.15
    if c is not None and c.feeds:
        return c.feeds[0].label, c.feeds[0].amounts, T_in
    return "stoichiometric reactants", stoichiometric_feed(rr.nu), T_in


def adiabatic_context(rr: ReactionResult, computed: Computed) -> dict:
    label, feed, T_in = adiabatic_feed(rr)
    hb = computed.handbook
    try:
        res = adiabatic_temperature(rr.nu, hb.species, feed, T_in)
    except ValueError as exc:
        return {"feed": label, "available": False, "note": str(exc), "caution": None}
    limiting = hb.species[res.limited_by] if res.limited_by else None
    caution = adiabatic_caution(res.rise, hb.settings.adiabatic_caution_K)
    return {
        "feed": label, "available": bool(np.isfinite(res.T_out)),
        "T_in": temperature(res.T_in), "T_out": temperature(res.T_out),
        "rise": temperature(res.rise),
        "limiting": species_label(limiting) if limiting is not None else MISSING,
        "note": res.note, "capped": res.capped, "extrapolated": res.extrapolated,
        "caution": caution, "threshold": f"{hb.settings.adiabatic_caution_K:g} K",
    }


# --- cell voltages ---------------------------------------------------------------------------


def electrochem_context(rr: ReactionResult, computed: Computed) -> dict | None:
    """E°, Etn and the reversible heat on the grid; efficiencies at ``conditions.voltage``."""
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
    rows = []
    summary = None
    i_ref = _ref_index(T)
    for i, t in enumerate(T):
        cells = [temperature(t), fixed(cv.E[i], "V"), fixed(cv.Etn[i], "V"),
                 fixed(cv.reversible_heat[i], "kJ"), fixed(cv.reversible_heat_V[i], "V"),
                 cv.mode[i]]
        eff = None
        if V is not None and np.isfinite(cv.E[i]) and np.isfinite(cv.Etn[i]):
            eff = voltage_efficiency(float(cv.E[i]), float(cv.Etn[i]), V)
        if V is not None:
            cells += [percent(eff.eta_V) if eff else MISSING,
                      percent(eff.eta_thermal) if eff else MISSING]
        rows.append({"extrapolated": bool(cv.extrapolated[i]), "cells": cells})
        if i == i_ref and eff is not None:
            summary = {"T": temperature(t), "mode": eff.mode, "eta_V": percent(eff.eta_V),
                       "eta_thermal": percent(eff.eta_thermal)}
    columns = [{"label": Markup("T"), "unit": "K"}, {"label": Markup("E°"), "unit": "V"},
               {"label": Markup("E<sub>tn</sub>"), "unit": "V"},
               {"label": Markup("T·Δ<sub>r</sub>S°"), "unit": "kJ/mol"},
               {"label": Markup("T·Δ<sub>r</sub>S°/(nF)"), "unit": "V"},
               {"label": Markup("mode"), "unit": ""}]
    if V is not None:
        columns += [{"label": Markup("η<sub>V</sub>"), "unit": "%"},
                    {"label": Markup("η<sub>th</sub>"), "unit": "%"}]
    return {"electrons": str(n), "voltage": f"{V:g}" if V is not None else "",
            "columns": columns, "rows": rows, "summary": summary}


# --- families --------------------------------------------------------------------------------


def family_names(computed: Computed) -> list[str]:
    """Every family tagged on a reaction or listed in handbook.yaml, sorted."""
    hb = computed.handbook
    tagged = {fam for r in hb.reactions.values() for fam in r.family}
    return sorted(tagged | set(hb.settings.families))


def family_of(computed: Computed, name: str) -> Family:
    return computed.handbook.settings.families.get(name) or Family(name, name, None)


@dataclass(frozen=True)
class FamilyCurves:
    family: Family
    per_label: str  # "per mol O₂(g)" or "per mole of reaction as written"
    members: tuple[str, ...]  # reaction ids on the chart
    skipped: tuple[str, ...]  # members without the ``per`` species
    T: np.ndarray
    curves: Mapping[str, np.ndarray]  # reaction id → ΔrG°/|ν_per|, kJ/mol
    crossings: tuple[tuple[str, str, float, float], ...]  # (a, b, T, y)


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


def family_curves(computed: Computed, name: str) -> FamilyCurves:
    fam = family_of(computed, name)
    hb = computed.handbook
    ids = sorted(rid for rid, r in hb.reactions.items() if name in r.family)
    per_sp = hb.species.get(fam.per) if fam.per else None
    per_label = (f"per mol {formula_text(per_sp.formula)}({per_sp.phase})" if per_sp
                 else "per mole of reaction as written")
    members, skipped, curves = [], [], {}
    T = np.zeros(0)
    for rid in ids:
        rr = computed.reactions[rid]
        nu = abs(float(rr.nu.get(fam.per, 0.0))) if fam.per else 1.0
        if nu == 0.0:
            skipped.append(rid)
            continue
        members.append(rid)
        T = np.asarray(rr.curve.T, dtype=float)
        curves[rid] = np.asarray(rr.curve.drG, dtype=float) / nu
    crossings = []
    for i, a in enumerate(members):
        for b in members[i + 1:]:
            if len(curves[a]) != len(curves[b]):
                continue
            crossings += [(a, b, t, y) for t, y in _crossings(T, curves[a], curves[b])]
    crossings.sort(key=lambda c: (c[2], c[0], c[1]))
    return FamilyCurves(fam, per_label, tuple(members), tuple(skipped), T, curves,
                        tuple(crossings))


def family_context(computed: Computed, name: str, site: dict,
                   charts: Sequence[ChartView]) -> dict:
    fc = family_curves(computed, name)
    path = family_href(name)
    title = fc.family.title or name
    ctx = _base(site, path, f"Family: {title}", "reactions")
    root = ctx["root"]
    hb = computed.handbook
    i = _ref_index(np.asarray(hb.settings.temperatures, dtype=float))
    line_charts, _levels = _charts(charts, root)

    def link(rid: str) -> dict:
        rr = computed.reactions[rid]
        return {"href": f"{root}reactions/{rid}.html", "name": rr.reaction.name,
                "equation": equation_html(rr, hb.species), "id": rid}

    members = []
    for rid in fc.members:
        rr = computed.reactions[rid]
        nu = abs(float(rr.nu.get(fc.family.per, 1.0))) if fc.family.per else 1.0
        g = None if i is None else float(rr.grid.drG[i]) / nu
        members.append({**link(rid), "nu": f"{nu:g}", "drG": fixed(g, "kJ")})
    names = {rid: computed.reactions[rid].reaction.name for rid in fc.members}
    ctx.update({
        "name": name, "title": title, "per": fc.per_label,
        "per_species": fc.family.per or "",
        "members": members, "skipped": [link(rid) for rid in fc.skipped],
        "crossings": [{"a": names[a], "b": names[b], "a_href": f"{root}reactions/{a}.html",
                       "b_href": f"{root}reactions/{b}.html", "T": temperature(t),
                       "drG": fixed(y, "kJ")} for a, b, t, y in fc.crossings],
        "charts": line_charts,
    })
    return ctx


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


def element_context(computed: Computed, symbol: str, site: dict,
                    charts: Sequence[ChartView]) -> dict:
    path = element_href(symbol)
    ctx = _base(site, path, f"Element ladder: {symbol}", "species")
    root = ctx["root"]
    line_charts, level_charts = _charts(charts, root)
    rows = []
    for p in ladder_points(computed, symbol):
        sp = computed.species[p.species].species
        rows.append({"href": f"{root}species/{p.species}.html", "label": species_label(sp),
                     "name": sp.name, "atoms": str(p.atoms), "dfH": fixed(p.dfH, "kJ"),
                     "dfG": fixed(p.dfG, "kJ")})
    ctx.update({"symbol": symbol, "rows": rows, "charts": line_charts + level_charts})
    return ctx


# --- pages -----------------------------------------------------------------------------------


def design_pages(computed: Computed, site: dict,
                 charts: Mapping[str, Sequence[ChartView]]) -> list[Page]:
    """A page per family and a ladder page per element; chart views keyed
    ``family:<name>`` and ``element:<symbol>``."""
    out = []
    for name in family_names(computed):
        out.append(Page(family_href(name), "family.html", family_context(
            computed, name, site, charts.get(f"family:{name}", ()))))
    for symbol in element_symbols(computed):
        out.append(Page(element_href(symbol), "element.html", element_context(
            computed, symbol, site, charts.get(f"element:{symbol}", ()))))
    return out


def reaction_design(rr: ReactionResult, computed: Computed) -> dict:
    """The design-reference parts of a reaction sheet's context."""
    return {"equilibrium": equilibrium_context(rr, computed),
            "adiabatic": adiabatic_context(rr, computed),
            "cell": electrochem_context(rr, computed)}
