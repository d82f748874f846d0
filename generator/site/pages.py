"""Page contexts: pure functions from the computed handbook to display-ready strings.

Every number the site shows is formatted here (templates only place strings): fixed
decimals per quantity, U+2212 for minus, "—" for a missing or non-finite value, K in
scientific notation and, beyond the floating-point range, left to log10 K.  HTML fragments
(formulas, quantity symbols, sanitised notes) are ``markupsafe.Markup``; everything else is
plain text that the templates escape.  No file, clock or process access.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from functools import lru_cache
from html import escape

import numpy as np
from markupsafe import Markup

from generator.caution import CAUTION
from generator.compute import Computed, ReactionResult, SpeciesResult
from generator.diagnostics import Finding, Severity, sort_findings
from generator.formula import FormulaError, parse_formula, search_key
from generator.model import PHASES, REACTION_QUANTITIES, REVIEW_STATUSES, Species, Value
from generator.thermo.constants import T_REF

MINUS = "\u2212"
MISSING = "—"
DECIMALS = {"T": 2, "kJ": 3, "J": 3, "log10K": 3, "V": 4, "M": 4, "pct": 1}
PHASE_NAMES = {"g": "gas", "l": "liquid", "cr": "crystal", "s": "solid", "aq": "aqueous solution"}
STATUS_NAMES = {"draft": "draft — not yet checked", "checked": "checked",
                "approved": "approved"}
SEVERITY_NAMES = {"error": "Errors", "warning": "Warnings", "note": "Notes"}
UNIT_TEXT = {"kJ/mol": "kJ/mol", "J/(mol*K)": "J/(mol·K)", "": "", "1": "", "V": "V", "K": "K"}
SPECIES_ORDER = ("dfH", "dfG", "S", "Cp")
SYMBOLS = {
    "dfH": "Δ<sub>f</sub>H°", "dfG": "Δ<sub>f</sub>G°", "S": "S°", "Cp": "C<sub>p</sub>°",
    "drH": "Δ<sub>r</sub>H°", "drS": "Δ<sub>r</sub>S°", "drG": "Δ<sub>r</sub>G°",
    "drCp": "Δ<sub>r</sub>C<sub>p</sub>°", "drU": "Δ<sub>r</sub>U°", "TdrS": "T·Δ<sub>r</sub>S°",
    "K": "K°", "log10K": "log<sub>10</sub> K°", "E": "E°", "Etn": "E<sub>tn</sub>",
}
QUANTITY_DECIMALS = {"dfH": "kJ", "dfG": "kJ", "S": "J", "Cp": "J", "drH": "kJ", "drG": "kJ",
                     "drS": "J", "drCp": "J", "drU": "kJ", "TdrS": "kJ", "log10K": "log10K",
                     "E": "V", "Etn": "V"}
_SUPERSCRIPT = str.maketrans("0123456789-", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻")


# --- number formatting -------------------------------------------------------------------------


def _finite(x: float | None) -> bool:
    return x is not None and math.isfinite(float(x))


def fixed(x: float | None, kind: str) -> str:
    """``x`` with the fixed decimals of its kind (see DECIMALS), U+2212 minus, "—" if missing."""
    return fixed_all([x], kind)[0]


def fixed_all(values, kind: str) -> list[str]:
    """Each value of a 1-D array or sequence with the fixed decimals of ``kind`` (see
    DECIMALS), U+2212 minus, "—" if missing or not finite; a -0.000 is written 0.000."""
    fmt = f"{{:.{DECIMALS[kind]}f}}".format
    isfinite = math.isfinite
    out = []
    for x in values.tolist() if hasattr(values, "tolist") else values:
        if x is None or not isfinite(x := float(x)):
            out.append(MISSING)
            continue
        text = fmt(x)
        if text[0] == "-":
            text = text[1:] if float(text) == 0.0 else MINUS + text[1:]
        out.append(text)
    return out


def temperature(T: float | None) -> str:
    return fixed(T, "T")


def uncertainty(u: float | None, kind: str) -> str:
    """"± u" at the value's decimals (two significant digits if that would round to zero)."""
    if not _finite(u):
        return ""
    text = fixed(u, kind)
    if float(text) == 0.0 and float(u) != 0.0:
        text = f"{float(u):.2g}"
    return f"± {text}"


def scientific(x: float | None) -> str:
    """A positive number as "1.23 × 10⁻⁵" (3 significant digits); "—" if not representable."""
    if not _finite(x) or float(x) <= 0.0:
        return MISSING
    mantissa, exponent = f"{float(x):.2e}".split("e")
    power = int(exponent)
    if -3 <= power <= 3:
        return f"{float(x):.{max(0, 2 - power)}f}"
    return f"{mantissa} × 10{str(power).translate(_SUPERSCRIPT)}"


@lru_cache(maxsize=4096)
def signed_number(nu: float) -> str:
    """A stoichiometric number as an exact fraction where it is one: −1/2, 2, −4."""
    frac = Fraction(nu).limit_denominator(1000)
    text = str(frac) if abs(float(frac) - nu) < 1e-9 else f"{nu:g}"
    return text.replace("-", MINUS)


def coefficient(nu: float) -> str:
    """A coefficient in an equation: "" for 1, else the fraction ("1/2", "3")."""
    text = signed_number(abs(nu))
    return "" if text == "1" else text


def pressure_text(p: float) -> str:
    if abs(p - 1.0e5) < 1e-6:
        return "1 bar (100 kPa)"
    if abs(p - 101325.0) < 1e-6:
        return "1 atm (101.325 kPa)"
    return f"{p / 1000.0:g} kPa"


