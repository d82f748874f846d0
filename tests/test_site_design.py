"""Design reference on the site: equilibrium conversion, adiabatic temperature and its
process-safety caution, family charts with crossovers, element ladders, cell voltages and
the operating voltage of ``conditions:``.

A small handbook (tests/fixtures/mini plus the reactions below) is built once per module
with a stand-in chart drawer, so no chart is really drawn.
"""

from __future__ import annotations

import html
import importlib
import re
from pathlib import Path

import pytest

from conftest import assemble
from generator.charts import LevelDiagramSpec, LineChartSpec
from generator.cli import main
from generator.compute import compute_handbook
from generator.load import load_handbook
from generator.site import chart_specs

publish_mod = importlib.import_module("generator.site.publish")
EPOCH = "1767225600"  # 2026-01-01T00:00:00Z, an arbitrary fixed build date

HANDBOOK = """title: Design Test Handbook
edition: "d1"
organisation: Test
standard_pressure: 1 bar
temperatures: [298.15, 500, 1000]
adiabatic_caution_K: 200
families:
  oxy:
    title: Oxidations per mole of O2
    per: oxygen
"""
BURNING = """ref: codata-1989
id: burning
name: Hydrogen burning to vapour
equation: "2 H2(g) + O2(g) -> 2 H2O(g)"
family: [oxy]
conditions:
  feeds:
    - {H2: 2, O2: 1}
  pressures: [1 bar, 10 bar]
  T: [2500, 3500]
"""
HALF = """ref: codata-1989
id: half-burning
name: Hydrogen burning, per mole of water
equation: "H2(g) + 1/2 O2(g) -> H2O(g)"
family: [oxy]
"""
VAPORISATION = """ref: codata-1989
id: vaporisation
name: Vaporisation of water
equation: "H2O(l) -> H2O(g)"
family: [oxy, phase-change]
"""
CONDENSATION = """ref: codata-1989
id: condensation
name: Condensation of water
equation: "H2O(g) -> H2O(l)"
family: [phase-change]
"""
FUEL_CELL = """ref: codata-1989
id: fuel-cell
name: Hydrogen fuel cell
equation: "2 H2(g) + O2(g) -> 2 H2O(l)"
electrons: 4
conditions: {voltage: 0.7 V}
"""


def fake_render_many(specs, jobs=1):
    """A deterministic stand-in for the chart drawer: one tiny SVG per spec."""
    return [f'<svg xmlns="http://www.w3.org/2000/svg"><title>{i}</title></svg>'.encode()
            for i, _s in enumerate(specs)]


def make_handbook(root: Path) -> Path:
    assemble(root)
    (root / "handbook.yaml").write_text(HANDBOOK, encoding="utf-8")
    for name, text in (("burning", BURNING), ("half-burning", HALF),
                       ("vaporisation", VAPORISATION), ("condensation", CONDENSATION),
                       ("fuel-cell", FUEL_CELL)):
        (root / "reactions" / f"{name}.yaml").write_text(text, encoding="utf-8")
    return root


@pytest.fixture(scope="module")
def hb_root(tmp_path_factory) -> Path:
    return make_handbook(tmp_path_factory.mktemp("design") / "hb")


@pytest.fixture(scope="module")
def computed(hb_root: Path):
    handbook, findings = load_handbook(hb_root)
    assert handbook is not None, [f.format() for f in findings]
    return compute_handbook(handbook)


