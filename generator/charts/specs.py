"""Chart specs: frozen, hashable plain data, one class per chart kind.

A spec holds only strings, floats and tuples of them, so it is hashable and has one canonical
byte form (``canonical_bytes``, which ``spec_digest`` hashes) and a canonical JSON text.
Numbers are rounded to ``MANTISSA_BITS`` bits of binary mantissa (about twelve significant
digits) when the spec is built, so the spec that is drawn is exactly the spec that is hashed
and last-bit noise of the arithmetic does not change a digest.  The rounding is exact bit
arithmetic (round half away from zero on the float64 pattern), done with numpy when the
values come as a numpy array and with ``struct`` otherwise; both give the same bits.  Nothing
here imports matplotlib or numpy: a build whose charts are all cached needs only this module.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import math
import struct
import sys
from collections.abc import Iterable
from dataclasses import dataclass
from functools import cache, lru_cache
from importlib import metadata
from typing import Any, ClassVar

MANTISSA_BITS = 40  # of float64's 52: relative step 2**-40, about 12 significant digits
ZERO_LEVEL = "zero"  # level key of the diagram's baseline (elements in reference states, S = 0)
ARROW_KINDS: tuple[str, ...] = ("formation", "reaction", "atomization")

_DROP = 52 - MANTISSA_BITS
_HALF = 1 << (_DROP - 1)
_MASK = 0xFFFF_FFFF_FFFF_FFFF ^ ((1 << _DROP) - 1)


def _round_floats(floats: list[float]) -> tuple[float, ...]:
    """Finite floats rounded to MANTISSA_BITS (half away from zero: add half of the dropped
    bits to the bit pattern, clear them; a carry moves into the exponent as it should)."""
    n = len(floats)
    bits = struct.unpack(f"<{n}Q", struct.pack(f"<{n}d", *floats))
    out = struct.unpack(f"<{n}d", struct.pack(f"<{n}Q", *[(b + _HALF) & _MASK for b in bits]))
    return tuple([x + 0.0 for x in out])  # -0.0 becomes 0.0


def _round_array(values) -> tuple[float, ...] | None:
    """``_round_floats`` of a 1-D numpy float array, with numpy (already imported by whoever
    made the array); None when a value is not finite or the rounding overflows."""
    np = sys.modules["numpy"]
    a = np.ascontiguousarray(values, dtype=np.float64).ravel()
    if not bool(np.isfinite(a).all()):
        return None
    bits = (a.view(np.uint64) + np.uint64(_HALF)) & np.uint64(_MASK)
    out = bits.view(np.float64) + 0.0
    if not bool(np.isfinite(out).all()):
        return None
    return tuple(out.tolist())


def _num(value: Any, what: str) -> float:
    """One finite float rounded to MANTISSA_BITS (-0.0 becomes 0.0)."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{what}: expected a number, got {value!r}") from None
    if not math.isfinite(number):
        raise ValueError(f"{what}: expected a finite number, got {number!r}")
    rounded = _round_floats([number])[0]
    if not math.isfinite(rounded):
        raise ValueError(f"{what}: {number!r} is too large to keep")
    return rounded


def _nums(values: Iterable[Any], what: str) -> tuple[float, ...]:
    """``_num`` of each value; the per-value checks (and their messages) only on a failure."""
    if type(values).__module__ == "numpy" and getattr(values, "dtype", None) is not None \
            and values.dtype.kind in "fiu":
        done = _round_array(values)
        if done is not None:
            return done
    values = list(values)
    try:
        floats = [float(v) for v in values]
    except (TypeError, ValueError):
        floats = None
    if floats is not None and all(map(math.isfinite, floats)):
        done = _round_floats(floats)
        if all(map(math.isfinite, done)):
            return done
    return tuple(_num(v, f"{what}[{i}]") for i, v in enumerate(values))


def _set(obj: object, name: str, value: Any) -> None:
    object.__setattr__(obj, name, value)  # normalising a frozen dataclass in __post_init__


