"""Reaction properties at temperature from the species functions (pure numpy, no I/O).

For net stoichiometric numbers nu_i (negative for reactants), with H on the scale
H(298.15 K) = dfH so that the elements cancel in a balanced reaction:

    drH = sum nu_i H_i(T),  drS = sum nu_i S_i(T),  drCp = sum nu_i Cp_i(T),
    drG = drH - T drS,  log10 K = -drG / (R T ln 10),  drU = drH - dn(gas) R T,
    E = -drG / (n F),  Etn = drH / (n F)   (for n electrons).

Uncertainties follow GUM (JCGM 100:2008) eq. (10) with the species' dfH and S as independent
inputs: u(drH)^2 = sum nu_i^2 u(dfH_i)^2, u(drS)^2 = sum nu_i^2 u(S_i)^2,
u(drG)^2 = u(drH)^2 + T^2 u(drS)^2, u(log10 K) = u(drG) / (R T ln 10).
Constants from CODATA 2018 (generator.thermo.constants).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from generator.model import Species
from generator.thermo.constants import LN10, F, R
from generator.thermo.species_props import (
    species_functions,
    species_table,
    standard_value,
    u_linear,
)

CROSSOVER_GRID = 400  # evaluation points over the covered range before refinement
CROSSOVER_TOL_K = 1e-6
REFINE_POINTS = 65  # each refinement narrows a bracket 64-fold in one vectorised call


@dataclass(frozen=True, eq=False)
class ReactionFunctions:
    """Arrays over T (K): energies kJ/mol, entropies and Cp J/(mol K), E and Etn V."""

    T: np.ndarray
    drH: np.ndarray
    drS: np.ndarray
    drG: np.ndarray
    drCp: np.ndarray
    drU: np.ndarray
    TdrS: np.ndarray
    log10K: np.ndarray
    K: np.ndarray  # inf where 10**log10K overflows a double; show log10K there
    E: np.ndarray | None
    Etn: np.ndarray | None
    u_drH: np.ndarray
    u_drS: np.ndarray
    u_drG: np.ndarray
    u_log10K: np.ndarray
    extrapolated: np.ndarray
    covered: tuple[float, float] | None


def _exact_zero_dfH(sp: Species) -> bool:
    """An element in its reference state (or H+(aq)) has dfH = 0 by definition: exact."""
    q = sp.standard.get("dfH")
    if q is None or q.preferred.value != 0.0:
        return False
    single_element = len(sp.elements) == 1 and sp.charge == 0
    proton = sp.elements == (("H", 1),) and sp.charge == 1 and sp.phase == "aq"
    return single_element or proton


def gas_change(nu: Mapping[str, float], species: Mapping[str, Species]) -> float:
    """dn(gas): the change in moles of gas-phase species."""
    return float(sum(n for sid, n in nu.items() if species[sid].phase == "g"))


def covered_range(nu: Mapping[str, float], species: Mapping[str, Species]
                  ) -> tuple[float, float] | None:
    """Where every species' Cp pieces apply: the intersection of their ranges."""
    lo, hi = -np.inf, np.inf
    for sid in nu:
        sp = species[sid]
        if not sp.cp:
            return None
        lo, hi = max(lo, sp.Tmin), min(hi, sp.Tmax)  # type: ignore[type-var]
    return (float(lo), float(hi)) if lo < hi else None


def _species_columns(members: Sequence[Species], T: np.ndarray, remember: bool) -> tuple:
    """H, S, Cp and extrapolated rows of ``members`` at the 1-D ``T``: through
    species_functions' memo when ``remember`` (a grid many reactions share, so each species
    is evaluated once per grid), else one species_table call.  The rows are equal either
    way (species_table computes each row by the same operations whatever the batch)."""
    if remember:
        fns = [species_functions(sp, T) for sp in members]
        return ([f.H for f in fns], [f.S for f in fns], [f.Cp for f in fns],
                [f.extrapolated for f in fns])
    table = species_table(members, T)
    return table.H, table.S, table.Cp, table.extrapolated


def reaction_functions(nu: Mapping[str, float], species: Mapping[str, Species],
                       T: np.ndarray | Sequence[float] | float,
                       electrons: int | None = None, remember: bool = True
                       ) -> ReactionFunctions:
    """All reaction properties over ``T`` for net stoichiometry ``nu`` (species id -> nu).
    ``remember``: keep the species' functions at ``T`` for the next reaction (False for
    temperatures no other reaction will ask for)."""
    Tf = np.atleast_1d(np.asarray(T, dtype=float))
    drH = np.zeros_like(Tf)
    drS = np.zeros_like(Tf)
    drCp = np.zeros_like(Tf)
    extrap = np.zeros(Tf.shape, dtype=bool)
    nus, u_H, u_S = [], [], []
    terms = sorted(nu.items())
    H, S, Cp, ex = _species_columns([species[sid] for sid, _n in terms], Tf.ravel(), remember)
    for i, (sid, n) in enumerate(terms):
        drH = drH + n * H[i].reshape(Tf.shape)
        drS = drS + n * S[i].reshape(Tf.shape)
        drCp = drCp + n * Cp[i].reshape(Tf.shape)
        extrap |= ex[i].reshape(Tf.shape)
        nus.append(n)
        u_dfH = standard_value(species[sid], "dfH")[1]
        u_H.append(0.0 if _exact_zero_dfH(species[sid]) else u_dfH)
        u_S.append(standard_value(species[sid], "S")[1])
    drG = drH - Tf * drS / 1000.0
    with np.errstate(over="ignore"):
        log10K = -1000.0 * drG / (R * Tf * LN10)
        K = np.power(10.0, log10K)
    drU = drH - gas_change(nu, species) * R * Tf / 1000.0
    u_drH = np.asarray(u_linear(nus, u_H), dtype=float) * np.ones_like(Tf)
    u_drS = np.asarray(u_linear(nus, u_S), dtype=float) * np.ones_like(Tf)
    u_drG = np.sqrt(u_drH**2 + (Tf * u_drS / 1000.0) ** 2)
    u_log10K = 1000.0 * u_drG / (R * Tf * LN10)
    E = Etn = None
    if electrons:
        E = -1000.0 * drG / (electrons * F)
        Etn = 1000.0 * drH / (electrons * F)
    return ReactionFunctions(
        T=Tf, drH=drH, drS=drS, drG=drG, drCp=drCp, drU=drU, TdrS=Tf * drS / 1000.0,
        log10K=log10K, K=K, E=E, Etn=Etn, u_drH=u_drH, u_drS=u_drS, u_drG=u_drG,
        u_log10K=u_log10K, extrapolated=extrap, covered=covered_range(nu, species),
    )