@pytest.fixture(scope="module")
def site(hb_root: Path, tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("design-site") / "out"
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("SOURCE_DATE_EPOCH", EPOCH)
        mp.setattr(publish_mod, "render_many", fake_render_many)
        assert main(["build", str(hb_root), "-o", str(out), "-q", "--no-cache"]) == 0
    return out


def text_of(path: Path) -> str:
    """The visible text of a page, whitespace collapsed."""
    s = path.read_text(encoding="utf-8")
    s = re.sub(r"<script.*?</script>", "", s, flags=re.S)
    return " ".join(html.unescape(re.sub(r"<[^>]+>", " ", s)).split())


def test_conversion_chart_has_one_series_per_pressure(computed) -> None:
    entries = {e.name: e for e in chart_specs.reaction_charts(computed.reactions["burning"],
                                                              computed)}
    spec = entries["conversion"].spec
    assert isinstance(spec, LineChartSpec)
    assert [s.label for s in spec.series] == ["P = 1 bar", "P = 10 bar"]
    for s in spec.series:  # over conditions.T = [2500, 3500] K of the fixture
        assert s.x[0] == pytest.approx(2500.0) and s.x[-1] == pytest.approx(3500.0)
    low, high = spec.series
    # Le Chatelier: fewer gas moles on the product side, so more pressure, more conversion
    # (common practice, no source)
    assert all(h >= lo for h, lo in zip(high.y, low.y, strict=True))
    assert "conversion" not in {e.name for e in chart_specs.reaction_charts(
        computed.reactions["fuel-cell"], computed)}  # conditions hold only the voltage


def test_sheet_shows_conversion_table(site: Path) -> None:
    page = site / "reactions" / "burning.html"
    html_text = page.read_text(encoding="utf-8")
    assert 'id="equilibrium"' in html_text and 'id="conversion-table"' in html_text
    text = text_of(page)
    assert "P = 1 bar" in text and "P = 10 bar" in text
    assert "2500.00 – 3500.00 K" in text
    rows = re.findall(r"<tr[^>]*><th scope=\"row\" class=\"num\">(\d+\.\d\d)", html_text)
    assert "2500.00" in rows and "3500.00" in rows
    assert 'id="equilibrium"' not in (site / "reactions" / "fuel-cell.html").read_text(
        encoding="utf-8")


def test_adiabatic_rise_and_process_caution(site: Path) -> None:
    text = text_of(site / "reactions" / "burning.html")
    # 2 H2 + O2 -> 2 H2O(g): 483.652 kJ into 2 mol of vapour at Cp 33.6 J/(mol K) (fixture
    # values) would heat by ~7200 K, so the balance is capped at the search's 6000 K bound
    # (generator.thermo.adiabatic T_MAX; hand calculation)
    assert "T in 298.15 K" in text and "T out 6000.00 K" in text and "Rise 5701.85 K" in text
    assert "Process-safety caution" in text and "runaway potential" in text
    assert "qualified process hazard review" in text
    page = (site / "reactions" / "burning.html").read_text(encoding="utf-8")
    assert 'class="process-caution"' in page
    # vaporisation takes heat in: the outlet is colder, no caution
    vap = (site / "reactions" / "vaporisation.html").read_text(encoding="utf-8")
    assert 'id="adiabatic"' in vap and 'class="process-caution"' not in vap
    assert "stoichiometric reactants" in text_of(site / "reactions" / "vaporisation.html")


def test_family_page_normalises_per_oxygen_and_says_who_is_left_out(site: Path,
                                                                   computed) -> None:
    index = (site / "index.html").read_text(encoding="utf-8")
    assert 'href="families/oxy.html"' in index and 'href="families/phase-change.html"' in index
    text = text_of(site / "families" / "oxy.html")
    assert "Oxidations per mole of O2" in text and "per mol O₂(g)" in text
    # ΔrG°(298.15 K) = 2(−241.826) − 298.15 K × (2·188.835 − 2·130.680 − 205.152) J/K
    # = −457.164 kJ per mol O2 for both equations (fixture values, hand calculation)
    assert text.count("−457.16") >= 2
    assert "Left out of the chart" in text and "Vaporisation of water" in text
    entry = chart_specs.family_chart(computed, "oxy")
    assert isinstance(entry.spec, LineChartSpec)
    assert sorted(s.label for s in entry.spec.series) == [
        "Hydrogen burning to vapour", "Hydrogen burning, per mole of water"]
    assert (site / "families" / "oxy.html").read_text(encoding="utf-8").count("<img") == 1


def test_family_crossover_is_marked(site: Path, computed) -> None:
    """Vaporisation and condensation (no ``per``: per mole of reaction) cross where
    ΔrG° = 0, near the normal boiling point of water, 373.12 K at 1 bar (from memory); the
    fixture's constant Cp values give about 373.2 K (hand calculation)."""
    entry = chart_specs.family_chart(computed, "phase-change")
    assert len(entry.spec.points) == 1
    p = entry.spec.points[0]
    assert 370.0 < p.x < 376.0 and abs(p.y) < 0.5
    text = text_of(site / "families" / "phase-change.html")
    assert "per mole of reaction as written" in text
    m = re.search(r"Condensation of water = Vaporisation of water (\d+\.\d\d)", text)
    assert m and 370.0 < float(m.group(1)) < 376.0


def test_element_ladder(site: Path, computed) -> None:
    index = (site / "index.html").read_text(encoding="utf-8")
    assert 'href="elements/H.html"' in index and 'href="elements/O.html"' in index
    text = text_of(site / "elements" / "H.html")
    # ΔfH° per H atom: H2O(g) −241.826/2, H2O(l) −285.830/2, H2 0 (fixture values)
    assert "−120.913" in text and "−142.915" in text
    o_text = text_of(site / "elements" / "O.html")
    assert "−241.826" in o_text and "−285.830" in o_text
    spec = chart_specs.element_ladder(computed, "H").spec
    assert isinstance(spec, LevelDiagramSpec) and len(spec.column_labels) == 2
    assert {lv.column for lv in spec.levels} == {0, 1}


def test_ladder_past_the_legible_count_is_a_table_with_a_note(computed, monkeypatch) -> None:
    from generator.site import design_pages

    n = len(design_pages.ladder_points(computed, "H"))
    assert n >= 2 and chart_specs.element_ladder(computed, "H") is not None
    monkeypatch.setattr(chart_specs, "LADDER_CHART_MAX", n - 1)
    assert chart_specs.element_ladder(computed, "H") is None
    from generator.site import assets, pages

    site = pages._site(computed, pages.SiteMeta(build_date="2026-01-01", revision="r"))
    ctx = design_pages.element_context(computed, "H", site, ())
    assert ctx["chart_omitted"].startswith(f"{n} species contain H, more than the {n - 1}")
    assert len(ctx["rows"]) == n  # the table still lists every species
    page = assets.environment().get_template("element.html").render(**ctx)
    assert 'id="chart-omitted"' in page and "<img" not in page


def test_cell_voltages_and_efficiency_at_operating_voltage(site: Path) -> None:
    text = text_of(site / "reactions" / "fuel-cell.html")
    # ΔrG° = −571.660 + 298.15 K × 0.326612 kJ/K = −474.281 kJ; E° = 474281/(4 F) = 1.2289 V;
    # Etn = 571660/(4 F) = 1.4812 V, F = 96485.33212 C/mol (CODATA 2018); η_V = 0.7/1.2289,
    # η_th = 0.7/1.4812 for a galvanic cell (hand calculation from the fixture values)
    assert "Cell voltages" in text and "1.2289" in text and "1.4812" in text
    assert "0.7 V" in text and "galvanic" in text
    assert "η V = 57.0 %" in text and "η th = 47.3 %" in text
    page = (site / "reactions" / "fuel-cell.html").read_text(encoding="utf-8")
    assert 'id="cell-table"' in page


def test_voltage_field_is_read_and_checked(tmp_path: Path) -> None:
    root = make_handbook(tmp_path / "ok")
    handbook, _ = load_handbook(root)
    assert handbook.reactions["fuel-cell"].conditions.voltage == pytest.approx(0.7)
    assert handbook.reactions["burning"].conditions.voltage is None
    for bad, code in (("3.1", "type"), ('"3.1 A"', "bad-voltage"), ('"-1 V"', "bad-voltage"),
                      ('"1500 mV"', None)):
        root = make_handbook(tmp_path / f"v{abs(hash(bad))}")
        (root / "reactions" / "fuel-cell.yaml").write_text(
            FUEL_CELL.replace("{voltage: 0.7 V}", f"{{voltage: {bad}}}"), encoding="utf-8")
        handbook, findings = load_handbook(root)
        if code is None:
            assert handbook.reactions["fuel-cell"].conditions.voltage == pytest.approx(1.5)
        else:
            assert handbook is None and code in {f.code for f in findings}, bad


def test_demo_chlor_alkali_has_an_operating_voltage() -> None:
    demo = Path(__file__).resolve().parents[1] / "sources"
    handbook, _ = load_handbook(demo)
    # about 3 V: a typical membrane cell voltage (common practice, no source)
    assert handbook.reactions["chlor-alkali-cell"].conditions.voltage == pytest.approx(3.1)


def test_demo_shows_the_design_reference() -> None:
    """The demo's conditions, adiabatic feed and families (sources/)."""
    from generator.site import design_pages

    demo = Path(__file__).resolve().parents[1] / "sources"
    handbook, _ = load_handbook(demo)
    c = compute_handbook(handbook)
    smr = {e.name: e for e in chart_specs.reaction_charts(c.reactions["steam-methane-reforming"],
                                                          c)}
    assert [s.label for s in smr["conversion"].spec.series] == ["P = 1 bar", "P = 20 bar"]
    nh3 = {e.name: e for e in chart_specs.reaction_charts(c.reactions["ammonia-synthesis"], c)}
    assert len(nh3["conversion"].spec.series) == len(
        handbook.reactions["ammonia-synthesis"].conditions.pressures)
    # methane burnt in stoichiometric air heats by far more than 200 K (common practice,
    # no source): the sheet carries the process-safety caution
    adiabatic = design_pages.adiabatic_context(c.reactions["methane-combustion-vapour"], c)
    assert adiabatic["caution"] and "runaway potential" in adiabatic["caution"]
    fc = design_pages.family_curves(c, "combustion")
    assert fc.family.per == "oxygen" and fc.per_label == "per mol O₂(g)"