def unit_text(unit: str) -> str:
    return UNIT_TEXT.get(unit, unit)


def symbol(name: str) -> Markup:
    return Markup(SYMBOLS.get(name, escape(name)))


# --- chemistry as HTML -------------------------------------------------------------------------


@lru_cache(maxsize=65536)
def formula_html(formula: str) -> Markup:
    """The formula with sub- and superscripts (parsed once per distinct text)."""
    try:
        return Markup(parse_formula(formula).html())
    except FormulaError:
        return Markup(escape(formula))


@lru_cache(maxsize=65536)
def formula_text(formula: str) -> str:
    try:
        return parse_formula(formula).unicode()
    except FormulaError:
        return formula


def species_label(sp: Species) -> Markup:
    """Formula with its phase (and polymorph): CaCO<sub>3</sub>(cr, calcite)."""
    return _label(sp.formula, sp.phase, sp.form)


@lru_cache(maxsize=65536)
def _label(formula: str, phase: str, form: str | None) -> Markup:
    state = phase + (f", {form}" if form else "")
    return formula_html(formula) + Markup("(") + state + Markup(")")


def _side_html(terms: Iterable[tuple[float, str, str, str | None]]) -> Markup:
    parts = []
    for nu, formula, phase, form in terms:
        coef = coefficient(nu)
        parts.append((Markup(escape(coef)) + Markup("&#8239;") if coef else Markup(""))
                     + _label(formula, phase, form))
    return Markup(" + ").join(parts)


def equation_html(rr: ReactionResult, species: Mapping[str, Species]) -> Markup:
    """The net equation in HTML with sub- and superscripts, reactants → products."""
    terms = tuple((nu, species[sid].formula, species[sid].phase, species[sid].form)
                  for sid, nu in _terms(rr))
    return _equation_html(terms)


@lru_cache(maxsize=16384)
def _equation_html(terms: tuple[tuple[float, str, str, str | None], ...]) -> Markup:
    left = [(-nu, *rest) for nu, *rest in terms if nu < 0]
    right = [(nu, *rest) for nu, *rest in terms if nu > 0]
    return _side_html(left) + Markup(" → ") + _side_html(right)


def _terms(rr: ReactionResult) -> list[tuple[str, float]]:
    """Species in equation order (reactants as written, then products), net ν."""
    order: list[str] = []
    for t in (*rr.reaction.reactants, *rr.reaction.products):
        if t.species not in order:
            order.append(t.species)
    for sid in sorted(rr.nu):
        if sid not in order:
            order.append(sid)
    return [(sid, float(rr.nu[sid])) for sid in order if sid in rr.nu]


def equation_text(rr: ReactionResult, species: Mapping[str, Species]) -> str:
    if rr.reaction.equation:
        return rr.reaction.equation
    def side(sign: int) -> str:
        return " + ".join(f"{coefficient(nu) + ' ' if coefficient(nu) else ''}"
                          f"{species[sid].formula}({species[sid].phase})"
                          for sid, nu in _terms(rr) if nu * sign > 0)
    return f"{side(-1)} -> {side(1)}"


# --- shared page parts -------------------------------------------------------------------------


@dataclass(frozen=True)
class SiteMeta:
    """Facts about this build that publish gathers: build date, source revision, the recent
    git history of each source file (path relative to the sources → commits, newest first)
    and, for ``build --since REV``, the edition diff (generator.edition_diff.DiffResult)."""

    build_date: str
    revision: str
    histories: Mapping[str, Sequence] = field(default_factory=dict)
    changes: object | None = None


@dataclass(frozen=True)
class ChartView:
    """One drawn chart as a page shows it: file in the site, caption, alt text."""

    path: str  # "charts/<digest16>.svg"
    caption: str
    alt: str
    level: bool = False  # a level (Hess cycle) diagram


@dataclass(frozen=True)
class Page:
    path: str
    template: str
    context: dict


def _site(computed: Computed, meta: SiteMeta) -> dict:
    s = computed.handbook.settings
    return {
        "title": s.title, "edition": s.edition, "organisation": s.organisation,
        "caution": s.caution or CAUTION, "build_date": meta.build_date,
        "revision": meta.revision,
        "print_footer": f"Uncontrolled when printed — {s.title}, edition {s.edition}",
    }


def _base(site: dict, path: str, title: str, nav: str, review: dict | None = None) -> dict:
    depth = path.count("/")
    return {"site": site, "root": "../" * depth, "page_title": title, "nav": nav,
            "review": review, "search": False}


def _review(item, coverage: dict | None = None) -> dict:
    r = item.review
    return {"status": r.status, "status_text": STATUS_NAMES.get(r.status, r.status),
            "by": r.by or MISSING, "date": r.date or MISSING, "note": r.note or "",
            "coverage": coverage}


def _provenance_parts(computed: Computed, kind: str, item: str, path: str, root: str,
                      meta: SiteMeta | None) -> dict:
    """Review coverage, spreads, network values and source history of one sheet."""
    from generator.site import provenance_view as pv

    return {
        "spreads": pv.spread_rows(computed, item),
        "network": (pv.network_view(computed, item, root) if kind == "species" else
                    {"fixed": None, "reconciled": None,
                     "rows": pv.observation_rows(computed, item, root)}),
        "history": pv.history_view(computed, path, meta.histories if meta else {},
                                   meta.revision if meta else pv.NOT_IN_GIT),
    }