def hess_sum(parts: Sequence[tuple[float, ReactionFunctions]]) -> dict[str, np.ndarray]:
    """Hess's law: the properties of sum(factor * step) are sum(factor * properties).

    Returns drH, drS, drG, drCp, drU; uncertainties are not summed here, because steps that
    share species are correlated; take them from the net stoichiometry instead."""
    out: dict[str, np.ndarray] = {}
    for name in ("drH", "drS", "drG", "drCp", "drU"):
        out[name] = sum(f * getattr(rf, name) for f, rf in parts)  # type: ignore[assignment]
    return out


def crossover_temperatures(nu: Mapping[str, float], species: Mapping[str, Species],
                           lo: float, hi: float) -> list[float]:
    """Every T in [lo, hi] where drG(T) = 0, on the real curves.

    A grid of CROSSOVER_GRID points brackets each sign change; each bracket is then narrowed
    to CROSSOVER_TOL_K by repeated subdivision into REFINE_POINTS points (a vectorised
    bisection); a grid point exactly at zero counts once."""

    terms = sorted(nu.items())
    members = [species[sid] for sid, _n in terms]

    def drG(T: np.ndarray, remember: bool = False) -> np.ndarray:
        """reaction_functions(...).drG by the same operations, without the rest; the first
        grid depends only on the covered range, which reactions share, so its species
        values are remembered."""
        H, S, _Cp, _ex = _species_columns(members, T, remember)
        drH = np.zeros_like(T)
        drS = np.zeros_like(T)
        for i, (_sid, n) in enumerate(terms):
            drH = drH + n * H[i]
            drS = drS + n * S[i]
        return drH - T * drS / 1000.0

    grid = np.linspace(lo, hi, CROSSOVER_GRID)
    g = drG(grid, remember=True)
    if np.all(np.abs(g) < 1e-12):
        return []  # identically zero: at equilibrium everywhere, no crossover to report
    ga, gb = g[:-1], g[1:]
    finite = np.isfinite(ga) & np.isfinite(gb)
    at_zero = np.flatnonzero(finite & (ga == 0.0))
    brackets = np.flatnonzero(finite & (ga * gb < 0.0))
    a, b = grid[brackets], grid[brackets + 1]
    while a.size and float(np.max(b - a)) > CROSSOVER_TOL_K:  # every bracket in one call
        sub = np.linspace(a, b, REFINE_POINTS, axis=1)
        gs = drG(sub.ravel()).reshape(sub.shape)
        change = np.sign(gs[:, :-1]) * np.sign(gs[:, 1:]) <= 0.0
        k = np.argmax(change, axis=1)
        rows = np.arange(a.size)
        a, b = sub[rows, k], sub[rows, k + 1]
    found = [(int(i), float(grid[i])) for i in at_zero]
    found += [(int(i), float(0.5 * (x + y))) for i, x, y in zip(brackets, a, b, strict=True)]
    roots: list[float] = []
    for _i, T in sorted(found):
        if not roots or abs(roots[-1] - T) > CROSSOVER_TOL_K:
            roots.append(T)
    if g[-1] == 0.0 and (not roots or abs(roots[-1] - hi) > CROSSOVER_TOL_K):
        roots.append(float(hi))
    return roots


def character(drH: float, drS: float, drG: float) -> dict[str, str]:
    """The trade's words for a reaction at one temperature."""
    words = {
        "enthalpy": "exothermic" if drH < 0 else "endothermic" if drH > 0 else "thermoneutral",
        "gibbs": "exergonic" if drG < 0 else "endergonic" if drG > 0 else "at equilibrium",
        "entropy": "entropy rising" if drS > 0 else "entropy falling" if drS < 0
        else "entropy unchanged",
    }
    h_favours, s_favours = drH < 0, drS > 0
    if (drH == 0) != (drS == 0):
        term = "entropy" if drH == 0 else "enthalpy"
        words["driver"] = f"only the {term} term acts"
        return words
    if drG < 0:
        driver = ("favoured by both the enthalpy and the entropy term" if h_favours and s_favours
                  else "enthalpy-driven; the entropy term opposes" if h_favours
                  else "entropy-driven; the enthalpy term opposes")
    elif drG > 0:
        driver = ("opposed by both the enthalpy and the entropy term"
                  if not h_favours and not s_favours
                  else "held back by the entropy term despite the favourable enthalpy"
                  if h_favours else
                  "held back by the enthalpy term despite the favourable entropy")
    else:
        driver = "the enthalpy and entropy terms balance"
    words["driver"] = driver
    return words
