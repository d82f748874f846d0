"""Shared fixtures: small handbooks assembled in temporary folders."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

TESTS = Path(__file__).parent
MINI = TESTS / "fixtures" / "mini"
BAD = TESTS / "bad_inputs"
REPO = TESTS.parent


def assemble(target: Path, overlay: Path | None = None) -> Path:
    """Copy the mini handbook to ``target`` and lay the files of ``overlay`` over it."""
    shutil.copytree(MINI, target)
    if overlay is not None:
        for f in overlay.rglob("*"):
            if f.is_file() and f.name != "expected.txt":
                dest = target / f.relative_to(overlay)
                dest.parent.mkdir(parents=True, exist_ok=True)
                shutil.copyfile(f, dest)
    return target


@pytest.fixture
def mini(tmp_path: Path) -> Path:
    return assemble(tmp_path / "hb")
