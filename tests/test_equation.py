"""Tests for generator.equation: terms, coefficients, phases, errors and imbalance wording.

Expected terms, coefficients and columns are read off the equation strings by hand.
"""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from generator.equation import (
    EquationError,
    EquationTerm,
    ParsedEquation,
    describe_imbalance,
    element_balance,
    parse_equation,
)
from generator.formula import parse_formula


def _summary(terms: tuple[EquationTerm, ...]) -> list[tuple]:
    return [(t.coefficient, t.formula, t.phase, t.species_id) for t in terms]


def test_calcination() -> None:
    eq = parse_equation("CaCO3(cr) -> CaO(cr) + CO2(g)")
    assert _summary(eq.reactants) == [(1.0, "CaCO3", "cr", None)]
    assert _summary(eq.products) == [(1.0, "CaO", "cr", None), (1.0, "CO2", "g", None)]
    assert [t.col for t in eq.products] == [14, 24]  # columns counted by hand
    assert [t.text for t in eq.products] == ["CaO(cr)", "CO2(g)"]


def test_coefficients() -> None:
    eq = parse_equation("2 H2(g) + O2(g) -> 2 H2O(l)")
    assert _summary(eq.reactants) == [(2.0, "H2", "g", None), (1.0, "O2", "g", None)]
    assert _summary(eq.products) == [(2.0, "H2O", "l", None)]
    assert eq.reactants[0].text == "2 H2(g)"


@pytest.mark.parametrize(
    ("written", "value"),
    [("1/2", 0.5), ("0.5", 0.5), (".5", 0.5), ("3/2", 1.5), ("2", 2.0), ("10", 10.0)],
)
def test_coefficient_forms(written: str, value: float) -> None:
    # Arithmetic of the written coefficient, by hand.
    eq = parse_equation(f"H2(g) + {written} O2(g) = H2O(l)")
    assert eq.reactants[1].coefficient == pytest.approx(value)
    assert eq.reactants[1].formula == "O2"


def test_coefficient_without_space() -> None:
    eq = parse_equation("2H2(g) + O2(g) -> 2H2O(l)")
    assert eq.reactants[0].coefficient == 2.0 and eq.reactants[0].formula == "H2"


def test_ions_are_not_split_at_their_charge() -> None:
    eq = parse_equation("H+(aq) + OH-(aq) -> H2O(l)")
    assert _summary(eq.reactants) == [(1.0, "H+", "aq", None), (1.0, "OH-", "aq", None)]
    eq = parse_equation("Ba^2+(aq) + SO4^2-(aq) ⇌ BaSO4(cr)")
    assert [t.formula for t in eq.reactants] == ["Ba^2+", "SO4^2-"]
    assert [t.col for t in eq.reactants] == [1, 13]  # columns counted by hand


@pytest.mark.parametrize("arrow", ["->", "→", "=", "<=>", "⇌"])
def test_arrows(arrow: str) -> None:
    eq = parse_equation(f"N2O4(g) {arrow} 2 NO2(g)")
    assert _summary(eq.reactants) == [(1.0, "N2O4", "g", None)]
    assert _summary(eq.products) == [(2.0, "NO2", "g", None)]


def test_species_id_term() -> None:
    eq = parse_equation("{calcite} -> CaO(cr) + CO2(g)")
    assert _summary(eq.reactants) == [(1.0, None, None, "calcite")]
    eq = parse_equation("2 {water-liquid} -> 2 H2(g) + O2(g)")
    assert eq.reactants[0] == EquationTerm(2.0, None, None, "water-liquid", "2 {water-liquid}", 1)
    assert isinstance(eq, ParsedEquation)


def test_every_phase() -> None:
    eq = parse_equation("He(g) + Ar(l) + Fe(cr) + S(s) + Na+(aq) -> Xe(g)")
    assert [t.phase for t in eq.reactants] == ["g", "l", "cr", "s", "aq"]


