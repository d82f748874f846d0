"""Reading cited values: compact strings and mappings, converted to canonical units."""

from __future__ import annotations

from typing import Any

from generator.diagnostics import Location
from generator.load.fields import FileReader, kind_of
from generator.model import Quantity, Value
from generator.source_schema import VALUE_FIELDS
from generator.units import CANONICAL, UnitError, parse_compact, to_canonical_factor
from generator.yamlsource import YList, YMap

DIMENSION = {"dfH": "energy", "dfG": "energy", "S": "entropy", "Cp": "entropy",
             "drH": "energy", "drG": "energy", "drS": "entropy", "K": "none"}


def read_value(r: FileReader, raw: Any, loc: Location, name: str, default_ref: str | None,
               from_memory: bool) -> Value | None:
    """One value: ``"-285.83 ± 0.04 kJ/mol"`` or ``{value, unc, unit, ref, preferred}``."""
    dim = DIMENSION[name]
    preferred = False
    ref = default_ref
    if isinstance(raw, str):
        try:
            w = parse_compact(raw)
        except UnitError as exc:
            r.error("bad-value", f"{name}: {exc.message}", loc, exc.hint)
            return None
        value, unc, unit, written = w.value, w.unc, w.unit, raw
        unit_loc = loc
    elif isinstance(raw, YMap):
        if not r.check_fields(raw, VALUE_FIELDS, f"the {name} value"):
            return None
        value = r.number(raw, "value", f"the {name} value")
        unc = r.number(raw, "unc", f"the {name} value")
        unit = r.string(raw, "unit", f"the {name} value") or ""
        ref = r.string(raw, "ref", f"the {name} value", default_ref)
        pref = raw.get("preferred", False)
        if not isinstance(pref, bool):
            r.error("type", f"'preferred' must be true or false, got {kind_of(pref)}",
                    raw.where("preferred"))
        preferred = pref is True
        if value is None:
            return None
        written = f"{raw['value']}" + (f" ± {raw['unc']}" if "unc" in raw else "") + (
            f" {unit}" if unit else "")
        unit_loc = raw.where("unit")
    elif isinstance(raw, bool) or not isinstance(raw, int | float):
        r.error("type", f"{name} must be a value with a unit, got {kind_of(raw)}", loc,
                f'write e.g. "{example(name)}"')
        return None
    else:
        r.error("missing-unit", f"{name} value {raw} has no unit", loc,
                f'write e.g. "{example(name)}"')
        return None
    if unc is not None and unc < 0:
        r.error("bad-uncertainty", f"{name}: uncertainty must not be negative", loc)
        return None
    try:
        factor = to_canonical_factor(unit, dim)
    except UnitError as exc:
        code = "missing-unit" if not unit.strip() else "wrong-unit"
        r.error(code, f"{name}: {exc.message}", unit_loc, exc.hint)
        return None
    if name == "K" and value <= 0:
        r.error("not-positive", "K must be greater than zero", loc)
        return None
    return Value(
        value=value * factor,
        unit=CANONICAL[dim],
        unc=None if unc is None else unc * factor,
        ref=ref,
        preferred=preferred,
        written=written,
        location=loc,
        from_memory=from_memory,
    )


def read_quantity(r: FileReader, raw: Any, loc: Location, name: str, default_ref: str | None,
                  from_memory: bool) -> Quantity | None:
    """A quantity: one value, or a list of values from several references."""
    if isinstance(raw, YList):
        if not raw:
            r.error("empty", f"{name} lists no values", loc)
            return None
        values = [read_value(r, item, raw.where(i), name, default_ref, from_memory)
                  for i, item in enumerate(raw)]
        if any(v is None for v in values):
            return None
        marked = [v for v in values if v.preferred]
        if len(marked) > 1:
            r.error("several-preferred", f"{name}: {len(marked)} values are marked preferred",
                    marked[1].location, "mark one value preferred: true")
        return Quantity(name, tuple(values), loc)  # type: ignore[arg-type]
    v = read_value(r, raw, loc, name, default_ref, from_memory)
    return None if v is None else Quantity(name, (v,), loc)


def example(name: str) -> str:
    return {"energy": "-285.83 ± 0.04 kJ/mol", "entropy": "69.95 ± 0.03 J/(mol*K)",
            "none": "1.0e-5"}[DIMENSION[name]]