def _ref_index(T: np.ndarray) -> int | None:
    hits = np.flatnonzero(np.abs(np.asarray(T, dtype=float) - T_REF) < 1e-6)
    return int(hits[0]) if hits.size else None


def _at(arr, i: int | None) -> float | None:
    if arr is None or i is None:
        return None
    return float(arr[i])


def all_findings(computed: Computed, findings: Iterable[Finding]) -> list[Finding]:
    """The loader's and the engine's findings, each once, in the stable order."""
    return sort_findings(dict.fromkeys([*findings, *computed.findings]))


def _item_href(computed: Computed, item: str | None) -> str | None:
    if item in computed.species:
        return f"species/{item}.html"
    if item in computed.reactions:
        return f"reactions/{item}.html"
    return None


def finding_anchor(computed: Computed, f: Finding) -> str:
    """The id, on the item's sheet, of the value a finding concerns ("" for the sheet top)."""
    q = (f.quantity or "").split("@")[0]
    if f.item in computed.species:
        sp = computed.species[f.item].species
        if q in sp.standard:
            return f"std-{q}"
        if q == "cp":
            return "cp" if sp.cp else "standard"
        return ""
    if f.item in computed.reactions:
        if q in ("drH", "drS", "drG", "K", "log10K"):
            return f"std-{q}"
        return "table" if f.code == "extrapolated" else ""
    return ""


def finding_view(computed: Computed, f: Finding, root: str) -> dict:
    href = _item_href(computed, f.item)
    anchor = finding_anchor(computed, f)
    return {
        "severity": f.severity.value, "code": f.code, "message": f.message,
        "hint": f.hint or "", "where": str(f.location) if f.location else "",
        "item": f.item or "",
        "href": (root + href + (f"#{anchor}" if anchor else "")) if href else "",
    }


# --- species -----------------------------------------------------------------------------------


def value_anchor(name: str, n: int) -> str:
    """``std-dfH`` for the value used, ``std-dfH-2``, ``-3``… for the alternatives."""
    return f"std-{name}" if n == 1 else f"std-{name}-{n}"


def ordered_values(q) -> list[Value]:
    """The preferred value first, then the alternatives in file order."""
    best = q.preferred
    return [best, *(v for v in q.values if v is not best)]


def _quantities(sp: Species) -> list[str]:
    return [*(q for q in SPECIES_ORDER if q in sp.standard),
            *sorted(q for q in sp.standard if q not in SPECIES_ORDER)]


def _standard_rows(sp: Species, root: str) -> list[dict]:
    rows = []
    for name in _quantities(sp):
        q = sp.standard[name]
        kind = QUANTITY_DECIMALS.get(name, "kJ")
        for n, v in enumerate(ordered_values(q), start=1):
            rows.append({
                "anchor": value_anchor(name, n), "symbol": symbol(name),
                "value": fixed(v.value, kind), "unc": uncertainty(v.unc, kind),
                "unit": unit_text(v.unit), "ref": v.ref or "",
                "ref_href": f"{root}references/{v.ref}.html" if v.ref else "",
                "written": v.written, "conversion": v.conversion,
                "from_memory": v.from_memory,
                "role": "used" if n == 1 else "alternative",
                "rule": q.preference_rule if n == 1 and len(q.values) > 1 else "",
            })
    return rows


def _cp_rows(sp: Species, root: str) -> list[dict]:
    rows = []
    for i, p in enumerate(sp.cp, start=1):
        if p.kind == "table":
            coeffs = "; ".join(f"{t:g} K: {c:g}" for t, c in zip(p.table_T, p.table_Cp,
                                                                 strict=False))
        else:
            coeffs = ", ".join(f"{c:.9g}" for c in p.coeffs)
        rows.append({
            "anchor": f"cp-{i}", "kind": p.kind,
            "range": f"{temperature(p.Tmin)} – {temperature(p.Tmax)}",
            "coeffs": coeffs.replace("-", MINUS), "ref": p.ref or "",
            "ref_href": f"{root}references/{p.ref}.html" if p.ref else "",
        })
    return rows


SPECIES_COLUMNS = (
    ("T", Markup("T"), "K"), ("Cp", Markup("C<sub>p</sub>°"), "J/(mol·K)"),
    ("H_minus_H298", Markup("H° − H°(298.15 K)"), "kJ/mol"), ("S", Markup("S°"), "J/(mol·K)"),
    ("gef", Markup("−(G° − H°(298.15 K))/T"), "J/(mol·K)"),
    ("dfH", symbol("dfH"), "kJ/mol"), ("dfG", symbol("dfG"), "kJ/mol"),
    ("log10Kf", Markup("log<sub>10</sub> K<sub>f</sub>"), ""),
)


def species_table(sr: SpeciesResult) -> list[dict]:
    g, f = sr.grid, sr.formation
    columns = [fixed_all(g.T, "T"), fixed_all(g.Cp, "J"), fixed_all(g.H_minus_H298, "kJ"),
               fixed_all(g.S, "J"), fixed_all(g.gef, "J"), fixed_all(f.dfH, "kJ"),
               fixed_all(f.dfG, "kJ"), fixed_all(f.log10Kf, "log10K")]
    extrapolated = [bool(g.extrapolated[i] or f.extrapolated[i]) for i in range(len(g.T))]
    return [{"extrapolated": e, "cells": list(cells)}
            for e, cells in zip(extrapolated, zip(*columns, strict=True), strict=True)]


def _charts(views: Sequence[ChartView], root: str) -> tuple[list[dict], list[dict]]:
    def view(c: ChartView) -> dict:
        return {"src": root + c.path, "caption": c.caption, "alt": c.alt}
    return ([view(c) for c in views if not c.level], [view(c) for c in views if c.level])


