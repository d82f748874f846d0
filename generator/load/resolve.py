"""Cross-file checks of reactions: species named by equations, balance, Hess's law steps."""

from __future__ import annotations

from generator.diagnostics import Finding, Location, error
from generator.equation import EquationTerm, describe_imbalance
from generator.formula import FormulaError, parse_formula
from generator.load.conditions import resolve_conditions
from generator.load.fields import did_you_mean
from generator.load.reactions import RawReaction
from generator.model import Reaction, Species, Term

_EPS = 1e-9


def _composition_key(elements, charge: int, phase: str) -> tuple:
    return (phase, tuple(sorted(elements)), charge)


def _index(species: dict[str, Species]) -> dict[tuple, list[Species]]:
    idx: dict[tuple, list[Species]] = {}
    for sp in species.values():
        idx.setdefault(_composition_key(sp.elements, sp.charge, sp.phase), []).append(sp)
    return idx


def resolve_equation(parsed, species: dict[str, Species], where: Location,
                     findings: list[Finding]) -> tuple[list[Term], list[Term]] | None:
    """Resolve the terms of a parsed equation written at ``where`` (e.g. on a command line)
    and check its balance; None (with findings) when it cannot be used."""
    idx = _index(species)
    left = [_resolve_term(t, where, species, idx, findings) for t in parsed.reactants]
    right = [_resolve_term(t, where, species, idx, findings) for t in parsed.products]
    if any(t is None for t in left + right):
        return None
    diff = _balance(_net(left, right), species)  # type: ignore[arg-type]
    if diff:
        findings.append(error("unbalanced", f"reaction is not balanced: "
                              f"{describe_imbalance(diff)}", where,
                              hint="check the coefficients and formulas"))
        return None
    return left, right  # type: ignore[return-value]


def _resolve_term(term: EquationTerm, where: Location | None, species: dict[str, Species],
                  idx: dict[tuple, list[Species]], findings: list[Finding]) -> Term | None:
    loc = where.shifted(term.col - 1) if where else None
    if term.species_id is not None:
        if term.species_id not in species:
            findings.append(error("unknown-species", f"no species with id '{term.species_id}'",
                                  loc, hint=did_you_mean(term.species_id, tuple(species))
                                  or "define it under species/"))
            return None
        return Term(term.coefficient, term.species_id, term.text, loc)
    try:
        f = parse_formula(term.formula or "")
    except FormulaError as exc:
        findings.append(error("bad-formula", exc.message, loc, hint=exc.hint))
        return None
    matches = idx.get(_composition_key(f.elements, f.charge, term.phase or ""), [])
    if not matches:
        same_formula = [s.id for s in species.values()
                        if _composition_key(s.elements, s.charge, "") ==
                        _composition_key(f.elements, f.charge, "")]
        hint = (f"defined in other phases: {', '.join(same_formula)}" if same_formula
                else "define it under species/")
        findings.append(error("unknown-species", f"species {term.formula}({term.phase}) is used "
                              "but not defined", loc, hint=hint))
        return None
    if len(matches) > 1:
        ids = ", ".join("{" + sid + "}" for sid in sorted(s.id for s in matches))
        findings.append(error("ambiguous-species", f"{term.formula}({term.phase}) matches "
                              f"{len(matches)} species", loc, hint=f"write one of {ids}"))
        return None
    return Term(term.coefficient, matches[0].id, term.text, loc)


def _net(terms_left: list[Term], terms_right: list[Term]) -> dict[str, float]:
    nu: dict[str, float] = {}
    for t in terms_left:
        nu[t.species] = nu.get(t.species, 0.0) - t.nu
    for t in terms_right:
        nu[t.species] = nu.get(t.species, 0.0) + t.nu
    return {k: v for k, v in nu.items() if abs(v) > _EPS}


def _balance(nu: dict[str, float], species: dict[str, Species]) -> dict[str, float]:
    diff: dict[str, float] = {}
    for sid, n in nu.items():
        sp = species[sid]
        for el, count in sp.elements:
            diff[el] = diff.get(el, 0.0) + n * count
        if sp.charge:
            diff["charge"] = diff.get("charge", 0.0) + n * sp.charge
    return {k: round(v, 9) for k, v in diff.items() if abs(v) > _EPS}


def _terms_from_nu(nu: dict[str, float], species: dict[str, Species]) -> tuple[list, list]:
    left = [Term(-n, sid, f"{_coef(-n)}{species[sid].formula}({species[sid].phase})")
            for sid, n in sorted(nu.items()) if n < 0]
    right = [Term(n, sid, f"{_coef(n)}{species[sid].formula}({species[sid].phase})")
             for sid, n in sorted(nu.items()) if n > 0]
    return left, right