def _same_length(what: str, **columns: tuple[float, ...]) -> None:
    lengths = {name: len(col) for name, col in columns.items()}
    if len(set(lengths.values())) > 1:
        raise ValueError(f"{what}: columns differ in length: {lengths}")
    if min(lengths.values()) < 2:
        raise ValueError(f"{what}: at least 2 points needed, got {lengths}")


_PLAIN = (float, int, str, bool, type(None))


@cache
def _field_names(cls: type) -> tuple[str, ...]:
    return tuple(f.name for f in dataclasses.fields(cls))


def _plain(obj: Any) -> Any:
    """What ``dataclasses.asdict`` gives for a spec (the same JSON), without its deep copies:
    dataclasses become dicts, sequences of plain values are passed through as they are."""
    t = type(obj)
    if t in _PLAIN:
        return obj
    if t is tuple or t is list:
        if all(type(v) in _PLAIN for v in obj):
            return obj
        return [_plain(v) for v in obj]
    if t is dict:
        return {k: _plain(v) for k, v in obj.items()}
    if dataclasses.is_dataclass(obj):
        return {name: _plain(getattr(obj, name)) for name in _field_names(t)}
    return obj


_DOUBLE = struct.Struct("<d")
_FLOATS = {float}


def _str_bytes(text: str) -> bytes:
    data = text.encode("utf-8")
    return b"s%d:%s" % (len(data), data)


@cache
def _class_head(cls: type) -> tuple[bytes, tuple[tuple[str, bytes], ...]]:
    """A dataclass's encoded head (field count and name) and each field's encoded name."""
    names = _field_names(cls)
    return (b"c%d:" % len(names) + _str_bytes(cls.__name__),
            tuple((name, _str_bytes(name)) for name in names))


def _encode(obj: Any, out: list[bytes]) -> None:
    """Append the canonical bytes of ``obj``: a type tag, a length where the size varies,
    then the value (floats as little-endian IEEE 754 doubles), so distinct values never
    share an encoding."""
    t = type(obj)
    if t is str:
        out.append(_str_bytes(obj))
    elif t is float:
        out.append(b"d" + _DOUBLE.pack(obj))
    elif t is tuple or t is list:
        if obj and set(map(type, obj)) == _FLOATS:
            out.append(b"D%d:" % len(obj) + struct.pack(f"<{len(obj)}d", *obj))
        else:
            out.append(b"l%d:" % len(obj))
            for v in obj:
                _encode(v, out)
    elif t is bool:
        out.append(b"T" if obj else b"F")
    elif t is int:
        out.append(b"i%d;" % obj)
    elif obj is None:
        out.append(b"n")
    elif t is dict:
        out.append(b"m%d:" % len(obj))
        for k in sorted(obj):
            _encode(k, out)
            _encode(obj[k], out)
    elif dataclasses.is_dataclass(obj):
        head, fields = _class_head(t)
        out.append(head)
        for name, name_bytes in fields:
            out.append(name_bytes)
            _encode(getattr(obj, name), out)
    else:
        raise TypeError(f"a chart spec holds no {t.__name__}")


class _Spec:
    """Canonical bytes and canonical JSON for every spec kind."""

    kind: ClassVar[str] = ""

    def canonical_bytes(self) -> bytes:
        """The spec's kind and every field, type-tagged and length-prefixed (what
        ``spec_digest`` hashes; far cheaper than the JSON text for long series)."""
        out: list[bytes] = [b"thermofolio-chart-spec 2\0"]
        _encode(self.kind, out)
        _encode(self, out)
        return b"".join(out)

    def to_canonical_json(self) -> str:
        """Sorted-key, compact JSON of ``kind`` and every field (floats already rounded)."""
        data = {"kind": self.kind, **_plain(self)}
        return json.dumps(
            data, sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False
        )


@dataclass(frozen=True)
class Series:
    """One named curve; ``role`` picks its colour, dashes and marker from the house style."""

    label: str
    x: tuple[float, ...]
    y: tuple[float, ...]
    role: str = "primary"

    def __post_init__(self) -> None:
        _set(self, "x", _nums(self.x, f"series {self.label!r} x"))
        _set(self, "y", _nums(self.y, f"series {self.label!r} y"))
        _same_length(f"series {self.label!r}", x=self.x, y=self.y)


