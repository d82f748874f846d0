"""Consistency checks of the computed handbook, reported as Findings.

Each check names its code; tolerances come from handbook.yaml (DEFAULT_TOLERANCES in
generator.model).  A gap counts when it exceeds the tolerance or twice the combined
standard uncertainty (GUM coverage factor k = 2), whichever is larger.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np

from generator.diagnostics import Finding, error, note, warning
from generator.model import Handbook, Species
from generator.thermo.constants import T_REF, R
from generator.thermo.cp_models import absolute_H_S, cp
from generator.thermo.reactions import reaction_functions
from generator.thermo.species_props import formation_functions

IMPLAUSIBLE_DFH_KJ = 5000.0
GAS_CP_MIN = 2.5 * R  # an ideal gas has Cp >= 5/2 R (monatomic, translation only)


def engine_findings(handbook: Handbook) -> list[Finding]:
    """All the engine's findings for a loaded handbook."""
    from generator.compute import compute_handbook

    return list(compute_handbook(handbook).findings)


def _tol(tolerance: float, *uncs: float | None) -> float:
    u = math.sqrt(sum((x or 0.0) ** 2 for x in uncs))
    return max(tolerance, 2.0 * u)


def _fmt(x: float) -> str:
    return f"{x:.3g}" if abs(x) < 0.1 else f"{x:.2f}"


