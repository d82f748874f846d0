"""A reaction's ``conditions:`` mapping: feeds, pressures, temperature range, feed T.

Source form (every field optional)::

    conditions:
      feeds:                       # list of feeds; each maps species to moles
        - {CH4: 1, H2O: 3, N2: 0.1}
      pressures: [1 bar, 20 bar]   # total pressures, each with a unit (or one string)
      T: [700, 1300]               # K: the range the sheet's conversion chart spans
      T_in: 298.15                 # K: feed temperature for the adiabatic rise
      voltage: 3.1 V               # operating cell voltage (electrochemical reactions)

Without ``feeds`` the reactants are taken in stoichiometric amounts; without ``pressures``
1 bar.  A feed names a species by id, ``{id}``, ``formula(phase)`` or a bare formula; a
bare formula picks the species of the reaction with that formula, else the only species
with it, else its only gas (an inert such as N2).  Species not in the equation are inerts.

``read_conditions`` checks the structure while the file is read (species are not known yet);
``resolve_conditions`` names the species once every file is read.
"""

from __future__ import annotations

from collections.abc import Collection, Mapping
from dataclasses import replace
from typing import Any

from generator.diagnostics import Finding, Location, error
from generator.formula import FormulaError, parse_formula
from generator.load.fields import FileReader, did_you_mean, kind_of
from generator.model import Conditions, Feed, Species
from generator.units import UnitError, parse_compact, parse_pressure
from generator.yamlsource import YList, YMap

CONDITIONS_FIELDS: dict[str, tuple[bool, dict, str]] = {
    "feeds": (False, {"type": "array", "items": {"type": "object"}},
              "feeds: species -> moles (inerts allowed)"),
    "pressures": (False, {"type": ["array", "string"]}, "total pressures, with units"),
    "T": (False, {"type": "array", "items": {"type": "number"}}, "temperature range, K"),
    "T_in": (False, {"type": "number"}, "feed temperature for the adiabatic rise, K"),
    "voltage": (False, {"type": "string"}, "operating cell voltage, with a unit (V)"),
}
VOLT_UNITS = {"V": 1.0, "mV": 1.0e-3, "kV": 1.0e3}
MAX_FEEDS = 20
MAX_PRESSURES = 20


def read_conditions(r: FileReader, value: Any, loc: Location) -> Conditions | None:
    """The ``conditions:`` mapping with names as written; None (with findings) if wrong."""
    m = r.mapping(value, loc, "'conditions'")
    if m is None:
        return None
    ok = r.check_fields(m, CONDITIONS_FIELDS, "'conditions'")
    feeds = _read_feeds(r, m)
    pressures = _read_pressures(r, m)
    T_range = _read_range(r, m)
    T_in = r.number(m, "T_in", "'conditions'", 298.15, positive=True)
    voltage = _read_voltage(r, m)
    if not ok or feeds is None or pressures is None or T_range is False or T_in is None \
            or voltage is False:
        return None
    return Conditions(feeds=feeds, pressures=pressures or (1.0e5,),
                      T_range=T_range or None, T_in=T_in, voltage=voltage, location=m.loc)


def _read_voltage(r: FileReader, m: YMap) -> float | None | bool:
    """The operating voltage in V, None when absent, False when wrong (reported)."""
    raw = m.get("voltage")
    if raw is None:
        return None
    hint = "write e.g. voltage: 3.1 V"
    if isinstance(raw, bool) or not isinstance(raw, str):
        r.error("type", f"'voltage' of 'conditions' must be a number with a unit, got "
                f"{kind_of(raw)}", m.where("voltage"), hint)
        return False
    try:
        w = parse_compact(raw)
    except UnitError as exc:
        r.error("bad-voltage", exc.message, m.where("voltage"), hint)
        return False
    factor = VOLT_UNITS.get(w.unit.strip())
    if factor is None:
        r.error("bad-voltage", f"unit '{w.unit}' of 'voltage' is not V, mV or kV",
                m.where("voltage"), hint)
        return False
    V = w.value * factor
    if not (0.0 < V < float("inf")):
        r.error("bad-voltage", f"voltage {raw!r} must be above zero", m.where("voltage"), hint)
        return False
    return V


