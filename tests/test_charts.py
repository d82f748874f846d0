"""Tests for generator.charts: specs, digests, deterministic accessible SVG output."""

from __future__ import annotations

import dataclasses
import hashlib
import json
import os
import struct
import subprocess
import sys
import xml.etree.ElementTree as ET
from functools import cache
from pathlib import Path

import numpy as np
import pytest

from generator.charts import (
    Arrow,
    EntropyLevelSpec,
    GibbsChartSpec,
    Level,
    LevelDiagramSpec,
    LineChartSpec,
    MarkedPoint,
    Series,
    ShadedRange,
    VantHoffSpec,
    render_many,
    render_svg,
    spec_digest,
    start_many,
)
from generator.charts import style as house

ROOT = Path(__file__).resolve().parents[1]
SVG = "{http://www.w3.org/2000/svg}"

# Illustrative CaCO3(cr) = CaO(cr) + CO2(g): drH ~ 178 kJ/mol, drS ~ 160.5 J/(mol K)
# (from memory); only the shape matters here, so drH and drS are held constant.
DRH, DRS = 178.0, 0.1605
TEMPS = tuple(300.0 + 50.0 * i for i in range(35))  # 300 K ... 2000 K


def gibbs_spec(bump: float = 0.0) -> GibbsChartSpec:
    drG = [DRH - T * DRS for T in TEMPS]
    drG[5] += bump
    return GibbsChartSpec(
        title="CaCO₃(cr) → CaO(cr) + CO₂(g)",
        description="ΔrG° falls with T and crosses zero near 1109 K.",
        T=TEMPS,
        drG=tuple(drG),
        drH=tuple(DRH for _ in TEMPS),
        T_drS=tuple(T * DRS for T in TEMPS),
        crossovers=(MarkedPoint(DRH / DRS, 0.0, "ΔrG° = 0 at 1109 K"),),
        extrapolated=(ShadedRange(1500.0, 2000.0, "extrapolated"),),
    )


def line_spec() -> LineChartSpec:
    return LineChartSpec(
        title="CO₂(g): Cp°(T)",
        description="Heat capacity of CO₂(g) from 300 K to 2000 K: Cp < 60 & rising.",
        x_label="T / K",
        y_label="Cp° / (J mol⁻¹ K⁻¹)",
        # A "$" pair must stay literal text, never mathtext.
        series=(Series("A$_2$ fit", TEMPS, tuple(37.0 + 0.01 * (T - 300.0) for T in TEMPS)),),
        shaded=(ShadedRange(1500.0, 2000.0),),
    )


def vant_hoff_spec() -> VantHoffSpec:
    log10_K = tuple(-(DRH - T * DRS) * 1000.0 / (8.314462618 * T * 2.302585093) for T in TEMPS)
    return VantHoffSpec(
        title="log₁₀ K of CaCO₃ decomposition",
        description="log₁₀ K rises linearly with falling 1000/T.",
        T=TEMPS,
        log10_K=log10_K,
    )


def level_spec() -> LevelDiagramSpec:
    # dfH values, kJ/mol: CH4(g) -74.6, CO2(g) -393.51, H2O(l) -285.83 (CODATA Key Values for
    # Thermodynamics, 1989, from memory); here they only place the levels.
    return LevelDiagramSpec(
        title="Combustion of methane",
        description="Hess cycle: formation of reactants and products from the elements.",
        levels=(
            Level("reactants", "CH₄(g) + 2 O₂(g)", -74.6, 0),
            Level("products", "CO₂(g) + 2 H₂O(l)", -965.17, 1),
        ),
        arrows=(
            Arrow("zero", "reactants", "formation", "ΔfH°"),
            Arrow("zero", "products", "formation", "ΣΔfH°"),
            Arrow("reactants", "products", "reaction", "ΔrH°"),
        ),
    )


def entropy_spec() -> EntropyLevelSpec:
    # S° / (J mol⁻¹ K⁻¹): C(cr, graphite) 5.74, CO2(g) 213.785 (CODATA 1989, from memory).
    return EntropyLevelSpec(
        title="Absolute entropies",
        description="Standard entropies at 298.15 K measured from S = 0.",
        levels=(Level("c", "C(cr)", 5.74, 0), Level("co2", "CO₂(g)", 213.785, 1)),
    )


