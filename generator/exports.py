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
    if x is None:
        return None
    x = float(x)
    if not math.isfinite(x):
        return None
    if x == 0.0:
        return 0.0
    return float(f"{x:.{SIGNIFICANT}g}")


def reaction_rows(f: ReactionFunctions) -> list[dict]:
    rows = []
    for i, T in enumerate(f.T):
        rows.append({
            "T": num(T),
            "drH": num(f.drH[i]), "drS": num(f.drS[i]), "drG": num(f.drG[i]),
            "drCp": num(f.drCp[i]), "drU": num(f.drU[i]), "TdrS": num(f.TdrS[i]),
            "K": num(f.K[i]), "log10K": num(f.log10K[i]),
            "E": None if f.E is None else num(f.E[i]),
            "Etn": None if f.Etn is None else num(f.Etn[i]),
            "u": {"drH": num(f.u_drH[i]), "drS": num(f.u_drS[i]), "drG": num(f.u_drG[i]),
                  "log10K": num(f.u_log10K[i])},
            "K_range": k_range(f.log10K[i], f.u_log10K[i]),
            "extrapolated": bool(f.extrapolated[i]),
        })
    return rows


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
    rows = []
    for i, T in enumerate(f.T):
        rows.append({
            "T": num(T), "Cp": num(f.Cp[i]), "H_minus_H298": num(f.H_minus_H298[i]),
            "S": num(f.S[i]), "G": num(f.G[i]), "gef": num(f.gef[i]),
            "dfH": num(form.dfH[i]), "dfG": num(form.dfG[i]), "log10Kf": num(form.log10Kf[i]),
            "u": {"dfH": num(form.u_dfH[i]), "dfG": num(form.u_dfG[i])},
            "extrapolated": bool(f.extrapolated[i] or form.extrapolated[i]),
        })
    return rows


def csv_table(rows: list[dict], columns: Sequence[str]) -> str:
    """CSV of the rows' columns (u.* for uncertainties), empty cells for null."""
    def cell(row: dict, col: str) -> str:
        v = row["u"].get(col[2:]) if col.startswith("u.") else row.get(col)
        if v is None:
            return ""
        if isinstance(v, bool):
            return "yes" if v else "no"
        return repr(v) if isinstance(v, float) else str(v)

    lines = [",".join(columns)]
    lines += [",".join(cell(r, c) for c in columns) for r in rows]
    return "\n".join(lines) + "\n"


def as_array(values: Sequence[float]) -> np.ndarray:
    return np.asarray(values, dtype=float)


_INLINE = json.JSONEncoder(sort_keys=True, ensure_ascii=False, allow_nan=False,
                           separators=(", ", ": "))


def json_text(doc, inline_depth: int = 2, _depth: int = 0, _pad: str = "") -> str:
    """``doc`` as JSON text, keys sorted: one key or item per line down to ``inline_depth``
    levels of nesting, every container deeper written on one line (a table row per line).

    The deep parts go through the json module's C encoder, which the indenting encoder never
    uses; the shallow layout is a few hundred lines at most."""
    if _depth >= inline_depth or not isinstance(doc, dict | list) or not doc:
        return _INLINE.encode(doc)
    inner = _pad + " "
    if isinstance(doc, dict):
        parts = [f"{inner}{_INLINE.encode(str(k))}: "
                 f"{json_text(doc[k], inline_depth, _depth + 1, inner)}" for k in sorted(doc)]
        return "{\n" + ",\n".join(parts) + "\n" + _pad + "}"
    parts = [inner + json_text(v, inline_depth, _depth + 1, inner) for v in doc]
    return "[\n" + ",\n".join(parts) + "\n" + _pad + "]"
