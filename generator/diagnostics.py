"""Findings: the one data type for everything the loader and the engine report.

A finding has a severity, a stable code (so tests and CI can match on it), a message for
people, an optional hint, and the source location it concerns.  It prints in the
compiler style ``path:line:col: severity: message (hint)``.
"""

from __future__ import annotations

import enum
import json
from collections.abc import Iterable
from dataclasses import dataclass, field


class Severity(str, enum.Enum):
    ERROR = "error"
    WARNING = "warning"
    NOTE = "note"

    @property
    def rank(self) -> int:
        return {"error": 0, "warning": 1, "note": 2}[self.value]


@dataclass(frozen=True, order=True)
class Location:
    """A place in a source file; line and column are 1-based."""

    path: str
    line: int = 0
    col: int = 0

    def __str__(self) -> str:
        if self.line <= 0:
            return self.path
        return f"{self.path}:{self.line}:{self.col}"

    def shifted(self, cols: int) -> Location:
        """The same line, ``cols`` characters further right (a position inside a scalar)."""
        return Location(self.path, self.line, self.col + cols)


@dataclass(frozen=True)
class Finding:
    severity: Severity
    code: str
    message: str
    location: Location | None = None
    hint: str | None = None
    item: str | None = None  # id of the species or reaction concerned
    quantity: str | None = None  # e.g. "dfH", "drG@1000K"
    data: dict = field(default_factory=dict, compare=False, hash=False)

    def format(self) -> str:
        where = f"{self.location}: " if self.location else ""
        hint = f" ({self.hint})" if self.hint else ""
        return f"{where}{self.severity.value}: {self.message}{hint}"

    def to_json(self) -> dict:
        loc = self.location
        return {
            "severity": self.severity.value,
            "code": self.code,
            "message": self.message,
            "hint": self.hint,
            "path": loc.path if loc else None,
            "line": loc.line if loc else None,
            "col": loc.col if loc else None,
            "item": self.item,
            "quantity": self.quantity,
        }


def error(code: str, message: str, location: Location | None = None, **kw) -> Finding:
    return Finding(Severity.ERROR, code, message, location, **kw)


def warning(code: str, message: str, location: Location | None = None, **kw) -> Finding:
    return Finding(Severity.WARNING, code, message, location, **kw)


def note(code: str, message: str, location: Location | None = None, **kw) -> Finding:
    return Finding(Severity.NOTE, code, message, location, **kw)


def sort_findings(findings: Iterable[Finding]) -> list[Finding]:
    """Stable order: by file, line, column, then severity and code."""

    def key(f: Finding):
        loc = f.location or Location("")
        return (loc.path, loc.line, loc.col, f.severity.rank, f.code, f.message)

    return sorted(findings, key=key)


def summary_line(findings: Iterable[Finding]) -> str:
    fs = list(findings)
    n_err = sum(f.severity is Severity.ERROR for f in fs)
    n_warn = sum(f.severity is Severity.WARNING for f in fs)
    n_note = sum(f.severity is Severity.NOTE for f in fs)

    def plural(n: int, word: str) -> str:
        return f"{n} {word}{'' if n == 1 else 's'}"

    return f"{plural(n_err, 'error')}, {plural(n_warn, 'warning')}, {plural(n_note, 'note')}"


def findings_json(findings: Iterable[Finding]) -> str:
    fs = sort_findings(findings)
    return json.dumps(
        {"findings": [f.to_json() for f in fs], "summary": summary_line(fs)},
        indent=2,
        ensure_ascii=False,
    )
