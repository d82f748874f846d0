"""Chemical formulas: parse, count atoms, molar mass, and render as HTML or Unicode.

Accepted syntax (ASCII, no spaces)::

    formula  := part ( dot [multiplier] part )* [charge]
    part     := ( symbol [count] | "(" part ")" [count] | "[" part "]" [count] )+
    dot      := "*" | "·"            (U+00B7; hydrate or adduct, e.g. CuSO4*5H2O)
    symbol   := capital letter + lower-case letters, one of STANDARD_ATOMIC_WEIGHTS
    count    := 1 .. 1000000, no leading zero
    charge   := "^" [n] sign  |  sign      (sign is "+", "-" or U+2212 "−"; n >= 1)

So ``H+``, ``OH-``, ``NH4+``, ``SO4^2-``, ``Fe^3+``, ``Fe^+`` and ``[Cu(H2O)6]^2+`` are
ions.  ``Fe+3`` and ``Fe+++`` are refused (write ``Fe^3+``).  Note that ``Fe3+`` is read
literally, as a tri-iron cation with charge +1.  No element total, written or multiplied
out, may exceed 10^6.  Every problem raises :class:`FormulaError` with a 1-based column.
"""

from __future__ import annotations

import difflib
import functools
import html as _html
from dataclasses import dataclass

from generator.atomic_weights import STANDARD_ATOMIC_WEIGHTS
from generator.parse_error import LocatedParseError

MAX_COUNT = 10**6
_UPPER = frozenset("ABCDEFGHIJKLMNOPQRSTUVWXYZ")
_LOWER = frozenset("abcdefghijklmnopqrstuvwxyz")
_DIGITS = frozenset("0123456789")
_DOTS = frozenset("*·")
_PLUS = frozenset("+")
_MINUS = frozenset("-−")
_CLOSE_OF = {"(": ")", "[": "]"}
_SUB = str.maketrans("0123456789", "₀₁₂₃₄₅₆₇₈₉")
_SUP = str.maketrans("0123456789+-", "⁰¹²³⁴⁵⁶⁷⁸⁹⁺⁻")


class FormulaError(LocatedParseError):
    """A malformed formula; ``col`` is the 1-based column in the formula string."""


@dataclass(frozen=True)
class Formula:
    """A parsed formula: element counts in order of first appearance and the ionic charge."""

    text: str
    elements: tuple[tuple[str, int], ...]
    charge: int = 0

    @property
    def element_counts(self) -> dict[str, int]:
        return dict(self.elements)

    @property
    def molar_mass(self) -> float:
        """Molar mass in g/mol from the IUPAC 2021 standard atomic weights.

        The mass of the electrons gained or lost by an ion is ignored (it is below
        0.0006 g/mol per unit charge, far under the atomic-weight uncertainties)."""
        return sum(n * STANDARD_ATOMIC_WEIGHTS[sym] for sym, n in self.elements)

    def html(self) -> str:
        """HTML with <sub> counts and a <sup> charge, e.g. ``SO<sub>4</sub><sup>2−</sup>``."""
        out: list[str] = []
        for kind, value in _pieces_or_plain(self.text):
            if kind == "sym":
                out.append(_html.escape(value))
            elif kind == "sub":
                out.append(f"<sub>{value}</sub>")
            elif kind == "mult":
                out.append(value)
            elif kind == "dot":
                out.append("·")
            else:  # charge
                out.append(f"<sup>{_charge_text(int(value)).replace('-', '−')}</sup>")
        return "".join(out)

    def unicode(self) -> str:
        """Plain text with Unicode sub- and superscripts, e.g. ``SO₄²⁻``, ``CuSO₄·5H₂O``."""
        out: list[str] = []
        for kind, value in _pieces_or_plain(self.text):
            if kind == "sub":
                out.append(value.translate(_SUB))
            elif kind == "dot":
                out.append("·")
            elif kind == "charge":
                out.append(_charge_text(int(value)).translate(_SUP))
            else:
                out.append(value)
        return "".join(out)


