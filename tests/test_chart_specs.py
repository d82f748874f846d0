"""Tests for generator.site.chart_specs: computed demo results in, chart specs out."""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest

from generator.charts.specs import (
    ZERO_LEVEL,
    EntropyLevelSpec,
    GibbsChartSpec,
    LevelDiagramSpec,
    LineChartSpec,
    VantHoffSpec,
)
from generator.compute import Computed, compute_handbook
from generator.load import load_handbook
from generator.site.chart_specs import (
    ChartEntry,
    coefficient,
    extrapolated_ranges,
    fmt,
    reaction_charts,
    species_charts,
    species_label,
)

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def computed() -> Computed:
    hb, _ = load_handbook(ROOT / "sources")
    return compute_handbook(hb)


def _by_name(entries: list[ChartEntry]) -> dict[str, ChartEntry]:
    names = [e.name for e in entries]
    assert len(set(names)) == len(names), names
    return {e.name: e for e in entries}


def _dfH(computed: Computed, sid: str) -> float:
    """The preferred dfH, read from the species' Value objects by hand."""
    values = computed.handbook.species[sid].standard["dfH"].values
    marked = [v for v in values if v.preferred]
    return (marked[0] if marked else min(values, key=lambda v: v.unc or math.inf)).value


def _S(computed: Computed, sid: str) -> float:
    values = computed.handbook.species[sid].standard["S"].values
    marked = [v for v in values if v.preferred]
    return (marked[0] if marked else min(values, key=lambda v: v.unc or math.inf)).value


# --- chart names ------------------------------------------------------------------------------


def test_every_species_gets_the_expected_charts(computed: Computed) -> None:
    for sid, sr in computed.species.items():
        charts = _by_name(species_charts(sr, computed))
        sp = sr.species
        if sp.cp:
            assert {"cp", "s", "h"} <= set(charts), sid
            assert isinstance(charts["cp"].spec, LineChartSpec)
            assert charts["cp"].spec.series[0].x[0] == pytest.approx(sp.Tmin)
            assert charts["cp"].spec.series[0].x[-1] == pytest.approx(sp.Tmax)
        else:
            assert not {"cp", "s", "h"} & set(charts), sid
        for entry in charts.values():
            assert entry.caption and entry.spec.title and entry.spec.description
        if "levels-h" in charts:
            assert isinstance(charts["levels-h"].spec, LevelDiagramSpec)


def test_every_finite_reaction_gets_gibbs_and_vant_hoff(computed: Computed) -> None:
    for rid, rr in computed.reactions.items():
        charts = _by_name(reaction_charts(rr, computed))
        c = rr.curve
        if all(np.all(np.isfinite(a)) for a in (c.drG, c.drH, c.TdrS, c.log10K)):
            assert {"gibbs", "vant-hoff"} <= set(charts), rid
            assert isinstance(charts["gibbs"].spec, GibbsChartSpec)
            assert isinstance(charts["vant-hoff"].spec, VantHoffSpec)
        assert {"levels-h", "levels-g", "levels-s"} <= set(charts), rid


def test_non_finite_curve_skips_the_line_charts(computed: Computed) -> None:
    rr = computed.reactions["boudouard"]
    drG = np.array(rr.curve.drG, dtype=float)
    drG[3] = np.nan
    broken = dataclasses.replace(rr, curve=dataclasses.replace(rr.curve, drG=drG))
    names = {e.name for e in reaction_charts(broken, computed)}
    assert "gibbs" not in names
    assert "levels-h" in names


# --- the Gibbs chart of lime burning ------------------------------------------------------------


def test_lime_burning_crossover(computed: Computed) -> None:
    rr = computed.reactions["lime-burning"]
    spec = _by_name(reaction_charts(rr, computed))["gibbs"].spec
    assert isinstance(spec, GibbsChartSpec)
    assert len(spec.crossovers) == 1
    (pt,) = spec.crossovers
    assert pt.y == 0.0
    assert pt.x == pytest.approx(rr.crossover_T[0], abs=1e-3)
    # Calcite decomposes at 1 bar CO2 near 1170 K (from memory).
    assert pt.x == pytest.approx(1170.0, abs=40.0)
    # CaCO3/CaO fits end at 1200 K (the demo's Cp data), so 1200-1500 K is shaded.
    assert spec.extrapolated and spec.extrapolated[-1].x_max == pytest.approx(1500.0)
    assert spec.extrapolated[-1].x_min == pytest.approx(1200.0)
    assert spec.description.count("1169 K") == 1


def test_crossovers_outside_the_curve_are_not_marked(computed: Computed) -> None:
    rr = computed.reactions["carbon-monoxide-combustion"]
    spec = _by_name(reaction_charts(rr, computed))["gibbs"].spec
    assert isinstance(spec, GibbsChartSpec)
    assert rr.crossover_T and all(t > max(spec.T) for t in rr.crossover_T)
    assert spec.crossovers == ()


# --- level diagrams -----------------------------------------------------------------------------


def test_reaction_enthalpy_levels_are_hess_sums(computed: Computed) -> None:
    spec = _by_name(reaction_charts(computed.reactions["steam-methane-reforming"],
                                    computed))["levels-h"].spec
    assert isinstance(spec, LevelDiagramSpec)
    levels = {lv.key: lv for lv in spec.levels}
    reactants = _dfH(computed, "methane") + _dfH(computed, "water-gas")
    products = _dfH(computed, "carbon-monoxide") + 3 * _dfH(computed, "hydrogen")
    assert levels["reactants"].value == pytest.approx(reactants, abs=1e-9)
    assert levels["products"].value == pytest.approx(products, abs=1e-9)
    assert levels["reactants"].label == "CH₄(g) + H₂O(g)"
    assert levels["products"].label == "CO(g) + 3 H₂(g)"
    # Steam reforming of methane, drH(298.15 K) about +206 kJ/mol (from memory).
    assert products - reactants == pytest.approx(206.0, abs=1.5)
    kinds = sorted((a.from_level, a.to_level, a.kind) for a in spec.arrows)
    assert kinds == [("reactants", "products", "reaction"),
                     (ZERO_LEVEL, "products", "formation"),
                     (ZERO_LEVEL, "reactants", "formation")]


