"""``thermofolio calc``: reaction properties at any temperature from the handbook's data."""

from __future__ import annotations

import argparse
import json
import math
import sys
from pathlib import Path

import numpy as np

from generator.caution import CAUTION
from generator.diagnostics import Finding, Location, Severity, note, sort_findings
from generator.equation import EquationError, parse_equation
from generator.exports import reaction_json
from generator.load import load_handbook
from generator.load.resolve import resolve_equation
from generator.model import Reaction

ARG = "<equation>"


def register(sub) -> None:
    p = sub.add_parser("calc", help="reaction properties at any temperature",
                       description="Compute ΔrH°, ΔrS°, ΔrG°, K, ΔrU° (and E° for electrons: n) "
                       "for an equation or a reaction id, from the handbook's species data.")
    p.add_argument("equation", help='e.g. "CH4(g) + H2O(g) -> CO(g) + 3 H2(g)", or a reaction id')
    p.add_argument("-T", dest="temperatures", action="append", default=[], metavar="K",
                   help="a temperature in K (repeatable)")
    p.add_argument("--range", metavar="START:STOP:STEP", help="temperatures START to STOP "
                   "inclusive in steps of STEP, K")
    p.add_argument("--sources", default="sources", help="handbook folder (default: sources)")
    p.add_argument("--electrons", type=int, metavar="N", help="electrons transferred, for E°")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(run=run)


def _usage(message: str) -> int:
    print(f"thermofolio calc: error: {message}", file=sys.stderr)
    return 2


def temperatures(args: argparse.Namespace) -> list[float] | str:
    """The requested temperatures, or a message saying what is wrong."""
    temps: list[float] = []
    for t in args.temperatures:
        try:
            temps.append(float(t))
        except ValueError:
            return f"-T {t}: not a number"
    if args.range:
        parts = args.range.split(":")
        try:
            start, stop, step = (float(x) for x in parts)
        except ValueError:
            return f"--range {args.range}: write START:STOP:STEP, e.g. 300:1500:100"
        if step <= 0 or stop < start:
            return f"--range {args.range}: STEP must be positive and STOP not below START"
        n = int(math.floor((stop - start) / step + 1e-9)) + 1
        if n > 100_000:
            return f"--range {args.range}: {n} temperatures is too many"
        temps += [start + i * step for i in range(n)]
    if not temps:
        temps = [298.15]
    for t in temps:
        if not math.isfinite(t) or t <= 0:
            return f"temperature {t:g} K: must be a finite number above 0 K"
    return sorted(set(temps))


