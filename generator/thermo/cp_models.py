"""Heat-capacity models of one ``CpPiece``: Cp(T) and exact antiderivatives for H and S.

For every kind, ``cp(piece, T)`` gives Cp in J/(mol K), ``h_antiderivative(piece, T)`` a
function whose differences are the exact integral of Cp dT in kJ/mol, and
``s_antiderivative(piece, T)`` one whose differences are the exact integral of Cp/T dT in
J/(mol K).  The additive constants of the antiderivatives are arbitrary (the species step
anchors the curves at the standard block at 298.15 K); ``absolute_H_S`` gives the fit's own
H and S for the fitted kinds.  All functions are vectorised over a numpy array ``T`` (K, > 0)
and are evaluated with the piece's formula whatever ``T`` is (range checks are the caller's).

Forms:

* constant: Cp = c.
* shomate, t = T/1000 K (Shomate, J. Phys. Chem. 58 (1954) 368; the coefficient convention
  of Chase 1998, JANAF Thermochemical Tables 4th ed.):
  Cp = A + B t + C t^2 + D t^3 + E/t^2;
  H - H298 = A t + B t^2/2 + C t^3/3 + D t^4/4 - E/t + F - H  (kJ/mol);
  S = A ln t + B t + C t^2/2 + D t^3/3 - E/(2 t^2) + G.
* nasa7 (Gordon & McBride 1971, NASA SP-273; 1994, NASA RP-1311):
  Cp/R = a1 + a2 T + a3 T^2 + a4 T^3 + a5 T^4;
  H/RT = a1 + a2 T/2 + a3 T^2/3 + a4 T^3/4 + a5 T^4/5 + a6/T;
  S/R = a1 ln T + a2 T + a3 T^2/2 + a4 T^3/3 + a5 T^4/4 + a7.
* nasa9 (McBride, Zehe & Gordon 2002, NASA/TP-2002-211556):
  Cp/R = a1 T^-2 + a2 T^-1 + a3 + a4 T + a5 T^2 + a6 T^3 + a7 T^4;
  H/RT = -a1 T^-2 + a2 ln(T)/T + a3 + a4 T/2 + a5 T^2/3 + a6 T^3/4 + a7 T^4/5 + b1/T;
  S/R = -a1 T^-2/2 - a2/T + a3 ln T + a4 T + a5 T^2/2 + a6 T^3/3 + a7 T^4/4 + b2.
* table (points T_i, Cp_i): Cp is the piecewise-linear interpolant through the points,
  held constant at the end values beyond the first and last point.  On a segment where
  Cp = a + b T the integrals are exact: the H integral is the trapezoid rule
  (b/2 (T2^2 - T1^2) + a (T2 - T1)) and the S integral is a ln(T2/T1) + b (T2 - T1).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from generator.model import CpPiece
from generator.thermo.constants import R

ArrayFn = Callable[[CpPiece, np.ndarray], np.ndarray]

N_COEFFS: dict[str, int] = {"constant": 1, "shomate": 8, "nasa7": 7, "nasa9": 9}


def _temperature(T: np.ndarray | float) -> np.ndarray:
    arr = np.asarray(T, dtype=float)
    if np.any(arr <= 0.0):
        raise ValueError("temperatures must be positive (K)")
    return arr


def _coeffs(piece: CpPiece) -> tuple[float, ...]:
    n = N_COEFFS[piece.kind]
    if len(piece.coeffs) != n:
        raise ValueError(f"{piece.kind} piece needs {n} coefficients, got {len(piece.coeffs)}")
    return tuple(float(c) for c in piece.coeffs)


# --- constant -------------------------------------------------------------------------

def _constant_cp(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    (c,) = _coeffs(piece)
    return np.full_like(T, c)


def _constant_h(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    (c,) = _coeffs(piece)
    return c * T / 1000.0


def _constant_s(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    (c,) = _coeffs(piece)
    return c * np.log(T)


# --- Shomate --------------------------------------------------------------------------

def _shomate_cp(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    A, B, C, D, E, _F, _G, _H = _coeffs(piece)
    t = T / 1000.0
    return A + t * (B + t * (C + t * D)) + E / t**2


def _shomate_h(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    """A t + B t^2/2 + C t^3/3 + D t^4/4 - E/t, kJ/mol (without F - H)."""
    A, B, C, D, E, _F, _G, _H = _coeffs(piece)
    t = T / 1000.0
    return t * (A + t * (B / 2.0 + t * (C / 3.0 + t * D / 4.0))) - E / t


def _shomate_s(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    """A ln t + B t + C t^2/2 + D t^3/3 - E/(2 t^2), J/(mol K) (without G)."""
    A, B, C, D, E, _F, _G, _H = _coeffs(piece)
    t = T / 1000.0
    return A * np.log(t) + t * (B + t * (C / 2.0 + t * D / 3.0)) - E / (2.0 * t**2)


# --- NASA 7-coefficient -----------------------------------------------------------------

def _nasa7_cp(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    a1, a2, a3, a4, a5, _a6, _a7 = _coeffs(piece)
    return R * (a1 + T * (a2 + T * (a3 + T * (a4 + T * a5))))


def _nasa7_h(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    """The polynomial H = R T (a1 + ... + a6/T), kJ/mol."""
    a1, a2, a3, a4, a5, a6, _a7 = _coeffs(piece)
    poly = T * (a1 + T * (a2 / 2.0 + T * (a3 / 3.0 + T * (a4 / 4.0 + T * a5 / 5.0))))
    return R * (poly + a6) / 1000.0


def _nasa7_s(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    a1, a2, a3, a4, a5, _a6, a7 = _coeffs(piece)
    poly = T * (a2 + T * (a3 / 2.0 + T * (a4 / 3.0 + T * a5 / 4.0)))
    return R * (a1 * np.log(T) + poly + a7)


# --- NASA 9-coefficient -----------------------------------------------------------------

def _nasa9_cp(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    a1, a2, a3, a4, a5, a6, a7, _b1, _b2 = _coeffs(piece)
    return R * (a1 / T**2 + a2 / T + a3 + T * (a4 + T * (a5 + T * (a6 + T * a7))))


def _nasa9_h(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    """The polynomial H = R T (H/RT), kJ/mol."""
    a1, a2, a3, a4, a5, a6, a7, b1, _b2 = _coeffs(piece)
    poly = T * (a3 + T * (a4 / 2.0 + T * (a5 / 3.0 + T * (a6 / 4.0 + T * a7 / 5.0))))
    return R * (-a1 / T + a2 * np.log(T) + poly + b1) / 1000.0


def _nasa9_s(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    a1, a2, a3, a4, a5, a6, a7, _b1, b2 = _coeffs(piece)
    poly = T * (a4 + T * (a5 / 2.0 + T * (a6 / 3.0 + T * a7 / 4.0)))
    return R * (-a1 / (2.0 * T**2) - a2 / T + a3 * np.log(T) + poly + b2)


# --- table (piecewise-linear Cp) --------------------------------------------------------

def _table_points(piece: CpPiece) -> tuple[np.ndarray, np.ndarray]:
    Tk = np.asarray(piece.table_T, dtype=float)
    Ck = np.asarray(piece.table_Cp, dtype=float)
    if Tk.size == 0 or Tk.size != Ck.size:
        raise ValueError("table piece needs equally many (>= 1) T and Cp points")
    if np.any(np.diff(Tk) <= 0.0) or Tk[0] <= 0.0:
        raise ValueError("table temperatures must be positive and strictly increasing")
    return Tk, Ck


def _table_cp(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    Tk, Ck = _table_points(piece)
    return np.interp(T, Tk, Ck)


def _table_segments(piece: CpPiece, T: np.ndarray):
    """Per T: the segment start T_i, Cp_i, slope b and the cumulative H, S at T_i.

    Segments: (-inf, T_0) with Cp = Cp_0, [T_i, T_i+1) linear, [T_n, inf) with Cp = Cp_n.
    """
    Tk, Ck = _table_points(piece)
    slopes = np.diff(Ck) / np.diff(Tk)
    dT = np.diff(Tk)
    dH = (Ck[:-1] * dT + slopes * dT**2 / 2.0) / 1000.0  # trapezoid, kJ/mol
    dS = (Ck[:-1] - slopes * Tk[:-1]) * np.log(Tk[1:] / Tk[:-1]) + slopes * dT
    Hcum = np.concatenate(([0.0], np.cumsum(dH)))
    Scum = np.concatenate(([0.0], np.cumsum(dS)))
    idx = np.clip(np.searchsorted(Tk, T, side="right") - 1, 0, Tk.size - 1)
    b = np.concatenate((slopes, [0.0]))[idx]
    b = np.where(T < Tk[0], 0.0, b)  # below the first point Cp is held at Cp_0
    return Tk[idx], Ck[idx], b, Hcum[idx], Scum[idx]


def _table_h(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    T0, C0, b, Hc, _Sc = _table_segments(piece, T)
    x = T - T0
    return Hc + (C0 * x + b * x**2 / 2.0) / 1000.0


def _table_s(piece: CpPiece, T: np.ndarray) -> np.ndarray:
    T0, C0, b, _Hc, Sc = _table_segments(piece, T)
    return Sc + (C0 - b * T0) * np.log(T / T0) + b * (T - T0)


# --- dispatch ---------------------------------------------------------------------------

MODELS: dict[str, tuple[ArrayFn, ArrayFn, ArrayFn]] = {
    "constant": (_constant_cp, _constant_h, _constant_s),
    "shomate": (_shomate_cp, _shomate_h, _shomate_s),
    "nasa7": (_nasa7_cp, _nasa7_h, _nasa7_s),
    "nasa9": (_nasa9_cp, _nasa9_h, _nasa9_s),
    "table": (_table_cp, _table_h, _table_s),
}


def _model(piece: CpPiece) -> tuple[ArrayFn, ArrayFn, ArrayFn]:
    try:
        return MODELS[piece.kind]
    except KeyError:
        raise ValueError(f"unknown Cp model kind {piece.kind!r}") from None


def cp(piece: CpPiece, T: np.ndarray | float) -> np.ndarray:
    """Cp(T) of the piece, J/(mol K)."""
    return _model(piece)[0](piece, _temperature(T))


def h_antiderivative(piece: CpPiece, T: np.ndarray | float) -> np.ndarray:
    """An antiderivative of Cp in kJ/mol: differences are the exact integral of Cp dT."""
    return _model(piece)[1](piece, _temperature(T))


def s_antiderivative(piece: CpPiece, T: np.ndarray | float) -> np.ndarray:
    """An antiderivative of Cp/T in J/(mol K): differences are the exact integral."""
    return _model(piece)[2](piece, _temperature(T))


def delta_H(piece: CpPiece, T1: np.ndarray | float, T2: np.ndarray | float) -> np.ndarray:
    """Integral of Cp dT from T1 to T2 with the piece's formula, kJ/mol."""
    return h_antiderivative(piece, T2) - h_antiderivative(piece, T1)