def _read_feeds(r: FileReader, m: YMap) -> tuple[Feed, ...] | None:
    raw = m.get("feeds")
    if raw is None:
        return ()
    if not isinstance(raw, YList) or not raw:
        r.error("type", f"'feeds' must be a list of feeds, got {kind_of(raw)}",
                m.where("feeds"), "write feeds: [{CH4: 1, H2O: 3}]")
        return None
    if len(raw) > MAX_FEEDS:
        r.error("too-many", f"at most {MAX_FEEDS} feeds", m.where("feeds"))
        return None
    feeds, ok = [], True
    for i, item in enumerate(raw):
        fm = r.mapping(item, raw.where(i), "a feed")
        if fm is None:
            ok = False
            continue
        names, moles, locs = [], [], []
        for name, amount in fm.items():
            n = r.number_value(amount, fm.where(name), f"the amount of '{name}' in a feed")
            if n is None:
                ok = False
                continue
            if n < 0:
                r.error("negative-amount", f"the amount of '{name}' in a feed is negative",
                        fm.where(name), "amounts are moles, zero or more")
                ok = False
                continue
            names.append(str(name))
            moles.append(n)
            locs.append(fm.key_where(name))
        if not fm or (len(moles) == len(fm) and sum(moles) <= 0):
            r.error("empty-feed", "a feed needs at least one species with a positive amount",
                    fm.loc)
            ok = False
            continue
        feeds.append(Feed(tuple(names), tuple(moles), tuple(names), fm.loc, tuple(locs)))
    return tuple(feeds) if ok else None


def _read_pressures(r: FileReader, m: YMap) -> tuple[float, ...] | None:
    raw = m.get("pressures")
    if raw is None:
        return ()
    items = [(raw, m.where("pressures"))] if not isinstance(raw, YList) else \
        [(v, raw.where(i)) for i, v in enumerate(raw)]
    if not items or len(items) > MAX_PRESSURES:
        r.error("type", f"'pressures' must list 1 to {MAX_PRESSURES} pressures",
                m.where("pressures"))
        return None
    out, ok = [], True
    for v, loc in items:
        try:
            P = parse_pressure(v)
        except UnitError as exc:
            r.error("bad-pressure", f"cannot read pressure {v!r}: {exc.message}", loc,
                    exc.hint or "write e.g. 20 bar")
            ok = False
            continue
        if not (P > 0 and P < float("inf")):
            r.error("bad-pressure", f"pressure {v!r} must be above zero", loc)
            ok = False
            continue
        out.append(P)
    return tuple(out) if ok else None


def _read_range(r: FileReader, m: YMap) -> tuple[float, float] | None | bool:
    """(lo, hi) K, None when absent, False when wrong (reported)."""
    raw = m.get("T")
    if raw is None:
        return None
    if not isinstance(raw, YList) or len(raw) != 2:
        r.error("type", "'T' of 'conditions' must be [low, high] in K", m.where("T"),
                "write e.g. T: [700, 1300]")
        return False
    lo = r.number_value(raw[0], raw.where(0), "the low end of 'T'", positive=True)
    hi = r.number_value(raw[1], raw.where(1), "the high end of 'T'", positive=True)
    if lo is None or hi is None:
        return False
    if hi <= lo:
        r.error("reversed-range", f"'T' of 'conditions' runs from {lo:g} K down to {hi:g} K",
                m.where("T"), "write the lower temperature first")
        return False
    return (lo, hi)


def _key(elements, charge: int) -> tuple:
    return (tuple(sorted(elements)), charge)


