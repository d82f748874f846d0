"""Engine findings: consistency checks of the computed handbook (filled in with the engine)."""

from __future__ import annotations

from generator.diagnostics import Finding
from generator.model import Handbook


def engine_findings(handbook: Handbook) -> list[Finding]:
    return []