def species_checks(sp: Species, element_refs, tol) -> list[Finding]:
    """One species' own checks: plausible ΔfH° and S°, ΔfG° against ΔfH° − T·ΔfS°, the fits
    against the standard block at 298.15 K, jumps between fits and Cp bounds."""
    out: list[Finding] = []
    std = sp.standard
    dfH = std["dfH"].preferred if "dfH" in std else None
    S = std["S"].preferred if "S" in std else None
    dfG = std["dfG"].preferred if "dfG" in std else None
    if dfH is not None and abs(dfH.value) > IMPLAUSIBLE_DFH_KJ:
        out.append(warning("implausible-dfH", f"ΔfH° of {sp.id} is {dfH.value:g} kJ/mol, beyond "
                           f"±{IMPLAUSIBLE_DFH_KJ:g} kJ/mol", dfH.location,
                           hint="a value in J/mol written as kJ/mol?", item=sp.id,
                           quantity="dfH"))
    if S is not None and S.value < 0 and sp.charge == 0:
        out.append(warning("negative-entropy", f"S° of {sp.id} is negative ({S.value:g} "
                           "J/(mol·K)); the third law forbids that for a neutral species",
                           S.location, item=sp.id, quantity="S"))
    if dfH is not None and S is not None and dfG is not None:
        f = formation_functions(sp, element_refs, [T_REF])
        if not f.missing and np.isfinite(f.dfG[0]):
            gap = dfG.value - float(f.dfG[0])
            allowed = _tol(tol["gibbs_kJ"], dfG.unc, float(f.u_dfG[0]) if
                           np.isfinite(f.u_dfG[0]) else None)
            if abs(gap) > allowed:
                out.append(warning(
                    "gibbs-inconsistent", f"ΔfG° of {sp.id} ({dfG.value:.2f} kJ/mol) differs "
                    f"from ΔfH° − T·ΔfS° ({float(f.dfG[0]):.2f} kJ/mol) by {gap:+.2f} kJ/mol",
                    dfG.location, hint=f"allowed {allowed:.2f} kJ/mol; check the three values "
                    "and their standard pressure", item=sp.id, quantity="dfG",
                    data={"gap": gap}))
    for p in sp.cp:
        if p.kind in ("nasa7", "nasa9", "shomate") and p.Tmin - 1e-6 <= T_REF <= p.Tmax + 1e-6:
            H_fit, S_fit = (float(a[0]) for a in absolute_H_S(p, np.array([T_REF])))
            if dfH is not None and abs(H_fit - dfH.value) > tol["polynomial_H_kJ"]:
                out.append(warning(
                    "polynomial-H", f"the {p.kind} fit of {sp.id} gives H(298.15 K) = "
                    f"{H_fit:.2f} kJ/mol but the standard ΔfH° is {dfH.value:.2f}", p.location,
                    hint="the curves are anchored at the standard block; check both",
                    item=sp.id, quantity="cp"))
            if S is not None and abs(S_fit - S.value) > tol["polynomial_S_J"]:
                out.append(warning(
                    "polynomial-S", f"the {p.kind} fit of {sp.id} gives S(298.15 K) = "
                    f"{S_fit:.2f} J/(mol·K) but the standard S° is {S.value:.2f}", p.location,
                    hint="the curves are anchored at the standard block; check both",
                    item=sp.id, quantity="cp"))
    for a, b in zip(sp.cp, sp.cp[1:], strict=False):
        Tb = b.Tmin
        ca, cb = float(np.ravel(cp(a, Tb))[0]), float(np.ravel(cp(b, Tb))[0])
        if abs(ca - cb) > tol["jump_Cp_J"]:
            out.append(warning("cp-jump", f"Cp of {sp.id} jumps from {ca:.2f} to {cb:.2f} "
                               f"J/(mol·K) at {Tb:g} K", b.location, item=sp.id, quantity="cp"))
        if a.kind == b.kind and a.kind in ("nasa7", "nasa9", "shomate"):
            Ha, Sa = (float(x[0]) for x in absolute_H_S(a, np.array([Tb])))
            Hb, Sb = (float(x[0]) for x in absolute_H_S(b, np.array([Tb])))
            if abs(Ha - Hb) > tol["jump_H_kJ"]:
                out.append(warning("h-jump", f"the fits of {sp.id} disagree in H by "
                                   f"{Hb - Ha:+.3f} kJ/mol at {Tb:g} K", b.location,
                                   item=sp.id, quantity="cp"))
            if abs(Sa - Sb) > tol["jump_S_J"]:
                out.append(warning("s-jump", f"the fits of {sp.id} disagree in S by "
                                   f"{Sb - Sa:+.3f} J/(mol·K) at {Tb:g} K", b.location,
                                   item=sp.id, quantity="cp"))
    # Partial molar Cp of an aqueous ion is conventional (relative to H+(aq)) and may be
    # negative; the bound applies to neutral species only.
    for p in sp.cp if sp.charge == 0 else ():
        T = np.linspace(p.Tmin, p.Tmax, 50)
        c = cp(p, T)
        floor = GAS_CP_MIN - 0.05 if sp.phase == "g" else 0.0
        bad = ~np.isfinite(c) | (c <= floor)
        if bad.any():
            Tbad = float(T[np.argmax(bad)])
            why = (f"below 5/2 R = {GAS_CP_MIN:.2f} J/(mol·K), the ideal-gas minimum"
                   if sp.phase == "g" else "not positive")
            out.append(warning("nonphysical-cp", f"Cp of {sp.id} is {float(c[np.argmax(bad)]):.2f}"
                               f" J/(mol·K) at {Tbad:g} K, {why}", p.location, item=sp.id,
                               quantity="cp"))
    if dfH is None or S is None:
        missing = [n for n, v in (("ΔfH°", dfH), ("S°", S)) if v is None]
        out.append(note("incomplete", f"{sp.id} has no {' or '.join(missing)}; reactions "
                        "using it cannot be computed", sp.location, item=sp.id))
    return out