BUILDERS = {
    "line": line_spec,
    "gibbs": gibbs_spec,
    "vant_hoff": vant_hoff_spec,
    "levels": level_spec,
    "entropy_levels": entropy_spec,
}


@cache
def drawn(kind: str) -> bytes:
    """Each kind is drawn once per test session (a chart costs ~0.1 s)."""
    return render_svg(BUILDERS[kind]())


def group(root: ET.Element, gid: str) -> ET.Element:
    found = root.find(f".//{SVG}g[@id='{gid}']")
    assert found is not None, f"no <g id={gid!r}> in the SVG"
    return found


def texts(root: ET.Element) -> str:
    return "\n".join("".join(t.itertext()) for t in root.iter(f"{SVG}text"))


def dasharray(g: ET.Element) -> str:
    styles = [p.get("style", "") for p in g.iter(f"{SVG}path")]
    assert styles, "group has no path"
    for decl in styles[0].split(";"):
        name, _, value = decl.partition(":")
        if name.strip() == "stroke-dasharray":
            return value.strip()
    return "none"


# --- specs and digests -----------------------------------------------------------------------


def test_spec_is_hashable_and_rebuilt_equal_gives_same_digest() -> None:
    a, b = gibbs_spec(), gibbs_spec()
    assert a == b and hash(a) == hash(b)
    assert spec_digest(a, "v1") == spec_digest(b, "v1")
    # Lists are normalised to tuples, so the spec built from lists is the same spec.
    c = dataclasses.replace(a, T=list(a.T), drG=list(a.drG))
    assert c == a and spec_digest(c, "v1") == spec_digest(a, "v1")


def test_digest_changes_with_data_style_version() -> None:
    base = spec_digest(gibbs_spec(), "v1")
    assert spec_digest(gibbs_spec(bump=0.5), "v1") != base
    assert spec_digest(gibbs_spec(), "v2") != base
    assert len(base) == 64 and int(base, 16) >= 0


def test_canonical_json_sorted_and_rounded() -> None:
    spec = LineChartSpec("t", "d", "x", "y", (Series("s", (1 / 3, -0.0), (2.0, 1e-30)),))
    text = spec.to_canonical_json()
    data = json.loads(text)
    assert data["kind"] == "line"
    assert list(data) == sorted(data)
    # 1/3 is 0x1.5555555555555p-2; kept to 40 mantissa bits the dropped 12 bits (0x555)
    # are below half (0x800), so it rounds down to 0x1.5555555555000p-2 (arithmetic by
    # hand); -0.0 is written as 0.0; 2.0 is exact.
    assert data["series"][0]["x"] == [float.fromhex("0x1.5555555555000p-2"), 0.0]
    assert data["series"][0]["y"][0] == 2.0
    assert text == json.dumps(data, sort_keys=True, separators=(",", ":"), ensure_ascii=False)


def test_rounding_keeps_40_mantissa_bits_half_away_from_zero() -> None:
    # Values whose dropped bits are exactly half round away from zero (hand-made patterns).
    up = float.fromhex("0x1.0000000000800p+0")  # dropped bits 0x800: exactly half
    assert Series("s", (up, -up), (0.0, 0.0)).x == (float.fromhex("0x1.0000000001000p+0"),
                                                   -float.fromhex("0x1.0000000001000p+0"))
    # A carry out of the mantissa moves into the exponent: just under 2 rounds to 2.
    assert Series("s", (float.fromhex("0x1.fffffffffffffp+0"), 1.0), (0.0, 0.0)).x[0] == 2.0
    rng = np.random.default_rng(7)
    values = rng.standard_normal(500) * 10.0 ** rng.integers(-30, 30, 500)
    got = Series("s", values, values).x
    for v, r in zip(values.tolist(), got, strict=True):
        assert abs(r - v) <= abs(v) * 2.0**-40  # within half a step of 2**-40 of |v|
        mantissa = float.hex(r).split(".")[1].split("p")[0].ljust(13, "0")  # 52 bits
        assert int(mantissa, 16) & 0xFFF == 0  # the 12 dropped bits are clear
    assert Series("s", got, got).x == got  # rounding a rounded value changes nothing


