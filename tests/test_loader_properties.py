"""Property-based: whatever text a species file holds, loading gives located findings,
never an exception."""

from __future__ import annotations

import tempfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import MINI, assemble
from generator.load import load_handbook

SPECIES = (MINI / "species" / "water-gas.yaml").read_text(encoding="utf-8")
LINES = SPECIES.splitlines()


def _load_with(text: str):
    with tempfile.TemporaryDirectory() as tmp:
        root = assemble(Path(tmp) / "hb")
        (root / "species" / "water-gas.yaml").write_text(text, encoding="utf-8")
        return load_handbook(root)


def _assert_located(findings, text: str) -> None:
    n_lines = text.count("\n") + 2
    for f in findings:
        assert f.location is not None and f.message
        if f.location.path.endswith("water-gas.yaml") and f.location.line:
            assert 1 <= f.location.line <= n_lines, f.format()
            assert f.location.col >= 1


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.text(max_size=200))
def test_arbitrary_text_never_crashes_the_loader(text: str):
    _handbook, findings = _load_with(text)
    _assert_located(findings, text)


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(0, len(LINES) - 1), st.text(alphabet="-:[]{}&*!|>'\"#0123456789.eE+ "
                                                         "abcxyzKJmol/()±", max_size=30))
def test_one_mangled_line_gives_located_findings(index: int, junk: str):
    lines = list(LINES)
    lines[index] = lines[index][: len(lines[index]) // 2] + junk
    text = "\n".join(lines) + "\n"
    handbook, findings = _load_with(text)
    _assert_located(findings, text)
    if handbook is None:
        assert any(f.severity.value == "error" for f in findings)
