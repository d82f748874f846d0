"""Every broken handbook under tests/bad_inputs gives its expected message at its line.

Each case folder holds the files laid over the mini handbook and ``expected.txt``:
``<file>:<line>: <message text>`` lines, each of which must match one reported finding.
"""

from __future__ import annotations

import time
from pathlib import Path

import pytest

from conftest import BAD, assemble
from generator.cli import main
from generator.diagnostics import Severity
from generator.load import load_handbook

CASES = sorted(p.name for p in BAD.iterdir() if p.is_dir())


def _expected(case: str) -> list[tuple[str, int, str]]:
    out = []
    for line in (BAD / case / "expected.txt").read_text(encoding="utf-8").splitlines():
        if not line.strip() or line.startswith("#"):
            continue
        where, message = line.split(": ", 1)
        path, lineno = where.rsplit(":", 1)
        out.append((path, int(lineno), message))
    return out


def test_there_are_at_least_25_broken_handbooks():
    assert len(CASES) >= 25


@pytest.mark.parametrize("case", CASES)
def test_bad_input_is_located(case: str, tmp_path: Path):
    root = assemble(tmp_path / "hb", BAD / case)
    start = time.perf_counter()
    handbook, findings = load_handbook(root)
    assert time.perf_counter() - start < 1.0
    assert handbook is None
    errors = [f for f in findings if f.severity is Severity.ERROR]
    for path, line, message in _expected(case):
        hits = [f for f in errors if f.location and f.location.path.endswith(path)
                and f.location.line == line and message in f.format()]
        assert hits, f"{case}: expected {path}:{line}: {message}\ngot:\n" + "\n".join(
            f.format() for f in findings)


@pytest.mark.parametrize("case", ["unknown-reference", "alias-bomb", "not-utf8"])
def test_check_command_prints_compiler_lines_and_exits_1(case, tmp_path, capsys):
    root = assemble(tmp_path / "hb", BAD / case)
    code = main(["check", str(root)])
    err = capsys.readouterr().err
    assert code == 1
    path, line, message = _expected(case)[0]
    assert f"{path}:{line}:" in err and "error:" in err and message in err
    assert "Traceback" not in err
    assert "1 error" in err.splitlines()[-1] or "errors" in err.splitlines()[-1]
