"""Chart drawing: frozen chart specs in, deterministic accessible SVG bytes out.

Importing this package does not import matplotlib; only ``render_svg``, ``render_many`` and
``start_many`` do.
"""

from generator.charts.draw import PendingCharts, chart_id, render_many, render_svg, start_many
from generator.charts.specs import (
    ARROW_KINDS,
    ZERO_LEVEL,
    Arrow,
    ChartSpec,
    EntropyLevelSpec,
    GibbsChartSpec,
    Level,
    LevelDiagramSpec,
    LineChartSpec,
    MarkedPoint,
    Series,
    ShadedRange,
    VantHoffSpec,
    spec_digest,
)
from generator.charts.style import STYLE_VERSION

__all__ = [
    "ARROW_KINDS",
    "PendingCharts",
    "STYLE_VERSION",
    "ZERO_LEVEL",
    "Arrow",
    "ChartSpec",
    "EntropyLevelSpec",
    "GibbsChartSpec",
    "Level",
    "LevelDiagramSpec",
    "LineChartSpec",
    "MarkedPoint",
    "Series",
    "ShadedRange",
    "VantHoffSpec",
    "chart_id",
    "render_many",
    "render_svg",
    "spec_digest",
    "start_many",
]
