"""Adiabatic temperature of a reaction run to completion (pure numpy, no I/O).

First-law balance of a steady adiabatic reactor with no work (e.g. Smith, Van Ness & Abbott,
Introduction to Chemical Engineering Thermodynamics, 7th ed., sec. 4.7), with H on the scale
H(298.15 K) = dfH so that the heat of reaction is carried by the species enthalpies:

    sum_in n_i H_i(T_in) = sum_out n_j H_j(T_out),   n_out = n_in + nu xi_max,

xi_max being complete conversion of the limiting reactant.  Every outlet species keeps the
phase written (no condensation, vaporisation or dissociation).  T_out is found by bisection
on [T_MIN, T_MAX] = [100 K, 6000 K] to within TOL_K; a balance that cannot close inside that
range returns the bound with ``capped`` set.  ``extrapolated`` is set when T_out lies beyond
the Cp data of an outlet species present (the curves then continue with the nearest fit).

The bisection is vectorised: each step evaluates the balance at SEARCH_POINTS temperatures
across the bracket in one call and keeps the sub-interval where it first turns from short
to surplus, so the 0.01 K bracket is reached in four evaluations instead of nineteen.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from generator.model import Species
from generator.thermo.equilibrium import extent_bounds
from generator.thermo.species_props import species_enthalpies

T_MIN = 100.0  # K, lower end of the search
T_MAX = 6000.0  # K, upper end of the search (the usual top of NASA 9-coefficient fits)
TOL_K = 0.01  # K: final bracket width, well inside the 0.1 K asked for
SEARCH_POINTS = 129  # temperatures per vectorised bisection step (the bracket shrinks 128-fold)


@dataclass(frozen=True)
class AdiabaticResult:
    """T_in, T_out and rise in K; ``outlet`` moles by species id; ``extent`` in mol."""

    T_in: float
    T_out: float
    rise: float
    extent: float
    limited_by: str | None
    outlet: Mapping[str, float] = field(default_factory=dict)
    extrapolated: bool = False
    capped: bool = False
    note: str = ""


def _enthalpy_curve(amounts: Mapping[str, float], species: Mapping[str, Species],
                    T: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """sum n_i H_i(T) (kJ) over the array ``T`` and where any species present is
    extrapolated."""
    return _enthalpies((amounts,), species, T)[0]


def _enthalpies(sets, species: Mapping[str, Species], T: np.ndarray) -> list[tuple]:
    """sum n_i H_i(T) (kJ) and where any species present (n > 0) is extrapolated, for each
    mapping of amounts in ``sets`` over the same ``T``: one species table for every species
    any of them holds (species_enthalpies: the enthalpy alone, the bits species_functions
    gives; the search's temperatures are asked for once, so they are not remembered), each
    sum in its mapping's order."""
    present = [[(sid, n) for sid, n in amounts.items() if n > 0] for amounts in sets]
    members = list(dict.fromkeys(sid for terms in present for sid, _n in terms))
    H, flags = species_enthalpies([species[sid] for sid in members], T.ravel()) if members \
        else (None, None)
    row = {sid: i for i, sid in enumerate(members)}
    out = []
    for terms in present:
        total, extrap = np.zeros_like(T), np.zeros(T.shape, dtype=bool)
        for sid, n in terms:
            total = total + n * H[row[sid]].reshape(T.shape)
            extrap = extrap | flags[row[sid]].reshape(T.shape)
        out.append((total, extrap))
    return out


def _enthalpy(amounts: Mapping[str, float], species: Mapping[str, Species], T: float
              ) -> tuple[float, bool]:
    """sum n_i H_i(T) (kJ) and whether any species present is extrapolated at T."""
    total, extrap = _enthalpy_curve(amounts, species, np.asarray([float(T)]))
    return float(total[0]), bool(extrap[0])


def _first_rise(lo: float, hi: float, excess) -> float:
    """Narrow [lo, hi] (short at lo, surplus at hi) to TOL_K around the first temperature
    where the balance turns from short to surplus; returns the bracket's middle."""
    while hi - lo > TOL_K:
        sub = np.linspace(lo, hi, SEARCH_POINTS)
        short = ~(excess(sub) >= 0.0)  # NaN counts as short, as the scalar bisection did
        short[0], short[-1] = True, False
        k = int(np.flatnonzero(short[:-1] & ~short[1:])[0])
        lo, hi = float(sub[k]), float(sub[k + 1])
    return 0.5 * (lo + hi)


def adiabatic_temperature(nu: Mapping[str, float], species: Mapping[str, Species],
                          feed: Mapping[str, float], T_in: float = 298.15) -> AdiabaticResult:
    """Outlet temperature of ``feed`` (species id -> mol, inerts allowed) at ``T_in`` (K)
    after complete conversion of the limiting reactant of ``nu``, with no heat loss."""
    if not (np.isfinite(T_in) and T_in > 0):
        raise ValueError("T_in must be a positive temperature")
    for sid in [*feed, *nu]:
        if sid not in species:
            raise ValueError(f"unknown species '{sid}'")
    if any(not np.isfinite(v) or v < 0 for v in feed.values()):
        raise ValueError("feed amounts must be finite and not negative")
    xi = max(extent_bounds(nu, feed)[1], 0.0)
    limiting = None
    if xi > 0:
        limiting = min((s for s, n in nu.items() if n < 0), key=lambda s: feed[s] / -nu[s])
    outlet = {s: feed.get(s, 0.0) + nu.get(s, 0.0) * xi for s in dict.fromkeys([*feed, *nu])}
    if limiting is not None:
        outlet[limiting] = 0.0  # exactly used up
    outlet = {s: max(n, 0.0) for s, n in outlet.items()}
    # the feed at T_in and the outlet at T_in and both ends of the search, in one table
    (h_feed, _), (h_out, _) = _enthalpies((feed, outlet), species,
                                          np.array([float(T_in), T_MIN, T_MAX]))
    H_in = float(h_feed[0])
    at_T_in, at_lo, at_hi = (float(h) - H_in for h in h_out)

    def excess(T):
        return _enthalpy_curve(outlet, species, T)[0] - H_in

    if not np.isfinite(H_in) or not np.isfinite(at_T_in):
        return AdiabaticResult(T_in, float("nan"), float("nan"), xi, limiting, outlet,
                               note="a species lacks dfH or Cp data: no energy balance")
    lo, hi = T_MIN, T_MAX
    capped, note = False, ""
    if xi == 0:
        T_out = T_in
        note = "a reactant is missing from the feed: no reaction"
    elif at_hi < 0:
        T_out, capped = hi, True
        note = f"the energy balance does not close below {T_MAX:g} K"
    elif at_lo > 0:
        T_out, capped = lo, True
        note = f"the energy balance does not close above {T_MIN:g} K"
    else:
        T_out = _first_rise(lo, hi, excess)
    extrap = _enthalpy(outlet, species, T_out)[1]
    if extrap:
        note = (note + "; " if note else "") + "T_out lies beyond the Cp data of an outlet " \
            "species (extrapolated)"
    return AdiabaticResult(T_in=float(T_in), T_out=float(T_out), rise=float(T_out - T_in),
                           extent=float(xi), limited_by=limiting, outlet=outlet,
                           extrapolated=extrap, capped=capped, note=note)


def adiabatic_caution(rise: float, threshold_K: float) -> str | None:
    """The process-safety caution for a sheet whose adiabatic rise exceeds the handbook's
    ``adiabatic_caution_K``, or None."""
    if not (np.isfinite(rise) and rise > threshold_K):
        return None
    return (f"Process-safety caution: on complete conversion with no heat loss this feed "
            f"heats up by about {rise:.0f} K, more than the handbook's {threshold_K:g} K "
            "threshold, so the reaction has runaway potential. Follow the applicable local "
            "codes and standards and have a qualified process hazard review done before "
            "design or operation.")


__all__ = ["AdiabaticResult", "adiabatic_temperature", "adiabatic_caution", "T_MIN", "T_MAX",
           "TOL_K"]
