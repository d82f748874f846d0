"""Element reference states and their resolution against a handbook's species.

The reference state of an element is its stable form at 298.15 K and the standard pressure,
with the conventions of Wagman et al. 1982 (The NBS tables of chemical thermodynamic
properties, J. Phys. Chem. Ref. Data 11 Suppl. 2) and Cox, Wagman & Medvedev 1989 (CODATA
Key Values for Thermodynamics); from memory.  Noted conventions: phosphorus is white
phosphorus (cr), although red and black phosphorus are more stable (some compilations use
red phosphorus); carbon is graphite; sulfur is rhombic; tin is white tin.  Every element not
listed explicitly is a solid at 298.15 K and its reference state is the element in phase cr.
A reference species keeps its phase at all T (no switch to the gas above the boiling point).
"""

from __future__ import annotations

from collections.abc import Mapping

from generator.diagnostics import Finding, note, warning
from generator.model import Species

RefState = tuple[str, str, str | None, int]  # (formula, phase, form or None, atoms/formula)

_GASES_DIATOMIC = ("H", "N", "O", "F", "Cl")
_NOBLE = ("He", "Ne", "Ar", "Kr", "Xe", "Rn")
_METALS_METALLOIDS = (
    "Li", "Be", "B", "Na", "Mg", "Al", "Si", "K", "Ca", "Sc", "Ti", "V", "Cr", "Mn", "Fe",
    "Co", "Ni", "Cu", "Zn", "Ga", "Ge", "As", "Se", "Rb", "Sr", "Y", "Zr", "Nb", "Mo", "Ru",
    "Rh", "Pd", "Ag", "Cd", "In", "Sb", "Te", "Cs", "Ba", "La", "Ce", "Hf", "Ta", "W", "Re",
    "Os", "Ir", "Pt", "Au", "Tl", "Pb", "Bi", "Th", "U",
)

REFERENCE_STATES: dict[str, RefState] = {
    **{el: (f"{el}2", "g", None, 2) for el in _GASES_DIATOMIC},
    **{el: (el, "g", None, 1) for el in _NOBLE},
    **{el: (el, "cr", None, 1) for el in _METALS_METALLOIDS},
    "Br": ("Br2", "l", None, 2),
    "I": ("I2", "cr", None, 2),
    "C": ("C", "cr", "graphite", 1),
    "S": ("S", "cr", "rhombic", 1),
    "P": ("P", "cr", "white", 1),
    "Sn": ("Sn", "cr", "white", 1),
    "Hg": ("Hg", "l", None, 1),
}

_NOT_ELEMENTS = frozenset({"e", "E"})  # an electron count, should a loader write one


def reference_state(element: str) -> RefState:
    """The reference state of ``element``: the table entry, else the element in phase cr."""
    return REFERENCE_STATES.get(element, (element, "cr", None, 1))


def _rank(sp: Species, element: str, state: RefState) -> int | None:
    """None when ``sp`` is not the reference state; else 0 (best) .. 3."""
    formula, phase, form, atoms = state
    if sp.formula != formula or sp.charge != 0 or dict(sp.elements) != {element: atoms}:
        return None
    if sp.phase == phase:
        phase_rank = 0
    elif phase == "cr" and sp.phase == "s":
        phase_rank = 2
    else:
        return None
    if form is not None and sp.form is not None:
        if sp.form.strip().lower() != form:
            return None
        return phase_rank
    return phase_rank + (1 if form is not None else 0)


def _describe(state: RefState) -> str:
    formula, phase, form, _ = state
    return f"{formula}({phase}{', ' + form if form else ''})"


def elements_needed(sp: Species) -> list[str]:
    """Elements whose reference species the formation reaction of ``sp`` uses (an ion also
    needs hydrogen, see ``species_props.formation_coefficients``)."""
    counts = {el: float(n) for el, n in sp.elements if el not in _NOT_ELEMENTS}
    if sp.charge:
        counts["H"] = counts.get("H", 0.0) - float(sp.charge)
    return [el for el, n in counts.items() if n != 0.0]


def resolve_reference_states(
    species: Mapping[str, Species],
) -> tuple[dict[str, Species], list[Finding]]:
    """Find each used element's reference-state species.

    Matching: formula, charge 0, single element with the table's atom count, phase (a
    ``cr`` state also accepts phase ``s``, ranked lower) and, when the table names a form,
    the species' form if it has one (a species naming the form ranks above one naming none).
    Findings: ``no-reference-state`` (warning, at the first species by id using the
    element), ``reference-state-not-zero`` (warning, dfH of the reference species is not 0),
    ``reference-state-ambiguous`` (note, several equally good candidates; first id chosen).
    """
    users: dict[str, list[Species]] = {}
    for sp in sorted(species.values(), key=lambda s: s.id):
        for el in elements_needed(sp):
            users.setdefault(el, []).append(sp)

    refs: dict[str, Species] = {}
    findings: list[Finding] = []
    for el in sorted(users):
        state = reference_state(el)
        ranked = sorted(
            (r, sp.id, sp)
            for sp in species.values()
            if (r := _rank(sp, el, state)) is not None
        )
        if not ranked:
            first = users[el][0]
            findings.append(warning(
                "no-reference-state",
                f"element {el} (used by {first.id}) has no reference-state species "
                f"{_describe(state)}; its formation properties cannot be computed",
                first.location,
                hint=f"add a species {_describe(state)} with dfH = 0",
                item=first.id,
            ))
            continue
        best = ranked[0][2]
        refs[el] = best
        ties = [sp.id for r, _, sp in ranked if r == ranked[0][0]]
        if len(ties) > 1:
            findings.append(note(
                "reference-state-ambiguous",
                f"several species match the reference state {_describe(state)} of {el}: "
                f"{', '.join(ties)}; using {best.id}",
                best.location,
                hint="give the reference species its form",
                item=best.id,
            ))
        q = best.standard.get("dfH")
        if q is not None and q.values and abs(q.preferred.value) > 1e-9:
            v = q.preferred
            findings.append(warning(
                "reference-state-not-zero",
                f"{best.id} is the reference state of {el} but its dfH is {v.value:g} kJ/mol;"
                " a reference state has dfH = 0 by definition (formation values of other species"
                " take it as 0)",
                v.location or q.location or best.location,
                item=best.id,
                quantity="dfH",
            ))
    return refs, findings


__all__ = [
    "REFERENCE_STATES",
    "RefState",
    "reference_state",
    "elements_needed",
    "resolve_reference_states",
]