def _coef(n: float) -> str:
    if abs(n - 1) < _EPS:
        return ""
    return f"{n:g} "


def resolve_reactions(raw: dict[str, RawReaction], species: dict[str, Species],
                      findings: list[Finding]) -> dict[str, Reaction]:
    idx = _index(species)
    sides: dict[str, tuple[list[Term], list[Term]]] = {}
    for rid, rx in raw.items():
        if rx.parsed is None:
            continue
        where = rx.equation_loc or rx.location
        left = [_resolve_term(t, where, species, idx, findings) for t in rx.parsed.reactants]
        right = [_resolve_term(t, where, species, idx, findings) for t in rx.parsed.products]
        if any(t is None for t in left + right):
            continue
        nu = _net(left, right)  # type: ignore[arg-type]
        diff = _balance(nu, species)
        if diff:
            findings.append(error("unbalanced", f"reaction is not balanced: "
                                  f"{describe_imbalance(diff)}", rx.equation_loc,
                                  hint="check the coefficients and formulas"))
            continue
        sides[rid] = (left, right)  # type: ignore[assignment]

    net_of = _combine_all(raw, sides, species, findings)
    out: dict[str, Reaction] = {}
    for rid, rx in raw.items():
        if rx.combine:
            nu = net_of.get(rid)
            if nu is None:
                continue
            if rid in sides:
                written = _net(*sides[rid])
                if not _same(nu, written):
                    findings.append(error(
                        "combine-mismatch", "the combined steps do not give the written equation"
                        f": they give {_describe(nu, species)}", rx.equation_loc,
                        hint="fix the factors or the equation"))
                    continue
                left, right = sides[rid]
            else:
                left, right = _terms_from_nu(nu, species)
            equation = rx.equation or _describe(nu, species)
        elif rid in sides:
            left, right = sides[rid]
            equation = rx.equation or ""
        else:
            continue
        conditions = None
        if rx.conditions is not None:
            conditions = resolve_conditions(rx.conditions, _net(left, right), species, findings)
        out[rid] = Reaction(
            id=rid, name=rx.name, equation=equation, reactants=tuple(left),
            products=tuple(right), measured=rx.measured, combine=rx.combine,
            electrons=rx.electrons, family=rx.family, review=rx.review, notes=rx.notes,
            ref=rx.ref, path=rx.path, location=rx.location, conditions=conditions,
            content_digest=rx.content_digest)
    return out


def _same(a: dict[str, float], b: dict[str, float]) -> bool:
    return set(a) == set(b) and all(abs(a[k] - b[k]) < 1e-9 for k in a)


def _describe(nu: dict[str, float], species: dict[str, Species]) -> str:
    left, right = _terms_from_nu(nu, species)
    return " + ".join(t.written for t in left) + " -> " + " + ".join(t.written for t in right)


def _combine_all(raw: dict[str, RawReaction], sides, species, findings) -> dict[str, dict]:
    """Net stoichiometry of every reaction, combining ``combine:`` steps depth-first and
    reporting unknown steps and cycles among definitions."""
    done: dict[str, dict[str, float] | None] = {}
    visiting: list[str] = []

    def net(rid: str, via: Location | None) -> dict[str, float] | None:
        if rid in done:
            return done[rid]
        if rid not in raw:
            findings.append(error("unknown-reaction", f"no reaction with id '{rid}'", via,
                                  hint=did_you_mean(rid, tuple(raw)) or "check the id"))
            return None
        if rid in visiting:
            cycle = " -> ".join(visiting[visiting.index(rid):] + [rid])
            findings.append(error("combine-cycle", f"reactions define each other in a cycle: "
                                  f"{cycle}", via, hint="one of them needs its own equation"))
            return None
        rx = raw[rid]
        if not rx.combine:
            done[rid] = _net(*sides[rid]) if rid in sides else None
            return done[rid]
        visiting.append(rid)
        total: dict[str, float] = {}
        ok = True
        for step in rx.combine:
            part = net(step.reaction, step.location)
            if part is None:
                ok = False
                continue
            for sid, n in part.items():
                total[sid] = total.get(sid, 0.0) + step.factor * n
        visiting.pop()
        result = {k: v for k, v in total.items() if abs(v) > _EPS} if ok else None
        if ok and not result:
            findings.append(error("combine-empty", "the combined steps cancel to nothing",
                                  rx.location))
            result = None
        done[rid] = result
        return result

    for rid in raw:
        net(rid, raw[rid].location)
    return {k: v for k, v in done.items() if v is not None}
