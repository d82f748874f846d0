"""One JSON shape for a reaction (and one for a species), shared by ``calc --json``, the
exported data files beside each sheet and ``data/handbook.json``.

Units: T in K, energies kJ/mol, entropies and heat capacities J/(mol*K), E in V.
Non-finite numbers (K beyond the floating-point range, values that cannot be computed)
are written as null, never as Infinity or NaN.
"""

from __future__ import annotations

import json
import math
from collections.abc import Iterable, Sequence

import numpy as np

from generator.caution import CAUTION
from generator.diagnostics import Finding
from generator.thermo.reactions import ReactionFunctions
from generator.thermo.species_props import FormationFunctions, SpeciesFunctions

REACTION_UNITS = {"T": "K", "drH": "kJ/mol", "drS": "J/(mol*K)", "drG": "kJ/mol",
                  "drCp": "J/(mol*K)", "drU": "kJ/mol", "TdrS": "kJ/mol", "K": "1",
                  "log10K": "1", "E": "V", "Etn": "V"}
SPECIES_UNITS = {"T": "K", "Cp": "J/(mol*K)", "H_minus_H298": "kJ/mol", "S": "J/(mol*K)",
                 "G": "kJ/mol", "gef": "J/(mol*K)", "dfH": "kJ/mol", "dfG": "kJ/mol",
                 "log10Kf": "1"}
SIGNIFICANT = 10  # digits kept in exported numbers, so exports are byte-stable


def num(x: float | None) -> float | None:
    """A finite float rounded to SIGNIFICANT digits, or None."""
    return nums([x])[0]


_FMT = f"{{:.{SIGNIFICANT}g}}".format


def nums(values) -> list[float | None]:
    """Each value of a 1-D array or sequence rounded to SIGNIFICANT digits; None for a
    missing or non-finite value (-0.0 becomes 0.0)."""
    xs = values.tolist() if hasattr(values, "tolist") else \
        [None if v is None else float(v) for v in values]
    isfinite, fmt = math.isfinite, _FMT
    return [float(fmt(x)) + 0.0 if x is not None and isfinite(x) else None for x in xs]


def reaction_rows(f: ReactionFunctions) -> list[dict]:
    n = len(f.T)
    none = [None] * n
    T, drH, drS, drG = nums(f.T), nums(f.drH), nums(f.drS), nums(f.drG)
    drCp, drU, TdrS, K, log10K = nums(f.drCp), nums(f.drU), nums(f.TdrS), nums(f.K), \
        nums(f.log10K)
    E = none if f.E is None else nums(f.E)
    Etn = none if f.Etn is None else nums(f.Etn)
    u_H, u_S, u_G, u_K = nums(f.u_drH), nums(f.u_drS), nums(f.u_drG), nums(f.u_log10K)
    raw_K, raw_uK = f.log10K.tolist(), f.u_log10K.tolist()
    extrap = f.extrapolated.tolist()
    return [{
        "T": T[i], "drH": drH[i], "drS": drS[i], "drG": drG[i], "drCp": drCp[i],
        "drU": drU[i], "TdrS": TdrS[i], "K": K[i], "log10K": log10K[i], "E": E[i],
        "Etn": Etn[i], "u": {"drH": u_H[i], "drS": u_S[i], "drG": u_G[i], "log10K": u_K[i]},
        "K_range": k_range(raw_K[i], raw_uK[i]), "extrapolated": bool(extrap[i]),
    } for i in range(n)]


def k_range(log10K: float, u_log10K: float) -> list[float | None] | None:
    """K at log10 K ± u(log10 K), the standard-uncertainty range of K (null where unknown)."""
    if not (math.isfinite(log10K) and math.isfinite(u_log10K)):
        return None
    lo, hi = log10K - u_log10K, log10K + u_log10K
    return [num(10.0 ** lo) if lo < 308 else None, num(10.0 ** hi) if hi < 308 else None]


