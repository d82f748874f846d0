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

import os
from collections import OrderedDict
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, fields
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
    h_offset: tuple[float, ...]  # for _piecewise: empty when ``poly`` is given
    s_offset: tuple[float, ...]
    covered: tuple[float, float]
    poly: np.ndarray | None = None  # (pieces, 7) Cp coefficients on POWERS, J/(mol K)
    coef: np.ndarray | None = None  # (pieces, 3, 7): Cp, H and S forms (poly_forms)
    offset: np.ndarray | None = None  # (pieces, 2): kJ/mol and J/(mol K) joining H and S
    negative_powers: bool = False  # some piece has terms in 1/T or 1/T^2
    bounds: np.ndarray | None = None  # (pieces, 2): each piece's Tmin, Tmax
    contiguous: bool = False  # the pieces leave no gap: covered is the one range they span


POWERS = (-2, -1, 0, 1, 2, 3, 4)  # every polynomial kind is Cp = sum c_n T^n over these n


def poly_coefficients(piece: CpPiece) -> np.ndarray | None:
    """c_n (J/(mol K)) with Cp = sum c_n T^n, n in POWERS, or None for a table piece.

    Shomate with t = T/1000 K: A + B t + C t^2 + D t^3 + E/t^2 gives c_0 = A, c_1 = B/10^3,
    c_2 = C/10^6, c_3 = D/10^9, c_-2 = 10^6 E; NASA 7: c_n = R a_(n+1); NASA 9: c_n = R a_(n+3)."""
    if piece.kind == "table":
        return None
    k = cp_models._coeffs(piece)
    c = np.zeros(len(POWERS))
    if piece.kind == "constant":
        c[2] = k[0]
    elif piece.kind == "shomate":
        A, B, C, D, E = k[:5]
        c[:] = (1e6 * E, 0.0, A, B / 1e3, C / 1e6, D / 1e9, 0.0)
    elif piece.kind == "nasa7":
        c[2:] = np.asarray(k[:5]) * R
    elif piece.kind == "nasa9":
        c[:] = np.asarray(k[:7]) * R
    else:
        return None
    return c


