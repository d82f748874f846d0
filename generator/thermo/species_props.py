"""Species properties at temperature: Cp, H - H298, S, G, gef and formation properties.

Anchoring (the usual thermochemical-table construction, e.g. Chase 1998, JANAF
Thermochemical Tables 4th ed., introduction):

    H(T) = dfH(298.15) + integral_{298.15}^{T} Cp dT,
    S(T) = S(298.15)   + integral_{298.15}^{T} Cp/T dT,

so H is on the scale H(298.15 K) = dfH; G = H - T S; gef = -(G - H298)/T.  The integrals run
piece by piece with each piece's exact antiderivative, the pieces joined by cumulative
values at the switch points.  The fits' own integration constants (Shomate F, G, H; NASA
a6, a7, b1, b2) are not used here: the standard block at 298.15 K is the anchor.

Choices, documented once:

* Pieces are sorted by Tmin.  Piece i+1 takes over at its own Tmin when the pieces touch or
  overlap, at the middle of a gap otherwise (the nearest piece governs).
* ``extrapolated`` flags every T outside the union of the pieces' [Tmin, Tmax], except
  298.15 K itself, whose values are the standard block.  When 298.15 K lies outside the
  pieces (data starting at 300 K), the nearest piece is extended to 298.15 K for the
  anchor; the anchor itself is not flagged, but other temperatures below the first Tmin
  (e.g. 299 K) are.
* Outside the covered range each curve continues with the nearest piece's own formula (not
  Cp held constant): Cp, H and S stay smooth at the range ends, the result matches what a
  NASA-polynomial evaluator gives, and every such value carries the ``extrapolated`` flag.
* No Cp pieces but a standard Cp: Cp is held at that value at all T (basis ``constant-Cp``),
  every T other than 298.15 K is flagged.
* No Cp at all: only 298.15 K is available (basis ``none``): Cp is NaN everywhere; H - H298
  and S are given at 298.15 K and NaN elsewhere (flagged).  Cp = 0 would give numbers that
  look real; the caller may still choose a drCp = 0 approximation explicitly.
* A missing standard value (no dfH, no S) gives NaN in every array that needs it; the
  caller reports it.  H - H298, Cp and gef need neither.

Uncertainty (GUM, JCGM 100:2008, eq. (10), independent inputs): u(dfH(T)) and u(S(T)) are
taken as those of the 298.15 K values; the Cp integral's own uncertainty is not modelled.
"""

from __future__ import annotations

from collections import OrderedDict
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from generator.model import CpPiece, Species
from generator.thermo import cp_models
from generator.thermo.constants import LN10, T_REF, R

T_REF_TOL = 1e-6  # K: a temperature this close to 298.15 K is the reference temperature

NAN = float("nan")


def u_combined(sensitivities: Sequence[float], uncs: Sequence[float | None | np.ndarray]):
    """Combined standard uncertainty of independent inputs, GUM JCGM 100:2008 eq. (10):
    u_c^2 = sum (df/dx_i)^2 u(x_i)^2.  A term with a non-zero sensitivity and an unknown
    (None) uncertainty makes the result NaN; arrays broadcast."""
    total: float | np.ndarray = 0.0
    for c, u in zip(sensitivities, uncs, strict=True):
        if c == 0.0:
            continue
        if u is None:
            return NAN
        total = total + (c * np.asarray(u, dtype=float)) ** 2
    return np.sqrt(total)


def u_linear(coeffs: Sequence[float], uncs: Sequence[float | None | np.ndarray]):
    """u of f = sum c_i x_i (independent x_i): GUM eq. (10) with df/dx_i = c_i."""
    return u_combined(coeffs, uncs)


def standard_value(species: Species, name: str) -> tuple[float, float | None]:
    """The preferred standard value (canonical unit) and its uncertainty; NaN when absent."""
    q = species.standard.get(name)
    if q is None or not q.values:
        return NAN, None
    v = q.preferred
    return float(v.value), v.unc


def _readonly(a: np.ndarray) -> np.ndarray:
    a = np.asarray(a)
    a.setflags(write=False)
    return a