def _reaction_link(computed: Computed, rid: str, root: str) -> dict:
    rr = computed.reactions[rid]
    return {"href": f"{root}reactions/{rid}.html", "name": rr.reaction.name,
            "equation": equation_html(rr, computed.handbook.species)}


def species_context(computed: Computed, sid: str, site: dict, findings: Sequence[Finding],
                    charts: Sequence[ChartView], notes_html: str,
                    meta: SiteMeta | None = None) -> dict:
    from generator.site.provenance_view import coverage_view

    sr = computed.species[sid]
    sp = sr.species
    path = f"species/{sid}.html"
    ctx = _base(site, path, f"{sp.name} — {formula_text(sp.formula)}({sp.phase})", "species",
                _review(sp, coverage_view(computed, "species", sid)))
    root = ctx["root"]
    ctx.update(_provenance_parts(computed, "species", sid, sp.path, root, meta))
    line_charts, level_charts = _charts(charts, root)
    ctx.update({
        "id": sid, "name": sp.name, "label": species_label(sp),
        "phase": PHASE_NAMES.get(sp.phase, sp.phase), "form": sp.form or MISSING,
        "molar_mass": fixed(sp.molar_mass, "M"), "cas": sp.cas or MISSING,
        "aliases": ", ".join(sp.aliases) or MISSING,
        "charge": signed_number(sp.charge) if sp.charge else "0",
        "elements": ", ".join(f"{el} {n}" for el, n in sp.elements),
        "source_path": sp.path,
        "standard": _standard_rows(sp, root),
        "any_from_memory": any(v.from_memory for q in sp.standard.values() for v in q.values),
        "cp": _cp_rows(sp, root),
        "covered": (f"{temperature(sr.grid.covered[0])} – {temperature(sr.grid.covered[1])} K"
                    if sr.grid.covered else "none (no heat-capacity fit held)"),
        "columns": [{"label": label, "unit": unit} for _k, label, unit in SPECIES_COLUMNS],
        "rows": species_table(sr),
        "charts": line_charts, "levels": level_charts,
        "atomization": (fixed(sr.atomization, "kJ") if sr.atomization is not None else None),
        "reactions": [_reaction_link(computed, rid, root) for rid in sorted(sr.reactions)],
        "findings": [finding_view(computed, f, root) for f in findings if f.item == sid],
        "notes": Markup(notes_html),
        "json_href": f"{sid}.json", "csv_href": f"{sid}.csv",
    })
    return ctx


# --- reactions ---------------------------------------------------------------------------------


def balance_rows(rr: ReactionResult, species: Mapping[str, Species]) -> list[dict]:
    """Per element (and charge): atoms on the left, atoms on the right."""
    left: dict[str, float] = {}
    right: dict[str, float] = {}
    order: list[str] = []
    for sid, nu in _terms(rr):
        side = left if nu < 0 else right
        for el, n in species[sid].elements:
            side[el] = side.get(el, 0.0) + abs(nu) * n
            if el not in order:
                order.append(el)
        side["charge"] = side.get("charge", 0.0) + abs(nu) * species[sid].charge
    rows = []
    for el in [*order, "charge"]:
        lv, rv = left.get(el, 0.0), right.get(el, 0.0)
        if el == "charge" and lv == 0.0 and rv == 0.0:
            continue
        rows.append({"element": el, "left": signed_number(lv), "right": signed_number(rv),
                     "balanced": abs(lv - rv) < 1e-9})
    return rows


REACTION_KEYS = ("drH", "drS", "drG", "K", "log10K", "drU", "TdrS")
ELECTRO_KEYS = ("E", "Etn")


def _reaction_cell(f, key: str, i: int) -> str:
    if key == "K":
        return scientific(f.K[i])
    arr = getattr(f, key)
    return fixed(None if arr is None else arr[i], QUANTITY_DECIMALS[key])


def _reaction_unit(key: str) -> str:
    return {"drS": "J/(mol·K)", "drCp": "J/(mol·K)", "K": "", "log10K": "", "E": "V",
            "Etn": "V"}.get(key, "kJ/mol")


def reaction_table(rr: ReactionResult) -> tuple[list[dict], list[dict]]:
    f = rr.grid
    keys = REACTION_KEYS + (ELECTRO_KEYS if f.E is not None else ())
    columns = [{"label": Markup("T"), "unit": "K"}] + [
        {"label": symbol(k), "unit": _reaction_unit(k)} for k in keys]
    cells = [fixed_all(f.T, "T")] + [_reaction_column(f, k) for k in keys]
    rows = [{"extrapolated": e, "cells": list(row)}
            for e, row in zip(f.extrapolated.tolist(), zip(*cells, strict=True), strict=True)]
    return columns, rows


def _reaction_column(f, key: str) -> list[str]:
    """``_reaction_cell`` of every grid temperature."""
    if key == "K":
        return [scientific(x) for x in f.K.tolist()]
    arr = getattr(f, key)
    if arr is None:
        return [MISSING] * len(f.T)
    return fixed_all(arr, QUANTITY_DECIMALS[key])