def run(args: argparse.Namespace) -> int:
    temps = temperatures(args)
    if isinstance(temps, str):
        return _usage(temps)
    if args.electrons is not None and args.electrons < 1:
        return _usage("--electrons must be at least 1")
    handbook, load_findings = load_handbook(Path(args.sources))
    if handbook is None:
        for f in sort_findings(load_findings):
            print(f.format(), file=sys.stderr)
        print("thermofolio calc: the handbook has errors; run thermofolio check", file=sys.stderr)
        return 1
    from generator.compute import compute_handbook, evaluate_reaction

    computed = compute_handbook(handbook)
    species = computed.handbook.species
    findings: list[Finding] = []
    reaction: Reaction | None = computed.handbook.reactions.get(args.equation.strip())
    if reaction is not None:
        nu, equation, electrons = reaction.stoichiometry, reaction.equation, reaction.electrons
    else:
        try:
            parsed = parse_equation(args.equation)
        except EquationError as exc:
            print(f"{ARG}:1:{exc.col}: error: {exc.message}" + (f" ({exc.hint})" if exc.hint
                  else ""), file=sys.stderr)
            return 1
        sides = resolve_equation(parsed, dict(species), Location(ARG, 1, 1), findings)
        if sides is None:
            for f in findings:
                print(f.format(), file=sys.stderr)
            return 1
        nu = {}
        for t in sides[0]:
            nu[t.species] = nu.get(t.species, 0.0) - t.nu
        for t in sides[1]:
            nu[t.species] = nu.get(t.species, 0.0) + t.nu
        nu = {k: v for k, v in nu.items() if abs(v) > 1e-12}
        equation, electrons = args.equation.strip(), None
    if args.electrons:
        electrons = args.electrons
    if not nu:
        return _usage("the equation cancels to nothing")
    grid = np.asarray(temps)
    f, _curve, crossings = evaluate_reaction(nu, species, grid, electrons)
    used = set(nu)
    findings += [x for x in computed.findings if x.item in used or
                 (reaction is not None and x.item == reaction.id)]
    if f.extrapolated.any():
        cov = f"{f.covered[0]:g}–{f.covered[1]:g} K" if f.covered else "298.15 K only"
        findings.append(note("extrapolated", "extrapolated at " + ", ".join(
            f"{t:g}" for t in grid[f.extrapolated]) + f" K (data cover {cov})"))
    if not np.all(np.isfinite(f.drG)):
        findings.append(Finding(Severity.ERROR, "not-computable", "a species lacks ΔfH° or S°; "
                                "values shown as —"))
    findings = sort_findings(findings)
    if args.json:
        doc = reaction_json(equation, f, crossings, findings,
                            species={k: v for k, v in sorted(nu.items())},
                            electrons=electrons)
        print(json.dumps(doc, indent=2, ensure_ascii=False, sort_keys=False))
    else:
        print(text_report(equation, f, crossings, findings, electrons))
    return 1 if any(x.severity is Severity.ERROR for x in findings) else 0


def _cell(x: float, fmt: str) -> str:
    return fmt.format(x).replace("-", "−") if np.isfinite(x) else "—"


def text_report(equation, f, crossings, findings, electrons) -> str:
    cols = [("T/K", f.T, "{:.2f}"), ("ΔrH°", f.drH, "{:.3f}"), ("±", f.u_drH, "{:.3f}"),
            ("ΔrS°", f.drS, "{:.3f}"), ("ΔrG°", f.drG, "{:.3f}"), ("±", f.u_drG, "{:.3f}"),
            ("ΔrCp°", f.drCp, "{:.3f}"), ("ΔrU°", f.drU, "{:.3f}"), ("T·ΔrS°", f.TdrS, "{:.3f}"),
            ("log10 K", f.log10K, "{:.4f}"), ("±", f.u_log10K, "{:.4f}"), ("K", f.K, "{:.4e}")]
    if electrons:
        cols += [("E°/V", f.E, "{:.4f}"), ("Etn/V", f.Etn, "{:.4f}")]
    table = [[name for name, _a, _f in cols]]
    for i in range(len(f.T)):
        row = [_cell(a[i], fmt) for _n, a, fmt in cols]
        if f.extrapolated[i]:
            row[0] += "*"
        table.append(row)
    widths = [max(len(r[j]) for r in table) for j in range(len(cols))]
    lines = [f"reaction: {equation}",
             "units: ΔrH°, ΔrG°, ΔrU°, T·ΔrS° kJ/mol; ΔrS°, ΔrCp° J/(mol·K); ± standard "
             "uncertainty (GUM); K lies within 10^(log10 K ± u) at one standard uncertainty; "
             "— where unknown", ""]
    lines += ["  ".join(c.rjust(w) for c, w in zip(r, widths, strict=True)) for r in table]
    if f.extrapolated.any():
        lines.append("* extrapolated beyond the species' Cp data")
    lines.append("")
    if crossings:
        lines.append("ΔrG° = 0 at " + ", ".join(f"{t:.1f} K" for t in crossings)
                     + " (on the real curves, within the data's range)")
    else:
        lines.append("ΔrG° does not change sign within the data's range"
                     + (f" ({f.covered[0]:g}–{f.covered[1]:g} K)" if f.covered else ""))
    for x in findings:
        lines.append(x.format())
    lines.append("")
    lines.append(f"CAUTION: {CAUTION}")
    return "\n".join(lines)
