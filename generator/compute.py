"""Compute stage: every number the handbook publishes, evaluated once from the model.

``compute_handbook`` converts values to the standard pressure, resolves the element
reference states, evaluates every species and reaction on the handbook's grid (and on a
fine grid for the charts), finds the crossovers and runs the consistency checks.  Pure:
no file, template or chart access.  Render only formats what this produced.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from generator.diagnostics import Finding
from generator.model import Handbook, Reaction, Species
from generator.neighbourhood import Digester, digester_for, reaction_handbook
from generator.results_cache import kept_or_made
from generator.thermo.constants import T_REF
from generator.thermo.reactions import (
    ReactionFunctions,
    character,
    covered_range,
    crossover_temperatures,
    hess_sum,
    reaction_functions,
)
from generator.thermo.reference_states import resolve_reference_states
from generator.thermo.species_props import (
    FormationFunctions,
    SpeciesFunctions,
    formation_coefficients,
    formation_functions,
    prepare_plans,
    remember_functions,
    species_functions,
)
from generator.thermo.standard_state import to_standard_pressure

if TYPE_CHECKING:
    from generator.design import Design
    from generator.network import NetworkResult
    from generator.provenance import Completeness, Provenance
    from generator.results_cache import ResultStore

CHART_POINTS = 120  # points of a smooth curve on a chart


@dataclass(frozen=True, eq=False)
class SpeciesResult:
    species: Species
    grid: SpeciesFunctions  # on the handbook's temperature grid
    formation: FormationFunctions  # on the grid
    curve: SpeciesFunctions  # on a fine grid over the covered range, for charts
    reactions: tuple[str, ...]  # ids of the reactions that use it
    atomization: float | None  # kJ/mol, when all gaseous atoms are in the handbook
    atoms: tuple[tuple[str, str, float], ...]  # (element, atom species id, count)


@dataclass(frozen=True, eq=False)
class MeasuredCheck:
    quantity: str
    T: float
    measured: float
    computed: float
    gap: float
    u_combined: float | None
    ref: str | None


@dataclass(frozen=True, eq=False)
class ReactionResult:
    reaction: Reaction
    nu: Mapping[str, float]
    grid: ReactionFunctions
    curve: ReactionFunctions  # fine grid (covered range widened to the handbook grid)
    crossover_T: tuple[float, ...]
    character: Mapping[str, str]  # at 298.15 K
    steps: tuple[tuple[float, str], ...]  # combine: (factor, reaction id)
    hess_total: Mapping[str, np.ndarray] | None  # sum of the steps on the grid
    checks: tuple[MeasuredCheck, ...]


@dataclass(frozen=True, eq=False)
class Computed:
    handbook: Handbook  # values moved to the standard pressure
    element_refs: Mapping[str, Species]
    species: Mapping[str, SpeciesResult]
    reactions: Mapping[str, ReactionResult]
    findings: tuple[Finding, ...]
    # Several sources per value, review coverage, audit figures (generator.provenance) and
    # the network's reconciled formation enthalpies (generator.network).
    provenance: Provenance | None = None
    network: NetworkResult | None = None
    # Conversion, adiabatic, cell, family and ladder numbers (generator.design).
    design: Design | None = None

    @property
    def completeness(self) -> Completeness | None:
        return self.provenance.completeness if self.provenance else None


def chart_grid(lo: float, hi: float) -> np.ndarray:
    return np.linspace(lo, hi, CHART_POINTS)


def atom_species(handbook: Handbook) -> dict[str, Species]:
    """The first neutral gaseous monatomic species of each element, in file order."""
    out: dict[str, Species] = {}
    for s in handbook.species.values():
        if s.phase == "g" and s.charge == 0 and len(s.elements) == 1 and s.elements[0][1] == 1:
            out.setdefault(s.elements[0][0], s)
    return out


def _atoms(sp: Species, handbook: Handbook, atoms_of: Mapping[str, Species] | None = None
           ) -> tuple[tuple[str, str, float], ...] | None:
    """Gaseous-atom species for each element of ``sp``, or None if one is missing (or
    ``sp`` is an ion: taking it apart into neutral atoms does not balance its charge)."""
    if sp.charge:
        return None
    if atoms_of is None:
        atoms_of = atom_species(handbook)
    out = []
    for el, n in sp.elements:
        atom = atoms_of.get(el)
        if atom is None or atom.id == sp.id:
            return None
        out.append((el, atom.id, float(n)))
    return tuple(out)


def _atomization(sp: Species, atoms, handbook: Handbook) -> float | None:
    if not atoms or "dfH" not in sp.standard:
        return None
    total = -sp.standard["dfH"].preferred.value
    for _el, aid, n in atoms:
        a = handbook.species[aid].standard.get("dfH")
        if a is None:
            return None
        total += n * a.preferred.value
    return total


def evaluate_reaction(nu: Mapping[str, float], species: Mapping[str, Species],
                      grid: np.ndarray, electrons: int | None
                      ) -> tuple[ReactionFunctions, ReactionFunctions, tuple[float, ...]]:
    """Grid values, a smooth curve for the charts and the crossovers of one reaction."""
    on_grid = reaction_functions(nu, species, grid, electrons)
    covered = covered_range(nu, species)
    curve = reaction_functions(nu, species, chart_grid(float(min(grid)), float(max(grid))),
                               electrons)
    crossings = tuple(crossover_temperatures(nu, species, *covered)) if covered else ()
    return on_grid, curve, crossings


def _reaction_result(shared: tuple[Handbook, np.ndarray], rid: str) -> ReactionResult:
    """Grid values, chart curve, crossovers, Hess sum and character of one reaction."""
    hb, grid = shared
    rx = hb.reactions[rid]
    nu = rx.stoichiometry
    on_grid, curve, crossings = evaluate_reaction(nu, hb.species, grid, rx.electrons)
    hess_total = None
    if rx.combine:
        parts = [(s.factor, reaction_functions(hb.reactions[s.reaction].stoichiometry,
                                               hb.species, grid)) for s in rx.combine]
        hess_total = hess_sum(parts)
    # at 298.15 K: the grid's own point when it has one (the same elementwise operations
    # give the same numbers at one temperature or many)
    at = np.flatnonzero(grid == T_REF)
    k, at298 = (int(at[0]), on_grid) if at.size else (0, reaction_functions(nu, hb.species,
                                                                             [T_REF]))
    return ReactionResult(
        reaction=rx, nu=nu, grid=on_grid, curve=curve, crossover_T=crossings,
        character=character(float(at298.drH[k]), float(at298.drS[k]), float(at298.drG[k])),
        steps=tuple((s.factor, s.reaction) for s in rx.combine),
        hess_total=hess_total,
        checks=(),
    )


def _species_refs(sp: Species, element_refs: Mapping[str, Species]) -> dict[str, Species]:
    """The element reference states a species' formation functions read."""
    return {el: element_refs[el] for el in formation_coefficients(sp) if el in element_refs}