def reaction_json(equation: str, f: ReactionFunctions, crossover_T: Sequence[float],
                  findings: Iterable[Finding], **extra) -> dict:
    """The reaction object: {equation, units, rows, crossover_T, findings, caution, ...}."""
    doc = {
        "equation": equation,
        "units": REACTION_UNITS,
        "rows": reaction_rows(f),
        "crossover_T": [num(t) for t in crossover_T],
        "findings": [x.to_json() for x in findings],
    }
    doc.update(extra)
    doc["caution"] = CAUTION
    return doc


def species_rows(f: SpeciesFunctions, form: FormationFunctions) -> list[dict]:
    T, Cp, dH, S, G, gef = (nums(a) for a in (f.T, f.Cp, f.H_minus_H298, f.S, f.G, f.gef))
    dfH, dfG, lgK, u_H, u_G = (nums(a) for a in (form.dfH, form.dfG, form.log10Kf,
                                                 form.u_dfH, form.u_dfG))
    extrap = (np.asarray(f.extrapolated) | np.asarray(form.extrapolated)).ravel().tolist()
    return [{
        "T": T[i], "Cp": Cp[i], "H_minus_H298": dH[i], "S": S[i], "G": G[i], "gef": gef[i],
        "dfH": dfH[i], "dfG": dfG[i], "log10Kf": lgK[i], "u": {"dfH": u_H[i], "dfG": u_G[i]},
        "extrapolated": bool(extrap[i]),
    } for i in range(len(T))]


def csv_table(rows: list[dict], columns: Sequence[str]) -> str:
    """CSV of the rows' columns (u.* for uncertainties), empty cells for null."""
    cells = []
    for col in columns:
        if col.startswith("u."):
            values = [r["u"].get(col[2:]) for r in rows]
        else:
            values = [r.get(col) for r in rows]
        cells.append(["" if v is None else ("yes" if v else "no") if v is True or v is False
                      else repr(v) if type(v) is float else str(v) for v in values])
    lines = [",".join(columns)]
    lines += [",".join(row) for row in zip(*cells, strict=True)]
    return "\n".join(lines) + "\n"


def as_array(values: Sequence[float]) -> np.ndarray:
    return np.asarray(values, dtype=float)


_INLINE = json.JSONEncoder(sort_keys=True, ensure_ascii=False, allow_nan=False,
                           separators=(", ", ": "))


_SCALARS = {str: json.encoder.encode_basestring, type(None): lambda _v: "null",
            bool: lambda v: "true" if v else "false", int: int.__repr__}


def _inline(value) -> str:
    """``_INLINE.encode(value)``, with the encoder's own functions called directly for a
    string, None, a bool, an int or a finite float (most of a document's calls)."""
    t = type(value)
    if t is float:
        if math.isfinite(value):
            return float.__repr__(value)
    else:
        scalar = _SCALARS.get(t)
        if scalar is not None:
            return scalar(value)
    return _INLINE.encode(value)


def json_text(doc, inline_depth: int = 2, _depth: int = 0, _pad: str = "") -> str:
    """``doc`` as JSON text, keys sorted: one key or item per line down to ``inline_depth``
    levels of nesting, every container deeper written on one line (a table row per line).

    The deep parts go through the json module's C encoder, which the indenting encoder never
    uses; the shallow layout is a few hundred lines at most."""
    if _depth >= inline_depth or not isinstance(doc, dict | list) or not doc:
        return _inline(doc)
    inner = _pad + " "
    if isinstance(doc, dict):
        parts = [f"{inner}{_inline(str(k))}: "
                 f"{json_text(doc[k], inline_depth, _depth + 1, inner)}" for k in sorted(doc)]
        return "{\n" + ",\n".join(parts) + "\n" + _pad + "}"
    parts = [inner + json_text(v, inline_depth, _depth + 1, inner) for v in doc]
    return "[\n" + ",\n".join(parts) + "\n" + _pad + "]"
