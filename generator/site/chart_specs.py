"""Chart stage: the computed results of species and reactions turned into chart specs.

Pure: builds frozen specs from ``generator.compute`` results; no file I/O, no matplotlib.
Level diagrams follow Hess's law (Hess 1840): with the elements in their reference states
at zero, a species sits at its ΔfH°, a side of a reaction at Σ ν·ΔfH°, and the reaction
arrow closes the cycle, ΔrH° = Σ ν ΔfH°(products) − Σ ν ΔfH°(reactants).  Entropy levels
are absolute S° above S = 0 (third law); aqueous ions are on the conventional scale
S°(H⁺, aq) = 0 (Wagman et al. 1982, J. Phys. Chem. Ref. Data 11 Suppl. 2).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache

import numpy as np

from generator.charts.specs import (
    ZERO_LEVEL,
    Arrow,
    ChartSpec,
    EntropyLevelSpec,
    GibbsChartSpec,
    Level,
    LevelDiagramSpec,
    LineChartSpec,
    MarkedPoint,
    Series,
    ShadedRange,
    VantHoffSpec,
)
from generator.compute import Computed, ReactionResult, SpeciesResult
from generator.formula import FormulaError, parse_formula
from generator.model import Species, Term
from generator.thermo.constants import T_REF
from generator.thermo.species_props import T_REF_TOL

MINUS = "\u2212"
EXTRAPOLATED_LABEL = "extrapolated beyond the Cp fits"
KJ = "kJ/mol"
J_K = "J/(mol·K)"
_VULGAR = {Fraction(1, 2): "½", Fraction(1, 3): "⅓", Fraction(2, 3): "⅔",
           Fraction(1, 4): "¼", Fraction(3, 4): "¾"}


@dataclass(frozen=True)
class ChartEntry:
    """One chart of a page: a stable slug, a plain-text caption and the spec to draw."""

    name: str  # "cp", "s", "h", "levels-h", "gibbs", "vant-hoff", "levels-g", "levels-s"
    caption: str
    spec: ChartSpec


# --- text -------------------------------------------------------------------------------------


def fmt(value: float, decimals: int = 2) -> str:
    """Fixed decimals with the Unicode minus (U+2212); never "−0.00"."""
    text = f"{value:.{decimals}f}"
    if text.startswith("-") and float(text) == 0.0:
        text = text[1:]
    return text.replace("-", MINUS)


def fmt_T(T: float) -> str:
    """A temperature in K with at most 2 decimals, trailing zeros dropped: "298.15 K"."""
    text = f"{T:.2f}".rstrip("0").rstrip(".")
    return f"{text} K"


@lru_cache(maxsize=65536)
def _formula_unicode(text: str) -> str:
    try:
        return parse_formula(text).unicode()
    except FormulaError:
        return text


def species_label(sp: Species) -> str:
    """Unicode formula with phase (and polymorph), e.g. "CH₄(g)", "CaCO₃(cr, calcite)"."""
    formula = _formula_unicode(sp.formula)
    phase = f"{sp.phase}, {sp.form}" if sp.form else sp.phase
    return f"{formula}({phase})"


def coefficient(n: float) -> str:
    """A stoichiometric coefficient as printed before a formula ("" for 1, "½", "2")."""
    if n == 1:
        return ""
    if float(n).is_integer():
        return str(int(n))
    frac = Fraction(n).limit_denominator(6)
    if abs(float(frac) - n) < 1e-9:
        whole, rest = divmod(frac, 1)
        if rest in _VULGAR:
            return f"{int(whole) or ''}{_VULGAR[rest]}"
        return f"{frac.numerator}/{frac.denominator}"
    return f"{n:g}"


def side_label(terms: Iterable[tuple[float, Species]]) -> str:
    """ "CH₄(g) + 2 O₂(g)" from (ν, species) pairs."""
    parts = []
    for n, sp in terms:
        c = coefficient(n)
        parts.append(f"{c} {species_label(sp)}" if c else species_label(sp))
    return " + ".join(parts)


def equation_label(rr: ReactionResult, computed: Computed) -> str:
    """The reaction in Unicode, e.g. "CaCO₃(cr, calcite) → CaO(cr) + CO₂(g)"."""
    return f"{side_label(_side(rr.reaction.reactants, computed))} → " \
           f"{side_label(_side(rr.reaction.products, computed))}"


def _side(terms: Sequence[Term], computed: Computed) -> list[tuple[float, Species]]:
    return [(t.nu, computed.handbook.species[t.species]) for t in terms]


# --- numbers ----------------------------------------------------------------------------------


def _finite(*arrays: object) -> bool:
    return all(a is not None and bool(np.all(np.isfinite(np.asarray(a, dtype=float))))
               for a in arrays)


def _edge(a: float, b: float, covered: tuple[float, float] | None) -> float:
    """Where extrapolation starts between neighbours a < b: a coverage bound, else midway."""
    for bound in covered or ():
        if a <= bound <= b:
            return float(bound)
    return 0.5 * (a + b)


def extrapolated_ranges(T: Sequence[float], flags: Sequence[bool],
                        covered: tuple[float, float] | None,
                        label: str = EXTRAPOLATED_LABEL) -> tuple[ShadedRange, ...]:
    """One ShadedRange per contiguous run of flagged points, widened to the coverage bound
    (or half way to the next unflagged point) so a single flagged point still shows."""
    Ts = [float(t) for t in T]
    fl = [bool(f) for f in flags]
    out: list[ShadedRange] = []
    i, n = 0, len(Ts)
    while i < n:
        if not fl[i]:
            i += 1
            continue
        j = i
        while j + 1 < n and fl[j + 1]:
            j += 1
        lo = Ts[0] if i == 0 else _edge(Ts[i - 1], Ts[i], covered)
        hi = Ts[-1] if j == n - 1 else _edge(Ts[j], Ts[j + 1], covered)
        if hi > lo:
            out.append(ShadedRange(lo, hi, label))
        i = j + 1
    return tuple(out)


def _shaded_text(shaded: Sequence[ShadedRange]) -> str:
    if not shaded:
        return ""
    spans = ", ".join(f"{fmt_T(s.x_min)} to {fmt_T(s.x_max)}" for s in shaded)
    return f" Shaded: {EXTRAPOLATED_LABEL}, {spans}."


def _ref_index(T: np.ndarray) -> int | None:
    hits = np.flatnonzero(np.abs(np.asarray(T, dtype=float) - T_REF) < T_REF_TOL)
    return int(hits[0]) if hits.size else None


def _standard(sp: Species, name: str) -> float | None:
    q = sp.standard.get(name)
    if q is None or not q.values:
        return None
    v = float(q.preferred.value)
    return v if np.isfinite(v) else None


# --- species ----------------------------------------------------------------------------------


def species_charts(sr: SpeciesResult, computed: Computed) -> list[ChartEntry]:
    """Cp°(T), S°(T), H° − H°(298.15 K) over the Cp fits, and the enthalpy level diagram."""
    sp = sr.species
    who = f"{sp.name}, {species_label(sp)}"
    out: list[ChartEntry] = []
    c = sr.curve
    if sp.cp and len(c.T) >= 2:
        shaded = extrapolated_ranges(c.T, c.extrapolated, c.covered)
        lines = (
            ("cp", "Cp°", "Heat capacity Cp°", c.Cp, J_K, "Cp° / (J mol⁻¹ K⁻¹)"),
            ("s", "S°", "Standard entropy S°", c.S, J_K, "S° / (J mol⁻¹ K⁻¹)"),
            ("h", "H° − H°(298.15 K)", "Enthalpy increment H° − H°(298.15 K)",
             c.H_minus_H298, KJ, "(H° − H°(298.15 K)) / (kJ mol⁻¹)"),
        )
        for name, sym, words, y, unit, y_label in lines:
            if not _finite(c.T, y):
                continue
            T0, T1, y0, y1 = float(c.T[0]), float(c.T[-1]), float(y[0]), float(y[-1])
            spec = LineChartSpec(
                title=f"{sym} of {who}",
                description=(f"{words} of {who}, from {fmt_T(T0)} to {fmt_T(T1)}: "
                             f"{fmt(y0)} {unit} at {fmt_T(T0)}, {fmt(y1)} {unit} at "
                             f"{fmt_T(T1)}.{_shaded_text(shaded)}"),
                x_label="T / K",
                y_label=y_label,
                series=(Series(sym, c.T, y),),
                shaded=shaded,
            )
            caption = (f"{words} of {who}, {fmt_T(T0)}–{fmt_T(T1)}, "
                       f"from its heat-capacity fits.")
            out.append(ChartEntry(name, caption, spec))
    levels = _species_levels(sr, computed, who)
    if levels is not None:
        out.append(levels)
    return out


def _species_levels(sr: SpeciesResult, computed: Computed, who: str) -> ChartEntry | None:
    """Elements at zero, the species at ΔfH°, the gaseous atoms at ΔfH° + ΔatH°."""
    sp = sr.species
    dfH = _standard(sp, "dfH")
    if dfH is None:
        return None
    label = species_label(sp)
    levels = [Level("species", label, dfH)]
    arrows = []
    text = [f"{label} at ΔfH° = {fmt(dfH)} {KJ}"]
    if abs(dfH) >= 1e-6:
        arrows.append(Arrow(ZERO_LEVEL, "species", "formation", f"ΔfH° = {fmt(dfH)} {KJ}"))
    # Atomization yields neutral atoms, so it is drawn for neutral species only.
    if sr.atoms and sr.atomization is not None and sp.charge == 0 \
            and np.isfinite(sr.atomization):
        atoms = [(n, computed.handbook.species[aid]) for _el, aid, n in sr.atoms]
        atoms_label = side_label(atoms)
        value = dfH + sr.atomization
        levels.append(Level("atoms", atoms_label, value))
        arrows.append(Arrow("species", "atoms", "atomization",
                            f"ΔatH° = {fmt(sr.atomization)} {KJ}"))
        text.append(f"the gaseous atoms {atoms_label} at {fmt(value)} {KJ} "
                    f"(ΔatH° = {fmt(sr.atomization)} {KJ})")
    if len(levels) == 1 and not arrows:
        return None  # an element in its reference state with nothing to show
    spec = LevelDiagramSpec(
        title=f"Enthalpy levels of {who}, at 298.15 K",
        description=("Enthalpy level diagram at 298.15 K: elements in their reference "
                     f"states at zero, {'; '.join(text)}."),
        levels=tuple(levels),
        arrows=tuple(arrows),
    )
    caption = (f"Enthalpy levels of {who}, at 298.15 K, relative to the elements in their "
               "reference states.")
    return ChartEntry("levels-h", caption, spec)


# --- reactions --------------------------------------------------------------------------------


def reaction_charts(rr: ReactionResult, computed: Computed) -> list[ChartEntry]:
    """Gibbs chart, van 't Hoff plot and the H°, G° and S° level diagrams of a reaction."""
    out: list[ChartEntry] = []
    for build in (_gibbs, _vant_hoff, _enthalpy_levels, _gibbs_levels, _entropy_levels,
                  _conversion, _cell_voltages):
        entry = build(rr, computed)
        if entry is not None:
            out.append(entry)
    return out