# (equation, 1-based column, words in the message); columns counted by hand.
ERRORS = [
    ("", 1, "empty"),
    ("   ", 1, "empty"),
    ("CaCO3(cr) CaO(cr) + CO2(g)", 1, "no arrow"),
    ("A(g) -> B(g) -> C(g)", 14, "second arrow"),
    ("H2O(l) = H2O(g) = H2O(s)", 17, "second arrow"),
    (" -> CaO(cr)", 1, "no reactants"),
    ("CaCO3(cr) -> ", 13, "no products"),
    ("0 H2(g) -> H2(g)", 1, "zero"),
    ("H2(g) -> 0/3 H2(g)", 10, "zero"),
    ("-2 H2(g) -> H2(g)", 1, "negative"),
    ("1/0 H2(g) -> H2(g)", 1, "division by zero"),
    ("1.2.3 H2(g) -> H2(g)", 1, "bad coefficient"),
    ("1//2 H2(g) -> H2(g)", 1, "bad coefficient"),
    ("2 -> H2(g)", 1, "no species"),
    ("H2O(liq) -> H2O(g)", 4, "unknown phase"),
    ("H2O(G) -> H2O(g)", 4, "unknown phase"),
    ("H2O(l) -> H2O()", 14, "empty phase"),
    ("H2O -> H2O(g)", 4, "phase is missing"),
    ("H2O(l) -> H2O", 14, "phase is missing"),
    ("H2(g)+O2(g) -> H2O(l)", 6, "after the phase"),
    ("H2(g) + + O2(g) -> H2O(l)", 9, "no term"),
    ("H2(g) + -> H2O(l)", 7, "no term"),
    ("H2O(l) -> HX2O(g)", 12, "unknown element 'X'"),
    ("H2O(l) -> 2 H2 O(g)", 15, "spaces"),
    ("CL2(g) -> 2 Cl(g)", 2, "unknown element 'L'"),
    ("H2(g) + 1/2 O2(g) -> H2O(l) + Ca3(PO4(cr)", 34, "never closed"),
    ("{Calcite} -> CaO(cr)", 2, "bad species id"),
    ("{} -> CaO(cr)", 2, "bad species id"),
    ("{calcite -> CaO(cr)", 1, "never closed"),
    ("{calcite}(cr) -> CaO(cr)", 10, "after the species id"),
]


@pytest.mark.parametrize(("text", "col", "words"), ERRORS)
def test_errors_have_the_right_column(text: str, col: int, words: str) -> None:
    with pytest.raises(EquationError) as info:
        parse_equation(text)
    assert info.value.col == col
    assert words in info.value.message
    assert isinstance(info.value, ValueError)


def test_missing_phase_hint() -> None:
    with pytest.raises(EquationError) as info:
        parse_equation("H2(g) + O2 -> H2O(l)")
    assert info.value.hint == "write the phase, e.g. O2(g)"
    assert info.value.col == 11  # just after "O2", counted by hand


def test_formula_hint_is_kept() -> None:
    with pytest.raises(EquationError) as info:
        parse_equation("CL2(g) -> 2 Cl(g)")
    assert info.value.hint is not None and "Cl" in info.value.hint


def _f(text: str):
    return parse_formula(text)


def test_element_balance_balanced() -> None:
    # 2 H2 + O2 -> 2 H2O is balanced (stoichiometry by hand).
    assert element_balance([(2, _f("H2")), (1, _f("O2"))], [(2, _f("H2O"))]) == {}
    # O3 -> 3 O with the coefficient as floating point 0.1 * 30 = 3.0000000000000004:
    # the 4e-16 residue is rounded away at 1e-9.
    assert element_balance([(1, _f("O3"))], [(0.1 * 30, _f("O"))]) == {}


def test_element_balance_differences() -> None:
    # CaCO3 -> CaO + CO: one O fewer on the right (by hand).
    diff = element_balance([(1, _f("CaCO3"))], [(1, _f("CaO")), (1, _f("CO"))])
    assert diff == {"O": -1.0}
    assert describe_imbalance(diff) == "O: 1 more on the left"
    # H2O -> H+ + OH: charge +1 on the right, atoms balanced (by hand).
    diff = element_balance([(1, _f("H2O"))], [(1, _f("H+")), (1, _f("OH"))])
    assert diff == {"charge": 1.0}
    assert describe_imbalance(diff) == "charge: +1 more on the right"


def test_describe_imbalance_wording() -> None:
    # Wording rule from the specification of this module (no external source).
    assert describe_imbalance({"O": -1, "charge": 1}) == (
        "O: 1 more on the left; charge: +1 more on the right"
    )
    assert describe_imbalance({"H": 0.5}) == "H: 0.5 more on the right"
    assert describe_imbalance({"charge": -2}) == "charge: +2 more on the left"
    assert describe_imbalance({}) == "balanced"


def _check(text: str) -> None:
    try:
        eq = parse_equation(text)
    except EquationError as exc:
        assert 1 <= exc.col <= len(text) + 1
        assert exc.message
        return
    assert eq.reactants and eq.products
    for term in eq.reactants + eq.products:
        assert text[term.col - 1 :].startswith(term.text)
        assert term.coefficient > 0
        assert (term.formula is None) != (term.species_id is None)
        if term.formula is not None:
            parse_formula(term.formula)


@settings(max_examples=300, deadline=None)
@given(st.text())
def test_arbitrary_text_never_crashes(text: str) -> None:
    _check(text)


_PIECES = [
    "H2", "O2", "H+", "SO4^2-", "CL", "Fe(OH)3", "(g)", "(l)", "(aq)", "(cr)", "(G)", "(x)",
    " + ", "+", " ", " -> ", "->", "=", "<=>", "⇌", "→", "2 ", "1/2 ", "0.5 ", "0 ", "1/0 ",
    "-1 ", "{calcite}", "{", "}", "-", "(", ")",
]  # fmt: skip


@settings(max_examples=400, deadline=None)
@given(st.lists(st.sampled_from(_PIECES), max_size=12).map("".join))
def test_near_valid_equations(text: str) -> None:
    _check(text)
