"""Reading one species file into a model.Species."""

from __future__ import annotations

from typing import Any

from generator.diagnostics import Location
from generator.digest import content_digest
from generator.formula import FormulaError, parse_formula
from generator.load.fields import FileReader, kind_of
from generator.load.review import from_memory_note, read_review
from generator.load.values import read_quantity
from generator.model import CpPiece, Quantity, Species
from generator.source_schema import CP_FIELDS, SPECIES_FIELDS, STANDARD_FIELDS
from generator.yamlsource import YList, YMap

_CP_LENGTHS = {"shomate": 8, "nasa7": 7, "nasa9": 9}
RANGE_TOLERANCE_K = 1e-6


def read_species(r: FileReader, doc: Any) -> Species | None:
    m = r.mapping(doc, Location(r.path, 1, 1), "a species file")
    if m is None:
        return None
    r.check_fields(m, SPECIES_FIELDS, "a species")
    sid = r.slug(m, "id", "the species")
    name = r.string(m, "name", "the species")
    phase = r.string(m, "phase", "the species")
    if phase is not None and phase not in ("g", "l", "cr", "s", "aq"):
        r.error("bad-phase", f"unknown phase '{phase}'", m.where("phase"),
                "use g, l, cr, s or aq (a polymorph is cr with form: ...)")
        phase = None
    formula_text = r.string(m, "formula", "the species")
    formula = None
    if formula_text is not None:
        try:
            formula = parse_formula(formula_text)
        except FormulaError as exc:
            r.error("bad-formula", f"malformed formula '{formula_text}': {exc.message}",
                    m.where("formula").shifted(exc.col - 1), exc.hint)
    default_ref = r.string(m, "ref", "the species")
    review = read_review(r, m)
    memory = from_memory_note(review)
    standard: dict[str, Quantity] = {}
    std = m.get("standard")
    if std is not None:
        sm = r.mapping(std, m.where("standard"), "'standard'")
        if sm is not None:
            for key in sm:
                if key not in STANDARD_FIELDS:
                    from generator.load.fields import did_you_mean

                    r.error("unknown-field", f"unknown standard quantity '{key}'",
                            sm.key_where(key), did_you_mean(key, STANDARD_FIELDS)
                            or f"known: {', '.join(STANDARD_FIELDS)}")
                    continue
                q = read_quantity(r, sm[key], sm.where(key), key, default_ref, memory)
                if q is not None:
                    standard[key] = q
    cp = read_cp_pieces(r, m.get("cp"), m.where("cp"), default_ref) if "cp" in m else ()
    if sid is None or name is None or phase is None or formula is None:
        return None
    return Species(
        id=sid,
        formula=formula_text,
        phase=phase,
        name=name,
        elements=formula.elements,
        charge=formula.charge,
        molar_mass=formula.molar_mass,
        standard=standard,
        cp=cp,
        form=r.string(m, "form", "the species"),
        cas=r.string(m, "cas", "the species"),
        aliases=r.string_list(m, "aliases", "the species"),
        review=review,
        notes=r.string(m, "notes", "the species", "") or "",
        ref=default_ref,
        path=r.path,
        location=m.where("id"),
        content_digest=content_digest(m),
    )



def read_cp_pieces(r: FileReader, raw: Any, loc: Location, default_ref: str | None
                   ) -> tuple[CpPiece, ...]:
    if not isinstance(raw, YList):
        r.error("type", f"'cp' must be a list of pieces, got {kind_of(raw)}", loc)
        return ()
    pieces: list[CpPiece] = []
    for i, item in enumerate(raw):
        p = _read_piece(r, item, raw.where(i), default_ref)
        if p is not None:
            pieces.append(p)
    for prev, nxt in zip(pieces, pieces[1:], strict=False):
        if nxt.Tmin > prev.Tmax + RANGE_TOLERANCE_K:
            r.error("cp-gap", f"gap in Cp ranges: {prev.Tmax:g} K to {nxt.Tmin:g} K is covered "
                    "by no piece", nxt.location, "make each piece start where the last ends")
        elif nxt.Tmin < prev.Tmax - RANGE_TOLERANCE_K:
            r.error("cp-overlap", f"Cp ranges overlap: this piece starts at {nxt.Tmin:g} K, the "
                    f"previous one ends at {prev.Tmax:g} K", nxt.location,
                    "list pieces in increasing temperature, each starting where the last ends")
    return tuple(pieces)