def _crossovers(rr: ReactionResult) -> list[float]:
    T = rr.curve.T
    lo, hi = float(np.min(T)), float(np.max(T))
    return [float(t) for t in rr.crossover_T if lo <= t <= hi]


def _gibbs(rr: ReactionResult, computed: Computed) -> ChartEntry | None:
    c = rr.curve
    if len(c.T) < 2 or not _finite(c.T, c.drG, c.drH, c.TdrS):
        return None
    name, eq = rr.reaction.name, equation_label(rr, computed)
    shaded = extrapolated_ranges(c.T, c.extrapolated, c.covered)
    cross = _crossovers(rr)
    points = tuple(MarkedPoint(t, 0.0, f"ΔrG° = 0 at {t:.0f} K") for t in cross)
    T0, T1 = float(c.T[0]), float(c.T[-1])

    def span(sym: str, y: np.ndarray) -> str:
        return f"{sym} from {fmt(float(y[0]))} to {fmt(float(y[-1]))} {KJ}"

    cross_text = ("; ".join(f"ΔrG° = 0 at {t:.0f} K" for t in cross) + "."
                  if cross else "ΔrG° does not change sign in this range.")
    spec = GibbsChartSpec(
        title=f"{name}: ΔrG°, ΔrH° and T·ΔrS°",
        description=(f"{eq}. From {fmt_T(T0)} to {fmt_T(T1)}: {span('ΔrG°', c.drG)}, "
                     f"{span('ΔrH°', c.drH)}, {span('T·ΔrS°', c.TdrS)}. {cross_text}"
                     f"{_shaded_text(shaded)}"),
        T=c.T, drG=c.drG, drH=c.drH, T_drS=c.TdrS,
        crossovers=points, extrapolated=shaded,
    )
    caption = (f"ΔrG° = ΔrH° − T·ΔrS° of {eq}, {fmt_T(T0)}–{fmt_T(T1)}. "
               + (cross_text if cross else "No crossover (ΔrG° = 0) in this range."))
    return ChartEntry("gibbs", caption, spec)