@dataclass(frozen=True)
class ShadedRange:
    """An x interval drawn shaded, e.g. where a fit is extrapolated beyond its T range."""

    x_min: float
    x_max: float
    label: str = "extrapolated"

    def __post_init__(self) -> None:
        _set(self, "x_min", _num(self.x_min, "shaded x_min"))
        _set(self, "x_max", _num(self.x_max, "shaded x_max"))
        if not self.x_min < self.x_max:
            raise ValueError(f"shaded range: need x_min < x_max, got {self.x_min}, {self.x_max}")


@dataclass(frozen=True)
class MarkedPoint:
    """A labelled marker, e.g. a crossover temperature."""

    x: float
    y: float
    label: str = ""

    def __post_init__(self) -> None:
        _set(self, "x", _num(self.x, "point x"))
        _set(self, "y", _num(self.y, "point y"))


def _tuple_of(obj: object, name: str, cls: type) -> None:
    items = tuple(getattr(obj, name))
    for item in items:
        if not isinstance(item, cls):
            raise ValueError(f"{name}: expected {cls.__name__} items, got {type(item).__name__}")
    _set(obj, name, items)


@dataclass(frozen=True)
class LineChartSpec(_Spec):
    """A generic x/y chart of named series, e.g. Cp°(T), S°(T) or H°(T) − H°(298.15 K)."""

    kind: ClassVar[str] = "line"
    title: str
    description: str
    x_label: str
    y_label: str
    series: tuple[Series, ...]
    shaded: tuple[ShadedRange, ...] = ()
    points: tuple[MarkedPoint, ...] = ()

    def __post_init__(self) -> None:
        _tuple_of(self, "series", Series)
        _tuple_of(self, "shaded", ShadedRange)
        _tuple_of(self, "points", MarkedPoint)
        if not self.series:
            raise ValueError("series: at least one series needed")


@dataclass(frozen=True)
class GibbsChartSpec(_Spec):
    """ΔrG°(T) = ΔrH°(T) − T·ΔrS°(T) with both parts, crossovers (ΔrG° = 0) marked.

    T in K; drG, drH and T_drS in kJ/mol on the same temperature grid.
    """

    kind: ClassVar[str] = "gibbs"
    title: str
    description: str
    T: tuple[float, ...]
    drG: tuple[float, ...]
    drH: tuple[float, ...]
    T_drS: tuple[float, ...]
    crossovers: tuple[MarkedPoint, ...] = ()
    extrapolated: tuple[ShadedRange, ...] = ()
    x_label: str = "T / K"
    y_label: str = "ΔrG°, ΔrH°, T·ΔrS° / (kJ mol⁻¹)"
    drG_label: str = "ΔrG°"
    drH_label: str = "ΔrH°"
    T_drS_label: str = "T·ΔrS°"

    def __post_init__(self) -> None:
        for name in ("T", "drG", "drH", "T_drS"):
            _set(self, name, _nums(getattr(self, name), name))
        _same_length("gibbs chart", T=self.T, drG=self.drG, drH=self.drH, T_drS=self.T_drS)
        _tuple_of(self, "crossovers", MarkedPoint)
        _tuple_of(self, "extrapolated", ShadedRange)


@dataclass(frozen=True)
class VantHoffSpec(_Spec):
    """log10 K against 1000 K / T (van 't Hoff plot); every x given here is a T in K."""

    kind: ClassVar[str] = "vant_hoff"
    title: str
    description: str
    T: tuple[float, ...]
    log10_K: tuple[float, ...]
    top_axis_T: bool = True
    extrapolated: tuple[ShadedRange, ...] = ()  # in T / K
    points: tuple[MarkedPoint, ...] = ()  # x in T / K, y in log10 K
    series_label: str = "log₁₀ K"
    x_label: str = "1000 K / T"
    y_label: str = "log₁₀ K"
    top_label: str = "T / K"

    def __post_init__(self) -> None:
        _set(self, "T", _nums(self.T, "T"))
        _set(self, "log10_K", _nums(self.log10_K, "log10_K"))
        _same_length("van 't Hoff chart", T=self.T, log10_K=self.log10_K)
        if min(self.T) <= 0:
            raise ValueError(f"T: expected temperatures > 0 K, got min {min(self.T)}")
        _set(self, "top_axis_T", bool(self.top_axis_T))
        _tuple_of(self, "extrapolated", ShadedRange)
        _tuple_of(self, "points", MarkedPoint)