def _species_made(shared: tuple[Mapping[str, Species], Mapping[str, Mapping[str, Species]],
                                np.ndarray, Mapping[str, float]], sid: str
                  ) -> tuple[SpeciesFunctions, FormationFunctions, SpeciesFunctions,
                             tuple[Finding, ...]]:
    """A species' functions on the grid, its formation functions, its chart curve and the
    findings of its own consistency checks (generator.findings.species_checks)."""
    from generator.findings import species_checks

    species, refs, grid, tolerances = shared
    sp = species[sid]
    fine = chart_grid(sp.Tmin, sp.Tmax) if sp.cp else np.array([T_REF])
    return (species_functions(sp, grid), formation_functions(sp, refs[sid], grid),
            species_functions(sp, fine), tuple(species_checks(sp, refs[sid], tolerances)))


def _species_curves(species: Mapping[str, Species], element_refs: Mapping[str, Species],
                    grid: np.ndarray, tolerances: Mapping[str, float], jobs: int,
                    results: ResultStore | None, digester: Digester) -> dict[str, tuple]:
    """Every species' (functions on the grid, formation functions, chart curve, findings of
    its checks): pure functions of the species, its element reference states, the grid and
    the tolerances, kept in ``results`` under the digest of exactly those; the rest made by
    ``jobs`` forked processes.  The grid functions are handed to species_functions' memo,
    so the reactions that follow find them there."""
    refs = {sid: _species_refs(sp, element_refs) for sid, sp in species.items()}
    digests = {sid: digester.parts("species", sp, refs[sid], grid, tolerances)
               if results is not None else "" for sid, sp in species.items()}
    made = kept_or_made(results, "species", digests, tuple, _species_made,
                        (species, refs, grid, tolerances), jobs,
                        lambda todo: prepare_plans(species[sid] for sid in todo))
    for sid, parts in made.items():
        if results is not None:
            for i, part in enumerate(parts):
                digester.know(f"{digests[sid]}:{i}", part)
        remember_functions(species[sid], grid, parts[0])
    return made