def _vant_hoff(rr: ReactionResult, computed: Computed) -> ChartEntry | None:
    c = rr.curve
    if len(c.T) < 2 or not _finite(c.T, c.log10K) or float(np.min(c.T)) <= 0:
        return None
    name, eq = rr.reaction.name, equation_label(rr, computed)
    shaded = extrapolated_ranges(c.T, c.extrapolated, c.covered)
    cross = _crossovers(rr)
    T0, T1 = float(c.T[0]), float(c.T[-1])
    k_one = "".join(f" K = 1 at {t:.0f} K." for t in cross)
    spec = VantHoffSpec(
        title=f"{name}: van 't Hoff plot",
        description=(f"log₁₀ K of {eq} against 1000 K / T: {fmt(float(c.log10K[0]))} at "
                     f"{fmt_T(T0)}, {fmt(float(c.log10K[-1]))} at {fmt_T(T1)}.{k_one}"
                     f"{_shaded_text(shaded)}"),
        T=c.T, log10_K=c.log10K, extrapolated=shaded,
        points=tuple(MarkedPoint(t, 0.0, f"K = 1 at {t:.0f} K") for t in cross),
    )
    caption = (f"van 't Hoff plot of {eq}: log₁₀ K against 1000 K / T, "
               f"{fmt_T(T0)}–{fmt_T(T1)}; the slope is −ΔrH°/(R ln 10).")
    return ChartEntry("vant-hoff", caption, spec)


