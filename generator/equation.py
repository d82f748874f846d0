"""Reaction equations: parse ``2 H2(g) + O2(g) -> 2 H2O(l)`` and describe element imbalance.

Syntax::

    equation := side arrow side          arrow: "->", "→", "=", "<=>" or "⇌" (exactly one)
    side     := term ( " + " term )*     the plus needs whitespace on both sides, so the
                                         charge of H+(aq) is never read as a separator
    term     := [coefficient] formula "(" phase ")"  |  [coefficient] "{" species-id "}"
    coefficient := integer | decimal (0.5, .5) | fraction (1/2, 3/2); > 0, at most 10^6
    phase    := g | l | cr | s | aq

The formula is parsed by :func:`generator.formula.parse_formula`; its errors come back as
:class:`EquationError` with the column shifted into the equation string.  Balance checking
against species is the loader's job; :func:`element_balance` and :func:`describe_imbalance`
do the arithmetic and the wording.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from generator.formula import Formula, FormulaError, parse_formula
from generator.model import PHASES
from generator.parse_error import LocatedParseError

ARROWS: tuple[str, ...] = ("<=>", "->", "→", "⇌", "=")
MAX_COEFFICIENT = 10**6

_COEF_CHARS = frozenset("0123456789./")
_COEF_RE = re.compile(r"(?:[0-9]+/[0-9]+|[0-9]*\.[0-9]+|[0-9]+)\Z")
_ID_RE = re.compile(r"[a-z0-9][a-z0-9._-]*\Z")
# A parenthesised run of letters at the end of a term: a phase, or a miswritten one.
_TAIL_GROUP_RE = re.compile(r"\(([A-Za-z]*)\)\Z")
_PHASE_GROUP_RE = re.compile(r"\((" + "|".join(PHASES) + r")\)")
_PHASE_HINT = "the phase is one of " + ", ".join(f"({p})" for p in PHASES)


class EquationError(LocatedParseError):
    """A malformed equation; ``col`` is the 1-based column in the equation string."""


@dataclass(frozen=True)
class EquationTerm:
    """One term as written; exactly one of ``formula`` and ``species_id`` is set."""

    coefficient: float
    formula: str | None
    phase: str | None
    species_id: str | None
    text: str
    col: int


@dataclass(frozen=True)
class ParsedEquation:
    reactants: tuple[EquationTerm, ...]
    products: tuple[EquationTerm, ...]


def parse_equation(text: str) -> ParsedEquation:
    """Parse a reaction equation (syntax in the module docstring); raises EquationError."""
    if not text.strip():
        raise EquationError("empty equation", 1, "write e.g. CaCO3(cr) -> CaO(cr) + CO2(g)")
    arrows = _find_arrows(text)
    if not arrows:
        raise EquationError(
            "no arrow between reactants and products", 1, "write '->' between the two sides"
        )
    if len(arrows) > 1:
        second, _ = arrows[1]
        raise EquationError(
            f"a second arrow (the first is at column {arrows[0][0] + 1})", second + 1
        )
    at, width = arrows[0]
    if not text[:at].strip():
        raise EquationError("no reactants before the arrow", 1)
    if not text[at + width :].strip():
        raise EquationError("no products after the arrow", at + width + 1)
    reactants = _parse_side(text, 0, at)
    products = _parse_side(text, at + width, len(text))
    return ParsedEquation(tuple(reactants), tuple(products))


def _find_arrows(text: str) -> list[tuple[int, int]]:
    """(index, width) of every arrow outside ``{species-id}`` (an id ends at ``}`` or a space)."""
    found: list[tuple[int, int]] = []
    i, in_id = 0, False
    while i < len(text):
        c = text[i]
        if c == "{":
            in_id = True
        elif c == "}" or c.isspace():
            in_id = False
        elif not in_id:
            arrow = next((a for a in ARROWS if text.startswith(a, i)), None)
            if arrow is not None:
                found.append((i, len(arrow)))
                i += len(arrow)
                continue
        i += 1
    return found


def _parse_side(text: str, start: int, end: int) -> list[EquationTerm]:
    """Split text[start:end] at pluses with whitespace (or the side's edge) on both sides."""
    terms: list[EquationTerm] = []
    piece_start = start
    seps: list[int] = []
    for j in range(start, end):
        if text[j] != "+":
            continue
        before = text[j - 1] if j > start else " "
        after = text[j + 1] if j + 1 < end else " "
        if before.isspace() and after.isspace():
            seps.append(j)
    bounds = [*seps, end]
    for k, sep in enumerate(bounds):
        raw = text[piece_start:sep]
        if not raw.strip():
            plus = sep if sep < end else seps[k - 1]
            raise EquationError("a '+' with no term beside it", plus + 1)
        lead = len(raw) - len(raw.lstrip())
        terms.append(_parse_term(raw.strip(), piece_start + lead + 1))
        piece_start = sep + 1
    return terms


def _parse_term(term: str, col: int) -> EquationTerm:
    """Parse one stripped term that starts at 1-based column ``col`` of the equation."""
    i = 0
    if term[0] == "-" and len(term) > 1 and term[1] in _COEF_CHARS:
        raise EquationError(
            "a negative coefficient", col, "move the species to the other side of the arrow"
        )
    while i < len(term) and term[i] in _COEF_CHARS:
        i += 1
    coefficient = 1.0
    if i:
        coefficient = _coefficient(term[:i], col)
    while i < len(term) and term[i].isspace():
        i += 1
    if i == len(term):
        raise EquationError("a coefficient with no species after it", col)
    body, body_col = term[i:], col + i
    if body[0] == "{":
        return _id_term(term, body, body_col, coefficient, col)
    formula, phase = _split_phase(body, body_col)
    try:
        parse_formula(formula)
    except FormulaError as exc:
        raise EquationError(exc.message, body_col + exc.col - 1, exc.hint) from None
    return EquationTerm(coefficient, formula, phase, None, term, col)


def _coefficient(written: str, col: int) -> float:
    if not _COEF_RE.match(written) or len(written) > 15:
        raise EquationError(
            f"bad coefficient {written!r}",
            col,
            "write an integer, a decimal or a fraction: 2, 0.5, 1/2",
        )
    if "/" in written:
        num, den = (int(p) for p in written.split("/"))
        if den == 0:
            raise EquationError(f"bad coefficient {written!r}: division by zero", col)
        value = num / den
    else:
        value = float(written)
    if value == 0:
        raise EquationError("a zero coefficient", col, "leave the species out instead")
    if value > MAX_COEFFICIENT:
        raise EquationError(f"coefficient larger than {MAX_COEFFICIENT}", col)
    return value


def _id_term(term: str, body: str, body_col: int, coefficient: float, col: int) -> EquationTerm:
    close = body.find("}")
    if close < 0:
        raise EquationError("'{' is never closed", body_col, "write e.g. {calcite}")
    species_id = body[1:close]
    if not _ID_RE.match(species_id):
        raise EquationError(
            f"bad species id {species_id!r}",
            body_col + 1,
            "an id is a lowercase slug such as water-liquid",
        )
    if close + 1 < len(body):
        raise EquationError(
            "unexpected text after the species id",
            body_col + close + 1,
            "a {species-id} term takes no phase; separate terms with ' + '",
        )
    return EquationTerm(coefficient, None, None, species_id, term, col)


def _split_phase(body: str, body_col: int) -> tuple[str, str]:
    """Separate ``formula(phase)``; errors for a missing, miswritten or misplaced phase."""
    first = _PHASE_GROUP_RE.search(body)
    if first is not None and first.end() < len(body):
        rest_col = body_col + first.end()
        hint = "separate terms with ' + ', spaces around the plus"
        raise EquationError("unexpected text after the phase", rest_col, hint)
    if first is not None:
        return body[: first.start()], first.group(1)
    tail = _TAIL_GROUP_RE.search(body)
    if tail is not None and (tail.group(1).lower() in PHASES or tail.group(1).islower()):
        name = tail.group(1)
        hint = f"write ({name.lower()})" if name.lower() in PHASES else _PHASE_HINT
        raise EquationError(f"unknown phase {name!r}", body_col + tail.start(), hint)
    if tail is not None and tail.group(1) == "":
        raise EquationError("empty phase", body_col + tail.start(), _PHASE_HINT)
    raise EquationError("the phase is missing", body_col + len(body), "write the phase, e.g. O2(g)")


def element_balance(
    reactants: list[tuple[float, Formula]], products: list[tuple[float, Formula]]
) -> dict[str, float]:
    """Products minus reactants, per element and for ``"charge"``; zeros left out,
    values rounded to 1e-9 (so 3 * (1/3) balances 1)."""
    diff: dict[str, float] = {}
    for sign, side in ((-1.0, reactants), (1.0, products)):
        for nu, formula in side:
            for sym, n in formula.elements:
                diff[sym] = diff.get(sym, 0.0) + sign * nu * n
            diff["charge"] = diff.get("charge", 0.0) + sign * nu * formula.charge
    charge = diff.pop("charge", 0.0)
    diff["charge"] = charge
    rounded = {k: round(v, 9) for k, v in diff.items()}
    return {k: v for k, v in rounded.items() if v != 0}


def _amount(x: float) -> str:
    return f"{x:.6g}"


def describe_imbalance(diff: dict[str, float]) -> str:
    """Words for an :func:`element_balance` result, e.g.
    ``"O: 1 more on the left; charge: +1 more on the right"`` (positive = more on the right).
    A charge excess is always stated as the positive charge a side carries in excess."""
    parts: list[str] = []
    for key, value in diff.items():
        if value == 0:
            continue
        where = "right" if value > 0 else "left"
        amount = _amount(abs(value))
        if key == "charge":
            amount = "+" + amount
        parts.append(f"{key}: {amount} more on the {where}")
    return "; ".join(parts) if parts else "balanced"
