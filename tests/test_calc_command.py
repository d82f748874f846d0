"""`thermofolio calc` on the demo handbook: every demo reaction, the JSON shape, errors."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from conftest import REPO
from generator.caution import CAUTION
from generator.cli import main

DEMO = REPO / "sources"
ROW_KEYS = {"T", "drH", "drS", "drG", "drCp", "drU", "TdrS", "K", "log10K", "E", "Etn", "u",
            "K_range", "extrapolated"}
DEMO_REACTIONS = sorted(p.stem for p in (DEMO / "reactions").glob("*.yaml"))


@pytest.mark.parametrize("rid", DEMO_REACTIONS)
def test_calc_works_for_every_demo_reaction(rid: str, capsys):
    code = main(["calc", rid, "--sources", str(DEMO), "-T", "298.15", "-T", "1000", "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert code == 0
    assert [r["T"] for r in doc["rows"]] == [298.15, 1000.0]
    assert set(doc["rows"][0]) == ROW_KEYS
    assert set(doc["rows"][0]["u"]) == {"drH", "drS", "drG", "log10K"}
    assert doc["caution"] == CAUTION
    assert all(isinstance(r["drG"], float) for r in doc["rows"])


def test_json_shape_of_the_issue(capsys):
    main(["calc", "CH4(g) + H2O(g) -> CO(g) + 3 H2(g)", "-T", "298.15", "-T", "1000",
          "--sources", str(DEMO), "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert {"equation", "units", "rows", "crossover_T", "findings"} <= set(doc)
    assert doc["units"]["drH"] == "kJ/mol" and doc["units"]["drS"] == "J/(mol*K)"
    assert doc["rows"][0]["E"] is None and doc["rows"][0]["Etn"] is None
    # Steam reforming turns favourable near 890-900 K at 1 bar (common practice, no source).
    assert len(doc["crossover_T"]) == 1 and 850 < doc["crossover_T"][0] < 950
    # drH(298.15) of steam reforming is about +206 kJ/mol (common practice, no source).
    assert doc["rows"][0]["drH"] == pytest.approx(206.1, abs=0.5)


def test_electrochemical_reaction_gives_voltages(capsys):
    main(["calc", "chlor-alkali-cell", "--sources", str(DEMO), "--json"])
    row = json.loads(capsys.readouterr().out)["rows"][0]
    # E = -drG/(nF) by definition; checked against drG from the same row.
    assert row["E"] == pytest.approx(-row["drG"] * 1000 / (2 * 96485.33212), rel=1e-6)
    # Chlor-alkali standard cell voltage magnitude about 2.19 V (common practice, no source).
    assert abs(row["E"]) == pytest.approx(2.19, abs=0.03)


def test_text_output_has_table_crossover_and_caution(capsys):
    assert main(["calc", "lime-burning", "--sources", str(DEMO), "--range",
                 "1000:1200:100"]) == 0
    out = capsys.readouterr().out
    assert "ΔrG° = 0 at" in out and "CAUTION:" in out and "1100.00" in out


def test_K_carries_its_uncertainty_range(capsys):
    main(["calc", "water-atomization", "--sources", str(DEMO), "-T", "3000", "--json"])
    row = json.loads(capsys.readouterr().out)["rows"][0]
    lo, hi = row["K_range"]
    # K range is 10**(log10K -/+ u(log10K)) by definition (GUM standard uncertainty).
    assert lo == pytest.approx(10 ** (row["log10K"] - row["u"]["log10K"]), rel=1e-6)
    assert hi == pytest.approx(10 ** (row["log10K"] + row["u"]["log10K"]), rel=1e-6)
    assert lo < row["K"] < hi


def test_bad_equation_is_located(capsys):
    assert main(["calc", "CH4(g) + 2 O2(g) => CO2(g)", "--sources", str(DEMO)]) == 1
    err = capsys.readouterr().err
    assert err.startswith("<equation>:1:") and "error:" in err and "Traceback" not in err


def test_unknown_species_and_imbalance(capsys):
    assert main(["calc", "CH4(g) -> C2H2(g)", "--sources", str(DEMO)]) == 1
    assert "C2H2(g) is used but not defined" in capsys.readouterr().err
    assert main(["calc", "CH4(g) -> CO(g)", "--sources", str(DEMO)]) == 1
    assert "not balanced" in capsys.readouterr().err


@pytest.mark.parametrize("args", [["-T", "0"], ["-T", "-5"], ["-T", "nan"], ["-T", "inf"],
                                  ["--range", "500:300:10"], ["--range", "3:4"]])
def test_bad_temperatures_are_usage_errors(args, capsys):
    assert main(["calc", "lime-burning", "--sources", str(DEMO), *args]) == 2
    assert "error:" in capsys.readouterr().err


def test_overflowing_K_is_null_in_json_not_infinity(tmp_path: Path, capsys):
    main(["calc", "methane-atomization", "--sources", str(DEMO), "-T", "10", "--json"])
    text = capsys.readouterr().out
    assert "Infinity" not in text and "NaN" not in text
    row = json.loads(text)["rows"][0]
    assert row["K"] is None or row["K"] >= 0
    assert row["log10K"] is not None