def _side_sum(terms: Sequence[Term], values: dict[str, float | None]) -> float | None:
    total = 0.0
    for t in terms:
        v = values.get(t.species)
        if v is None or not np.isfinite(v):
            return None
        total += t.nu * v
    return total


def _cycle(rr: ReactionResult, computed: Computed, values: dict[str, float | None],
           sym: str, slug: str, words: str, unit_label: str) -> ChartEntry | None:
    """Reactants and products as levels above the elements, formation arrows from zero to
    each side and the reaction arrow between them (a Hess cycle)."""
    rx = rr.reaction
    r_sum, p_sum = _side_sum(rx.reactants, values), _side_sum(rx.products, values)
    if r_sum is None or p_sum is None:
        return None
    r_label = side_label(_side(rx.reactants, computed))
    p_label = side_label(_side(rx.products, computed))
    levels = (Level("reactants", r_label, r_sum, 0), Level("products", p_label, p_sum, 1))
    arrows = [Arrow(ZERO_LEVEL, key, "formation", f"Σ νΔf{sym}° = {fmt(v)} {KJ}")
              for key, v in (("reactants", r_sum), ("products", p_sum)) if abs(v) >= 1e-6]
    d = p_sum - r_sum
    arrows.append(Arrow("reactants", "products", "reaction", f"Δr{sym}° = {fmt(d)} {KJ}"))
    spec = LevelDiagramSpec(
        title=f"{rx.name}: {words} levels at 298.15 K",
        description=(f"{words.capitalize()} level diagram at 298.15 K, elements in their "
                     f"reference states at zero: reactants {r_label} at {fmt(r_sum)} {KJ}, "
                     f"products {p_label} at {fmt(p_sum)} {KJ}; Δr{sym}° = {fmt(d)} {KJ}."),
        levels=levels,
        arrows=tuple(arrows),
        unit_label=unit_label,
        column_labels=("reactants", "products"),
    )
    caption = (f"{words.capitalize()} levels of {equation_label(rr, computed)} at 298.15 K: "
               f"Δr{sym}° = Σ νΔf{sym}°(products) − Σ νΔf{sym}°(reactants) = {fmt(d)} {KJ}.")
    return ChartEntry(slug, caption, spec)