def poly_forms(c: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """From Cp coefficients c_n (..., 7) on POWERS, those of the antiderivatives:
    H (kJ/mol) = h_-2/T + h_-1 ln T + sum_(n>=0) h_n T^(n+1), h_n = c_n/((n+1) 1000),
    h_-2 = -c_-2/1000, h_-1 = c_-1/1000;  S (J/(mol K)) = s_-2/T^2 + s_-1/T + s_0 ln T
    + sum_(n>0) s_n T^n, s_n = c_n/n, s_-2 = -c_-2/2, s_-1 = -c_-1, s_0 = c_0."""
    n = np.asarray(POWERS, dtype=float)
    h = c / np.where(n == -1, 1.0, n + 1.0) / 1000.0
    s = c / np.where(n == 0, 1.0, n)
    return h, s


def _horner(c: np.ndarray, T: np.ndarray, out: np.ndarray, first: int) -> np.ndarray:
    """out = c_first + T (c_first+1 + ... + T c_6), in place; c is (rows, 7)."""
    np.multiply(c[:, 6, None], T, out=out)
    for k in range(5, first - 1, -1):
        out += c[:, k, None]
        if k > first:
            out *= T
    return out


def _poly_cp(c: np.ndarray, T: np.ndarray, out: np.ndarray, neg: bool = True) -> np.ndarray:
    """Cp = c_-2/T^2 + c_-1/T + c_0 + T (c_1 + T (c_2 + T (c_3 + T c_4))) into ``out``
    (rows, points).  In-place elementwise operations in a fixed order, so a species'
    values do not depend on the batch it is evaluated in."""
    _horner(c, T, out, 2)
    if neg:  # terms in 1/T and 1/T^2 (Shomate, NASA 9); adding zeros would change nothing
        out += (c[:, 0, None] / T + c[:, 1, None]) / T
    return out


def _poly_h(h: np.ndarray, T: np.ndarray, out: np.ndarray, neg: bool = True) -> np.ndarray:
    """H antiderivative (kJ/mol) from the h coefficients of poly_forms, into ``out``."""
    _horner(h, T, out, 2)
    out *= T
    if neg:
        out += h[:, 0, None] / T + h[:, 1, None] * np.log(T)
    return out


def _poly_s(s: np.ndarray, T: np.ndarray, out: np.ndarray, neg: bool = True) -> np.ndarray:
    """S antiderivative (J/(mol K)) from the s coefficients of poly_forms, into ``out``."""
    _horner(s, T, out, 3)
    out *= T
    out += s[:, 2, None] * np.log(T)
    if neg:
        out += (s[:, 0, None] / T + s[:, 1, None]) / T
    return out


def _poly_anti(fn, forms: np.ndarray, pieces: Sequence[CpPiece], switches: np.ndarray):
    """The antiderivative ``fn`` (_poly_h or _poly_s) of each of ``pieces`` at 298.15 K and
    at the switch temperatures, as _offsets asks for it: every piece at every one of those
    temperatures in one evaluation (``forms``: poly_forms of the stacked coefficients).  The
    operations are elementwise, so each value is the one a single piece at a single
    temperature gives."""
    points = np.concatenate([[T_REF], switches]).astype(float)
    table = fn(forms, points, np.empty((len(pieces), points.size)))
    row = {id(p): i for i, p in enumerate(pieces)}
    col = {float(t): j for j, t in reversed(list(enumerate(points.tolist())))}

    def anti(piece: CpPiece, T) -> float:
        return float(table[row[id(piece)], col[float(T)]])
    return anti


def _make_plan(cp: tuple[CpPiece, ...]) -> _Plan:
    pieces, switches = _layout(cp)
    models = tuple(cp_models._model(p) for p in pieces)
    polys = [poly_coefficients(p) for p in pieces]
    poly = coef = offset = None
    if all(c is not None for c in polys):
        poly = np.stack(polys)
        h_form, s_form = poly_forms(poly)
        coef = np.stack([poly, h_form, s_form], axis=1)
        offset = np.stack([_offsets(pieces, switches,
                                    _poly_anti(_poly_h, h_form, pieces, switches)),
                           _offsets(pieces, switches,
                                    _poly_anti(_poly_s, s_form, pieces, switches))], axis=1)
    # The per-piece offsets of _piecewise, which only a plan without the polynomial form
    # uses (a table piece); the polynomial plans carry theirs in ``offset``.
    h_offset = s_offset = ()
    if poly is None:
        h_offset = tuple(_offsets(pieces, switches, cp_models.h_antiderivative))
        s_offset = tuple(_offsets(pieces, switches, cp_models.s_antiderivative))
    return _Plan(
        pieces=tuple(pieces), switches=switches, models=models,
        h_offset=h_offset, s_offset=s_offset,
        covered=(min(p.Tmin for p in pieces), max(p.Tmax for p in pieces)),
        poly=poly, coef=coef, offset=offset,
        negative_powers=poly is not None and bool(np.any(poly[:, :2])),
        bounds=np.asarray([(p.Tmin, p.Tmax) for p in pieces], dtype=float),
        contiguous=all(hi.Tmin <= max(q.Tmax for q in pieces[:i + 1])
                       for i, hi in enumerate(pieces[1:])),
    )


_cached_plan = lru_cache(maxsize=8192)(_make_plan)


_PLAN_OF: dict[int, tuple[object, _Plan]] = {}  # id of a species' cp tuple -> (it, plan)


def _plan(cp) -> _Plan:
    hit = _PLAN_OF.get(id(cp))
    if hit is not None and hit[0] is cp:
        return hit[1]
    try:
        plan = _cached_plan(tuple(cp))
    except TypeError:  # a piece with unhashable fields: plan without the cache
        return _make_plan(tuple(cp))
    if len(_PLAN_OF) > 65536:
        _PLAN_OF.clear()
    _PLAN_OF[id(cp)] = (cp, plan)  # holding cp keeps its id from being reused
    return plan


def prepare_plans(species: Iterable[Species]) -> None:
    """Make the evaluation plan of each species now (they are remembered per Cp tuple), so
    processes forked after this inherit them instead of each making its own."""
    for sp in species:
        if sp.cp:
            _plan(sp.cp)


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
    _ANCHORS.clear()


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


def remember_functions(species: Species, T: np.ndarray | Sequence[float],
                       result: SpeciesFunctions) -> None:
    """Hand ``species_functions``' memo a result it made for ``species`` at ``T`` elsewhere
    (in a worker process, or read from the results cache); its arrays are made read-only as
    the memo's own are."""
    T_in = np.asarray(T, dtype=float)
    if T_in.size > _MEMO_POINTS:
        return
    for f in fields(result):
        value = getattr(result, f.name)
        if isinstance(value, np.ndarray) and value.flags.writeable:
            value.setflags(write=False)
    _MEMO[(id(species), T_in.shape, T_in.tobytes())] = (species, result)
    if len(_MEMO) > _MEMO_SIZE:
        _MEMO.popitem(last=False)


def _species_functions(species: Species, T_in: np.ndarray) -> SpeciesFunctions:
    Tf = T_in.ravel()
    table = species_table((species,), Tf)
    shape = T_in.shape

    def arr(a: np.ndarray) -> np.ndarray:
        return _readonly(np.array(a[0], dtype=a.dtype).reshape(shape))

    dfH, u_dfH = standard_value(species, "dfH")
    S298, u_S = standard_value(species, "S")
    return SpeciesFunctions(
        T=_readonly(np.array(Tf).reshape(shape)), Cp=arr(table.Cp),
        H_minus_H298=arr(table.H_minus_H298), H=arr(table.H), S=arr(table.S),
        G=arr(table.G), gef=arr(table.gef), extrapolated=arr(table.extrapolated),
        covered=table.covered[0], basis=table.basis[0],
        dfH298=dfH, S298=S298, u_dfH=u_dfH, u_S=u_S,
    )


@dataclass(frozen=True, eq=False)
class SpeciesTable:
    """Many species at the same temperatures: arrays of shape (species, T), units as in
    SpeciesFunctions; ``covered`` and ``basis`` per species."""

    T: np.ndarray
    Cp: np.ndarray
    H_minus_H298: np.ndarray
    H: np.ndarray
    S: np.ndarray
    G: np.ndarray
    gef: np.ndarray
    extrapolated: np.ndarray
    covered: tuple[tuple[float, float] | None, ...]
    basis: tuple[str, ...]


def _slices(switches: np.ndarray, T: np.ndarray, n_pieces: int) -> list:
    """Per piece, the temperatures it governs: slices when T is sorted, masks otherwise."""
    if T.size < 2 or bool(np.all(T[1:] >= T[:-1])):
        cuts = [0, *np.searchsorted(T, switches, side="left").tolist(), T.size]
        return [slice(a, b) for a, b in zip(cuts[:-1], cuts[1:], strict=True)]
    idx = _governing(switches, T)
    return [idx == i for i in range(n_pieces)]


def _poly_rows(plans: Sequence[_Plan], T: np.ndarray, parts: list, at, Cp: np.ndarray | None,
               dH: np.ndarray, dS: np.ndarray | None, inside: np.ndarray) -> None:
    """Cp, H - H298 (kJ/mol), S - S298 and the in-range flags of species whose pieces are
    all polynomials and share one switch layout (``parts``: each piece's temperatures, from
    _slices), evaluated together into rows ``at``; with ``Cp`` and ``dS`` None, H - H298
    and the flags alone (the same operations for them)."""
    if len(plans) == 1:
        coef, offset = plans[0].coef[None], plans[0].offset[None]
    else:
        coef = np.stack([p.coef for p in plans])  # (n, P, 3, 7): Cp, H and S forms
        offset = np.stack([p.offset for p in plans])  # (n, P, 2): H and S offsets
    neg = any(p.negative_powers for p in plans)
    direct = isinstance(at, slice)
    full = Cp is not None and dS is not None
    for j, sel in enumerate(parts):
        Tj = T[sel]
        if Tj.size == 0:
            continue
        into = direct and isinstance(sel, slice)
        if into:  # into the result arrays themselves
            h = dH[at, sel]
        else:
            h = np.empty((len(plans), Tj.size))
        _poly_h(coef[:, j, 1], Tj, h, neg)
        h += offset[:, j, 0, None]
        cell = (at, sel)
        if not into:
            cell = np.ix_(at, sel) if isinstance(at, list) and not isinstance(sel, slice) \
                else (at, sel)
            dH[cell] = h
        if not full:
            continue
        cp, s = (Cp[at, sel], dS[at, sel]) if into else \
            (np.empty((len(plans), Tj.size)) for _ in range(2))
        _poly_cp(coef[:, j, 0], Tj, cp, neg)
        _poly_s(coef[:, j, 2], Tj, s, neg)
        s += offset[:, j, 1, None]
        if not into:
            Cp[cell], dS[cell] = cp, s
    if all(p.contiguous for p in plans):  # one covered interval per species
        span = np.asarray([p.covered for p in plans])
        inside[at] = (T >= span[:, :1]) & (T <= span[:, 1:])
        return
    flags = np.zeros((len(plans), T.size), dtype=bool)
    for p_i, plan in enumerate(plans):
        for lo, hi in plan.bounds:
            flags[p_i] |= (T >= lo) & (T <= hi)
    inside[at] = flags


def _other_row(species: Species, T: np.ndarray):
    """Cp, H - H298, S - S298, in-range flags and basis of a species with a table piece, a
    standard Cp only, or no Cp at all."""
    if species.cp:
        plan = _plan(species.cp)
        Cp, dH, dS = _piecewise(plan, T)
        inside = np.zeros(T.shape, dtype=bool)
        for p in plan.pieces:
            inside |= (T >= p.Tmin) & (T <= p.Tmax)
        return Cp, dH, dS, inside, "cp-pieces"
    Cp298, _ = standard_value(species, "Cp")
    if not np.isnan(Cp298):
        return (np.full_like(T, Cp298), Cp298 * (T - T_REF) / 1000.0,
                Cp298 * np.log(T / T_REF), np.zeros(T.shape, dtype=bool), "constant-Cp")
    nan = np.full_like(T, NAN)
    return nan, nan, nan, np.zeros(T.shape, dtype=bool), "none"


# Species evaluated together, so their arrays stay in the processor's cache: 64 rows of
# 1,000 temperatures are 0.5 MB an array, the six a block touches within a 4 MB L2 (the
# target machine's); measured on it, 1,000 x 1,000: 32 rows 0.044 s, 64 rows 0.039 s (best
# of twelve, interleaved), 96 no better.  The rows' values do not depend on it.
BLOCK_ROWS = 64
THREADED_VALUES = 200_000  # species x temperatures from which species_table uses every core


def _threads() -> int:
    try:
        return max(1, min(4, len(os.sched_getaffinity(0))))
    except (AttributeError, OSError):
        return max(1, min(4, os.cpu_count() or 1))
_ANCHORS: dict[int, tuple[Species, float, float]] = {}  # id(species) -> (it, dfH, S298)


def _anchor(sp: Species) -> tuple[float, float]:
    """The preferred dfH and S at 298.15 K of ``sp`` (remembered per species object)."""
    hit = _ANCHORS.get(id(sp))
    if hit is not None and hit[0] is sp:
        return hit[1], hit[2]
    values = (standard_value(sp, "dfH")[0], standard_value(sp, "S")[0])
    if len(_ANCHORS) > 65536:
        _ANCHORS.clear()
    _ANCHORS[id(sp)] = (sp, *values)
    return values


def _blocks(species: Sequence[Species], Tf: np.ndarray, other: Callable[[int, Species], None]
            ) -> tuple[list, list[tuple[float, float] | None]]:
    """The evaluation blocks (plans, each piece's temperatures, rows) of the species whose
    pieces are all polynomials, grouped by switch layout, at most BLOCK_ROWS rows a block;
    ``other(row, species)`` is called for each of the rest.  Also each species' covered
    range (None without pieces)."""
    covered: list[tuple[float, float] | None] = [None] * len(species)
    groups: dict[tuple, list[int]] = {}
    plans: list[_Plan | None] = []
    for i, sp in enumerate(species):
        plan = _plan(sp.cp) if sp.cp else None
        plans.append(plan)
        if plan is not None:
            covered[i] = plan.covered
        if plan is not None and plan.poly is not None:
            groups.setdefault((len(plan.pieces), plan.switches.tobytes()), []).append(i)
        else:
            other(i, sp)
    blocks = []
    for rows in groups.values():
        first = plans[rows[0]]
        parts = _slices(first.switches, Tf, len(first.pieces))
        for b in range(0, len(rows), BLOCK_ROWS):
            block = rows[b:b + BLOCK_ROWS]
            at = slice(block[0], block[-1] + 1)
            if block[-1] - block[0] + 1 != len(block):
                at = block  # rows not contiguous: fancy indexing
            blocks.append(([plans[i] for i in block], parts, at))
    return blocks, covered


def species_enthalpies(species: Sequence[Species], T: np.ndarray | Sequence[float]
                       ) -> tuple[np.ndarray, np.ndarray]:
    """H (kJ/mol, on the scale H(298.15 K) = dfH) and the extrapolation flags of every
    species in ``species`` at the 1-D ``T``: species_table's ``H`` and ``extrapolated``
    by the same operations, so the same bits, without Cp, S, G and gef (for searches
    that need the enthalpy alone, as generator.thermo.adiabatic's)."""
    Tf = np.asarray(T, dtype=float).ravel()
    if np.any(Tf <= 0.0):
        raise ValueError("temperatures must be positive (K)")
    n = len(species)
    dH, H = np.empty((n, Tf.size)), np.empty((n, Tf.size))
    extrapolated = np.empty((n, Tf.size), dtype=bool)

    def other(i: int, sp: Species) -> None:
        _cp, dH[i], _s, extrapolated[i], _basis = _other_row(sp, Tf)

    blocks, _covered = _blocks(species, Tf, other)
    for block_plans, parts, at in blocks:
        _poly_rows(block_plans, Tf, parts, at, None, dH, None, extrapolated)
    np.logical_not(extrapolated, out=extrapolated)
    at_ref = np.abs(Tf - T_REF) < T_REF_TOL
    if at_ref.any():
        dH[:, at_ref] = 0.0
        extrapolated[:, at_ref] = False
    dfH = np.asarray([_anchor(sp)[0] for sp in species], dtype=float).reshape(n, 1)
    np.add(dfH, dH, out=H)
    return H, extrapolated


def species_table(species: Sequence[Species], T: np.ndarray | Sequence[float]
                  ) -> SpeciesTable:
    """Cp, H - H298, H, S, G and gef of every species in ``species`` at the 1-D ``T``.

    Species whose pieces are all polynomials (constant, Shomate, NASA 7 and 9) are grouped
    by their switch temperatures and each group is evaluated in one set of array
    operations; the rest one by one.  Each value is computed by the same elementwise
    operations in the same order whatever the batch, so a species' numbers are the same
    evaluated alone or with a thousand others (species_functions is this with one)."""
    Tf = np.asarray(T, dtype=float).ravel()
    if np.any(Tf <= 0.0):
        raise ValueError("temperatures must be positive (K)")
    n = len(species)
    # S and extrapolated first hold S - S298 and the in-range flags (no extra arrays)
    Cp, dH, H, S, G, gef = (np.empty((n, Tf.size)) for _ in range(6))
    extrapolated = np.empty((n, Tf.size), dtype=bool)
    basis: list[str] = ["cp-pieces"] * n

    def other(i: int, sp: Species) -> None:
        Cp[i], dH[i], S[i], extrapolated[i], basis[i] = _other_row(sp, Tf)

    blocks, covered = _blocks(species, Tf, other)
    at_ref = np.abs(Tf - T_REF) < T_REF_TOL
    anchors = np.asarray([_anchor(sp) for sp in species], dtype=float).reshape(n, 2)
    dfH, S298 = anchors[:, :1], anchors[:, 1:]
    T_kilo, per_T = Tf / 1000.0, 1000.0 / Tf  # G = H - T S / 1000, gef = S - 1000 dH / T
    any_ref = bool(at_ref.any())

    def poly_part(part) -> None:
        for block_plans, parts, at in part:
            _poly_rows(block_plans, Tf, parts, at, Cp, dH, S, extrapolated)

    def assemble(starts) -> None:
        for b in starts:  # blocks that stay in cache; the same operations for every block
            r = slice(b, b + BLOCK_ROWS)
            np.logical_not(extrapolated[r], out=extrapolated[r])  # in range -> extrapolated
            if any_ref:
                dH[r, at_ref] = 0.0
                S[r, at_ref] = 0.0  # still S - S298 here
                extrapolated[r, at_ref] = False
            np.add(dfH[r], dH[r], out=H[r])
            S[r] += S298[r]
            np.subtract(H[r], S[r] * T_kilo, out=G[r])
            np.subtract(S[r], dH[r] * per_T, out=gef[r])

    starts = list(range(0, n, BLOCK_ROWS))
    threads = _threads() if n * Tf.size >= THREADED_VALUES else 1
    if threads < 2:
        poly_part(blocks)
        assemble(starts)
    else:  # numpy lets go of the GIL inside each operation; the blocks are disjoint rows
        from concurrent.futures import ThreadPoolExecutor

        with ThreadPoolExecutor(threads) as pool:  # joined before returning (fork-safe)
            list(pool.map(poly_part, [blocks[i::threads] for i in range(threads)]))
            list(pool.map(assemble, [starts[i::threads] for i in range(threads)]))
    return SpeciesTable(T=Tf, Cp=Cp, H_minus_H298=dH, H=H, S=S, G=G, gef=gef,
                        extrapolated=extrapolated, covered=tuple(covered), basis=tuple(basis))


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
    "remember_functions",
    "FormationFunctions",
    "species_functions",
    "species_table",
    "SpeciesTable",
    "formation_functions",
    "formation_coefficients",
    "standard_value",
    "u_combined",
    "u_linear",
    "T_REF_TOL",
]