def _charge_text(z: int) -> str:
    sign = "+" if z > 0 else "-"
    return sign if abs(z) == 1 else f"{abs(z)}{sign}"


def _pieces_or_plain(text: str) -> list[tuple[str, str]]:
    try:
        return _Parser(text).run()[2]
    except FormulaError:
        return [("sym", text)]


@functools.lru_cache(maxsize=8192)
def parse_formula(text: str) -> Formula:
    """Parse ``text`` (see the module docstring); raises FormulaError, nothing else.
    Results are remembered (a Formula is immutable; a handbook names each formula often)."""
    elements, charge, _ = _Parser(text).run()
    return Formula(text=text, elements=elements, charge=charge)


_FOLD = str.maketrans(
    {
        **{c: str(i) for i, c in enumerate("₀₁₂₃₄₅₆₇₈₉")},
        **{c: str(i) for i, c in enumerate("⁰¹²³⁴⁵⁶⁷⁸⁹")},
        "⁺": "+",
        "₊": "+",
        "⁻": "-",
        "₋": "-",
        "−": "-",
        "·": "*",
        "•": "*",
        "∙": "*",
        "⋅": "*",
        "^": None,
    }
)


def search_key(text: str) -> str:
    """A key for searching: lower case, sub/superscripts and U+2212 folded to ASCII,
    middle dots to ``*``, carets and whitespace removed (``CO₂``, ``co2``, ``CO2`` -> ``co2``;
    ``SO₄²⁻`` and ``SO4^2-`` -> ``so42-``)."""
    folded = text.translate(_FOLD).lower()
    return "".join(c for c in folded if not c.isspace())


def _splits_into_symbols(word: str) -> bool:
    """Whether ``word`` is a run of known symbols (each a capital plus lower-case letters)."""
    parts: list[str] = []
    for ch in word:
        if ch in _UPPER:
            parts.append(ch)
        elif parts:
            parts[-1] += ch
        else:
            return False
    return all(p in STANDARD_ATOMIC_WEIGHTS for p in parts)


def _recapitalised(word: str) -> list[str]:
    """Spellings of ``word`` with some later letters capitalised that are runs of known
    symbols, fewest changes first (``Cao`` -> ``CaO``, ``Hcl`` -> ``HCl``)."""
    tail = word[1:]
    if not tail or len(tail) > 5:
        return []
    found: list[tuple[int, str]] = []
    for mask in range(1, 2 ** len(tail)):
        letters = [c.upper() if mask >> k & 1 else c for k, c in enumerate(tail)]
        cand = word[0] + "".join(letters)
        if _splits_into_symbols(cand):
            found.append((bin(mask).count("1"), cand))
    return [c for _, c in sorted(found)]


