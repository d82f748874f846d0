"""``thermofolio calc``: reaction properties at any temperature from the handbook's data."""

from __future__ import annotations

import argparse
import difflib
import json
import math
import re
import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from generator.caution import CAUTION
from generator.diagnostics import Finding, Location, Severity, note, sort_findings
from generator.equation import EquationError, parse_equation
from generator.exports import num, reaction_json
from generator.load import load_handbook
from generator.load.conditions import feed_problem, resolve_feed_name
from generator.load.resolve import resolve_equation
from generator.model import Reaction, Species
from generator.thermo.adiabatic import AdiabaticResult, adiabatic_caution, adiabatic_temperature
from generator.thermo.electrochem import voltage_efficiency
from generator.thermo.equilibrium import EquilibriumResult, equilibrium, stoichiometric_feed
from generator.units import UnitError, parse_pressure

ARG = "<equation>"


def register(sub) -> None:
    p = sub.add_parser("calc", help="reaction properties at any temperature",
                       description="Compute ΔrH°, ΔrS°, ΔrG°, K, ΔrU° (and E° for electrons: n) "
                       "for an equation or a reaction id, from the handbook's species data.")
    p.add_argument("equation", nargs="?", help='e.g. "CH4(g) + H2O(g) -> CO(g) + 3 H2(g)", or '
                   "a reaction id (not with --family)")
    p.add_argument("--element", metavar="SYMBOL", help="the ladder of an element: every "
                   "species containing it by ΔfH° and ΔfG° (298.15 K) per atom of it")
    p.add_argument("--family", metavar="NAME", help="every member of a reaction family: ΔrG° "
                   "per mole of the family's per species, and where two members' lines cross")
    p.add_argument("-T", dest="temperatures", action="append", default=[], metavar="K",
                   help="a temperature in K (repeatable)")
    p.add_argument("--range", metavar="START:STOP:STEP", help="temperatures START to STOP "
                   "inclusive in steps of STEP, K")
    p.add_argument("--sources", default="sources", help="handbook folder (default: sources)")
    p.add_argument("--electrons", type=int, metavar="N", help="electrons transferred, for E°")
    p.add_argument("--feed", metavar="SPECIES=MOL,...", help='moles of each species fed, e.g. '
                   '"CH4=1,H2O=3,N2=0.1" (inerts allowed): prints the equilibrium composition')
    p.add_argument("--pressure", dest="pressures", action="append", default=[], metavar="P",
                   help="total pressure with a unit, e.g. 20bar or 101325 Pa (repeatable; "
                   "default: the standard pressure)")
    p.add_argument("--adiabatic", action="store_true", help="the adiabatic outlet temperature "
                   "on complete conversion of the feed")
    p.add_argument("--T-in", dest="T_in", type=float, metavar="K",
                   help="feed temperature for --adiabatic, K (default 298.15)")
    p.add_argument("--voltage", type=float, metavar="V", help="operating cell voltage, V: "
                   "voltage efficiency (needs electrons)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(run=run)


def _usage(message: str) -> int:
    print(f"thermofolio calc: error: {message}", file=sys.stderr)
    return 2


def load_or_report(sources: Path):
    """The loaded handbook, or None after printing its errors (for every calc mode)."""
    handbook, load_findings = load_handbook(sources)
    if handbook is None:
        for f in sort_findings(load_findings):
            print(f.format(), file=sys.stderr)
        print("thermofolio calc: the handbook has errors; run thermofolio check", file=sys.stderr)
    return handbook


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
    if args.element is not None:
        if args.equation is not None or args.family is not None:
            return _usage("--element goes alone, without an equation or --family")
        return run_element(args)
    if (args.equation is None) == (args.family is None):
        return _usage("give an equation (or reaction id) or --family NAME, not both"
                      if args.family is not None else "give an equation, a reaction id or "
                      "--family NAME")
    temps = temperatures(args)
    if isinstance(temps, str):
        return _usage(temps)
    if args.family is not None:
        return run_family(args, temps)
    if args.electrons is not None and args.electrons < 1:
        return _usage("--electrons must be at least 1")
    pressures = _pressures(args.pressures)
    if isinstance(pressures, str):
        return _usage(pressures)
    feed_items = _feed_items(args.feed) if args.feed is not None else None
    if isinstance(feed_items, str):
        return _usage(feed_items)
    if args.T_in is not None and not (math.isfinite(args.T_in) and args.T_in > 0):
        return _usage("--T-in must be a temperature above 0 K")
    if args.voltage is not None and not (math.isfinite(args.voltage) and args.voltage > 0):
        return _usage("--voltage must be a positive number of volts")
    handbook = load_or_report(Path(args.sources))
    if handbook is None:
        return 1
    from generator.compute import compute_handbook, evaluate_reaction

    computed = compute_handbook(handbook)
    species = computed.handbook.species
    findings: list[Finding] = []
    reaction: Reaction | None = computed.handbook.reactions.get(args.equation.strip())
    if reaction is not None:
        nu, equation, electrons = reaction.stoichiometry, reaction.equation, reaction.electrons
        terms = [*reaction.reactants, *reaction.products]
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
        terms = [*sides[0], *sides[1]]
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
    if args.voltage is not None and not electrons:
        return _usage("--voltage needs an electrochemical reaction: give --electrons N")
    extras = Extras()
    if feed_items is not None or pressures or args.adiabatic:
        code = _process(args, extras, reaction, nu, terms, feed_items, pressures, grid,
                        computed.handbook, findings)
        if code:
            return code
    if args.voltage is not None:
        extras.voltage = _voltage_rows(f, args.voltage)
    findings = sort_findings(findings)
    if args.json:
        more = {}
        if extras.equilibrium is not None:
            more["equilibrium"] = extras.equilibrium_json()
        if extras.adiabatic is not None:
            more["adiabatic"] = {"T_in": num(extras.adiabatic.T_in),
                                 "T_out": num(extras.adiabatic.T_out)}
        if extras.voltage is not None:
            more["voltage_efficiency"] = extras.voltage
        doc = reaction_json(equation, f, crossings, findings,
                            species={k: v for k, v in sorted(nu.items())},
                            electrons=electrons, **more)
        print(json.dumps(doc, indent=2, ensure_ascii=False, sort_keys=False))
    else:
        print(text_report(equation, f, crossings, findings, electrons, extras))
    return 1 if any(x.severity is Severity.ERROR for x in findings) else 0


def _cell(x: float, fmt: str) -> str:
    return fmt.format(x).replace("-", "−") if np.isfinite(x) else "—"


def text_report(equation, f, crossings, findings, electrons, extras: Extras | None = None
                ) -> str:
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
    if extras is not None:
        lines += extras.text()
    for x in findings:
        lines.append(x.format())
    lines.append("")
    lines.append(f"CAUTION: {CAUTION}")
    return "\n".join(lines)


# --- equilibrium, adiabatic temperature and voltage efficiency ------------------------------

FEED_ARG = "<feed>"
_COEF_PREFIX = re.compile(r"^\s*(?:[0-9]+/[0-9]+|[0-9]*\.[0-9]+|[0-9]+)\s+")


def _pressures(texts: list[str]) -> list[float] | str:
    """Each --pressure in Pa, or a message; a bare number is refused (say the unit)."""
    out = []
    for t in texts:
        try:
            P = parse_pressure(t)
        except UnitError as exc:
            hint = f" ({exc.hint})" if exc.hint else ""
            try:
                float(t)
                return f"--pressure {t}: a pressure needs a unit, e.g. {t} bar"
            except ValueError:
                return f"--pressure {t}: {exc.message}{hint}"
        if not (math.isfinite(P) and P > 0):
            return f"--pressure {t}: must be above zero"
        out.append(P)
    return out


def _feed_items(text: str) -> list[tuple[str, float, int]] | str:
    """``"CH4=1,H2O=3"`` as (name, mol, 1-based column of the name), or a message."""
    items: list[tuple[str, float, int]] = []
    col = 1
    for part in text.split(","):
        name, eq, amount = part.partition("=")
        lead = len(name) - len(name.lstrip())
        if not eq or not name.strip():
            return f"--feed: write SPECIES=MOL pairs separated by commas, got '{part.strip()}'"
        try:
            n = float(amount)
        except ValueError:
            return f"--feed: the amount of {name.strip()} is not a number: '{amount.strip()}'"
        if not math.isfinite(n) or n < 0:
            return f"--feed: the amount of {name.strip()} must be zero or more"
        items.append((name.strip(), n, col + lead))
        col += len(part) + 1
    if sum(n for _, n, _ in items) <= 0:
        return "--feed: at least one amount must be above zero"
    return items


@dataclass
class Extras:
    """What --feed, --pressure, --adiabatic and --voltage add to the report."""

    equilibrium: list[EquilibriumResult] | None = None
    labels: dict[str, str] = field(default_factory=dict)
    feed_label: str = ""
    standard_pressure: float = 1.0e5
    adiabatic: AdiabaticResult | None = None
    voltage: list[dict] | None = None

    def equilibrium_json(self) -> list[dict]:
        return [{"T": num(r.T), "P": num(r.P / 1.0e5), "extent": num(r.extent),
                 "conversion": num(r.conversion),
                 "x": {self.labels.get(s, s): num(v) for s, v in r.x.items()}}
                for r in self.equilibrium or []]

    def text(self) -> list[str]:
        lines: list[str] = []
        if self.equilibrium is not None:
            lines += ["", f"equilibrium from feed {self.feed_label} (mol); ideal gases "
                      f"(activity y·P/P°, P° = {self.standard_pressure / 1e5:g} bar), pure "
                      "condensed phases at unit activity, ideal aqueous solutes (m/1 mol/kg); "
                      "x = amount fraction over all species; conversion of the first reactant"]
            ids = list(self.equilibrium[0].x) if self.equilibrium else []
            head = ["T/K", "P/bar", "extent/mol", "conversion"] + \
                [f"x {self.labels.get(s, s)}" for s in ids]
            table = [head]
            for r in self.equilibrium:
                table.append([f"{r.T:.2f}", f"{r.P / 1e5:g}", _g(r.extent),
                              "—" if r.conversion is None else f"{r.conversion:.5f}"]
                             + [_g(r.x[s]) for s in ids])
            widths = [max(len(row[j]) for row in table) for j in range(len(head))]
            lines += ["  ".join(c.rjust(w) for c, w in zip(row, widths, strict=True))
                      for row in table]
        if self.adiabatic is not None:
            a = self.adiabatic
            lines += ["", f"adiabatic: feed {self.feed_label} (mol) at {a.T_in:.2f} K reaches "
                      f"{_cell(a.T_out, '{:.1f}')} K (rise {_cell(a.rise, '{:.1f}')} K) on "
                      "complete conversion with no heat loss (outlet phases as written, no "
                      "dissociation)"]
        if self.voltage is not None:
            lines += ["", "voltage efficiency at " + f"{self.voltage[0]['V']:g} V" +
                      " (electrolysis: |E°|/V and Etn/V; galvanic cell: V/|E°| and V/Etn)"]
            for row in self.voltage:
                lines.append(f"  {row['T']:.2f} K  {row['mode']}: voltage "
                             f"{_pct(row['eta_V'])}, thermal {_pct(row['eta_thermal'])}")
        return lines


def _g(x: float) -> str:
    if not math.isfinite(x):
        return "—"
    return f"{x:.6f}" if x == 0 or abs(x) >= 1e-3 else f"{x:.4e}"


def _pct(x: float | None) -> str:
    return "—" if x is None else f"{100 * x:.1f} %"


def _label(written: str) -> str:
    """A term as written, without its coefficient and the braces of an id."""
    text = _COEF_PREFIX.sub("", written).strip()
    return text[1:-1] if text.startswith("{") and text.endswith("}") else text


def _process(args, extras: Extras, reaction: Reaction | None, nu: dict[str, float], terms,
             feed_items, pressures: list[float], grid, handbook, findings: list[Finding]
             ) -> int:
    """Fill ``extras`` with the equilibrium and adiabatic results; an exit code on error."""
    species: dict[str, Species] = dict(handbook.species)
    settings = handbook.settings
    conditions = reaction.conditions if reaction is not None else None
    labels = {t.species: _label(t.written) for t in terms}
    if feed_items is not None:
        feed: dict[str, float] = {}
        for name, n, col in feed_items:
            sid, message, hint = resolve_feed_name(name, species, nu)
            if sid is None:
                print(f"{FEED_ARG}:1:{col}: error: {message}" + (f" ({hint})" if hint else ""),
                      file=sys.stderr)
                return 1
            feed[sid] = feed.get(sid, 0.0) + n
            labels.setdefault(sid, name)
        extras.feed_label = ", ".join(f"{name}={n:g}" for name, n, _ in feed_items)
    elif conditions is not None and conditions.feeds:
        first = conditions.feeds[0]
        feed = first.amounts
        for sid, w in zip(first.species, first.written, strict=True):
            labels.setdefault(sid, w)
        extras.feed_label = ", ".join(f"{w}={n:g}" for w, n in
                                      zip(first.written, first.moles, strict=True))
    else:
        feed = stoichiometric_feed(nu)
        extras.feed_label = ", ".join(f"{labels[s]}={n:g}" for s, n in feed.items())
    problem = feed_problem(nu, species, feed)
    if problem:
        print(f"{FEED_ARG}: error: {problem[0]} ({problem[1]})", file=sys.stderr)
        return 1
    extras.labels = labels
    extras.standard_pressure = settings.standard_pressure
    first_reactant = next((t.species for t in terms if nu.get(t.species, 0) < 0), None)
    if pressures or not args.adiabatic:
        results: list[EquilibriumResult] = []
        for P in pressures or [settings.standard_pressure]:
            try:
                results += equilibrium(nu, species, feed, grid, P,
                                       standard_pressure=settings.standard_pressure,
                                       first_reactant=first_reactant)
            except ValueError as exc:
                print(f"{FEED_ARG}: error: {exc}", file=sys.stderr)
                return 1
        extras.equilibrium = results
        seen = set()
        for r in results:
            if r.note and (r.T, r.P) not in seen:
                seen.add((r.T, r.P))
                findings.append(note("equilibrium-bound" if r.limited_by else "equilibrium",
                                     f"equilibrium at {r.T:g} K, {r.P / 1e5:g} bar: {r.note}"))
    if args.adiabatic:
        T_in = args.T_in if args.T_in is not None else (
            conditions.T_in if conditions is not None else 298.15)
        a = adiabatic_temperature(nu, species, feed, T_in)
        extras.adiabatic = a
        if a.note:
            findings.append(note("adiabatic", f"adiabatic temperature: {a.note}"))
        caution = adiabatic_caution(a.rise, settings.adiabatic_caution_K)
        if caution:
            findings.append(Finding(Severity.WARNING, "runaway-potential", caution))
    return 0


def _voltage_rows(f, V: float) -> list[dict]:
    rows = []
    for i, T in enumerate(f.T):
        if f.E is None or not (math.isfinite(f.E[i]) and math.isfinite(f.Etn[i])):
            continue
        eff = voltage_efficiency(float(f.E[i]), float(f.Etn[i]), V)
        rows.append({"T": num(T), "V": num(V), "mode": eff.mode, "eta_V": num(eff.eta_V),
                     "eta_thermal": num(eff.eta_thermal)})
    return rows


# --- --family: ΔrG° per mole of the family's per species, crossovers of the lines -----------

FAMILY_FINE_POINTS = 400  # points of the grid on which the members' lines are intersected
_NOT_WITH_FAMILY = (("feed", "--feed"), ("pressures", "--pressure"), ("adiabatic", "--adiabatic"),
                    ("T_in", "--T-in"), ("voltage", "--voltage"), ("electrons", "--electrons"))


def run_family(args: argparse.Namespace, temps: list[float]) -> int:
    """ΔrG°(T)/|ν_per| of every member of ``--family`` at ``temps`` and the temperatures in
    [min T, max T] where two members' lines cross (generator.design.line_crossings on a
    grid of FAMILY_FINE_POINTS)."""
    from generator.compute import compute_handbook
    from generator.design import (
        family_members,
        handbook_family,
        handbook_family_names,
        line_crossings,
        per_label,
    )
    from generator.thermo.reactions import reaction_functions

    for attr, flag in _NOT_WITH_FAMILY:
        if getattr(args, attr) not in (None, False, []):
            return _usage(f"{flag} does not go with --family")
    handbook = load_or_report(Path(args.sources))
    if handbook is None:
        return 1
    computed = compute_handbook(handbook)
    hb = computed.handbook
    name = args.family.strip()
    names = handbook_family_names(hb)
    if name not in names:
        close = difflib.get_close_matches(name, names, n=1)
        hint = (f"did you mean '{close[0]}'?" if close
                else "families: " + (", ".join(names) or "none"))
        print(f"thermofolio calc: error: unknown family '{name}' ({hint})", file=sys.stderr)
        return 1
    fam = handbook_family(hb, name)
    pairs, skipped = family_members(hb, name, fam.per)
    grid = np.asarray(temps, dtype=float)
    fine = (np.linspace(grid[0], grid[-1], FAMILY_FINE_POINTS) if grid[-1] > grid[0]
            else None)
    rows: dict[str, np.ndarray] = {}
    lines: dict[str, np.ndarray] = {}
    findings: list[Finding] = []
    used = {rid for rid, _nu in pairs}
    for rid, nu in pairs:
        stoich = hb.reactions[rid].stoichiometry
        used |= set(stoich)
        f = reaction_functions(stoich, hb.species, grid)
        rows[rid] = np.asarray(f.drG, dtype=float) / nu
        if fine is not None:
            lines[rid] = np.asarray(reaction_functions(stoich, hb.species, fine).drG,
                                    dtype=float) / nu
        if f.extrapolated.any():
            findings.append(note("extrapolated", f"{rid}: extrapolated at " + ", ".join(
                f"{t:g}" for t in grid[f.extrapolated]) + " K", item=rid))
        if not np.all(np.isfinite(f.drG)):
            findings.append(Finding(Severity.ERROR, "not-computable", f"{rid}: a species lacks "
                                    "ΔfH° or S°; values shown as —", item=rid))
    members = [rid for rid, _nu in pairs]
    crossings = line_crossings(fine, lines, members) if fine is not None else ()
    findings += [x for x in computed.findings if x.item in used]
    findings = sort_findings(findings)
    if args.json:
        doc = {
            "family": name, "per": fam.per,
            "units": {"T": "K", "drG_per": "kJ/mol"},
            "members": [{"id": rid, "equation": hb.reactions[rid].equation, "nu_per": num(nu),
                         "rows": [{"T": num(t), "drG_per": num(g)}
                                  for t, g in zip(grid, rows[rid], strict=True)]}
                        for rid, nu in pairs],
            "skipped": list(skipped),
            "crossings": [{"a": a, "b": b, "T": num(t), "drG_per": num(y)}
                          for a, b, t, y in crossings],
            "findings": [x.to_json() for x in findings],
            "caution": CAUTION,
        }
        print(json.dumps(doc, indent=2, ensure_ascii=False, sort_keys=False))
    else:
        print(family_report(name, fam.title, fam.per, per_label(hb, fam), pairs,
                            {rid: hb.reactions[rid].equation for rid in members}, skipped,
                            grid, rows, crossings, findings))
    return 1 if any(x.severity is Severity.ERROR for x in findings) else 0


def family_report(name: str, title: str, per: str | None, per_text: str,
                  pairs: list[tuple[str, float]], equations: dict[str, str],
                  skipped: list[str], grid: np.ndarray, rows: dict[str, np.ndarray],
                  crossings, findings: list[Finding]) -> str:
    """The text form of ``calc --family``: members, a table of ΔrG°/|ν_per| by T, the
    skipped reactions, the crossovers, the findings and the caution."""
    lines = [f"family: {name}" + (f" — {title}" if title and title != name else ""),
             f"units: ΔrG° {per_text}, kJ/mol"
             + (f" (ΔrG°/|ν({per})| of each member)" if per else "") + "; — where unknown", ""]
    width = max([len(rid) for rid, _nu in pairs] + [1])
    nu_width = max([len(f"{nu:g}") for _rid, nu in pairs] + [1])
    for rid, nu in pairs:
        lines.append(f"  {rid.ljust(width)}  |ν| = {f'{nu:g}'.ljust(nu_width)}  "
                     f"{equations[rid]}")
    if pairs:
        table = [["T/K", *(rid for rid, _nu in pairs)]]
        for i, t in enumerate(grid):
            table.append([f"{t:.2f}", *(_cell(rows[rid][i], "{:.3f}") for rid, _nu in pairs)])
        widths = [max(len(r[j]) for r in table) for j in range(len(table[0]))]
        lines.append("")
        lines += ["  ".join(c.rjust(w) for c, w in zip(r, widths, strict=True)) for r in table]
    else:
        lines.append("  no member of this family can be normalised")
    lines.append("")
    lines.append("skipped (no " + (per or "per species") + "): "
                 + (", ".join(skipped) if skipped else "none"))
    span = f"{grid[0]:g}–{grid[-1]:g} K"
    if crossings:
        lines.append(f"lines cross within {span}:")
        lines += [f"  {a} = {b} at {t:.1f} K ({_cell(y, '{:.3f}')} kJ/mol)"
                  for a, b, t, y in crossings]
    elif len(grid) > 1:
        lines.append(f"no two lines cross within {span}")
    else:
        lines.append("crossings need a temperature range (give -T twice or --range)")
    for x in findings:
        lines.append(x.format())
    lines.append("")
    lines.append(f"CAUTION: {CAUTION}")
    return "\n".join(lines)


# --- --element: ΔfH° and ΔfG° per atom of one element -------------------------------------


def run_element(args: argparse.Namespace) -> int:
    """Every species containing ``--element``, lowest ΔfH° per atom first
    (generator.design.ladder_points, the same values as the site's element ladder)."""
    from generator.compute import compute_handbook
    from generator.design import element_symbols, ladder_points

    handbook = load_or_report(Path(args.sources))
    if handbook is None:
        return 1
    computed = compute_handbook(handbook)
    symbol = args.element.strip()
    symbols = element_symbols(computed)
    if symbol not in symbols:
        close = difflib.get_close_matches(symbol, symbols, n=1)
        hint = f"did you mean '{close[0]}'?" if close else "elements: " + ", ".join(symbols)
        print(f"thermofolio calc: error: no species contains '{symbol}' ({hint})",
              file=sys.stderr)
        return 1
    points = ladder_points(computed, symbol)
    species = computed.handbook.species
    if args.json:
        doc = {"element": symbol, "units": {"dfH_per_atom": "kJ/mol", "dfG_per_atom": "kJ/mol"},
               "T": 298.15,
               "species": [{"id": p.species, "formula": species[p.species].formula,
                            "phase": species[p.species].phase, "n": p.atoms,
                            "dfH_per_atom": num(p.dfH), "dfG_per_atom": num(p.dfG)}
                           for p in points],
               "caution": CAUTION}
        print(json.dumps(doc, indent=2, ensure_ascii=False))
        return 0
    rows = [("species", "n", f"ΔfH°/n({symbol})", f"ΔfG°/n({symbol})")]
    for p in points:
        sp = species[p.species]
        rows.append((f"{sp.formula}({sp.phase}) {p.species}", str(p.atoms),
                     "—" if p.dfH is None else f"{p.dfH:.3f}".replace("-", "−"),
                     "—" if p.dfG is None else f"{p.dfG:.3f}".replace("-", "−")))
    widths = [max(len(r[j]) for r in rows) for j in range(4)]
    lines = [f"element ladder of {symbol} at 298.15 K, kJ per mol of {symbol} atoms "
             "(elements in their reference states at zero)", ""]
    lines += ["  ".join(c.ljust(w) if j == 0 else c.rjust(w)
                        for j, (c, w) in enumerate(zip(r, widths, strict=True))) for r in rows]
    lines += ["", f"CAUTION: {CAUTION}"]
    print("\n".join(lines))
    return 0
