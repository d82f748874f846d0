"""`thermofolio check`: exit codes, JSON output, strictness, and in-process running."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

from conftest import BAD, assemble
from generator.cli import main


def test_clean_handbook_exits_0(mini: Path, capsys):
    assert main(["check", str(mini)]) == 0
    assert "0 errors" in capsys.readouterr().err


def test_usage_error_exits_2(capsys):
    assert_exit = None
    try:
        main(["check", "--no-such-option"])
    except SystemExit as exc:
        assert_exit = exc.code
    assert assert_exit == 2


def test_missing_folder_is_a_data_error(tmp_path: Path, capsys):
    assert main(["check", str(tmp_path / "nowhere")]) == 1
    assert "no handbook folder" in capsys.readouterr().err


def test_json_format_lists_findings_with_locations(tmp_path: Path, capsys):
    root = assemble(tmp_path / "hb", BAD / "unknown-field")
    assert main(["check", str(root), "--format", "json"]) == 1
    doc = json.loads(capsys.readouterr().out)
    f = [x for x in doc["findings"] if x["code"] == "unknown-field"][0]
    assert f["line"] == 3 and f["col"] == 1 and f["path"].endswith("species/water-gas.yaml")
    assert f["hint"] == "did you mean 'formula'?"


def test_warnings_fail_only_with_strict(tmp_path: Path, capsys):
    root = assemble(tmp_path / "hb")
    # A reference nothing cites is fine; an element with no reference species warns.
    (root / "species" / "oxygen-atom.yaml").write_text(
        "id: carbon-atom\nformula: C\nphase: g\nname: carbon atom\nref: codata-1989\n"
        "standard:\n  dfH: \"716.68 ± 0.45 kJ/mol\"\n  S: \"158.100 ± 0.003 J/(mol*K)\"\n",
        encoding="utf-8")
    assert main(["check", str(root)]) == 0
    out = capsys.readouterr().err
    assert "warning:" in out
    assert main(["check", str(root), "--strict"]) == 1


def test_python_dash_m_generator_is_the_same_command(mini: Path):
    proc = subprocess.run([sys.executable, "-m", "generator", "check", str(mini)],
                          capture_output=True, text=True, cwd=Path(__file__).parent.parent)
    assert proc.returncode == 0, proc.stderr
    assert "thermofolio check: 0 errors" in proc.stderr