def reaction_standard(rr: ReactionResult) -> list[dict]:
    """Values at 298.15 K (from the grid, which holds 298.15 K when the handbook lists it)."""
    f = rr.grid
    i = _ref_index(f.T)
    uncs = {"drH": f.u_drH, "drS": f.u_drS, "drG": f.u_drG, "log10K": f.u_log10K}
    keys = ("drH", "drS", "drG", "log10K", "K", "drCp", "drU") + (
        ELECTRO_KEYS if f.E is not None else ())
    rows = []
    for k in keys:
        kind = QUANTITY_DECIMALS.get(k, "kJ")
        value = MISSING if i is None else _reaction_cell(f, k, i)
        unc = uncertainty(_at(uncs.get(k), i), kind) if k in uncs else ""
        rows.append({"anchor": f"std-{k}", "symbol": symbol(k), "value": value, "unc": unc,
                     "unit": _reaction_unit(k)})
    return rows


def _std(sp: Species, name: str) -> float | None:
    q = sp.standard.get(name)
    return q.preferred.value if q is not None else None


def contribution_rows(rr: ReactionResult, species: Mapping[str, Species], root: str
                      ) -> tuple[list[dict], dict]:
    """Each species' ν, ΔfH°, S°, ν·ΔfH° and ν·S° at 298.15 K, and the sums."""
    rows = []
    sums: dict[str, float | None] = {"dfH": 0.0, "S": 0.0}
    for sid, nu in _terms(rr):
        sp = species[sid]
        dfH, S = _std(sp, "dfH"), _std(sp, "S")
        for key, v in (("dfH", dfH), ("S", S)):
            sums[key] = None if v is None or sums[key] is None else sums[key] + nu * v
        rows.append({
            "href": f"{root}species/{sid}.html", "label": species_label(sp), "name": sp.name,
            "nu": signed_number(nu), "dfH": fixed(dfH, "kJ"), "S": fixed(S, "J"),
            "nu_dfH": fixed(None if dfH is None else nu * dfH, "kJ"),
            "nu_S": fixed(None if S is None else nu * S, "J"),
        })
    return rows, {"dfH": fixed(sums["dfH"], "kJ"), "S": fixed(sums["S"], "J")}


def _measured_value(quantity: str, v: float | None) -> str:
    if quantity == "K":
        return scientific(v)
    return fixed(v, QUANTITY_DECIMALS.get(quantity, "kJ"))


def check_rows(rr: ReactionResult, root: str) -> list[dict]:
    rows = []
    for c in rr.checks:
        rows.append({
            "symbol": symbol(c.quantity), "T": temperature(c.T),
            "measured": _measured_value(c.quantity, c.measured),
            "computed": _measured_value(c.quantity, c.computed),
            "gap": (fixed(c.gap, "log10K") if c.quantity == "K"
                    else _measured_value(c.quantity, c.gap)),
            "u": (fixed(c.u_combined, QUANTITY_DECIMALS.get(c.quantity, "log10K"))
                  if c.u_combined is not None else MISSING),
            "unit": ("log10 units" if c.quantity == "K"
                     else unit_text(REACTION_QUANTITIES.get(c.quantity, ""))),
            "ref": c.ref or "", "ref_href": f"{root}references/{c.ref}.html" if c.ref else "",
        })
    return rows


def measured_rows(rr: ReactionResult, root: str) -> list[dict]:
    rows = []
    for i, m in enumerate(rr.reaction.measured, start=1):
        kind = QUANTITY_DECIMALS.get(m.quantity, "kJ")
        rows.append({
            "anchor": f"measured-{i}", "symbol": symbol(m.quantity), "T": temperature(m.T),
            "value": _measured_value(m.quantity, m.value.value),
            "unc": "" if m.quantity == "K" else uncertainty(m.value.unc, kind),
            "unit": unit_text(m.value.unit), "written": m.value.written,
            "ref": m.value.ref or "",
            "ref_href": f"{root}references/{m.value.ref}.html" if m.value.ref else "",
        })
    return rows


def step_rows(computed: Computed, rr: ReactionResult, root: str) -> tuple[list[dict], dict]:
    rows = []
    for factor, rid in rr.steps:
        step = computed.reactions[rid]
        i = _ref_index(step.grid.T)
        dH, dG = _at(step.grid.drH, i), _at(step.grid.drG, i)
        rows.append({
            "factor": signed_number(factor), "href": f"{root}reactions/{rid}.html",
            "name": step.reaction.name,
            "equation": equation_html(step, computed.handbook.species),
            "drH": fixed(dH, "kJ"), "drG": fixed(dG, "kJ"),
            "f_drH": fixed(None if dH is None else factor * dH, "kJ"),
            "f_drG": fixed(None if dG is None else factor * dG, "kJ"),
        })
    i = _ref_index(rr.grid.T)
    total = rr.hess_total or {}
    return rows, {"drH": fixed(_at(total.get("drH"), i), "kJ"),
                  "drG": fixed(_at(total.get("drG"), i), "kJ")}


