"""Equilibrium extent of one reaction at given T and P (pure numpy, no I/O).

With net stoichiometric numbers nu_i (negative for reactants) and a feed n_i0 (mol, inerts
allowed), the amounts at extent xi are n_i = n_i0 + nu_i xi, and equilibrium is the root of

    g(xi) = ln Q(xi) - ln K(T),   ln Q = sum_i nu_i ln a_i,

with the ideal activities of the usual treatment of reaction equilibria (e.g. Smith, Van Ness
& Abbott, Introduction to Chemical Engineering Thermodynamics, 7th ed., ch. 13):

* gas (phase g):       a_i = y_i P / P°, y_i = n_i / n_gas (gas inerts count in n_gas);
* pure condensed (l, cr, s): a_i = 1 while present (liquid water as solvent included);
* aqueous solute (aq): a_i = m_i / (1 mol/kg), m_i = n_i / w.

Assumption (dilute solution): the solvent mass w is the mass of liquid water in the feed,
held constant over the extent; water made or used by the reaction does not change it.

Bounds: xi_max = min over reactants of n_i0/|nu_i|, xi_min = max over products of
-n_i0/nu_i (negative when the feed holds every product).  g is non-decreasing in xi
(dg/dxi = sum_gas nu_i^2/n_i - dnu_gas^2/n_gas + sum_aq nu_i^2/n_i >= 0 by the Cauchy-Schwarz
inequality), so there is at most one root.  When the species exhausted at a bound is a pure
condensed phase, g stays finite there and the equilibrium may lie at the bound: the result
then names that species in ``limited_by``.  Otherwise the root is found by bisection on xi
(vectorised over T), always inside the bounds; a root within 1e-6 of the bracket from a bound
is then refined by bisection on ln(distance to that bound), so trace amounts (e.g. a
dissociation at low T) keep their relative precision.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from generator.model import Species
from generator.thermo.constants import LN10, P_BAR
from generator.thermo.reactions import reaction_functions

BISECT_STEPS = 80  # halvings of the extent bracket: below double resolution
LOG_STEPS = 100  # halvings of the ln(distance) bracket in the refinement
NEAR_BOUND = 1e-6  # relative distance to a bound below which the root is refined
WATER_MOLAR_MASS = 18.01528  # g/mol (IUPAC 2013 standard atomic weights), if none given

CONDENSED = ("l", "cr", "s")


@dataclass(frozen=True)
class EquilibriumResult:
    """Equilibrium at one T (K) and total P (Pa).

    ``extent`` in mol; ``conversion`` of the first reactant as written (None when the feed
    holds none of it); ``x`` amount fractions over every species present (all phases,
    inerts included) and ``n`` amounts (mol), both by species id; ``limited_by`` the
    species used up when the equilibrium lies at a bound of the extent."""

    T: float
    P: float
    extent: float
    conversion: float | None
    x: Mapping[str, float]
    limited_by: str | None
    note: str
    n: Mapping[str, float] = field(default_factory=dict)
    bounds: tuple[float, float] = (0.0, 0.0)
    extrapolated: bool = False


@dataclass(frozen=True, eq=False)
class EquilibriumCurve:
    """Equilibrium conversion (and extent) over ``T`` at one pressure P (Pa) for one feed."""

    feed: Mapping[str, float]
    P: float
    T: np.ndarray
    extent: np.ndarray
    conversion: np.ndarray  # NaN where the first reactant is absent from the feed
    extrapolated: np.ndarray


def is_water_liquid(sp: Species) -> bool:
    """Liquid H2O, the solvent of aqueous solutes."""
    return sp.phase == "l" and sp.charge == 0 and dict(sp.elements) == {"H": 2, "O": 1}


def stoichiometric_feed(nu: Mapping[str, float]) -> dict[str, float]:
    """The reactants in their stoichiometric amounts (mol)."""
    return {sid: -n for sid, n in nu.items() if n < 0}


def extent_bounds(nu: Mapping[str, float], feed: Mapping[str, float]) -> tuple[float, float]:
    """(xi_min, xi_max): the extents at which a product (backwards) or a reactant
    (forwards) is used up."""
    hi = min((feed.get(s, 0.0) / -n for s, n in nu.items() if n < 0), default=np.inf)
    lo = max((-feed.get(s, 0.0) / n for s, n in nu.items() if n > 0), default=-np.inf)
    return float(lo), float(hi)


def _label(sp: Species) -> str:
    return f"{sp.formula}({sp.phase})"


class _System:
    """The arrays of one feed: amounts, stoichiometry and the kind of each species."""

    def __init__(self, nu, species, feed, P, standard_pressure):
        ids = list(dict.fromkeys([*feed, *nu]))
        for sid in ids:
            if sid not in species:
                raise ValueError(f"unknown species '{sid}'")
        if any(not np.isfinite(v) or v < 0 for v in feed.values()):
            raise ValueError("feed amounts must be finite and not negative")
        if sum(feed.values()) <= 0:
            raise ValueError("the feed is empty")
        if not (np.isfinite(P) and P > 0):
            raise ValueError("the pressure must be positive")
        self.ids = ids
        self.n0 = np.array([float(feed.get(s, 0.0)) for s in ids])
        self.nu = np.array([float(nu.get(s, 0.0)) for s in ids])
        phases = [species[s].phase for s in ids]
        self.gas = np.array([p == "g" for p in phases])
        self.aq = np.array([p == "aq" for p in phases])
        self.reactive = self.nu != 0.0
        self.lnP = float(np.log(P / standard_pressure))
        water = [s for s in ids if is_water_liquid(species[s])]
        w = sum(feed.get(s, 0.0) * (species[s].molar_mass or WATER_MOLAR_MASS) / 1000.0
                for s in water)
        if np.any(self.aq & self.reactive) and w <= 0:
            raise ValueError("aqueous species need the solvent: put H2O(l) in the feed")
        self.ln_w = float(np.log(w)) if w > 0 else 0.0

    def g(self, n: np.ndarray, lnK: np.ndarray) -> np.ndarray:
        """ln Q - ln K for amounts n of shape (k, m)."""
        with np.errstate(divide="ignore", invalid="ignore"):
            ln_n = np.where(n > 0, np.log(np.where(n > 0, n, 1.0)), -np.inf)
            n_gas = np.sum(np.where(self.gas, n, 0.0), axis=1, keepdims=True)
            ln_gas = np.log(n_gas) if np.any(self.gas) else np.zeros_like(n_gas)
            ln_a = np.where(self.gas, ln_n - ln_gas + self.lnP,
                            np.where(self.aq, ln_n - self.ln_w, 0.0))
            terms = np.where(self.reactive, self.nu * ln_a, 0.0)
            return np.sum(terms, axis=1) - lnK


def _bisect(fn, a: np.ndarray, b: np.ndarray, steps: int) -> tuple[np.ndarray, np.ndarray]:
    """Vectorised bisection of a non-decreasing fn with fn(a) < 0 <= fn(b); the final
    bracket (a, b)."""
    a, b = a.copy(), b.copy()
    for _ in range(steps):
        m = 0.5 * (a + b)
        up = fn(m) >= 0
        b = np.where(up, m, b)
        a = np.where(up, a, m)
    return a, b


def equilibrium(nu: Mapping[str, float], species: Mapping[str, Species],
                feed: Mapping[str, float], T: float | Sequence[float] | np.ndarray, P: float,
                *, standard_pressure: float = P_BAR,
                first_reactant: str | None = None) -> tuple[EquilibriumResult, ...]:
    """Equilibrium of the reaction ``nu`` (species id -> nu) from ``feed`` (species id ->
    mol) at each temperature in ``T`` (K) and total pressure ``P`` (Pa); activities are
    referred to ``standard_pressure`` (Pa).  Raises ValueError on an unusable feed."""
    Tf = np.atleast_1d(np.asarray(T, dtype=float))
    sys_ = _System(nu, species, feed, P, standard_pressure)
    rf = reaction_functions(nu, species, Tf)
    lnK = np.asarray(rf.log10K, dtype=float) * LN10
    lo, hi = extent_bounds(nu, feed)
    first = first_reactant or next((s for s, n in nu.items() if n < 0), None)
    k = len(Tf)

    def at_xi(xi: np.ndarray) -> np.ndarray:
        return sys_.n0[None, :] + xi[:, None] * sys_.nu[None, :]

    def exact_base(xi: float) -> np.ndarray:
        base = sys_.n0 + xi * sys_.nu
        scale = max(float(np.max(sys_.n0)), 1.0)
        base[np.abs(base) <= 1e-12 * scale] = 0.0
        return np.maximum(base, 0.0)

    notes = [""] * k
    limited: list[str | None] = [None] * k
    n_eq = np.full((k, len(sys_.ids)), np.nan)
    xi_eq = np.full(k, np.nan)
    ok = np.isfinite(lnK)
    for i in np.flatnonzero(~ok):
        notes[i] = "K unknown at this temperature (missing data)"
    if not (np.isfinite(lo) and np.isfinite(hi)):
        raise ValueError("the reaction has no reactants or no products")
    if hi - lo <= 0.0:
        n_eq[ok] = sys_.n0
        xi_eq[ok] = 0.0
        for i in np.flatnonzero(ok):
            notes[i] = "the feed can react neither forwards nor backwards"
    else:
        n_lo, n_hi = exact_base(lo), exact_base(hi)
        lim_hi = _limiting(sys_, species, hi, reactants=True)
        lim_lo = _limiting(sys_, species, lo, reactants=False)
        g_lo = sys_.g(np.tile(n_lo, (k, 1)), lnK)
        g_hi = sys_.g(np.tile(n_hi, (k, 1)), lnK)
        at_hi = ok & (g_hi <= 0)
        at_lo = ok & ~at_hi & (g_lo >= 0)
        inside = ok & ~at_hi & ~at_lo
        n_eq[at_hi], xi_eq[at_hi] = n_hi, hi
        n_eq[at_lo], xi_eq[at_lo] = n_lo, lo
        for i in np.flatnonzero(at_hi):
            limited[i] = lim_hi
            notes[i] = f"{_label(species[lim_hi])} is used up: the reaction runs to completion"
        for i in np.flatnonzero(at_lo):
            limited[i] = lim_lo
            notes[i] = (f"{_label(species[lim_lo])} is used up: equilibrium lies at the "
                        "lower bound of the extent" if lo < 0 else
                        f"no {_label(species[lim_lo])} in the feed and the reaction is not "
                        "favoured: no reaction")
        if np.any(inside):
            idx = np.flatnonzero(inside)
            lk = lnK[idx]
            a, b = _bisect(lambda xi: sys_.g(at_xi(xi), lk), np.full(len(idx), lo),
                           np.full(len(idx), hi), BISECT_STEPS)
            xi = 0.5 * (a + b)
            n_in = at_xi(xi)
            span = hi - lo
            _refine(sys_, lk, n_lo, b - lo, (xi - lo) < NEAR_BOUND * span, +1, xi, n_in, lo)
            _refine(sys_, lk, n_hi, hi - a, (hi - xi) < NEAR_BOUND * span, -1, xi, n_in, hi)
            n_eq[idx], xi_eq[idx] = np.maximum(n_in, 0.0), xi
    return tuple(_result(sys_, Tf[i], P, xi_eq[i], n_eq[i], first, limited[i], notes[i],
                         (lo, hi), bool(rf.extrapolated[i])) for i in range(k))


def _limiting(sys_: _System, species, xi: float, reactants: bool) -> str:
    """The species exhausted at the bound xi (the first in feed order on a tie)."""
    sel = sys_.nu < 0 if reactants else sys_.nu > 0
    left = np.where(sel, np.abs(sys_.n0 + xi * sys_.nu), np.inf)
    return sys_.ids[int(np.argmin(left))]


def _refine(sys_: _System, lnK, base, d_max, near, direction: int, xi, n, bound) -> None:
    """Refine, in place, roots within NEAR_BOUND of a bound by bisection on ln d, with the
    amounts written as base + direction * d * nu from the exact amounts at the bound."""
    if not np.any(near):
        return
    j = np.flatnonzero(near)
    lk = lnK[j]
    scale = max(float(np.max(sys_.n0)), 1.0)

    def g_of(t: np.ndarray) -> np.ndarray:
        d = np.exp(t)
        vals = sys_.g(base[None, :] + direction * d[:, None] * sys_.nu[None, :], lk)
        return vals if direction > 0 else -vals

    t_lo = np.full(len(j), np.log(scale * 1e-300))
    t_hi = np.log(np.maximum(d_max[j], scale * 1e-300))
    good = (g_of(t_lo) < 0) & (g_of(t_hi) >= 0)
    if not np.any(good):
        return
    a, b = _bisect(g_of, t_lo[good], t_hi[good], LOG_STEPS)
    d = np.exp(0.5 * (a + b))
    jj = j[good]
    n[jj] = base[None, :] + direction * d[:, None] * sys_.nu[None, :]
    xi[jj] = bound + direction * d


def _result(sys_: _System, T, P, xi, n, first, limited, note, bounds, extrap
            ) -> EquilibriumResult:
    amounts = {s: float(v) for s, v in zip(sys_.ids, n, strict=True)}
    total = float(np.sum(n))
    x = {s: (v / total if total > 0 else float("nan")) for s, v in amounts.items()}
    conversion = None
    if first is not None:
        n0 = float(sys_.n0[sys_.ids.index(first)])
        if n0 > 0:
            conversion = 1.0 - amounts[first] / n0
    return EquilibriumResult(T=float(T), P=float(P), extent=float(xi), conversion=conversion,
                             x=x, limited_by=limited, note=note, n=amounts, bounds=bounds,
                             extrapolated=extrap)


def equilibrium_curves(nu: Mapping[str, float], species: Mapping[str, Species],
                       feeds: Sequence[Mapping[str, float]], T: Sequence[float] | np.ndarray,
                       pressures: Sequence[float], *, standard_pressure: float = P_BAR,
                       first_reactant: str | None = None) -> list[EquilibriumCurve]:
    """Equilibrium conversion over ``T`` for each feed at each pressure (Pa), for a sheet's
    chart: one curve per (feed, pressure), feeds outermost."""
    Tf = np.atleast_1d(np.asarray(T, dtype=float))
    curves = []
    for feed in feeds:
        for P in pressures:
            res = equilibrium(nu, species, feed, Tf, P, standard_pressure=standard_pressure,
                              first_reactant=first_reactant)
            curves.append(EquilibriumCurve(
                feed=dict(feed), P=float(P), T=Tf,
                extent=np.array([r.extent for r in res]),
                conversion=np.array([np.nan if r.conversion is None else r.conversion
                                     for r in res]),
                extrapolated=np.array([r.extrapolated for r in res])))
    return curves


__all__ = ["EquilibriumResult", "EquilibriumCurve", "equilibrium", "equilibrium_curves",
           "extent_bounds", "stoichiometric_feed", "is_water_liquid"]
