"""Design reference on the site: equilibrium conversion, adiabatic temperature, cell
voltages, family charts and element ladders.  Formatting only: the numbers come from
``computed.design`` (generator.design, the compute stage), formatted by
generator.site.pages; no file, clock or process access.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence

import numpy as np
from markupsafe import Markup

from generator.compute import Computed, ReactionResult
from generator.design import (  # re-exported: the site's names for the design numbers
    CHART_T_POINTS,
    ConversionSet,
    DesignResult,
    FamilyCurves,
    LadderPoint,
    _crossings,
    adiabatic_feed,
    chart_temperatures,
    conversion_curves,
    design_of,
    element_symbols,
    family_names,
    family_of,
    first_reactant,
    pressure_label,
    shows_equilibrium,
    table_temperatures,
)
from generator.design import family_curves as _family_curves
from generator.design import reaction_design as compute_reaction_design
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


def _design(rr: ReactionResult, computed: Computed) -> DesignResult:
    d = design_of(computed).reactions.get(rr.reaction.id)
    return d if d is not None else compute_reaction_design(rr, computed)


# --- equilibrium conversion ------------------------------------------------------------------


def equilibrium_context(rr: ReactionResult, computed: Computed) -> dict | None:
    """The small table beside the conversion chart."""
    d = _design(rr, computed)
    cs = d.table_conversion
    if cs is None:
        return None
    sp = computed.handbook.species[cs.reactant]
    rows = []
    for i, t in enumerate(d.table_T):
        rows.append({"T": temperature(t), "extrapolated": any(bool(c.extrapolated[i])
                                                                for c in cs.curves),
                     "cells": [percent(None if not np.isfinite(c.conversion[i])
                                       else c.conversion[i]) for c in cs.curves]})
    c = rr.reaction.conditions
    span = (f"{temperature(c.T_range[0])} – {temperature(c.T_range[1])} K"
            if c.T_range else "the handbook's temperature grid")
    return {"reactant": species_label(sp), "reactant_text": formula_text(sp.formula),
            "labels": list(cs.labels), "rows": rows, "span": span,
            "feeds": list(d.feed_labels)}


# --- adiabatic temperature -------------------------------------------------------------------


def adiabatic_context(rr: ReactionResult, computed: Computed) -> dict:
    a = _design(rr, computed).adiabatic
    if a.result is None:
        return {"feed": a.feed, "available": False, "note": a.error, "caution": None}
    res = a.result
    hb = computed.handbook
    limiting = hb.species[res.limited_by] if res.limited_by else None
    return {
        "feed": a.feed, "available": bool(np.isfinite(res.T_out)),
        "T_in": temperature(res.T_in), "T_out": temperature(res.T_out),
        "rise": temperature(res.rise),
        "limiting": species_label(limiting) if limiting is not None else MISSING,
        "note": res.note, "capped": res.capped, "extrapolated": res.extrapolated,
        "caution": a.caution, "threshold": f"{hb.settings.adiabatic_caution_K:g} K",
    }


# --- cell voltages ---------------------------------------------------------------------------


def electrochem_context(rr: ReactionResult, computed: Computed) -> dict | None:
    """E°, Etn and the reversible heat on the grid; efficiencies at ``conditions.voltage``."""
    cell = _design(rr, computed).cell
    if cell is None:
        return None
    n = rr.reaction.electrons
    cv, V = cell.voltages, cell.voltage
    T = np.asarray(computed.handbook.settings.temperatures, dtype=float)
    rows = []
    summary = None
    i_ref = _ref_index(T)
    for i, t in enumerate(T):
        cells = [temperature(t), fixed(cv.E[i], "V"), fixed(cv.Etn[i], "V"),
                 fixed(cv.reversible_heat[i], "kJ"), fixed(cv.reversible_heat_V[i], "V"),
                 cv.mode[i]]
        eff = cell.efficiencies[i]
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


def family_curves(computed: Computed, name: str) -> FamilyCurves:
    """The family's lines from ``computed.design``."""
    fc = design_of(computed).families.get(name)
    return fc if fc is not None else _family_curves(computed, name)


def family_context(computed: Computed, name: str, site: dict,
                   charts: Sequence[ChartView]) -> dict:
    fc = family_curves(computed, name)
    path = family_href(name)
    title = fc.family.title or name
    ctx = _base(site, path, f"Family: {title}", "reactions")
    root = ctx["root"]
    hb = computed.handbook
    line_charts, _levels = _charts(charts, root)

    def link(rid: str) -> dict:
        rr = computed.reactions[rid]
        return {"href": f"{root}reactions/{rid}.html", "name": rr.reaction.name,
                "equation": equation_html(rr, hb.species), "id": rid}

    members = [{**link(rid), "nu": f"{fc.nu_per[rid]:g}", "drG": fixed(fc.drG_ref[rid], "kJ")}
               for rid in fc.members]
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


def ladder_points(computed: Computed, symbol: str) -> list[LadderPoint]:
    """The element's ladder from ``computed.design`` (lowest ΔfH° per atom first)."""
    return list(design_of(computed).ladders.get(symbol, ()))


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
    from generator.site.chart_specs import LADDER_CHART_MAX

    omitted = None
    if len(rows) > LADDER_CHART_MAX:
        omitted = (f"{len(rows)} species contain {symbol}, more than the {LADDER_CHART_MAX} a "
                   "ladder chart can label legibly, so the ladder is given as the table below "
                   "only.")
    ctx.update({"symbol": symbol, "rows": rows, "charts": line_charts + level_charts,
                "chart_omitted": omitted})
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


__all__ = ["CHART_T_POINTS", "ConversionSet", "FamilyCurves", "LadderPoint", "_crossings",
           "adiabatic_context", "adiabatic_feed", "chart_temperatures", "conversion_curves",
           "design_pages", "electrochem_context", "element_context", "element_href",
           "element_symbols", "equilibrium_context", "family_context", "family_curves",
           "family_href", "family_names", "family_of", "first_reactant", "ladder_points",
           "percent", "pressure_label", "reaction_design", "shows_equilibrium", "slug",
           "table_temperatures"]
