"""The whole pipeline, top to bottom, as named steps.

sources -> load and validate (generator.load) -> model (generator.model)
-> compute (generator.thermo, pure numpy) -> findings (generator.findings)
-> render (generator.site) -> write (generator.output).
All reading and computing finish before the first byte is written.
"""

from __future__ import annotations

from pathlib import Path

from generator.diagnostics import Finding
from generator.load import load_handbook
from generator.model import Handbook


def check_handbook(root: Path) -> tuple[Handbook | None, list[Finding]]:
    """Load and validate the sources, then run the engine's consistency checks."""
    handbook, findings = load_handbook(root)
    if handbook is None:
        return None, findings
    from generator.compute import compute_handbook

    computed = compute_handbook(handbook)
    return handbook, findings + list(computed.findings)