def _reaction_from_cut(shared: tuple[Mapping[str, Handbook], np.ndarray], rid: str
                       ) -> ReactionResult:
    cuts, grid = shared
    return _reaction_result((cuts[rid], grid), rid)


def _reactions(hb: Handbook, grid: np.ndarray, jobs: int, results: ResultStore | None
               ) -> dict[str, ReactionResult]:
    """Every reaction's result, each computed from its own cut of the handbook
    (generator.neighbourhood.reaction_handbook) or taken from ``results`` under the
    digest of that cut and the grid."""
    cuts = {rid: reaction_handbook(hb, rid) for rid in hb.reactions}
    digester = digester_for(hb)
    digests = {rid: digester.cut(cut, "reaction", rid, grid) for rid, cut in cuts.items()}
    out = kept_or_made(results, "reaction", digests, ReactionResult, _reaction_from_cut,
                       (cuts, grid), jobs)
    if results is not None:
        for rid, rr in out.items():
            digester.know(digests[rid], rr, "grid", "curve", "hess_total")
    return {rid: _current(out[rid], hb.reactions[rid]) for rid in hb.reactions}


def _current(rr: ReactionResult, rx: Reaction) -> ReactionResult:
    """``rr`` holding this build's reaction object (a cached result holds an equal copy)."""
    from dataclasses import replace

    return rr if rr.reaction is rx else replace(rr, reaction=rx)


def compute_handbook(handbook: Handbook, today: dt.date | None = None, jobs: int = 1,
                     results: ResultStore | None = None) -> Computed:
    """Everything the handbook publishes; review ages are counted to ``today`` (default:
    ``provenance.today_from_environment``, SOURCE_DATE_EPOCH or the current date).  With
    ``jobs`` > 1 the reactions are computed by that many forked processes (the same
    numbers: each reaction is a pure function of its species).  ``results`` (a
    generator.results_cache.ResultsCache, or anything with its get and put) keeps each
    species' curves and each reaction's engine and design numbers between builds; this
    module does no I/O itself."""
    from generator.findings import engine_checks
    from generator.network import network_findings, solve_network
    from generator.provenance import provenance, today_from_environment

    element_refs, ref_findings = resolve_reference_states(handbook.species)
    hb = to_standard_pressure(handbook, element_refs)
    grid = np.asarray(hb.settings.temperatures, dtype=float)
    users: dict[str, list[str]] = {}
    for rid, rx in hb.reactions.items():
        for sid in rx.stoichiometry:
            users.setdefault(sid, []).append(rid)

    species: dict[str, SpeciesResult] = {}
    atoms_of = atom_species(hb)
    digester = digester_for(hb)
    curves = _species_curves(hb.species, element_refs, grid, hb.settings.tolerances, jobs,
                             results, digester)
    for sid, sp in hb.species.items():
        atoms = _atoms(sp, hb, atoms_of)
        on_grid, formation, curve, _checks = curves[sid]
        species[sid] = SpeciesResult(
            species=sp, grid=on_grid, formation=formation, curve=curve,
            reactions=tuple(sorted(users.get(sid, ()))),
            atomization=_atomization(sp, atoms, hb),
            atoms=atoms or (),
        )

    reactions = _reactions(hb, grid, jobs, results)
    computed = Computed(hb, element_refs, species, reactions, ())
    checks, findings = engine_checks(computed, {sid: made[3] for sid, made in curves.items()})
    reactions = {rid: _with_checks(r, checks.get(rid, ())) for rid, r in reactions.items()}
    prov = provenance(hb, today or today_from_environment())
    network = solve_network(hb, element_refs)
    findings += list(prov.findings) + network_findings(network)
    from dataclasses import replace

    from generator.design import compute_design

    computed = Computed(hb, element_refs, species, reactions, tuple(ref_findings + findings),
                        provenance=prov, network=network)
    return replace(computed, design=compute_design(computed, jobs, results))


def _with_checks(r: ReactionResult, checks) -> ReactionResult:
    from dataclasses import replace

    checks = tuple(checks)
    return r if checks == r.checks else replace(r, checks=checks)