def reaction_context(computed: Computed, rid: str, site: dict, findings: Sequence[Finding],
                     charts: Sequence[ChartView], notes_html: str,
                     meta: SiteMeta | None = None) -> dict:
    from generator.site.design_pages import family_href, reaction_design
    from generator.site.provenance_view import coverage_view

    rr = computed.reactions[rid]
    rx = rr.reaction
    species = computed.handbook.species
    path = f"reactions/{rid}.html"
    ctx = _base(site, path, rx.name, "reactions",
                _review(rx, coverage_view(computed, "reaction", rid)))
    root = ctx["root"]
    ctx.update(_provenance_parts(computed, "reaction", rid, rx.path, root, meta))
    ctx.update(reaction_design(rr, computed))
    ctx["families"] = [{"name": fam, "href": root + family_href(fam)} for fam in rx.family]
    columns, rows = reaction_table(rr)
    contributions, sums = contribution_rows(rr, species, root)
    steps, step_total = step_rows(computed, rr, root)
    line_charts, level_charts = _charts(charts, root)
    ctx.update({
        "id": rid, "name": rx.name, "equation": equation_html(rr, species),
        "equation_written": equation_text(rr, species),
        "family": ", ".join(rx.family) or MISSING,
        "electrons": str(rx.electrons) if rx.electrons else "",
        "balance": balance_rows(rr, species),
        "standard": reaction_standard(rr),
        "columns": columns, "rows": rows,
        "crossovers": [f"{temperature(t)} K" for t in rr.crossover_T],
        "covered": (f"{temperature(rr.grid.covered[0])} – {temperature(rr.grid.covered[1])} K"
                    if rr.grid.covered else "298.15 K only (no heat-capacity fits)"),
        "character": [{"aspect": k, "word": rr.character[k]} for k in
                      ("enthalpy", "entropy", "gibbs", "driver") if k in rr.character],
        "charts": line_charts, "levels": level_charts,
        "contributions": contributions, "contribution_sums": sums,
        "measured": measured_rows(rr, root), "checks": check_rows(rr, root),
        "steps": steps, "step_total": step_total,
        "species": [{"href": f"{root}species/{sid}.html", "label": species_label(species[sid]),
                     "name": species[sid].name} for sid, _nu in _terms(rr)],
        "findings": [finding_view(computed, f, root) for f in findings if f.item == rid],
        "notes": Markup(notes_html),
        "json_href": f"{rid}.json", "csv_href": f"{rid}.csv",
    })
    return ctx


# --- indexes, references, audit, conventions -----------------------------------------------


def _cell(text, sort: str | float | None = None) -> dict:
    if isinstance(sort, float):
        sort = repr(sort) if math.isfinite(sort) else ""
    return {"text": text, "sort": str(text) if sort is None else sort}


def species_index(computed: Computed, site: dict) -> dict:
    ctx = _base(site, "species.html", "Species", "species")
    rows = []
    for sid in sorted(computed.species):
        sp = computed.species[sid].species
        dfH, S = _std(sp, "dfH"), _std(sp, "S")
        rows.append({"href": f"species/{sid}.html", "cells": [
            _cell(sp.name), _cell(species_label(sp), search_key(sp.formula)),
            _cell(PHASE_NAMES.get(sp.phase, sp.phase)),
            _cell(fixed(sp.molar_mass, "M"), float(sp.molar_mass)),
            _cell(fixed(dfH, "kJ"), None if dfH is None else float(dfH)),
            _cell(fixed(S, "J"), None if S is None else float(S)),
            _cell(sp.review.status, str(REVIEW_STATUSES.index(sp.review.status))
                  if sp.review.status in REVIEW_STATUSES else sp.review.status),
        ]})
    ctx.update({"headers": [
        {"label": Markup("Name"), "unit": "", "type": "text"},
        {"label": Markup("Formula"), "unit": "", "type": "text"},
        {"label": Markup("Phase"), "unit": "", "type": "text"},
        {"label": Markup("M"), "unit": "g/mol", "type": "number"},
        {"label": symbol("dfH"), "unit": "kJ/mol", "type": "number"},
        {"label": symbol("S"), "unit": "J/(mol·K)", "type": "number"},
        {"label": Markup("Review"), "unit": "", "type": "text"}], "rows": rows})
    return ctx


def _rx298(rr: ReactionResult, key: str) -> float | None:
    v = _at(getattr(rr.grid, key), _ref_index(rr.grid.T))
    return v if _finite(v) else None


def reactions_index(computed: Computed, site: dict) -> dict:
    ctx = _base(site, "reactions.html", "Reactions", "reactions")
    species = computed.handbook.species
    rows = []
    for rid in sorted(computed.reactions):
        rr = computed.reactions[rid]
        dH, dG, lk = _rx298(rr, "drH"), _rx298(rr, "drG"), _rx298(rr, "log10K")
        rows.append({"href": f"reactions/{rid}.html", "cells": [
            _cell(rr.reaction.name), _cell(equation_html(rr, species),
                                           search_key(equation_text(rr, species))),
            _cell(fixed(dH, "kJ"), dH), _cell(fixed(dG, "kJ"), dG),
            _cell(fixed(lk, "log10K"), lk), _cell(", ".join(rr.reaction.family)),
            _cell(rr.reaction.review.status, str(REVIEW_STATUSES.index(
                rr.reaction.review.status)) if rr.reaction.review.status in REVIEW_STATUSES
                else rr.reaction.review.status),
        ]})
    ctx.update({"headers": [
        {"label": Markup("Name"), "unit": "", "type": "text"},
        {"label": Markup("Equation"), "unit": "", "type": "text"},
        {"label": symbol("drH") + Markup("(298.15 K)"), "unit": "kJ/mol", "type": "number"},
        {"label": symbol("drG") + Markup("(298.15 K)"), "unit": "kJ/mol", "type": "number"},
        {"label": symbol("log10K") + Markup("(298.15 K)"), "unit": "", "type": "number"},
        {"label": Markup("Family"), "unit": "", "type": "text"},
        {"label": Markup("Review"), "unit": "", "type": "text"}], "rows": rows})
    return ctx