def _enthalpy_levels(rr: ReactionResult, computed: Computed) -> ChartEntry | None:
    values = {sid: _standard(computed.handbook.species[sid], "dfH")
              for t in (*rr.reaction.reactants, *rr.reaction.products)
              for sid in (t.species,)}
    return _cycle(rr, computed, values, "H", "levels-h", "enthalpy", "H° / (kJ mol⁻¹)")


def _gibbs_levels(rr: ReactionResult, computed: Computed) -> ChartEntry | None:
    values: dict[str, float | None] = {}
    for t in (*rr.reaction.reactants, *rr.reaction.products):
        f = computed.species[t.species].formation
        i = _ref_index(f.T)
        values[t.species] = None if i is None else float(f.dfG[i])
    return _cycle(rr, computed, values, "G", "levels-g", "Gibbs energy", "G° / (kJ mol⁻¹)")


def _entropy_levels(rr: ReactionResult, computed: Computed) -> ChartEntry | None:
    """Σ ν S° of each side above S = 0 and the reaction arrow between them."""
    rx = rr.reaction
    terms = (*rx.reactants, *rx.products)
    values = {t.species: _standard(computed.handbook.species[t.species], "S") for t in terms}
    r_sum, p_sum = _side_sum(rx.reactants, values), _side_sum(rx.products, values)
    if r_sum is None or p_sum is None or r_sum < 0 or p_sum < 0:
        return None  # negative sums happen only on the ion convention scale
    r_label = side_label(_side(rx.reactants, computed))
    p_label = side_label(_side(rx.products, computed))
    d = p_sum - r_sum
    ions = any(computed.handbook.species[t.species].charge for t in terms)
    zero = "S = 0 (ions: S°(H⁺, aq) = 0)" if ions else "S = 0"
    spec = EntropyLevelSpec(
        title=f"{rx.name}: entropy levels at 298.15 K",
        description=(f"Absolute entropies at 298.15 K above S = 0: reactants {r_label} at "
                     f"{fmt(r_sum)} {J_K}, products {p_label} at {fmt(p_sum)} {J_K}; "
                     f"ΔrS° = {fmt(d)} {J_K}."
                     + (" Ion entropies are relative to S°(H⁺, aq) = 0." if ions else "")),
        levels=(Level("reactants", f"{r_label}\nΣ νS° = {fmt(r_sum)} {J_K}", r_sum, 0),
                Level("products", f"{p_label}\nΣ νS° = {fmt(p_sum)} {J_K}", p_sum, 1)),
        arrows=(Arrow("reactants", "products", "reaction", f"ΔrS° = {fmt(d)} {J_K}"),),
        zero_label=zero,
        column_labels=("reactants", "products"),
    )
    caption = (f"Entropy levels of {equation_label(rr, computed)} at 298.15 K: "
               f"ΔrS° = {fmt(d)} {J_K}.")
    return ChartEntry("levels-s", caption, spec)


__all__ = [
    "ChartEntry",
    "handbook_charts",
    "species_charts",
    "reaction_charts",
    "extrapolated_ranges",
    "species_label",
    "side_label",
    "equation_label",
    "coefficient",
    "fmt",
    "fmt_T",
]


# --- design reference: conversion, cell voltages, families, element ladders -------------------


def _finite_series(label: str, x, y, role: str) -> Series | None:
    xs = np.asarray(x, dtype=float)
    ys = np.asarray(y, dtype=float)
    ok = np.isfinite(xs) & np.isfinite(ys)
    if int(np.sum(ok)) < 2:
        return None
    return Series(label, xs[ok], ys[ok], role)


def _role(i: int) -> str:
    from generator.charts.style import GENERIC_ROLES

    return GENERIC_ROLES[i % len(GENERIC_ROLES)]


