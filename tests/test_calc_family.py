"""`thermofolio calc --family` on the demo handbook (sources/handbook.yaml: the families
oxidation and combustion, both ``per: oxygen``).

The oracle of every check is the member's own ``calc <reaction id> --json`` (ΔrG° of the
reaction as written and its stoichiometric numbers): an independent code path from the family
code, which normalises and intersects the lines in generator.design.
"""

from __future__ import annotations

import contextlib
import io
import json

import pytest

from conftest import REPO
from generator.caution import CAUTION
from generator.cli import main

DEMO = REPO / "sources"
RANGE = "300:2000:10"  # K; a 10 K grid for the members' own output


def _calc(capsys, *argv: str) -> tuple[int, dict]:
    code = main(["calc", *argv, "--sources", str(DEMO), "--json"])
    return code, json.loads(capsys.readouterr().out)


@pytest.fixture(scope="module")
def oxidation():
    """The family's JSON and each member's own calc JSON over RANGE."""

    def run(*argv: str) -> dict:
        buf = io.StringIO()
        with contextlib.redirect_stdout(buf):
            main(["calc", *argv, "--sources", str(DEMO), "--json"])
        return json.loads(buf.getvalue())

    fam = run("--family", "oxidation", "--range", RANGE)
    own = {m["id"]: run(m["id"], "--range", RANGE) for m in fam["members"]}
    return fam, own


def test_members_are_normalised_per_mole_of_oxygen(oxidation) -> None:
    fam, own = oxidation
    assert fam["family"] == "oxidation" and fam["per"] == "oxygen"
    assert fam["caution"] == CAUTION and fam["skipped"] == []
    # the demo's oxidation members (sources/reactions/*.yaml, family: [oxidation, ...])
    assert [m["id"] for m in fam["members"]] == [
        "ammonia-oxidation", "carbon-monoxide-combustion", "nitric-oxide-oxidation",
        "sulphur-dioxide-oxidation"]
    for m in fam["members"]:
        doc = own[m["id"]]
        nu_O2 = abs(doc["species"]["oxygen"])  # from the member's own calc output
        assert m["nu_per"] == pytest.approx(nu_O2)
        assert [r["T"] for r in m["rows"]] == [r["T"] for r in doc["rows"]]
        for mine, theirs in zip(m["rows"], doc["rows"], strict=True):
            assert mine["drG_per"] == pytest.approx(theirs["drG"] / nu_O2, rel=1e-9)


def test_carbon_monoxide_line_near_298_K(capsys) -> None:
    code, fam = _calc(capsys, "--family", "oxidation", "-T", "298.15")
    assert code == 0
    row = next(m for m in fam["members"] if m["id"] == "carbon-monoxide-combustion")["rows"][0]
    # ΔfG°(CO2, g) = −394.36 and ΔfG°(CO, g) = −137.17 kJ/mol at 298.15 K (Chase 1998,
    # JANAF Thermochemical Tables 4th ed., from memory): (−394.36 + 137.17)/0.5 = −514.38
    assert row["drG_per"] == pytest.approx(-514.38, abs=1.0)
    assert fam["crossings"] == []  # one temperature: no range to cross in


def test_crossings_bracket_a_sign_change(oxidation) -> None:
    fam, own = oxidation
    assert fam["crossings"], "the demo's oxidation lines cross inside 300–2000 K"
    for c in fam["crossings"]:
        assert 300.0 <= c["T"] <= 2000.0
        a, b = own[c["a"]], own[c["b"]]
        na, nb = abs(a["species"]["oxygen"]), abs(b["species"]["oxygen"])
        T = [r["T"] for r in a["rows"]]
        lo = max(i for i, t in enumerate(T) if t <= c["T"])
        hi = min(i for i, t in enumerate(T) if t >= c["T"])
        if hi == lo:  # the crossing sits on a grid point
            lo, hi = max(lo - 1, 0), min(hi + 1, len(T) - 1)
        diff = [ra["drG"] / na - rb["drG"] / nb
                for ra, rb in zip(a["rows"], b["rows"], strict=True)]
        assert diff[lo] * diff[hi] <= 0.0
        assert c["drG_per"] == pytest.approx(a["rows"][lo]["drG"] / na, abs=5.0)


def test_text_output_ends_with_the_caution(capsys) -> None:
    code = main(["calc", "--family", "combustion", "-T", "300", "-T", "1500",
                 "--sources", str(DEMO)])
    out = capsys.readouterr().out
    assert code == 0
    assert "family: combustion" in out and "per mol O₂(g)" in out
    assert out.rstrip().endswith(f"CAUTION: {CAUTION}")


def test_unknown_family_has_a_hint(capsys) -> None:
    code = main(["calc", "--family", "oxidaton", "--sources", str(DEMO)])
    err = capsys.readouterr().err
    assert code == 1
    assert "unknown family 'oxidaton'" in err and "did you mean 'oxidation'" in err


@pytest.mark.parametrize("argv", [[], ["methane-combustion", "--family", "combustion"]])
def test_equation_or_family_not_both(argv, capsys) -> None:
    assert main(["calc", *argv, "--sources", str(DEMO)]) == 2
    assert "--family" in capsys.readouterr().err
