"""Provenance on the site: spreads of several sources, review coverage, source history, the
network's reconciled ΔfH°, the completed audit page and the "changes since" page.

Pure: formats what generator.provenance, generator.network, generator.history and
generator.edition_diff produced (histories and the diff are gathered by publish and the
build command); no file, clock or process access.  Combined standard uncertainty as in
GUM (JCGM 100:2008 §5.1), normalised residuals as in generator.network.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from functools import lru_cache
from pathlib import PurePosixPath

from markupsafe import Markup

from generator.compute import Computed
from generator.network import ERROR_SIGMA, WARN_SIGMA, Observation
from generator.site.pages import (
    MISSING,
    QUANTITY_DECIMALS,
    _base,
    fixed,
    ordered_values,
    species_label,
    symbol,
    uncertainty,
    unit_text,
    value_anchor,
)

NOT_IN_GIT = "not under version control"
CHANGE_WORDS = {"added": "added", "removed": "removed", "changed": "changed"}
FIELD_SYMBOLS = {"dfH": "dfH", "dfG": "dfG", "S": "S", "Cp": "Cp"}


@lru_cache(maxsize=65536)
def rel_source(root: str, path: str) -> str:
    """A source file's path relative to the handbook folder, with forward slashes."""
    p, r = PurePosixPath(str(path).replace("\\", "/")), PurePosixPath(
        str(root).replace("\\", "/"))
    try:
        return p.relative_to(r).as_posix()
    except ValueError:
        parts = p.parts
        for top in ("species", "reactions"):
            if top in parts:
                i = len(parts) - 1 - parts[::-1].index(top)
                return PurePosixPath(*parts[i:]).as_posix()
        return p.name


# --- review coverage -------------------------------------------------------------------------


def coverage_view(computed: Computed, kind: str, item: str) -> dict | None:
    """The review's coverage label ("approved 2026-10-02 by J. Doe; changed since"), state
    and whether it is stale, for a sheet."""
    prov = computed.provenance
    if prov is None:
        return None
    table = prov.species_reviews if kind == "species" else prov.reaction_reviews
    c = table.get(item)
    if c is None:
        return None
    return {"label": c.label, "state": c.state, "stale": c.stale, "changed": c.state == "changed",
            "age": "" if c.age_days is None else f"{c.age_days} days",
            "interval": f"{c.interval_days} days"}


# --- several sources per value ---------------------------------------------------------------


def spread_rows(computed: Computed, item: str) -> list[dict]:
    """Per quantity cited from several values: the spread max − min, the combined standard
    uncertainty of the most discrepant pair, "disputed" and the rule that picked one."""
    prov = computed.provenance
    if prov is None:
        return []
    rows = []
    for q, s in sorted(prov.spreads_of(item).items()):
        name = q.split("@")[0]
        kind = QUANTITY_DECIMALS.get(name, "kJ")
        used = s.values[s.preferred_index]
        anchor = value_anchor(name, 1) if s.kind == "species" else "measured"
        rows.append({
            "anchor": f"spread-{q.replace('@', '-').replace('.', '_')}",
            "href": f"#{anchor}", "symbol": symbol(name),
            "at": (q.split("@")[1].replace("K", " K") if "@" in q else ""),
            "count": str(len(s.values)), "spread": fixed(s.spread, kind),
            "u_combined": fixed(s.u_combined, kind) if s.u_combined is not None else MISSING,
            "ratio": f"{s.ratio:.1f}" if s.ratio is not None else MISSING,
            "unit": unit_text(s.unit), "disputed": s.disputed,
            "used": used.ref or "value 1", "rule": s.rule,
        })
    return rows


# --- network ---------------------------------------------------------------------------------


def band(o: Observation) -> str:
    """"error" beyond 3 u, "warning" beyond 2 u, else "ok" (the audit's display bands)."""
    z = abs(o.normalised)
    return "error" if z > ERROR_SIGMA else "warning" if z > WARN_SIGMA else "ok"


def _z(o: Observation) -> str:
    """The normalised residual (value − fitted)/u with two decimals."""
    return fixed(o.normalised, "T")


