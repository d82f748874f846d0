"""The whole pipeline, top to bottom, as named steps.

sources -> load and validate (generator.load) -> model (generator.model)
-> compute (generator.compute, generator.thermo, pure numpy) -> findings
(generator.findings, generator.provenance, generator.network)
-> render (generator.site) -> write (generator.site.output).
All reading and computing finish before the first byte is written.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from generator.diagnostics import Finding
from generator.load import load_handbook
from generator.model import Handbook

if TYPE_CHECKING:
    from generator.compute import Computed
    from generator.results_cache import ResultStore


def load_and_compute(root: Path, jobs: int = 1, results: ResultStore | None = None
                     ) -> tuple[Handbook | None, Computed | None, list[Finding]]:
    """Load and validate the sources, then compute them (``jobs`` processes; per-reaction
    numbers kept in ``results`` between builds) and run the consistency checks; the
    findings of both steps together (no computation when loading failed)."""
    handbook, findings = load_handbook(root, results, jobs)
    if handbook is None:
        return None, None, findings
    from generator.compute import compute_handbook

    computed = compute_handbook(handbook, jobs=jobs, results=results)
    return handbook, computed, findings + list(computed.findings)


def check_handbook(root: Path) -> tuple[Handbook | None, list[Finding]]:
    """Load, compute and check; the handbook and every finding."""
    handbook, _computed, findings = load_and_compute(root)
    return handbook, findings