@dataclass(frozen=True, eq=False)
class SpeciesFunctions:
    """Arrays over ``T`` (K).  H, G in kJ/mol on the scale H(298.15) = dfH; S, Cp, gef in
    J/(mol K).  ``covered`` is (min Tmin, max Tmax) of the pieces, None without pieces."""

    T: np.ndarray
    Cp: np.ndarray
    H_minus_H298: np.ndarray
    H: np.ndarray
    S: np.ndarray
    G: np.ndarray
    gef: np.ndarray
    extrapolated: np.ndarray
    covered: tuple[float, float] | None
    basis: str  # "cp-pieces", "constant-Cp" or "none"
    dfH298: float
    S298: float
    u_dfH: float | None
    u_S: float | None

    def u_G(self) -> np.ndarray | float:
        """u(G(T)) = sqrt(u(dfH)^2 + (T u(S)/1000)^2), GUM eq. (10)."""
        u_TS = None if self.u_S is None else self.T * self.u_S / 1000.0
        return u_linear([1.0, 1.0], [self.u_dfH, u_TS])


def _layout(pieces: Iterable[CpPiece]) -> tuple[list[CpPiece], np.ndarray]:
    """Pieces sorted by Tmin and the switch temperatures between neighbours."""
    ordered = sorted(pieces, key=lambda p: (p.Tmin, p.Tmax))
    switches = []
    for lo, hi in zip(ordered[:-1], ordered[1:], strict=True):
        switches.append(hi.Tmin if lo.Tmax >= hi.Tmin else 0.5 * (lo.Tmax + hi.Tmin))
    return ordered, np.asarray(switches, dtype=float)


def _governing(switches: np.ndarray, T: np.ndarray) -> np.ndarray:
    return np.searchsorted(switches, T, side="right")


def _anchored(pieces: list[CpPiece], switches: np.ndarray, idx: np.ndarray, T: np.ndarray,
              anti) -> np.ndarray:
    """integral_{298.15}^{T} of the piecewise model, with ``anti`` the antiderivative."""
    offset = _offsets(pieces, switches, anti)
    out = np.empty_like(T)
    for i, p in enumerate(pieces):
        sel = idx == i
        if np.any(sel):
            out[sel] = anti(p, T[sel]) + offset[i]
    return out


def _offsets(pieces: list[CpPiece], switches: np.ndarray, anti) -> list[float]:
    """Per piece, the constant that joins its antiderivative to 0 at 298.15 K through the
    switch points (cumulative values carried across each switch)."""
    n = len(pieces)
    k = int(_governing(switches, np.asarray([T_REF]))[0])
    offset = [0.0] * n
    offset[k] = -float(anti(pieces[k], T_REF))
    for i in range(k, n - 1):  # upwards across switch i (between piece i and i+1)
        s = switches[i]
        offset[i + 1] = float(anti(pieces[i], s)) + offset[i] - float(anti(pieces[i + 1], s))
    for i in range(k, 0, -1):  # downwards across switch i-1
        s = switches[i - 1]
        offset[i - 1] = float(anti(pieces[i], s)) + offset[i] - float(anti(pieces[i - 1], s))
    return offset


@dataclass(frozen=True, eq=False)
class _Plan:
    """What a species' Cp pieces give independently of T: order, switches, offsets."""

    pieces: tuple[CpPiece, ...]
    switches: np.ndarray
    models: tuple[tuple, ...]
    h_offset: tuple[float, ...]
    s_offset: tuple[float, ...]
    covered: tuple[float, float]


def _make_plan(cp: tuple[CpPiece, ...]) -> _Plan:
    pieces, switches = _layout(cp)
    models = tuple(cp_models._model(p) for p in pieces)
    return _Plan(
        pieces=tuple(pieces), switches=switches, models=models,
        h_offset=tuple(_offsets(pieces, switches, cp_models.h_antiderivative)),
        s_offset=tuple(_offsets(pieces, switches, cp_models.s_antiderivative)),
        covered=(min(p.Tmin for p in pieces), max(p.Tmax for p in pieces)),
    )


_cached_plan = lru_cache(maxsize=8192)(_make_plan)


def _plan(cp) -> _Plan:
    try:
        return _cached_plan(tuple(cp))
    except TypeError:  # a piece with unhashable fields: plan without the cache
        return _make_plan(tuple(cp))