def reference_uses(computed: Computed) -> dict[str, list[dict]]:
    """Every value citing each reference, with the site path and anchor of the value."""
    uses: dict[str, list[dict]] = {}
    for sid in sorted(computed.species):
        sp = computed.species[sid].species
        for name in _quantities(sp):
            for n, v in enumerate(ordered_values(sp.standard[name]), start=1):
                if v.ref:
                    uses.setdefault(v.ref, []).append({
                        "path": f"species/{sid}.html#{value_anchor(name, n)}",
                        "item": species_label(sp), "name": sp.name, "what": symbol(name),
                        "value": f"{fixed(v.value, QUANTITY_DECIMALS.get(name, 'kJ'))} "
                                 f"{unit_text(v.unit)}".strip()})
        for i, p in enumerate(sp.cp, start=1):
            if p.ref:
                uses.setdefault(p.ref, []).append({
                    "path": f"species/{sid}.html#cp-{i}", "item": species_label(sp),
                    "name": sp.name, "what": Markup("C<sub>p</sub> fit"),
                    "value": f"{p.kind}, {temperature(p.Tmin)} – {temperature(p.Tmax)} K"})
    for rid in sorted(computed.reactions):
        rx = computed.reactions[rid].reaction
        for i, m in enumerate(rx.measured, start=1):
            if m.value.ref:
                uses.setdefault(m.value.ref, []).append({
                    "path": f"reactions/{rid}.html#measured-{i}", "item": Markup(escape(rx.id)),
                    "name": rx.name, "what": Markup("measured ") + symbol(m.quantity),
                    "value": f"{_measured_value(m.quantity, m.value.value)} "
                             f"{unit_text(m.value.unit)} at {temperature(m.T)} K".strip()})
    return uses


def reference_view(computed: Computed, key: str) -> dict:
    r = computed.handbook.references[key]
    return {"key": key, "citation": r.citation, "kind": r.kind,
            "pressure": pressure_text(r.standard_pressure), "doi": r.doi or "",
            "url": r.url or "", "origin": "references.bib" if r.origin == "bib"
            else "references.yaml"}


def reference_context(computed: Computed, key: str, site: dict,
                      uses: Mapping[str, list[dict]]) -> dict:
    ctx = _base(site, f"references/{key}.html", f"Reference {key}", "references")
    ctx.update({"ref": reference_view(computed, key),
                "uses": [{**u, "href": ctx["root"] + u["path"]} for u in uses.get(key, [])]})
    return ctx


def references_index(computed: Computed, site: dict, uses: Mapping[str, list[dict]]) -> dict:
    ctx = _base(site, "references.html", "References", "references")
    ctx["refs"] = [{**reference_view(computed, k), "href": f"references/{k}.html",
                    "count": str(len(uses.get(k, [])))}
                   for k in sorted(computed.handbook.references)]
    return ctx


def _from_memory_items(computed: Computed) -> list[dict]:
    out = []
    for sid in sorted(computed.species):
        sp = computed.species[sid].species
        names = [n for n in _quantities(sp) if any(v.from_memory for v in sp.standard[n].values)]
        if names:
            out.append({"href": f"species/{sid}.html#standard", "label": species_label(sp),
                        "name": sp.name, "what": Markup(", ").join(symbol(n) for n in names)})
    for rid in sorted(computed.reactions):
        rx = computed.reactions[rid].reaction
        if any(m.value.from_memory for m in rx.measured):
            out.append({"href": f"reactions/{rid}.html#measured", "label": Markup(escape(rid)),
                        "name": rx.name, "what": Markup("measured values")})
    return out


def audit_context(computed: Computed, site: dict, findings: Sequence[Finding],
                  has_changes: bool = False) -> dict:
    from generator.site.provenance_view import audit_extras

    ctx = _base(site, "audit.html", "Audit", "audit")
    ctx.update(audit_extras(computed, has_changes))
    groups = []
    for sev in Severity:
        items = [finding_view(computed, f, "") for f in findings if f.severity is sev]
        groups.append({"anchor": f"sev-{sev.value}", "label": SEVERITY_NAMES[sev.value],
                       "count": str(len(items)), "entries": items})
    reviews = []
    for status in REVIEW_STATUSES:
        sp = [s for s in sorted(computed.species) if
              computed.species[s].species.review.status == status]
        rx = [r for r in sorted(computed.reactions) if
              computed.reactions[r].reaction.review.status == status]
        reviews.append({"status": status, "species": str(len(sp)), "reactions": str(len(rx))})
    ctx.update({"groups": groups, "from_memory": _from_memory_items(computed),
                "reviews": reviews})
    return ctx


def index_context(computed: Computed, site: dict, findings: Sequence[Finding],
                  has_changes: bool = False) -> dict:
    from generator.site.design_pages import element_href, family_href, family_names

    ctx = _base(site, "index.html", "Home", "home")
    ctx["changes_href"] = "changes.html" if has_changes else ""
    ctx["search"] = True
    hb = computed.handbook
    species = [computed.species[s].species for s in sorted(computed.species)]

    def link(sp: Species) -> dict:
        return {"href": f"species/{sp.id}.html", "label": species_label(sp), "name": sp.name}

    elements = sorted({el for sp in species for el, _n in sp.elements})
    families = family_names(computed)
    ctx.update({
        "counts": [{"label": "species", "count": str(len(hb.species)), "href": "species.html"},
                   {"label": "reactions", "count": str(len(hb.reactions)),
                    "href": "reactions.html"},
                   {"label": "references", "count": str(len(hb.references)),
                    "href": "references.html"}],
        "elements": [{"symbol": el, "href": element_href(el),
                      "species": [link(sp) for sp in species if el in sp.element_counts]}
                     for el in elements],
        "phases": [{"label": PHASE_NAMES[ph], "species": [link(sp) for sp in species
                                                          if sp.phase == ph]}
                   for ph in PHASES if any(sp.phase == ph for sp in species)],
        "families": [{"name": fam, "href": family_href(fam),
                      "title": (hb.settings.families[fam].title
                                if fam in hb.settings.families else ""), "reactions": [
            {"href": f"reactions/{rid}.html", "name": hb.reactions[rid].name}
            for rid in sorted(hb.reactions) if fam in hb.reactions[rid].family]}
            for fam in families],
        "findings": [{"label": SEVERITY_NAMES[sev.value], "href": f"audit.html#sev-{sev.value}",
                      "count": str(sum(f.severity is sev for f in findings)),
                      "severity": sev.value} for sev in Severity],
    })
    return ctx