@dataclass(frozen=True)
class Level:
    """One horizontal level of an energy (or entropy) diagram; ``column`` groups levels."""

    key: str
    label: str
    value: float
    column: int = 0

    def __post_init__(self) -> None:
        _set(self, "value", _num(self.value, f"level {self.key!r} value"))
        if self.key == ZERO_LEVEL:
            raise ValueError(f"level key {ZERO_LEVEL!r} is reserved for the baseline")
        if int(self.column) != self.column or self.column < 0:
            raise ValueError(f"level {self.key!r}: column must be an integer >= 0")
        _set(self, "column", int(self.column))


@dataclass(frozen=True)
class Arrow:
    """An arrow between two levels (``ZERO_LEVEL`` names the baseline)."""

    from_level: str
    to_level: str
    kind: str
    label: str = ""

    def __post_init__(self) -> None:
        if self.kind not in ARROW_KINDS:
            raise ValueError(f"arrow kind: expected one of {ARROW_KINDS}, got {self.kind!r}")
        if self.from_level == self.to_level:
            raise ValueError(f"arrow from {self.from_level!r} to itself")


@dataclass(frozen=True)
class LevelDiagramSpec(_Spec):
    """Energy level diagram (Hess cycle) with the elements in reference states at zero."""

    kind: ClassVar[str] = "levels"
    title: str
    description: str
    levels: tuple[Level, ...]
    arrows: tuple[Arrow, ...] = ()
    unit_label: str = "H° / (kJ mol⁻¹)"
    zero_label: str = "elements in reference states"
    column_labels: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        _tuple_of(self, "levels", Level)
        _tuple_of(self, "arrows", Arrow)
        _set(self, "column_labels", tuple(str(s) for s in self.column_labels))
        if not self.levels:
            raise ValueError("levels: at least one level needed")
        keys = [lv.key for lv in self.levels]
        if len(set(keys)) != len(keys):
            raise ValueError(f"levels: duplicate keys in {keys}")
        known = {*keys, ZERO_LEVEL}
        for arrow in self.arrows:
            for end in (arrow.from_level, arrow.to_level):
                if end not in known:
                    raise ValueError(f"arrow: unknown level {end!r}; known: {sorted(known)}")


@dataclass(frozen=True)
class EntropyLevelSpec(LevelDiagramSpec):
    """Absolute entropies as levels above S = 0 (third law), drawn like an energy diagram."""

    kind: ClassVar[str] = "entropy_levels"
    unit_label: str = "S° / (J mol⁻¹ K⁻¹)"
    zero_label: str = "S = 0"

    def __post_init__(self) -> None:
        super().__post_init__()
        for lv in self.levels:
            if lv.value < 0:
                raise ValueError(f"level {lv.key!r}: absolute entropy must be >= 0, got {lv.value}")


ChartSpec = LineChartSpec | GibbsChartSpec | VantHoffSpec | LevelDiagramSpec | EntropyLevelSpec


@lru_cache(maxsize=1)
def _versions() -> str:
    """Versions that change the drawn bytes, read without importing matplotlib."""
    from generator import __version__

    try:
        mpl = metadata.version("matplotlib")
    except metadata.PackageNotFoundError:
        mpl = "absent"
    return f"matplotlib={mpl};thermofolio={__version__}"


def spec_digest(spec: ChartSpec, style_version: str | None = None) -> str:
    """sha256 hex of the canonical bytes, the house-style version and the matplotlib and
    thermofolio versions."""
    if style_version is None:
        from generator.charts.style import STYLE_VERSION

        style_version = STYLE_VERSION
    h = hashlib.sha256(spec.canonical_bytes())
    h.update(f"\0{style_version}\0{_versions()}".encode())
    return h.hexdigest()
