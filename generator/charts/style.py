"""thermofolio's house chart style: plain data, applied only inside ``matplotlib.rc_context``.

Colours come from the Okabe–Ito palette (Okabe & Ito 2008, "Color Universal Design"), which
stays distinguishable under the common colour-vision deficiencies; the assignment of colours
to roles is our own.  Every role also has its own dash pattern and marker, so a chart still
reads when printed in black and white.  Bump ``STYLE_VERSION`` whenever anything here changes:
it is part of every chart's cache key.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

STYLE_VERSION = "tf-style-1"
FONT = "DejaVu Sans"  # ships with matplotlib, so every build measures text the same way

# Okabe–Ito 2008 colours, by their published names.
BLACK = "#000000"
ORANGE = "#E69F00"
SKY_BLUE = "#56B4E9"
BLUISH_GREEN = "#009E73"
BLUE = "#0072B2"
VERMILLION = "#D55E00"
REDDISH_PURPLE = "#CC79A7"
GREY = "#6E6E6E"  # neutral for zero lines and shading edges (not an Okabe–Ito colour)
SHADE = "#EBEBEB"

FIGSIZE = (6.4, 4.0)  # inches; 460 x 288 pt in the SVG
LEVEL_FIGSIZE = (6.4, 4.8)
LINE_WIDTH = 1.6
MARKER_SIZE = 5.5
MARKER_SPACING = 0.11  # markers on a curve at least this fraction of the axes diagonal apart
HATCH = "////"


@dataclass(frozen=True)
class RoleStyle:
    """How one series role is drawn: colour, dash pattern (on/off in line widths), marker."""

    color: str
    dashes: tuple[float, ...]  # () is a solid line
    marker: str
    line: bool = True  # False draws markers only (measured points)
    width: float = LINE_WIDTH


ROLE_STYLES: dict[str, RoleStyle] = {
    # Gibbs chart: ΔrG° stands out; its two parts are quieter and dashed differently.
    "drG": RoleStyle(BLUE, (), "o", width=2.2),
    "drH": RoleStyle(VERMILLION, (5.0, 2.0), "s"),
    "T_drS": RoleStyle(BLUISH_GREEN, (6.0, 1.5, 1.2, 1.5), "^"),
    # Generic series, in the order a chart with several curves uses them.
    "primary": RoleStyle(BLUE, (), "o"),
    "secondary": RoleStyle(VERMILLION, (5.0, 2.0), "s"),
    "tertiary": RoleStyle(BLUISH_GREEN, (6.0, 1.5, 1.2, 1.5), "^"),
    "quaternary": RoleStyle(REDDISH_PURPLE, (1.2, 1.5), "D"),
    "quinary": RoleStyle(ORANGE, (9.0, 2.5), "v"),
    "measured": RoleStyle(BLACK, (), "x", line=False),
}
GENERIC_ROLES: tuple[str, ...] = ("primary", "secondary", "tertiary", "quaternary", "quinary")


@dataclass(frozen=True)
class ArrowStyle:
    """Level-diagram arrow: kinds differ in dash pattern and head shape, not colour alone."""

    color: str
    dashes: tuple[float, ...]
    head: str  # a matplotlib arrowstyle name
    head_fill: bool
    width: float = 1.5


# Deliberately not blue-for-formation / red-for-reaction: formation is black and solid with
# a filled head, reaction is bluish green and dashed with an open chevron, atomization is
# reddish purple and dotted with a hollow triangular head.
ARROW_STYLES: dict[str, ArrowStyle] = {
    "formation": ArrowStyle(BLACK, (), "-|>", head_fill=True),
    "reaction": ArrowStyle(BLUISH_GREEN, (4.0, 2.0), "->", head_fill=False, width=1.8),
    "atomization": ArrowStyle(REDDISH_PURPLE, (1.0, 1.6), "-|>", head_fill=False, width=1.8),
}
CROSSOVER_MARKER = RoleStyle(BLACK, (), "o")


def role_style(role: str) -> RoleStyle:
    """The style of ``role``; an unknown role raises with the list of known ones."""
    try:
        return ROLE_STYLES[role]
    except KeyError:
        raise ValueError(f"unknown series role {role!r}; known: {sorted(ROLE_STYLES)}") from None


def rc_params(hashsalt: str = "thermofolio") -> dict[str, Any]:
    """rcParams for ``matplotlib.rc_context``; ``hashsalt`` fixes the SVG's internal ids."""
    return {
        "font.family": "sans-serif",
        "font.sans-serif": [FONT],
        "font.size": 10.0,
        "axes.titlesize": 11.0,
        "axes.titleweight": "bold",
        "axes.titlelocation": "left",
        "axes.labelsize": 10.0,
        "xtick.labelsize": 9.0,
        "ytick.labelsize": 9.0,
        "legend.fontsize": 9.0,
        "legend.frameon": False,
        "axes.linewidth": 0.8,
        "axes.edgecolor": BLACK,
        "axes.labelcolor": BLACK,
        "axes.spines.top": False,
        "axes.spines.right": False,
        "axes.grid": True,
        "grid.color": "#D9D9D9",
        "grid.linewidth": 0.6,
        "axes.axisbelow": True,
        "lines.linewidth": LINE_WIDTH,
        "lines.markersize": MARKER_SIZE,
        "hatch.color": "#B0B0B0",
        "hatch.linewidth": 0.6,
        "axes.unicode_minus": True,  # U+2212 in tick labels, as typeset tables print it
        "axes.formatter.use_mathtext": False,
        "axes.formatter.useoffset": False,
        "text.parse_math": False,  # a "$" in a name or label stays a dollar sign
        "svg.fonttype": "none",
        "svg.hashsalt": hashsalt,
        "figure.figsize": FIGSIZE,
        "figure.dpi": 100.0,
        "figure.facecolor": "white",
        "savefig.facecolor": "white",
    }
