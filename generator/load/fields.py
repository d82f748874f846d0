"""Field-level reading of one source file: unknown and missing fields, types, locations."""

from __future__ import annotations

import difflib
import math
import re
from typing import Any

from generator.diagnostics import Finding, Location, error, warning
from generator.source_schema import SLUG_PATTERN
from generator.yamlsource import YList, YMap

_SLUG = re.compile(SLUG_PATTERN)
MAX_SLUG = 80


def did_you_mean(word: str, choices: list[str] | tuple[str, ...]) -> str | None:
    """'did you mean ...?' from difflib, or None."""
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.6)
    if not close:
        lower = {c.lower(): c for c in choices}
        if word.lower() in lower:
            close = [lower[word.lower()]]
    return f"did you mean '{close[0]}'?" if close else None


class FileReader:
    """Collects the findings of one file while its values are read."""

    def __init__(self, path: str, findings: list[Finding]):
        self.path = path
        self.findings = findings

    def error(self, code: str, message: str, loc: Location | None, hint: str | None = None):
        self.findings.append(error(code, message, loc or Location(self.path), hint=hint))

    def warn(self, code: str, message: str, loc: Location | None, hint: str | None = None):
        self.findings.append(warning(code, message, loc or Location(self.path), hint=hint))

    def mapping(self, value: Any, loc: Location, what: str) -> YMap | None:
        if isinstance(value, YMap):
            return value
        self.error("type", f"{what} must be a mapping of fields, got {kind_of(value)}", loc)
        return None

    def check_fields(self, m: YMap, fields: dict, what: str) -> bool:
        """Report unknown fields (with the nearest name) and missing required ones."""
        ok = True
        for key in m:
            if key not in fields:
                hint = did_you_mean(key, tuple(fields))
                self.error("unknown-field", f"unknown field '{key}' in {what}", m.key_where(key),
                           hint or f"known fields: {', '.join(fields)}")
                ok = False
        for key, (required, _schema, _desc) in fields.items():
            if required and key not in m:
                self.error("missing-field", f"{what} has no '{key}'", m.loc,
                           f"add '{key}:'")
                ok = False
        return ok

    def string(self, m: YMap, key: str, what: str, default: str | None = None) -> str | None:
        if key not in m or m[key] is None:
            return default
        v = m[key]
        if isinstance(v, str):
            return v
        hint = "put it in quotes" if isinstance(v, int | float | bool) else None
        self.error("type", f"'{key}' of {what} must be text, got {kind_of(v)}", m.where(key),
                   hint)
        return default

    def number(self, m: YMap, key: str, what: str, default: float | None = None,
               positive: bool = False) -> float | None:
        if key not in m or m[key] is None:
            return default
        return self.number_value(m[key], m.where(key), f"'{key}' of {what}", positive)

    def number_value(self, v: Any, loc: Location, what: str, positive: bool = False
                     ) -> float | None:
        if isinstance(v, bool) or not isinstance(v, int | float):
            hint = None
            if isinstance(v, str) and v.strip().lower().lstrip("+-.") in ("inf", "nan"):
                hint = "infinite and not-a-number values are not allowed"
            self.error("type", f"{what} must be a number, got {kind_of(v)}", loc, hint)
            return None
        x = float(v)
        if not math.isfinite(x):
            self.error("not-finite", f"{what} is not a finite number", loc)
            return None
        if positive and x <= 0:
            self.error("not-positive", f"{what} must be greater than zero, got {v}", loc)
            return None
        return x

    def slug(self, m: YMap, key: str, what: str) -> str | None:
        v = self.string(m, key, what)
        if v is None:
            return None
        if not _SLUG.match(v) or len(v) > MAX_SLUG:
            self.error("bad-id", f"'{v}' is not a valid {key}", m.where(key),
                       "use lowercase letters, digits, '.', '_' and '-', starting with a letter"
                       " or digit")
            return None
        return v

    def string_list(self, m: YMap, key: str, what: str) -> tuple[str, ...]:
        if key not in m or m[key] is None:
            return ()
        v = m[key]
        if isinstance(v, str):
            return (v,)
        if not isinstance(v, YList) or not all(isinstance(x, str) for x in v):
            self.error("type", f"'{key}' of {what} must be a list of text", m.where(key))
            return ()
        return tuple(v)


def kind_of(v: Any) -> str:
    if v is None:
        return "nothing"
    if isinstance(v, bool):
        return f"the boolean {str(v).lower()}"
    if isinstance(v, int | float):
        return f"the number {v}"
    if isinstance(v, str):
        return f"the text '{v[:40]}'"
    if isinstance(v, list):
        return "a list"
    if isinstance(v, dict):
        return "a mapping"
    return type(v).__name__