def test_numpy_and_plain_rounding_give_the_same_bits() -> None:
    rng = np.random.default_rng(11)
    values = np.concatenate([rng.standard_normal(300) * 1e3, [0.0, -0.0, 5e-324, 1e308]])
    from_array = Series("s", values, values).y
    from_tuple = Series("s", tuple(values.tolist()), tuple(values.tolist())).y
    assert [struct.pack("<d", v) for v in from_array] == [struct.pack("<d", v)
                                                          for v in from_tuple]
    a = LineChartSpec("t", "d", "x", "y", (Series("s", values, values),))
    b = LineChartSpec("t", "d", "x", "y", (Series("s", list(values), list(values)),))
    assert a == b and spec_digest(a, "v1") == spec_digest(b, "v1")
    with pytest.raises(ValueError):
        Series("s", np.array([1.0, 1.7976931348623157e308]), np.array([1.0, 2.0]))


def test_canonical_bytes_tell_apart_what_json_tells_apart() -> None:
    def line(**kw) -> LineChartSpec:
        base = {"title": "t", "description": "d", "x_label": "x", "y_label": "y",
                "series": (Series("s", (1.0, 2.0), (3.0, 4.0)),)}
        return LineChartSpec(**{**base, **kw})

    variants = [
        line(), line(title="t "), line(x_label="xy", y_label=""),
        line(series=(Series("s", (1.0, 2.0), (3.0, 4.5)),)),
        line(series=(Series("s", (1.0, 2.0), (3.0, 4.0), "secondary"),)),
        line(series=(Series("s", (1.0, 2.0), (3.0, 4.0)), Series("s", (1.0, 2.0), (3.0, 4.0)))),
        line(points=(MarkedPoint(1.0, 2.0),)), line(shaded=(ShadedRange(1.0, 2.0),)),
    ]
    blobs = [v.canonical_bytes() for v in variants]
    texts = [v.to_canonical_json() for v in variants]
    assert len(set(texts)) == len(texts) and len(set(blobs)) == len(blobs)
    assert line().canonical_bytes() == line().canonical_bytes()
    from generator.charts.specs import _encode

    def encoded(value) -> bytes:
        out: list[bytes] = []
        _encode(value, out)
        return b"".join(out)

    # mappings by sorted key (as the JSON text sorts them); 1 and 1.0 and "1" stay apart
    assert encoded({"b": 1.0, "a": (2.0,)}) == encoded({"a": (2.0,), "b": 1.0})
    assert len({encoded(1), encoded(1.0), encoded("1"), encoded(True), encoded(None)}) == 5
    # Two kinds with the same field values differ by kind.
    levels = (Level("a", "A", 1.0),)
    assert LevelDiagramSpec("t", "d", levels).canonical_bytes() != \
        EntropyLevelSpec("t", "d", levels, unit_label="H° / (kJ mol⁻¹)",
                         zero_label="elements in reference states").canonical_bytes()


@pytest.mark.parametrize(
    "build",
    [
        lambda: Series("s", (1.0, 2.0), (1.0,)),
        lambda: Series("s", (1.0, float("nan")), (1.0, 2.0)),
        lambda: ShadedRange(2.0, 1.0),
        lambda: Arrow("a", "b", "sublimation"),
        lambda: LevelDiagramSpec("t", "d", (Level("a", "A", 1.0),), (Arrow("a", "b", "reaction"),)),
        lambda: EntropyLevelSpec("t", "d", (Level("a", "A", -1.0),)),
    ],
    ids=["lengths", "nan", "empty-range", "arrow-kind", "unknown-level", "negative-S"],
)
def test_invalid_specs_are_refused(build) -> None:
    with pytest.raises(ValueError):
        build()


def test_import_does_not_import_matplotlib() -> None:
    code = (
        "import sys, generator.charts as c\n"
        "s = c.Series('a', (1.0, 2.0), (3.0, 4.0))\n"
        "c.spec_digest(c.LineChartSpec('t', 'd', 'x', 'y', (s,)))\n"
        "print(sorted(m for m in sys.modules if m.split('.')[0] in ('matplotlib', 'numpy')))\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True
    )
    assert out.stdout.strip() == "[]"


# --- drawing ---------------------------------------------------------------------------------