def _piecewise(plan: _Plan, T: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Cp, integral of Cp dT and of Cp/T dT from 298.15 K, each piece on the T it governs
    (contiguous slices when T is sorted, masks otherwise)."""
    pieces, models = plan.pieces, plan.models
    if len(pieces) == 1:
        (cp_f, h_f, s_f), p = models[0], pieces[0]
        return cp_f(p, T), h_f(p, T) + plan.h_offset[0], s_f(p, T) + plan.s_offset[0]
    Cp, dH, dS = np.empty_like(T), np.empty_like(T), np.empty_like(T)
    if T.size < 2 or bool(np.all(T[1:] >= T[:-1])):
        cuts = [0, *np.searchsorted(T, plan.switches, side="left").tolist(), T.size]
        parts = [slice(a, b) for a, b in zip(cuts[:-1], cuts[1:], strict=True)]
    else:
        idx = _governing(plan.switches, T)
        parts = [idx == i for i in range(len(pieces))]
    for i, sel in enumerate(parts):
        Ti = T[sel]
        if Ti.size == 0:
            continue
        (cp_f, h_f, s_f), p = models[i], pieces[i]
        Cp[sel] = cp_f(p, Ti)
        dH[sel] = h_f(p, Ti) + plan.h_offset[i]
        dS[sel] = s_f(p, Ti) + plan.s_offset[i]
    return Cp, dH, dS


_MEMO: OrderedDict[tuple, tuple[Species, SpeciesFunctions]] = OrderedDict()
_MEMO_SIZE = 4096  # entries, each for a T array of at most _MEMO_POINTS values
_MEMO_POINTS = 512  # chart curves have CHART_POINTS (120) values; a memo past that costs


def clear_memo() -> None:
    """Forget the results ``species_functions`` remembers (benchmarks time cold calls)."""
    _MEMO.clear()


def species_functions(species: Species, T: np.ndarray | Sequence[float] | float
                      ) -> SpeciesFunctions:
    """Cp, H - H298, H, S, G and gef of ``species`` at ``T`` (see the module docstring).

    The result (read-only arrays) is remembered per species object and temperature array, so
    the reactions sharing a species evaluate it once per temperature grid."""
    T_in = np.asarray(T, dtype=float)
    if T_in.size > _MEMO_POINTS:
        return _species_functions(species, T_in)
    key = (id(species), T_in.shape, T_in.tobytes())
    hit = _MEMO.get(key)
    if hit is not None and hit[0] is species:
        _MEMO.move_to_end(key)
        return hit[1]
    result = _species_functions(species, T_in)
    _MEMO[key] = (species, result)  # holding the species keeps its id from being reused
    if len(_MEMO) > _MEMO_SIZE:
        _MEMO.popitem(last=False)
    return result


def _species_functions(species: Species, T_in: np.ndarray) -> SpeciesFunctions:
    Tf = T_in.ravel()
    if np.any(Tf <= 0.0):
        raise ValueError("temperatures must be positive (K)")
    dfH, u_dfH = standard_value(species, "dfH")
    S298, u_S = standard_value(species, "S")
    Cp298, _ = standard_value(species, "Cp")
    at_ref = np.abs(Tf - T_REF) < T_REF_TOL

    covered: tuple[float, float] | None = None
    if species.cp:
        basis = "cp-pieces"
        plan = _plan(species.cp)
        Cp, dH, dS = _piecewise(plan, Tf)
        inside = np.zeros(Tf.shape, dtype=bool)
        for p in plan.pieces:
            inside |= (Tf >= p.Tmin) & (Tf <= p.Tmax)
        extrapolated = ~inside & ~at_ref
        covered = plan.covered
    elif not np.isnan(Cp298):
        basis = "constant-Cp"
        Cp = np.full_like(Tf, Cp298)
        dH = Cp298 * (Tf - T_REF) / 1000.0
        dS = Cp298 * np.log(Tf / T_REF)
        extrapolated = ~at_ref
    else:
        basis = "none"
        Cp = np.full_like(Tf, NAN)
        dH = np.where(at_ref, 0.0, NAN)
        dS = np.where(at_ref, 0.0, NAN)
        extrapolated = ~at_ref
    dH = np.where(at_ref, 0.0, dH)
    dS = np.where(at_ref, 0.0, dS)

    H = dfH + dH
    S = S298 + dS
    G = H - Tf * S / 1000.0
    gef = S - 1000.0 * dH / Tf
    shape = T_in.shape

    def arr(a: np.ndarray) -> np.ndarray:
        return _readonly(np.array(a, dtype=a.dtype).reshape(shape))

    return SpeciesFunctions(
        T=arr(Tf), Cp=arr(Cp), H_minus_H298=arr(dH), H=arr(H), S=arr(S), G=arr(G),
        gef=arr(gef), extrapolated=arr(extrapolated), covered=covered, basis=basis,
        dfH298=dfH, S298=S298, u_dfH=u_dfH, u_S=u_S,
    )


@dataclass(frozen=True, eq=False)
class FormationFunctions:
    """dfH, dfG (kJ/mol), log10 Kf and their standard uncertainties over ``T``.

    ``terms`` are the reference species subtracted: (species id, coefficient), e.g.
    (("hydrogen", 1.0), ("oxygen", 0.5)) for H2O; ``missing`` the elements without a
    reference species (their results are NaN)."""

    T: np.ndarray
    dfH: np.ndarray
    dfG: np.ndarray
    log10Kf: np.ndarray
    u_dfH: np.ndarray
    u_dfG: np.ndarray
    extrapolated: np.ndarray
    terms: tuple[tuple[str, float], ...]
    missing: tuple[str, ...]


def formation_coefficients(species: Species) -> dict[str, float]:
    """Moles of each element's reference species consumed in the formation reaction.

    Element el with n atoms: n / nu_ref (nu_ref atoms per reference formula, applied by the
    caller).  An ion of charge z is balanced against H+(aq) and 1/2 H2(g) under the
    convention that H+(aq) has zero dfH, dfG, S and Cp at all T (Wagman et al. 1982, J. Phys.
    Chem. Ref. Data 11 Suppl. 2):  elements + z H+(aq) -> X^z + z/2 H2(g), so H gains -z
    atoms (returned here as atom counts; divide by atoms per reference formula)."""
    atoms: dict[str, float] = {el: float(n) for el, n in species.elements}
    if species.charge:
        atoms["H"] = atoms.get("H", 0.0) - float(species.charge)
    return {el: n for el, n in atoms.items() if n != 0.0}


def formation_functions(species: Species, element_refs: Mapping[str, Species],
                        T: np.ndarray | Sequence[float] | float) -> FormationFunctions:
    """Formation properties at T from the element reference-state species.

    dfH(T) = dfH(298.15) + [H - H298](T) - sum c_j [H - H298]_j(T)  (reference species have
    dfH = 0 by definition, whatever their file says); dfG(T) = dfH(T) - T (S - sum c_j S_j);
    log10 Kf = -dfG / (R T ln 10).  u(dfH) = u(dfH(298.15)); u(dfG) by GUM eq. (10) with
    the S uncertainties of the species and the reference species."""
    sp = species_functions(species, T)
    Tf = sp.T
    dH = sp.dfH298 + sp.H_minus_H298
    S_f = np.array(sp.S, dtype=float)
    extrap = np.array(sp.extrapolated, dtype=bool)
    # S sensitivities per distinct species (an element in its reference state cancels).
    u_S_terms: dict[str, list] = {species.id: [1.0, sp.u_S]}
    terms: list[tuple[str, float]] = []
    missing: list[str] = []
    for el, n_atoms in formation_coefficients(species).items():
        ref = element_refs.get(el)
        if ref is None or ref.element_counts.get(el, 0) <= 0:
            missing.append(el)
            continue
        c = n_atoms / ref.element_counts[el]
        rf = species_functions(ref, Tf)
        dH = dH - c * rf.H_minus_H298
        S_f = S_f - c * rf.S
        extrap |= rf.extrapolated
        u_S_terms.setdefault(ref.id, [0.0, rf.u_S])[0] -= c
        terms.append((ref.id, c))
    if missing:
        dH = np.full_like(Tf, NAN)
        S_f = np.full_like(Tf, NAN)
    dG = dH - Tf * S_f / 1000.0
    log10Kf = -1000.0 * dG / (R * Tf * LN10)
    u_dfH = np.full_like(Tf, NAN if sp.u_dfH is None else sp.u_dfH)
    u_dS = u_linear([c for c, _ in u_S_terms.values()], [u for _, u in u_S_terms.values()])
    u_dfG = np.asarray(u_linear([1.0, 1.0], [u_dfH, Tf * u_dS / 1000.0])) * np.ones_like(Tf)
    return FormationFunctions(
        T=Tf, dfH=_readonly(dH), dfG=_readonly(dG), log10Kf=_readonly(log10Kf),
        u_dfH=_readonly(u_dfH), u_dfG=_readonly(u_dfG), extrapolated=_readonly(extrap),
        terms=tuple(terms), missing=tuple(missing),
    )


__all__ = [
    "SpeciesFunctions",
    "FormationFunctions",
    "species_functions",
    "formation_functions",
    "formation_coefficients",
    "standard_value",
    "u_combined",
    "u_linear",
    "T_REF_TOL",
]