def conventions_context(computed: Computed, site: dict) -> dict:
    ctx = _base(site, "conventions.html", "Conventions", "conventions")
    s = computed.handbook.settings
    ctx.update({
        "pressure": pressure_text(s.standard_pressure),
        "temperatures": ", ".join(temperature(t) for t in s.temperatures),
        "element_refs": [{"element": el, "href": f"species/{sp.id}.html",
                          "label": species_label(sp), "name": sp.name}
                         for el, sp in sorted(computed.element_refs.items())],
    })
    return ctx


def search_context(site: dict) -> dict:
    ctx = _base(site, "search.html", "Search", "search")
    ctx["search"] = True
    return ctx


def search_entries(computed: Computed) -> dict:
    """The client-side search index: species and reactions with their keys and site paths."""
    species = []
    for sid in sorted(computed.species):
        sp = computed.species[sid].species
        species.append({"id": sid, "name": sp.name, "formula": formula_text(sp.formula),
                        "key": search_key(sp.formula), "phase": sp.phase,
                        "aliases": list(sp.aliases), "cas": sp.cas or "",
                        "url": f"species/{sid}.html"})
    reactions = []
    hb = computed.handbook
    for rid in sorted(computed.reactions):
        rr = computed.reactions[rid]
        eq = equation_text(rr, hb.species)
        reactions.append({"id": rid, "name": rr.reaction.name, "equation": eq,
                          "key": search_key(eq), "url": f"reactions/{rid}.html"})
    return {"species": species, "reactions": reactions}


HANDBOOK_PARTS = ("species index", "reactions index", "audit", "other")


def handbook_pages(computed: Computed, findings: Sequence[Finding], meta: SiteMeta,
                   charts: Mapping[str, Sequence[ChartView]], part: str | None = None
                   ) -> list[Page]:
    """The pages about the whole handbook: indexes, audit, design and reference pages; with
    ``part`` (one of HANDBOOK_PARTS) only that share of them, so they can be built side by
    side."""
    from generator.site.design_pages import design_pages
    from generator.site.provenance_view import changes_context

    site = _site(computed, meta)
    has_changes = meta.changes is not None
    pages: list[Page] = []
    if part in (None, "other"):
        uses = reference_uses(computed)
        pages.append(Page("index.html", "index.html",
                          index_context(computed, site, findings, has_changes)))
    if part in (None, "species index"):
        pages.append(Page("species.html", "species_index.html", species_index(computed, site)))
    if part in (None, "reactions index"):
        pages.append(Page("reactions.html", "reactions_index.html",
                          reactions_index(computed, site)))
    if part in (None, "other"):
        pages += [Page("references.html", "references_index.html",
                       references_index(computed, site, uses)),
                  Page("conventions.html", "conventions.html",
                       conventions_context(computed, site))]
    if part in (None, "audit"):
        pages.append(Page("audit.html", "audit.html",
                          audit_context(computed, site, findings, has_changes)))
    if part in (None, "other"):
        pages.append(Page("search.html", "search.html", search_context(site)))
        if has_changes:
            pages.append(Page("changes.html", "changes.html",
                              changes_context(computed, meta.changes, site)))
        pages += design_pages(computed, site, charts)
        for ref in sorted(computed.handbook.references):
            pages.append(Page(f"references/{ref}.html", "reference.html",
                              reference_context(computed, ref, site, uses)))
    return pages


def item_keys(computed: Computed) -> list[str]:
    """``species:<id>`` and ``reaction:<id>`` of every item with a sheet, in a stable order."""
    return ([f"species:{sid}" for sid in sorted(computed.species)]
            + [f"reaction:{rid}" for rid in sorted(computed.reactions)])


def item_page(computed: Computed, key: str, findings: Sequence[Finding], meta: SiteMeta,
              charts: Sequence[ChartView], notes: str) -> Page:
    """The sheet of one item (``species:<id>`` or ``reaction:<id>``)."""
    kind, _, item = key.partition(":")
    site = _site(computed, meta)
    if kind == "species":
        return Page(f"species/{item}.html", "species.html", species_context(
            computed, item, site, findings, charts, notes, meta))
    return Page(f"reactions/{item}.html", "reaction.html", reaction_context(
        computed, item, site, findings, charts, notes, meta))


def build_pages(computed: Computed, findings: Sequence[Finding], meta: SiteMeta,
                charts: Mapping[str, Sequence[ChartView]], notes: Mapping[str, str]
                ) -> list[Page]:
    """Every page of the site, in a stable order.  ``charts`` and ``notes`` (rendered HTML)
    are keyed ``species:<id>`` / ``reaction:<id>``; ``findings`` from all_findings."""
    return handbook_pages(computed, findings, meta, charts) + [
        item_page(computed, key, findings, meta, charts.get(key, ()), notes.get(key, ""))
        for key in item_keys(computed)]