class _Parser:
    """Single pass, explicit stack (no recursion, so deep nesting cannot overflow)."""

    def __init__(self, text: str) -> None:
        self.text = text
        self.n = len(text)
        self.i = 0
        self.pieces: list[tuple[str, str]] = []
        self.order: list[str] = []

    # -- helpers -----------------------------------------------------------------------
    def fail(self, message: str, i: int | None = None, hint: str | None = None) -> FormulaError:
        return FormulaError(message, (self.i if i is None else i) + 1, hint)

    def peek(self) -> str:
        return self.text[self.i] if self.i < self.n else ""

    def number(self, what: str) -> tuple[int, str]:
        """Read a run of ASCII digits at self.i as a positive integer <= MAX_COUNT."""
        start = self.i
        while self.i < self.n and self.text[self.i] in _DIGITS:
            self.i += 1
        digits = self.text[start : self.i]
        if digits.strip("0") == "":
            raise self.fail(f"{what} must be at least 1", start)
        if digits[0] == "0":
            raise self.fail(f"{what} has a leading zero", start)
        if len(digits) > 7 or int(digits) > MAX_COUNT:
            raise self.fail(f"{what} larger than {MAX_COUNT}", start)
        return int(digits), digits

    def stray(self, c: str) -> FormulaError:
        if c.isspace():
            return self.fail("spaces are not allowed inside a formula")
        return self.fail(f"unexpected character {c!r}")

    # -- grammar -------------------------------------------------------------------------
    def run(self) -> tuple[tuple[tuple[str, int], ...], int, list[tuple[str, str]]]:
        if self.n == 0:
            raise self.fail("empty formula", 0, "write a formula such as H2O")
        total: dict[str, int] = {}
        charge = 0
        mult, mult_col = 1, 0
        while True:
            segment = self.part()
            for sym, k in segment.items():
                total[sym] = total.get(sym, 0) + k * mult
                if total[sym] > MAX_COUNT:
                    raise self.fail(f"count of {sym} larger than {MAX_COUNT}", mult_col)
            c = self.peek()
            if c in _DOTS:
                self.pieces.append(("dot", c))
                self.i += 1
                mult, mult_col = 1, self.i
                if self.peek() in _DIGITS:
                    mult, digits = self.number("hydrate multiplier")
                    self.pieces.append(("mult", digits))
                continue
            break
        c = self.peek()
        if c and (c == "^" or c in _PLUS or c in _MINUS):
            charge = self.charge()
        if self.i < self.n:
            raise self.stray(self.text[self.i])
        elements = tuple((sym, total[sym]) for sym in self.order)
        return elements, charge, self.pieces

    def part(self) -> dict[str, int]:
        """Symbols, counts and bracket groups up to a dot, a charge or the end."""
        stack: list[tuple[dict[str, int], str, int]] = [({}, "", self.i)]
        while True:
            c = self.peek()
            counts = stack[-1][0]
            if c in _UPPER:
                sym = self.symbol()
                if sym not in self.order:
                    self.order.append(sym)
                k = self.count()
                counts[sym] = counts.get(sym, 0) + k
                if counts[sym] > MAX_COUNT:
                    raise self.fail(f"count of {sym} larger than {MAX_COUNT}", self.i - 1)
            elif c in _CLOSE_OF:
                stack.append(({}, c, self.i))
                self.pieces.append(("sym", c))
                self.i += 1
            elif c in (")", "]"):
                inner, opener, open_i = stack[-1]
                if len(stack) == 1:
                    raise self.fail(f"{c!r} has no matching opening bracket")
                if _CLOSE_OF[opener] != c:
                    raise self.fail(
                        f"{c!r} closes {opener!r} opened at column {open_i + 1}",
                        hint=f"close it with {_CLOSE_OF[opener]!r}",
                    )
                if not inner:
                    raise self.fail("empty brackets")
                self.pieces.append(("sym", c))
                self.i += 1
                count_i = self.i
                k = self.count()
                stack.pop()
                parent = stack[-1][0]
                for sym, m in inner.items():
                    parent[sym] = parent.get(sym, 0) + m * k
                    if parent[sym] > MAX_COUNT:
                        raise self.fail(f"count of {sym} larger than {MAX_COUNT}", count_i)
            else:
                return self.end_of_part(stack, c)

    def end_of_part(self, stack: list[tuple[dict[str, int], str, int]], c: str) -> dict[str, int]:
        """At a character that cannot continue the part: finish it or explain the error."""
        is_sign = c == "^" or c in _PLUS or c in _MINUS
        _, opener, open_i = stack[-1]
        if len(stack) > 1 and (c == "" or c in _DOTS):
            raise self.fail(
                f"{opener!r} is never closed", open_i, hint=f"add {_CLOSE_OF[opener]!r}"
            )
        if not stack[-1][0]:
            raise self.empty_unit(c)
        if len(stack) > 1 and is_sign:
            raise self.fail(
                "a charge inside brackets",
                hint=f"put the charge at the end, after {_CLOSE_OF[opener]!r}",
            )
        if c in _LOWER:
            raise self.empty_unit(c)
        if len(stack) > 1:
            raise self.stray(c)
        return stack[0][0]

    def empty_unit(self, c: str) -> FormulaError:
        """The error for a place where an element symbol or a bracket must come."""
        if c == "":
            return self.fail("an element symbol is missing at the end")
        if c in _LOWER:
            j = self.i
            while j < self.n and self.text[j] in _LOWER:
                j += 1
            run = self.text[self.i : j]
            cands = [
                s for s in (run[:2].capitalize(), run[0].upper()) if s in STANDARD_ATOMIC_WEIGHTS
            ]
            hint = f"did you mean {cands[0]}?" if cands else None
            return self.fail("element symbols start with a capital letter", hint=hint)
        if c in _DIGITS:
            hint = "put a coefficient in the equation (2 H2O(l)) or after '*' in a hydrate"
            return self.fail("a number where an element symbol should be", hint=hint)
        if c in _DOTS or c == "^" or c in _PLUS or c in _MINUS:
            return self.fail(f"{c!r} where an element symbol should be")
        return self.stray(c)

    def symbol(self) -> str:
        start = self.i
        self.i += 1
        while self.i < self.n and self.text[self.i] in _LOWER:
            self.i += 1
        sym = self.text[start : self.i]
        if sym not in STANDARD_ATOMIC_WEIGHTS:
            raise self.fail(f"unknown element {sym!r}", start, hint=self.suggest(sym, start))
        self.pieces.append(("sym", sym))
        return sym

    def suggest(self, sym: str, start: int) -> str | None:
        """'did you mean' for an unknown symbol: the CL -> Cl case, re-capitalisations that
        spell known symbols (Cao -> CaO), then difflib's closest symbols."""
        prev = self.text[start - 1] if start > 0 else ""
        if prev in _UPPER and len(sym) == 1 and prev + sym.lower() in STANDARD_ATOMIC_WEIGHTS:
            return (
                f"did you mean {prev + sym.lower()}? A symbol is one capital letter and at most "
                "one lower-case letter"
            )
        cands = _recapitalised(sym)
        cands += [s for s in STANDARD_ATOMIC_WEIGHTS if s.lower() == sym.lower()]
        cands += difflib.get_close_matches(sym, list(STANDARD_ATOMIC_WEIGHTS), n=3, cutoff=0.6)
        unique = list(dict.fromkeys(c for c in cands if c != sym))[:3]
        if not unique:
            return None
        return "did you mean " + " or ".join(unique) + "?"

    def count(self) -> int:
        if self.peek() in _DIGITS:
            k, digits = self.number("count")
            self.pieces.append(("sub", digits))
            return k
        return 1

    def charge(self) -> int:
        base = self.text[: self.i]
        if self.peek() == "^":
            self.i += 1
            size = 1
            if self.peek() in _DIGITS:
                size, _ = self.number("charge")
            c = self.peek()
            if not (c in _PLUS or c in _MINUS):
                raise self.fail("the charge needs a sign after its number", hint="e.g. ^2+ or ^-")
            self.i += 1
            if self.peek() in _DIGITS:
                raise self.fail(
                    "the number goes before the sign", hint=f"write {base}^{self.digits()}{c}"
                )
        else:
            size, c = 1, self.peek()
            self.i += 1
            nxt = self.peek()
            if nxt in _DIGITS:
                raise self.fail(
                    "a charge other than +1 or -1 is written with a caret",
                    hint=f"write {base}^{self.digits()}{c}",
                )
            if nxt in _PLUS or nxt in _MINUS:
                j = self.i
                while j < self.n and self.text[j] == c:
                    j += 1
                raise self.fail(
                    "a charge other than +1 or -1 is written with a caret",
                    hint=f"write {base}^{j - self.i + 1}{c}" if j > self.i else None,
                )
        z = size if c in _PLUS else -size
        self.pieces.append(("charge", str(z)))
        return z

    def digits(self) -> str:
        """The (at most 7) digits at self.i, for a hint."""
        j = self.i
        while j < self.n and self.text[j] in _DIGITS and j - self.i < 7:
            j += 1
        return self.text[self.i : j]
