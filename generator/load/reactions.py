"""Reading one reaction file; species are resolved later, once every file is read."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from generator.diagnostics import Location
from generator.digest import content_digest
from generator.equation import EquationError, ParsedEquation, parse_equation
from generator.load.conditions import read_conditions
from generator.load.fields import FileReader, kind_of
from generator.load.review import from_memory_note, read_review
from generator.load.values import read_value
from generator.model import CombineStep, Conditions, Measured, Review
from generator.source_schema import COMBINE_FIELDS, MEASURED_FIELDS, REACTION_FIELDS
from generator.yamlsource import YList, YMap


@dataclass
class RawReaction:
    id: str
    name: str
    equation: str | None
    parsed: ParsedEquation | None
    equation_loc: Location | None
    measured: tuple[Measured, ...]
    combine: tuple[CombineStep, ...]
    electrons: int | None
    family: tuple[str, ...]
    review: Review
    notes: str
    ref: str | None
    path: str
    location: Location
    conditions: Conditions | None = None
    refs_used: list[tuple[str, Location]] = field(default_factory=list)
    content_digest: str | None = None


def read_reaction(r: FileReader, doc: Any) -> RawReaction | None:
    m = r.mapping(doc, Location(r.path, 1, 1), "a reaction file")
    if m is None:
        return None
    r.check_fields(m, REACTION_FIELDS, "a reaction")
    rid = r.slug(m, "id", "the reaction")
    name = r.string(m, "name", "the reaction")
    default_ref = r.string(m, "ref", "the reaction")
    review = read_review(r, m)
    equation = r.string(m, "equation", "the reaction")
    parsed = None
    eq_loc = m.where("equation") if "equation" in m else None
    if equation is not None:
        try:
            parsed = parse_equation(equation)
        except EquationError as exc:
            r.error("bad-equation", f"cannot read equation: {exc.message}",
                    eq_loc.shifted(max(exc.col - 1, 0)) if eq_loc else None, exc.hint)
            return None
    elif "combine" not in m:
        r.error("missing-field", "a reaction needs an 'equation' or a 'combine' list", m.loc,
                "add equation: \"A(g) + B(g) -> C(g)\"")
    measured = _read_measured(r, m, default_ref, from_memory_note(review))
    combine = _read_combine(r, m)
    electrons = None
    if "electrons" in m:
        e = m["electrons"]
        if isinstance(e, bool) or not isinstance(e, int) or e < 1:
            r.error("type", f"'electrons' must be a whole number of at least 1, got {kind_of(e)}",
                    m.where("electrons"))
        else:
            electrons = e
    conditions = None
    if m.get("conditions") is not None:
        conditions = read_conditions(r, m["conditions"], m.where("conditions"))
    if rid is None or name is None:
        return None
    return RawReaction(
        id=rid, name=name, equation=equation, parsed=parsed, equation_loc=eq_loc,
        measured=measured, combine=combine, electrons=electrons,
        family=r.string_list(m, "family", "the reaction"), review=review,
        notes=r.string(m, "notes", "the reaction", "") or "", ref=default_ref, path=r.path,
        location=m.where("id"), conditions=conditions, content_digest=content_digest(m),
    )


def _read_measured(r: FileReader, m: YMap, default_ref: str | None, memory: bool
                   ) -> tuple[Measured, ...]:
    raw = m.get("measured")
    if raw is None:
        return ()
    if not isinstance(raw, YList):
        r.error("type", "'measured' must be a list", m.where("measured"))
        return ()
    out = []
    for i, item in enumerate(raw):
        mm = r.mapping(item, raw.where(i), "a measured value")
        if mm is None or not r.check_fields(mm, MEASURED_FIELDS, "a measured value"):
            continue
        q = mm["quantity"]
        if q not in ("drH", "drS", "drG", "K"):
            r.error("bad-quantity", f"unknown measured quantity '{q}'", mm.where("quantity"),
                    "use drH, drS, drG or K")
            continue
        T = r.number(mm, "T", "a measured value", 298.15, positive=True)
        value_map = YMap({k: mm[k] for k in ("value", "unc", "unit", "ref") if k in mm})
        value_map.loc = mm.loc
        value_map.key_locs = {k: mm.key_where(k) for k in value_map}
        value_map.value_locs = {k: mm.where(k) for k in value_map}
        if q == "K" and "unit" not in value_map:
            value_map["unit"] = ""
        v = read_value(r, value_map, mm.loc, q, default_ref, memory)
        if v is None or T is None:
            continue
        out.append(Measured(q, v, T, mm.loc))
    return tuple(out)


def _read_combine(r: FileReader, m: YMap) -> tuple[CombineStep, ...]:
    raw = m.get("combine")
    if raw is None:
        return ()
    if not isinstance(raw, YList) or not raw:
        r.error("type", "'combine' must be a list of {reaction, factor}", m.where("combine"))
        return ()
    out = []
    for i, item in enumerate(raw):
        cm = r.mapping(item, raw.where(i), "a combine step")
        if cm is None or not r.check_fields(cm, COMBINE_FIELDS, "a combine step"):
            continue
        rid = r.slug(cm, "reaction", "a combine step")
        factor = r.number(cm, "factor", "a combine step")
        if factor == 0:
            r.error("bad-factor", "a combine factor of zero does nothing", cm.where("factor"))
            continue
        if rid is not None and factor is not None:
            out.append(CombineStep(rid, factor, cm.where("reaction")))
    return tuple(out)