def observation_rows(computed: Computed, item: str, root: str) -> list[dict]:
    net = computed.network
    if net is None:
        return []
    rows = []
    for o in net.observations_of(item):
        rows.append({
            "what": symbol("dfH") if o.kind == "dfH" else Markup("measured ") + symbol("drH"),
            "value": fixed(o.value, "kJ"), "unc": uncertainty(o.unc, "kJ"),
            "ref": o.ref or "", "ref_href": f"{root}references/{o.ref}.html" if o.ref else "",
            "fitted": fixed(o.fitted, "kJ"), "residual": fixed(o.residual, "kJ"),
            "z": _z(o), "band": band(o),
        })
    return rows


def network_view(computed: Computed, sid: str, root: str) -> dict | None:
    """The reconciled ΔfH° beside the cited one (never in its place), for a species sheet."""
    net = computed.network
    if net is None:
        return None
    rec = net.reconciled.get(sid)
    rows = observation_rows(computed, sid, root)
    if rec is None and not rows:
        if sid in net.fixed:
            return {"fixed": fixed(net.fixed[sid], "kJ"), "rows": [], "reconciled": None}
        return None
    view = {"fixed": None, "rows": rows, "reconciled": None}
    if rec is not None:
        view["reconciled"] = {
            "value": fixed(rec.value, "kJ"), "unc": uncertainty(rec.unc, "kJ"),
            "cited": fixed(rec.cited, "kJ"), "cited_unc": uncertainty(rec.cited_unc, "kJ"),
            "shift": fixed(rec.shift, "kJ"), "n": str(rec.n_observations),
        }
    return view


# --- history ---------------------------------------------------------------------------------


def history_view(computed: Computed, path: str, histories: Mapping[str, Sequence],
                 revision: str) -> dict:
    """The last commits of a sheet's source file; ``in_git`` False outside version control."""
    rel = rel_source(computed.handbook.root, path)
    commits = list(histories.get(rel, ()))[:5]
    return {"in_git": revision != NOT_IN_GIT and bool(histories), "file": rel,
            "commits": [{"date": c.date, "author": c.author, "message": c.message,
                         "sha": c.sha} for c in commits]}


# --- audit -----------------------------------------------------------------------------------


def _share(part: int, whole: int) -> str:
    return f"{100.0 * part / whole:.1f} %" if whole else MISSING


def completeness_rows(computed: Computed) -> list[dict]:
    c = computed.completeness
    if c is None:
        return []
    rows = [("values with a reference", c.with_ref, c.values),
            ("values with an uncertainty", c.with_unc, c.values),
            ("values of reviewed items (checked or approved)", c.reviewed, c.values),
            ("values still covered by their review (digest matches)", c.covered, c.values),
            ("values entered from memory", c.from_memory, c.values),
            ("items reviewed", c.items_reviewed, c.items),
            ("items whose review covers the current content", c.items_covered, c.items),
            ("items changed since their review", c.items_changed, c.items),
            ("items reviewed without a content digest", c.items_no_digest, c.items),
            ("items with a stale review", c.items_stale, c.items)]
    return [{"label": label, "count": f"{part} of {whole}", "share": _share(part, whole)}
            for label, part, whole in rows]


def _sheet(computed: Computed, item: str) -> str:
    if item in computed.species:
        return f"species/{item}.html"
    if item in computed.reactions:
        return f"reactions/{item}.html"
    return ""


def network_outliers(computed: Computed) -> list[dict]:
    """Observations more than 2 u from the consistent solution, worst first; beyond 3 u in
    the error band."""
    net = computed.network
    if net is None:
        return []
    out = []
    for o in net.outliers(WARN_SIGMA):
        sheet = _sheet(computed, o.item)
        what = "ΔfH°" if o.kind == "dfH" else "measured ΔrH°"
        out.append({"band": band(o), "item": o.item, "what": what,
                    "href": f"{sheet}#network" if sheet else "", "ref": o.ref or "no reference",
                    "value": f"{fixed(o.value, 'kJ')} {uncertainty(o.unc, 'kJ')} kJ/mol",
                    "fitted": f"{fixed(o.fitted, 'kJ')} kJ/mol", "z": _z(o),
                    "threshold": "more than 3 u" if band(o) == "error" else "more than 2 u"})
    return out


def review_problems(computed: Computed) -> list[dict]:
    prov = computed.provenance
    if prov is None:
        return []
    out = []
    for c in [*prov.species_reviews.values(), *prov.reaction_reviews.values()]:
        if c.state == "changed" or c.stale:
            out.append({"item": c.item, "href": f"{_sheet(computed, c.item)}#review",
                        "label": c.label, "changed": c.state == "changed", "stale": c.stale})
    return sorted(out, key=lambda r: r["item"])