def _read_piece(r: FileReader, item: Any, loc: Location, default_ref: str | None
                ) -> CpPiece | None:
    m = r.mapping(item, loc, "a Cp piece")
    if m is None:
        return None
    r.check_fields(m, CP_FIELDS, "a Cp piece")
    kinds = [k for k in ("constant", "shomate", "nasa7", "nasa9", "table") if k in m]
    if len(kinds) != 1:
        r.error("cp-kind", "a Cp piece needs exactly one of constant, shomate, nasa7, nasa9, "
                f"table; found {len(kinds) or 'none'}", loc)
        return None
    kind = kinds[0]
    trange = m.get("T")
    if not (isinstance(trange, YList) and len(trange) == 2):
        if "T" in m:
            r.error("cp-range", "T of a Cp piece must be [min, max] in K", m.where("T"))
        return None
    tmin = r.number_value(trange[0], trange.where(0), "the lower temperature", positive=True)
    tmax = r.number_value(trange[1], trange.where(1), "the upper temperature", positive=True)
    if tmin is None or tmax is None:
        return None
    if tmax <= tmin:
        r.error("cp-reversed", f"temperature range is reversed or empty: [{tmin:g}, {tmax:g}]",
                m.where("T"), "write [min, max]")
        return None
    ref = r.string(m, "ref", "a Cp piece", default_ref)
    where = m.key_where(kind)
    if kind == "constant":
        c = r.number(m, "constant", "a Cp piece")
        if c is None:
            return None
        return CpPiece("constant", tmin, tmax, (c,), ref=ref, location=where)
    if kind == "table":
        return _read_table(r, m, tmin, tmax, ref, where)
    coeffs = m[kind]
    n = _CP_LENGTHS[kind]
    if not isinstance(coeffs, YList) or len(coeffs) != n:
        r.error("cp-coefficients", f"{kind} needs {n} coefficients, got "
                f"{len(coeffs) if isinstance(coeffs, list) else kind_of(coeffs)}", m.where(kind))
        return None
    values = [r.number_value(c, coeffs.where(i), f"{kind} coefficient {i + 1}")
              for i, c in enumerate(coeffs)]
    if any(v is None for v in values):
        return None
    return CpPiece(kind, tmin, tmax, tuple(values), ref=ref, location=where)  # type: ignore


def _read_table(r: FileReader, m: YMap, tmin: float, tmax: float, ref: str | None,
                where: Location) -> CpPiece | None:
    t = r.mapping(m["table"], m.where("table"), "a Cp table")
    if t is None:
        return None
    if set(t) != {"T", "Cp"}:
        r.error("cp-table", "a Cp table needs exactly the columns T and Cp", t.loc)
        return None
    cols = []
    for key in ("T", "Cp"):
        col = t[key]
        if not isinstance(col, YList) or len(col) < 2:
            r.error("cp-table", f"column {key} needs at least two numbers", t.where(key))
            return None
        vals = [r.number_value(x, col.where(i), f"{key}[{i}]", positive=True)
                for i, x in enumerate(col)]
        if any(v is None for v in vals):
            return None
        cols.append(tuple(vals))
    ts, cps = cols
    if len(ts) != len(cps):
        r.error("cp-table", f"columns T and Cp differ in length ({len(ts)} and {len(cps)})",
                t.loc)
        return None
    if any(b <= a for a, b in zip(ts, ts[1:], strict=False)):
        r.error("cp-table", "column T must increase", t.where("T"))
        return None
    if ts[0] > tmin + RANGE_TOLERANCE_K or ts[-1] < tmax - RANGE_TOLERANCE_K:
        r.error("cp-table", f"the table covers {ts[0]:g}–{ts[-1]:g} K, not the piece's range "
                f"{tmin:g}–{tmax:g} K", t.loc)
        return None
    return CpPiece("table", tmin, tmax, (), ts, cps, ref=ref, location=where)  # type: ignore
