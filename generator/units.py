"""Units of the source files, checked and converted with pint.

pint does the dimension algebra and conversion (it knows the thermochemical calorie, bar,
atm, Pa); this module only maps the handbook's written forms onto it and names the
canonical unit of each dimension.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass

CANONICAL = {
    "energy": "kJ/mol",
    "entropy": "J/(mol*K)",
    "pressure": "Pa",
    "temperature": "K",
    "none": "",
}
_PINT_CANONICAL = {
    "energy": "kJ/mol",
    "entropy": "J/mol/K",
    "pressure": "Pa",
    "temperature": "K",
}
EXAMPLES = {
    "energy": "kJ/mol",
    "entropy": "J/(mol*K)",
    "pressure": "bar",
    "temperature": "K",
}


class UnitError(ValueError):
    def __init__(self, message: str, hint: str | None = None):
        super().__init__(message)
        self.message, self.hint = message, hint


@functools.lru_cache(maxsize=1)
def _registry():
    import pint

    return pint.UnitRegistry(autoconvert_offset_to_baseunit=False)


def _normalise(unit: str) -> str:
    u = unit.strip().replace("·", "*").replace("⋅", "*").replace("−", "-")
    # "J K-1 mol-1" style: exponent written without ^
    u = re.sub(r"([A-Za-z])(-?\d)\b", r"\1^\2", u)
    u = re.sub(r"\s+", "*", u)
    return u.replace("**", "*").replace("*/", "/").replace("/*", "/")


# The spellings most handbooks use, with the factors pint gives for them (a test holds the
# two equal), so a handbook written in them never pays for building pint's registry.
COMMON = {
    "energy": {"kJ/mol": 1.0, "J/mol": 0.001, "kcal/mol": 4.184, "cal/mol": 0.004184},
    "entropy": {"J/(mol*K)": 1.0, "J/mol/K": 1.0, "J/(mol K)": 1.0, "J mol-1 K-1": 1.0,
                "J K-1 mol-1": 1.0, "cal/(mol*K)": 4.184, "cal/mol/K": 4.184},
    "pressure": {"Pa": 1.0, "kPa": 1000.0, "MPa": 1000000.0, "bar": 100000.0,
                 "atm": 101325.0},
}


@functools.lru_cache(maxsize=256)
def to_canonical_factor(unit: str, dimension: str) -> float:
    """Factor that converts a value written in ``unit`` to the canonical unit of
    ``dimension`` (energy, entropy, pressure); raises UnitError with a hint."""
    common = COMMON.get(dimension, {}).get(unit.strip())
    if common is not None:
        return common
    return _pint_factor(unit, dimension)


def _pint_factor(unit: str, dimension: str) -> float:
    """to_canonical_factor by pint's dimension algebra."""
    if dimension == "none":
        if unit.strip() in ("", "1", "dimensionless"):
            return 1.0
        raise UnitError(f"'{unit}' given for a dimensionless quantity", "write no unit")
    if not unit.strip():
        raise UnitError("value has no unit", f"write it with a unit, e.g. {EXAMPLES[dimension]}")
    reg = _registry()
    try:
        q = reg.Quantity(1.0, _normalise(unit))
        return float(q.to(_PINT_CANONICAL[dimension]).magnitude)
    except Exception as exc:  # pint raises several unrelated classes for bad text
        name = type(exc).__name__
        if "Dimensionality" in name:
            raise UnitError(
                f"unit '{unit}' is not a unit of {dimension_label(dimension)}",
                f"expected something like {EXAMPLES[dimension]}",
            ) from None
        raise UnitError(
            f"unknown unit '{unit}'", f"expected something like {EXAMPLES[dimension]}"
        ) from None


def dimension_label(dimension: str) -> str:
    return {
        "energy": "molar energy",
        "entropy": "molar entropy or heat capacity",
        "pressure": "pressure",
        "temperature": "temperature",
    }.get(dimension, dimension)


_NUMBER = r"[-+−]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+−]?\d+)?"
_COMPACT = re.compile(
    rf"^\s*(?P<value>{_NUMBER})\s*(?:(?:±|\+-|\+/-)\s*(?P<unc>{_NUMBER}))?\s*(?P<unit>.*?)\s*$"
)


@dataclass(frozen=True)
class Written:
    """A number as written in a compact string, before unit conversion."""

    value: float
    unc: float | None
    unit: str


def parse_compact(text: str) -> Written:
    """Parse ``"-285.83 ± 0.04 kJ/mol"`` (``+-`` and ``+/-`` accepted for ``±``)."""
    m = _COMPACT.match(text)
    if not m:
        raise UnitError(
            f"cannot read '{text}' as a value", 'write "<number> ± <uncertainty> <unit>"'
        )

    def num(s: str) -> float:
        return float(s.replace("−", "-"))

    unc = num(m["unc"]) if m["unc"] else None
    return Written(num(m["value"]), unc, m["unit"])


def parse_pressure(text: str | float | int) -> float:
    """A pressure such as ``1 bar`` or ``101325 Pa`` in Pa."""
    if isinstance(text, bool):
        raise UnitError("a pressure must be a number with a unit", "write e.g. 1 bar")
    if isinstance(text, int | float):
        raise UnitError("a pressure needs a unit", "write e.g. 1 bar or 101325 Pa")
    w = parse_compact(str(text))
    return w.value * to_canonical_factor(w.unit, "pressure")