def from_memory_rows(computed: Computed) -> list[dict]:
    """Each value entered from memory, linked to its row on the sheet."""
    out = []
    for sid in sorted(computed.species):
        sp = computed.species[sid].species
        for name in sorted(sp.standard):
            for n, v in enumerate(ordered_values(sp.standard[name]), start=1):
                if v.from_memory:
                    out.append({"href": f"species/{sid}.html#{value_anchor(name, n)}",
                                "label": species_label(sp), "name": sp.name,
                                "what": symbol(name), "written": v.written or fixed(
                                    v.value, QUANTITY_DECIMALS.get(name, "kJ"))})
    for rid in sorted(computed.reactions):
        rx = computed.reactions[rid].reaction
        for i, m in enumerate(rx.measured, start=1):
            if m.value.from_memory:
                out.append({"href": f"reactions/{rid}.html#measured-{i}",
                            "label": Markup.escape(rid), "name": rx.name,
                            "what": Markup("measured ") + symbol(m.quantity),
                            "written": m.value.written or str(m.value.value)})
    return out


def unverified_rows(computed: Computed) -> list[dict]:
    prov = computed.provenance
    if prov is None:
        return []
    return [{"item": e.item, "href": f"{_sheet(computed, e.item)}#review", "text": e.text}
            for e in sorted(prov.unreviewed, key=lambda e: (e.kind, e.item))
            if _sheet(computed, e.item)]


def uncited_rows(computed: Computed) -> list[dict]:
    prov = computed.provenance
    if prov is None:
        return []
    return [{"key": e.item, "href": f"references/{e.item}.html", "text": e.text,
             "where": str(e.location) if e.location else e.path}
            for e in sorted(prov.uncited_references, key=lambda e: e.item)]


def audit_extras(computed: Computed, has_changes: bool) -> dict:
    return {"completeness": completeness_rows(computed),
            "network": network_outliers(computed),
            "review_problems": review_problems(computed),
            "memory_values": from_memory_rows(computed),
            "unverified": unverified_rows(computed),
            "uncited": uncited_rows(computed),
            "changes_href": "changes.html" if has_changes else ""}


# --- changes since a revision ----------------------------------------------------------------


def _field_label(name: str) -> Markup:
    head, _, at = name.partition("@")
    if head in FIELD_SYMBOLS or head in ("drH", "drG", "drS", "K"):
        return symbol(head) + (Markup(" at ") + at.replace("K", " K") if at else Markup(""))
    return Markup.escape({"cp": "Cp° fit"}.get(name, name))


def changes_context(computed: Computed, diff, site: dict) -> dict:
    """The "changes since REV" page from a generator.edition_diff.DiffResult."""
    ctx = _base(site, "changes.html", f"Changes since {diff.old_label}", "audit")
    groups = []
    for title, kind, group in (("Species", "species", diff.species),
                               ("Reactions", "reaction", diff.reactions),
                               ("References", "reference", diff.references)):
        items = []
        for c in group:
            if kind == "reference":
                href = (f"references/{c.item}.html"
                        if c.item in computed.handbook.references else "")
            else:
                href = _sheet(computed, c.item)
            items.append({"item": c.item, "change": CHANGE_WORDS[c.change], "href": href,
                          "fields": [{"label": _field_label(f.field),
                                      "old": f.old if f.old is not None else MISSING,
                                      "new": f.new if f.new is not None else MISSING}
                                     for f in c.fields]})
        groups.append({"title": title, "anchor": f"changed-{kind}", "entries": items})
    derived = []
    for m in diff.derived:
        derived.append({"href": _sheet(computed, m.reaction), "reaction": m.reaction,
                        "name": (computed.reactions[m.reaction].reaction.name
                                 if m.reaction in computed.reactions else m.reaction),
                        "symbol": symbol(m.quantity), "T": fixed(m.T, "T"),
                        "old": fixed(m.old, "kJ"), "new": fixed(m.new, "kJ"),
                        "delta": ("+" if m.delta > 0 else "") + fixed(m.delta, "kJ"),
                        "causes": ", ".join(m.causes) or "a change elsewhere"})
    ctx.update({"old": diff.old_label, "new": diff.new_label, "errors": list(diff.errors),
                "empty": diff.empty and not diff.errors,
                "settings": [{"field": f.field, "old": f.old or MISSING, "new": f.new or MISSING}
                             for f in diff.settings],
                "groups": groups, "derived": derived})
    return ctx