def _conversion(rr: ReactionResult, computed: Computed) -> ChartEntry | None:
    """Equilibrium conversion of the first reactant against T, one line per (feed, P)."""
    from generator.design import design_of
    from generator.design import reaction_design as compute_reaction_design

    d = design_of(computed).reactions.get(rr.reaction.id) or compute_reaction_design(rr, computed)
    T = d.chart_T
    if len(T) < 2:
        return None
    cs = d.chart_conversion
    if cs is None:
        return None
    series = []
    for i, (label, c) in enumerate(zip(cs.labels, cs.curves, strict=True)):
        s = _finite_series(label, c.T, 100.0 * c.conversion, _role(i))
        if s is not None:
            series.append(s)
    if not series:
        return None
    flags = np.any(np.array([c.extrapolated for c in cs.curves]), axis=0)
    shaded = extrapolated_ranges(T, flags, None)
    sp = computed.handbook.species[cs.reactant]
    who = species_label(sp)
    eq = equation_label(rr, computed)
    T0, T1 = float(T[0]), float(T[-1])
    spans = "; ".join(f"{s.label}: {fmt(s.y[0], 1)} % at {fmt_T(s.x[0])}, "
                      f"{fmt(s.y[-1], 1)} % at {fmt_T(s.x[-1])}" for s in series)
    spec = LineChartSpec(
        title=f"{rr.reaction.name}: equilibrium conversion of {who}",
        description=(f"Equilibrium conversion of {who} in {eq}, from {fmt_T(T0)} to "
                     f"{fmt_T(T1)}, one line per pressure and feed. {spans}."
                     f"{_shaded_text(shaded)}"),
        x_label="T / K", y_label=f"conversion of {who} / %", series=tuple(series),
        shaded=shaded)
    caption = (f"Equilibrium conversion of {who}, {fmt_T(T0)}–{fmt_T(T1)}, ideal gases and "
               "ideal solutions, from the feeds and pressures of the reaction's conditions.")
    return ChartEntry("conversion", caption, spec)


def _cell_voltages(rr: ReactionResult, computed: Computed) -> ChartEntry | None:
    """E°(T) and Etn(T) of an electrochemical reaction, with the operating voltage."""
    c = rr.curve
    if not rr.reaction.electrons or c.E is None or len(c.T) < 2:
        return None
    series = [s for s in (_finite_series("E°", c.T, c.E, "primary"),
                          _finite_series("Etn (thermoneutral)", c.T, c.Etn, "secondary"))
              if s is not None]
    cond = rr.reaction.conditions
    V = cond.voltage if cond is not None else None
    if V is not None:
        # drawn with the sign of E°: an electrolysis (E° < 0) needs at least |E°|
        sign = -1.0 if float(np.nanmax(np.asarray(c.E, dtype=float))) < 0 else 1.0
        series.append(Series(f"operating voltage {fmt(sign * V, 2)} V",
                             (float(c.T[0]), float(c.T[-1])), (sign * V, sign * V),
                             "tertiary"))
    if not series:
        return None
    T0, T1 = float(c.T[0]), float(c.T[-1])
    text = "; ".join(f"{s.label} from {fmt(s.y[0], 3)} V to {fmt(s.y[-1], 3)} V"
                     for s in series)
    spec = LineChartSpec(
        title=f"{rr.reaction.name}: cell voltages",
        description=(f"Standard reversible voltage E° = −ΔrG°/(nF) and thermoneutral voltage "
                     f"Etn = ΔrH°/(nF) of {equation_label(rr, computed)}, n = "
                     f"{rr.reaction.electrons}, {fmt_T(T0)} to {fmt_T(T1)}: {text}."),
        x_label="T / K", y_label="voltage / V", series=tuple(series))
    caption = (f"E°(T) and the thermoneutral voltage Etn(T), {fmt_T(T0)}–{fmt_T(T1)}"
               + (", with the operating voltage of the reaction's conditions (sign of E°)."
                  if V is not None else "."))
    return ChartEntry("cell-voltages", caption, spec)