def test_lime_burning_levels_h_g_s(computed: Computed) -> None:
    charts = _by_name(reaction_charts(computed.reactions["lime-burning"], computed))
    h = {lv.key: lv.value for lv in charts["levels-h"].spec.levels}
    assert h["reactants"] == pytest.approx(_dfH(computed, "calcite"), abs=1e-9)
    assert h["products"] == pytest.approx(
        _dfH(computed, "calcium-oxide") + _dfH(computed, "carbon-dioxide"), abs=1e-9)
    # dfG at 298.15 K: dfH - T (S - sum of the elements' S), elements' S by hand.
    S_el = {el: _S(computed, computed.element_refs[el].id) for el in ("Ca", "C", "O")}
    T = 298.15
    dfG_calcite = _dfH(computed, "calcite") - T * (
        _S(computed, "calcite") - S_el["Ca"] - S_el["C"] - 1.5 * S_el["O"]) / 1000.0
    g = {lv.key: lv.value for lv in charts["levels-g"].spec.levels}
    assert g["reactants"] == pytest.approx(dfG_calcite, abs=1e-6)
    s_spec = charts["levels-s"].spec
    assert isinstance(s_spec, EntropyLevelSpec)
    s = {lv.key: lv.value for lv in s_spec.levels}
    assert s["reactants"] == pytest.approx(_S(computed, "calcite"), abs=1e-9)
    assert s["products"] == pytest.approx(
        _S(computed, "calcium-oxide") + _S(computed, "carbon-dioxide"), abs=1e-9)
    assert [a.kind for a in s_spec.arrows] == ["reaction"]


def test_species_levels_with_atoms(computed: Computed) -> None:
    spec = _by_name(species_charts(computed.species["methane"], computed))["levels-h"].spec
    levels = {lv.key: lv for lv in spec.levels}
    assert levels["species"].label == "CH₄(g)"
    assert levels["species"].value == pytest.approx(_dfH(computed, "methane"), abs=1e-9)
    atoms = _dfH(computed, "carbon-atom") + 4 * _dfH(computed, "hydrogen-atom")
    assert levels["atoms"].value == pytest.approx(atoms, abs=1e-9)
    assert levels["atoms"].label == "C(g) + 4 H(g)"
    # Atomization of methane about 1663 kJ/mol at 298.15 K (from memory, Chase 1998).
    assert atoms - levels["species"].value == pytest.approx(1663.0, abs=3.0)
    assert {a.kind for a in spec.arrows} == {"formation", "atomization"}
    formation = next(a for a in spec.arrows if a.kind == "formation")
    assert formation.label == "ΔfH° = −74.87 kJ/mol"


def test_ions_get_no_atoms_level(computed: Computed) -> None:
    # Atomization to neutral atoms does not balance the charge.
    spec = _by_name(species_charts(computed.species["hydroxide-ion-aq"], computed))
    assert [lv.key for lv in spec["levels-h"].spec.levels] == ["species"]
    assert spec["levels-h"].spec.levels[0].label == "OH⁻(aq)"


# --- helpers, determinism, rendering ------------------------------------------------------------


def test_text_helpers(computed: Computed) -> None:
    assert fmt(-74.873) == "\u221274.87"
    assert fmt(-0.001) == "0.00"
    assert coefficient(1.0) == "" and coefficient(3.0) == "3" and coefficient(0.5) == "½"
    assert coefficient(3.5) == "3½"
    assert species_label(computed.handbook.species["calcite"]) == "CaCO₃(cr, calcite)"


def test_extrapolated_ranges() -> None:
    T = [300.0, 400.0, 500.0, 600.0, 700.0]
    flags = [True, False, False, True, True]
    ranges = extrapolated_ranges(T, flags, (350.0, 550.0))
    assert [(r.x_min, r.x_max) for r in ranges] == [(300.0, 350.0), (550.0, 700.0)]
    assert extrapolated_ranges(T, [False] * 5, None) == ()
    mid = extrapolated_ranges(T, [False, False, True, False, False], None)
    assert [(r.x_min, r.x_max) for r in mid] == [(450.0, 550.0)]


def test_specs_are_deterministic(computed: Computed) -> None:
    hb, _ = load_handbook(ROOT / "sources")
    again = compute_handbook(hb)

    def texts(c: Computed) -> list[str]:
        out = []
        for sr in c.species.values():
            out += [e.name + e.caption + e.spec.to_canonical_json()
                    for e in species_charts(sr, c)]
        for rr in c.reactions.values():
            out += [e.name + e.caption + e.spec.to_canonical_json()
                    for e in reaction_charts(rr, c)]
        return out

    assert texts(computed) == texts(again)


def test_render_gibbs_and_entropy_levels(computed: Computed) -> None:
    from generator.charts import render_svg

    charts = _by_name(reaction_charts(computed.reactions["lime-burning"], computed))
    svg = render_svg(charts["gibbs"].spec).decode("utf-8")
    assert 'id="crossover-0"' in svg
    assert ">T / K<" in svg
    assert "ΔrG° = 0 at 1169 K" in svg
    svg_s = render_svg(charts["levels-s"].spec).decode("utf-8")
    assert 'id="arrow-reaction-0"' in svg_s
    assert "CaCO₃(cr, calcite)" in svg_s
