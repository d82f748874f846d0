"""Reading handbook.yaml."""

from __future__ import annotations

import math
from typing import Any

from generator.caution import CAUTION
from generator.diagnostics import Location
from generator.load.fields import FileReader
from generator.model import DEFAULT_TOLERANCES, Family, Settings
from generator.source_schema import HANDBOOK_FIELDS
from generator.units import UnitError, parse_pressure
from generator.yamlsource import YList


def read_settings(r: FileReader, doc: Any) -> Settings | None:
    m = r.mapping(doc, Location(r.path, 1, 1), "handbook.yaml")
    if m is None:
        return None
    r.check_fields(m, HANDBOOK_FIELDS, "handbook.yaml")
    title = r.string(m, "title", "the handbook")
    edition = r.string(m, "edition", "the handbook")
    organisation = r.string(m, "organisation", "the handbook")
    pressure = 1.0e5
    if "standard_pressure" in m:
        try:
            pressure = parse_pressure(m["standard_pressure"])
        except UnitError as exc:
            r.error("wrong-unit", f"standard_pressure: {exc.message}",
                    m.where("standard_pressure"), exc.hint)
    temps: tuple[float, ...] = Settings.__dataclass_fields__["temperatures"].default
    if "temperatures" in m:
        raw = m["temperatures"]
        if not isinstance(raw, YList) or not raw:
            r.error("type", "'temperatures' must be a list of temperatures in K",
                    m.where("temperatures"))
        else:
            vals = [r.number_value(t, raw.where(i), "a grid temperature", positive=True)
                    for i, t in enumerate(raw)]
            if all(v is not None for v in vals):
                temps = tuple(sorted(set(vals)))  # type: ignore[arg-type]
    tolerances = dict(DEFAULT_TOLERANCES)
    if "tolerances" in m:
        tm = r.mapping(m["tolerances"], m.where("tolerances"), "'tolerances'")
        if tm is not None:
            r.check_fields(tm, {k: (False, {}, "") for k in DEFAULT_TOLERANCES}, "'tolerances'")
            for key in tm:
                if key in DEFAULT_TOLERANCES:
                    v = r.number(tm, key, "'tolerances'", positive=True)
                    if v is not None:
                        tolerances[key] = v
    units = _read_display_units(r, m)
    interval = m.get("review_interval_days", 365)
    if isinstance(interval, bool) or not isinstance(interval, int) or interval < 1:
        r.error("type", "'review_interval_days' must be a whole number of days",
                m.where("review_interval_days"))
        interval = 365
    adiabatic = r.number(m, "adiabatic_caution_K", "the handbook", 200.0, positive=True)
    families = _read_families(r, m)
    if title is None or edition is None or organisation is None:
        return None
    return Settings(
        families=families,
        title=title, edition=edition, organisation=organisation, standard_pressure=pressure,
        temperatures=temps, units=units,
        caution=r.string(m, "caution", "the handbook", CAUTION) or CAUTION,
        tolerances=tolerances, review_interval_days=interval,
        adiabatic_caution_K=adiabatic if adiabatic and math.isfinite(adiabatic) else 200.0,
        location=Location(r.path, 1, 1),
    )


_DISPLAY = {"energy": "energy", "entropy": "entropy", "pressure": "pressure"}


def _read_display_units(r: FileReader, m) -> dict[str, str]:
    """Display units by dimension, each checked to be a unit of that dimension."""
    from generator.units import to_canonical_factor

    if "units" not in m:
        return {}
    um = r.mapping(m["units"], m.where("units"), "'units'")
    if um is None:
        return {}
    units: dict[str, str] = {}
    for key, value in um.items():
        if key == "temperature":
            if value != "K":
                r.error("wrong-unit", "display temperatures are in K", um.where(key))
            continue
        if key not in _DISPLAY:
            from generator.load.fields import did_you_mean

            r.error("unknown-field", f"unknown display unit '{key}'", um.key_where(key),
                    did_you_mean(key, (*_DISPLAY, "temperature")) or
                    "known: energy, entropy, pressure, temperature")
            continue
        if not isinstance(value, str):
            r.error("type", f"display unit '{key}' must be text", um.where(key))
            continue
        try:
            to_canonical_factor(value, _DISPLAY[key])
        except UnitError as exc:
            r.error("wrong-unit", f"display unit {key}: {exc.message}", um.where(key), exc.hint)
            continue
        units[key] = value
    return units


def _read_families(r: FileReader, m) -> dict[str, Family]:
    """``families: {name: {title, per}}``; ``per`` is checked against the species later."""
    if "families" not in m:
        return {}
    fm = r.mapping(m["families"], m.where("families"), "'families'")
    if fm is None:
        return {}
    out: dict[str, Family] = {}
    for name in fm:
        spec = r.mapping(fm[name], fm.where(name), f"family '{name}'")
        if spec is None:
            continue
        r.check_fields(spec, {"title": (False, {}, ""), "per": (False, {}, "")},
                       f"family '{name}'")
        out[str(name)] = Family(str(name), r.string(spec, "title", "a family", "") or "",
                                r.slug(spec, "per", "a family") if "per" in spec else None,
                                fm.where(name))
    return out