def delta_S(piece: CpPiece, T1: np.ndarray | float, T2: np.ndarray | float) -> np.ndarray:
    """Integral of Cp/T dT from T1 to T2 with the piece's formula, J/(mol K)."""
    return s_antiderivative(piece, T2) - s_antiderivative(piece, T1)


def absolute_H_S(piece: CpPiece, T: np.ndarray | float) -> tuple[np.ndarray, np.ndarray]:
    """The fit's own H (kJ/mol) and S (J/(mol K)) for shomate, nasa7 and nasa9 pieces.

    NASA: the polynomial H (which includes the formation enthalpy through a6 or b1) and S.
    Shomate: H = (H - H298) + H-coefficient = A t + ... - E/t + F, i.e. on the scale where
    H(298.15) is the fit's dfH (coefficient H); S = A ln t + ... + G.
    """
    Tarr = _temperature(T)
    if piece.kind == "shomate":
        *_, F_, G_, _H = _coeffs(piece)
        return _shomate_h(piece, Tarr) + F_, _shomate_s(piece, Tarr) + G_
    if piece.kind in ("nasa7", "nasa9"):
        _c, h, s = MODELS[piece.kind]
        return h(piece, Tarr), s(piece, Tarr)
    raise ValueError(f"a {piece.kind} piece has no absolute H and S scale")


__all__ = [
    "MODELS",
    "N_COEFFS",
    "cp",
    "h_antiderivative",
    "s_antiderivative",
    "delta_H",
    "delta_S",
    "absolute_H_S",
]