def resolve_feed_name(name: str, species: Mapping[str, Species], in_reaction: Collection[str]
                      ) -> tuple[str | None, str, str | None]:
    """(species id, "", None) for a feed name, or (None, message, hint)."""
    text = name.strip()
    if text.startswith("{") and text.endswith("}"):
        text = text[1:-1].strip()
        if text in species:
            return text, "", None
        return None, f"no species with id '{text}'", did_you_mean(text, tuple(species))
    if text in species:
        return text, "", None
    phase = None
    if text.endswith(")") and "(" in text:
        head, _, tail = text.rpartition("(")
        if tail[:-1] in ("g", "l", "cr", "s", "aq"):
            text, phase = head, tail[:-1]
    try:
        f = parse_formula(text)
    except FormulaError:
        return None, f"no species '{name}'", (did_you_mean(name, tuple(species))
                                             or "write a species id, formula(phase) or formula")
    same = [s for s in species.values() if _key(s.elements, s.charge) ==
            _key(f.elements, f.charge) and (phase is None or s.phase == phase)]
    if phase is None:
        mine = [s for s in same if s.id in in_reaction]
        gases = [s for s in same if s.phase == "g"]
        for group in (mine, same, gases):
            if len(group) == 1:
                return group[0].id, "", None
        if not mine and not same:
            return None, f"no species with formula {text}", "define it under species/"
        pool = mine if len(mine) > 1 else same
        ids = ", ".join("{" + s.id + "}" for s in sorted(pool, key=lambda s: s.id))
        return None, f"{text} matches {len(pool)} species", f"write one of {ids}"
    if len(same) == 1:
        return same[0].id, "", None
    if not same:
        return None, f"species {text}({phase}) is not defined", "define it under species/"
    ids = ", ".join("{" + s.id + "}" for s in sorted(same, key=lambda s: s.id))
    return None, f"{text}({phase}) matches {len(same)} species", f"write one of {ids}"


def resolve_conditions(c: Conditions, nu: Mapping[str, float], species: Mapping[str, Species],
                       findings: list[Finding]) -> Conditions | None:
    """Name the species of every feed and check that each feed can react and carries the
    solvent its aqueous species need; None (with located findings) when it cannot."""
    feeds, ok = [], True
    for feed in c.feeds:
        ids = []
        for name, loc in zip(feed.written, feed.name_locations, strict=True):
            sid, message, hint = resolve_feed_name(name, species, nu)
            if sid is None:
                findings.append(error("unknown-species", f"feed: {message}", loc, hint=hint))
                ok = False
            ids.append(sid or "")
        if "" in ids:
            continue
        resolved = replace(feed, species=tuple(ids))
        problem = feed_problem(nu, species, resolved.amounts)
        if problem:
            findings.append(error("bad-feed", problem[0], feed.location, hint=problem[1]))
            ok = False
            continue
        feeds.append(resolved)
    return replace(c, feeds=tuple(feeds)) if ok else None


def feed_problem(nu: Mapping[str, float], species: Mapping[str, Species],
                 amounts: Mapping[str, float]) -> tuple[str, str] | None:
    """(message, hint) when a resolved feed cannot be used for the reaction, else None."""
    from generator.thermo.equilibrium import extent_bounds, is_water_liquid

    lo, hi = extent_bounds(nu, amounts)
    if hi - lo <= 0:
        return ("the feed can react neither forwards nor backwards",
                "it needs every reactant (or every product)")
    needs_water = any(species[s].phase == "aq" for s in nu)
    if needs_water and not any(is_water_liquid(species[s]) and n > 0
                               for s, n in amounts.items()):
        return ("the reaction has aqueous species but the feed has no liquid water",
                "add H2O(l) to the feed: it fixes the solvent mass for the molalities")
    return None


__all__ = ["CONDITIONS_FIELDS", "read_conditions", "resolve_conditions", "resolve_feed_name",
           "feed_problem"]