def _measured_checks(rid, rr, species, tol):
    checks, out = [], []
    from generator.compute import MeasuredCheck

    for m in rr.reaction.measured:
        f = reaction_functions(rr.nu, species, [m.T])
        if m.quantity == "K":
            measured = -R * m.T * math.log(m.value.value) / 1000.0
            u_meas = (R * m.T * m.value.unc / m.value.value / 1000.0) if m.value.unc else None
            computed, u_comp, unit, name = float(f.drG[0]), float(f.u_drG[0]), "kJ/mol", "ΔrG°"
            allowed = _tol(tol["hess_kJ"], u_meas, u_comp if np.isfinite(u_comp) else None)
        else:
            measured, u_meas = m.value.value, m.value.unc
            arr = {"drH": (f.drH, f.u_drH), "drS": (f.drS, f.u_drS), "drG": (f.drG, f.u_drG)}
            computed, u_comp = (float(a[0]) for a in arr[m.quantity])
            unit = "J/(mol·K)" if m.quantity == "drS" else "kJ/mol"
            name = {"drH": "ΔrH°", "drS": "ΔrS°", "drG": "ΔrG°"}[m.quantity]
            base = tol["hess_kJ"] * (1000.0 / m.T if m.quantity == "drS" else 1.0)
            allowed = _tol(base, u_meas, u_comp if np.isfinite(u_comp) else None)
        gap = measured - computed
        u_c = math.sqrt((u_meas or 0) ** 2 + (u_comp if np.isfinite(u_comp) else 0) ** 2)
        checks.append(MeasuredCheck(m.quantity, m.T, measured, computed, gap, u_c or None,
                                    m.value.ref))
        if not np.isfinite(computed):
            continue
        if abs(gap) > allowed:
            out.append(warning(
                "hess-gap", f"measured {name} of {rid} at {m.T:g} K ({measured:.2f} {unit}) "
                f"differs from the formation data ({computed:.2f} {unit}) by {gap:+.2f} {unit}:"
                " the Hess's law cycle does not close", m.location,
                hint=f"allowed {allowed:.2f} {unit}", item=rid, quantity=m.quantity,
                data={"gap": gap}))
    return checks, out


def engine_checks(computed, species_findings: Mapping[str, Sequence[Finding]] | None = None
                  ) -> tuple[dict, list[Finding]]:
    """Findings of every species and reaction; measured-vs-computed checks by reaction.
    ``species_findings``: each species' species_checks, when made already."""
    hb = computed.handbook
    tol = hb.settings.tolerances
    findings: list[Finding] = []
    for sp in hb.species.values():
        if species_findings is not None:
            findings += species_findings[sp.id]
        else:
            findings += species_checks(sp, computed.element_refs, tol)
    checks: dict[str, list] = {}
    grid = np.asarray(hb.settings.temperatures)
    for rid, rr in computed.reactions.items():
        c, f = _measured_checks(rid, rr, hb.species, tol)
        checks[rid] = c
        findings += f
        g = rr.grid
        if not np.all(np.isfinite(g.drG)):
            findings.append(error("not-computable", f"{rid} cannot be computed: a species lacks "
                                  "ΔfH° or S°", rr.reaction.location, item=rid))
            continue
        if g.extrapolated.any():
            temps = ", ".join(f"{t:g}" for t in grid[g.extrapolated])
            cov = (f"{g.covered[0]:g}–{g.covered[1]:g} K" if g.covered
                   else "298.15 K only (no Cp data)")
            findings.append(note("extrapolated", f"{rid} is extrapolated at {temps} K; its "
                                 f"species' Cp data cover {cov}", rr.reaction.location,
                                 item=rid))
        overflow = ~np.isfinite(g.K)
        if overflow.any():
            findings.append(note("k-overflow", f"K of {rid} exceeds the floating-point range at "
                                 f"{', '.join(f'{t:g}' for t in grid[overflow])} K; shown as "
                                 "log10 K only", rr.reaction.location, item=rid))
        if rr.hess_total is not None:
            gap = np.nanmax(np.abs(rr.hess_total["drG"] - g.drG))
            if gap > 1e-6:
                findings.append(error("hess-internal", f"sum of the steps of {rid} differs from "
                                      f"its net equation by {gap:.3g} kJ/mol", rr.reaction.location,
                                      item=rid))
    return checks, findings