def family_chart(computed: Computed, name: str) -> ChartEntry | None:
    """ΔrG°(T)/|ν_per| of every member of a family, crossovers of the lines marked."""
    from generator.site.design_pages import family_curves

    fc = family_curves(computed, name)
    names = {rid: computed.reactions[rid].reaction.name for rid in fc.members}
    series = [s for i, rid in enumerate(fc.members)
              if (s := _finite_series(names[rid], fc.T, fc.curves[rid], _role(i))) is not None]
    if not series:
        return None
    # point labels stay short (the temperature); the page's table names each pair
    points = tuple(MarkedPoint(t, y, f"{t:.0f} K") for _a, _b, t, y in fc.crossings)
    title = fc.family.title or f"{name}: ΔrG° {fc.per_label}"
    T0, T1 = float(fc.T[0]), float(fc.T[-1])
    cross = ("; ".join(f"{names[a]} = {names[b]} at {t:.0f} K" for a, b, t, _y in fc.crossings)
             + "." if fc.crossings else "No two lines cross in this range.")
    skipped = (" Left out (no " + fc.family.per + "): "
               + ", ".join(computed.reactions[r].reaction.name for r in fc.skipped) + "."
               if fc.skipped else "")
    per_symbol = (f"ΔrG°/|ν({species_label(computed.handbook.species[fc.family.per])})|"
                  if fc.family.per in computed.handbook.species else "ΔrG°")
    spec = LineChartSpec(
        title=title,
        description=(f"ΔrG° {fc.per_label} of the {len(series)} reactions of the family "
                     f"{name}, {fmt_T(T0)} to {fmt_T(T1)}. {cross}{skipped}"),
        x_label="T / K", y_label=f"{per_symbol} / (kJ mol⁻¹)", series=tuple(series),
        points=points)
    caption = (f"ΔrG°(T) {fc.per_label} of the family {name}; a marked point is a crossover "
               "where two members' lines cross.")
    return ChartEntry("family", caption, spec)


LADDER_CHART_MAX = 40  # species a ladder chart labels legibly: our choice, no source


def element_ladder(computed: Computed, symbol: str) -> ChartEntry | None:
    """Every species containing ``symbol`` at its ΔfH° and ΔfG° per atom (two columns);
    None past LADDER_CHART_MAX species, whose labels would pile up (the page's table lists
    them all, and a chart of a thousand labels took seconds to draw on every edit)."""
    from generator.site.design_pages import ladder_points

    points = ladder_points(computed, symbol)
    if len(points) > LADDER_CHART_MAX:
        return None
    levels = []
    text = []
    for p in points:
        label = species_label(computed.handbook.species[p.species])
        if p.dfH is not None:
            levels.append(Level(f"h-{p.species}", label, p.dfH, 0))
        if p.dfG is not None:
            levels.append(Level(f"g-{p.species}", label, p.dfG, 1))
        text.append(f"{label}: ΔfH° {fmt(p.dfH) if p.dfH is not None else 'unknown'}, "
                    f"ΔfG° {fmt(p.dfG) if p.dfG is not None else 'unknown'} {KJ}")
    if not levels:
        return None
    spec = LevelDiagramSpec(
        title=f"Ladder of {symbol}: ΔfH° and ΔfG° per atom of {symbol}, 298.15 K",
        description=(f"Species containing {symbol} placed by formation enthalpy (left) and "
                     f"formation Gibbs energy (right) per mole of {symbol} atoms at 298.15 K, "
                     f"elements in their reference states at zero: {'; '.join(text)}."),
        levels=tuple(levels), unit_label=f"per mol {symbol} / (kJ mol⁻¹)",
        column_labels=(f"ΔfH° / n({symbol})", f"ΔfG° / n({symbol})"))
    caption = (f"Species containing {symbol} by ΔfH° and ΔfG° per atom of {symbol} at "
               "298.15 K; lower is more stable relative to the elements.")
    return ChartEntry("ladder", caption, spec)


def handbook_charts(computed: Computed) -> dict[str, list[ChartEntry]]:
    """Charts of the handbook-wide pages, keyed ``family:<name>`` and ``element:<symbol>``."""
    from generator import design

    out: dict[str, list[ChartEntry]] = {}
    for name in design.family_names(computed):
        entry = family_chart(computed, name)
        out[f"family:{name}"] = [entry] if entry is not None else []
    for symbol in design.element_symbols(computed):
        entry = element_ladder(computed, symbol)
        out[f"element:{symbol}"] = [entry] if entry is not None else []
    return out