@pytest.mark.parametrize("kind", list(BUILDERS))
def test_each_kind_is_valid_accessible_svg(kind: str) -> None:
    spec = BUILDERS[kind]()
    root = ET.fromstring(drawn(kind))
    assert root.tag == f"{SVG}svg"
    assert root.get("role") == "img"
    first, second = list(root)[:2]
    assert first.tag == f"{SVG}title" and first.text == spec.title
    assert second.tag == f"{SVG}desc" and second.text == spec.description
    assert root.get("aria-labelledby") == f"{first.get('id')} {second.get('id')}"


def test_same_spec_gives_identical_bytes() -> None:
    assert render_svg(gibbs_spec()) == drawn("gibbs")


def test_identical_bytes_in_a_fresh_process() -> None:
    code = (
        "import hashlib, sys\n"
        f"sys.path.insert(0, {str(ROOT / 'tests')!r})\n"
        "import test_charts as t\n"
        "from generator.charts import render_svg\n"
        "print(hashlib.sha256(render_svg(t.gibbs_spec())).hexdigest())\n"
    )
    env = {**os.environ, "PYTHONHASHSEED": "12345"}
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True, env=env
    )
    assert out.stdout.strip() == hashlib.sha256(drawn("gibbs")).hexdigest()


def test_changed_point_changes_bytes() -> None:
    assert render_svg(gibbs_spec(bump=20.0)) != drawn("gibbs")


def test_gibbs_chart_structure() -> None:
    spec = gibbs_spec()
    root = ET.fromstring(drawn("gibbs"))
    words = texts(root)
    for label in (spec.x_label, spec.y_label, "ΔrG°", "ΔrH°", "T·ΔrS°", "ΔrG° = 0 at 1109 K"):
        assert label in words
    assert list(group(root, "crossover-0").iter(f"{SVG}use")), "crossover marker not drawn"
    assert list(group(root, "extrapolated-0").iter(f"{SVG}path"))


def test_dollar_signs_stay_literal_text() -> None:
    assert "A$_2$ fit" in texts(ET.fromstring(drawn("line")))


def test_level_arrows_differ_by_dashes_and_heads() -> None:
    root = ET.fromstring(drawn("levels"))
    formation = dasharray(group(root, "arrow-formation-0"))
    reaction = dasharray(group(root, "arrow-reaction-0"))
    assert formation == "none" and reaction != "none"
    group(root, "arrow-formation-1")
    group(root, "arrow-formation-0-head")
    # Project rule (brief): not the blue-formation / red-reaction scheme; heads differ in shape.
    arrows = house.ARROW_STYLES
    assert arrows["formation"].color != house.BLUE
    assert arrows["reaction"].color not in (house.VERMILLION, "#FF0000")
    assert (arrows["formation"].head, arrows["formation"].head_fill) != (
        arrows["reaction"].head,
        arrows["reaction"].head_fill,
    )
    assert "elements in" in texts(root)


def test_entropy_diagram_has_zero_baseline_label() -> None:
    root = ET.fromstring(drawn("entropy_levels"))
    assert "S = 0" in texts(root)
    group(root, "zero-line")


def test_render_many_keeps_order_and_bytes() -> None:
    specs = [level_spec(), gibbs_spec()]
    assert render_many(specs, jobs=2) == [drawn("levels"), drawn("gibbs")]
    assert render_many(specs[:1], jobs=1) == [drawn("levels")]


def test_charts_started_in_a_pool_are_waited_for_in_order_or_cancelled() -> None:
    """start_many returns at once (the pool is started by a thread of its own) and its
    result is render_svg's bytes in order; a cancelled drawing has no result."""
    specs = [gibbs_spec(), level_spec(), gibbs_spec(0.5)]
    pending = start_many(specs, 2)
    seen: list[int] = []
    assert pending.result(seen.append) == [drawn("gibbs"), drawn("levels"),
                                           render_svg(gibbs_spec(0.5))]
    assert seen[-1] == 3 and seen == sorted(seen)
    pending = start_many(specs, 2)
    pending.cancel()
    with pytest.raises(RuntimeError, match="cancelled"):
        pending.result()
    assert start_many(specs[:1], 1).result() == [drawn("gibbs")]  # one job: drawn here
