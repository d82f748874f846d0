"""Edition diff: what changed between two source trees (or two git revisions of one), and
which derived results moved because of it.

Sources are compared item by item (species, reactions, references; added, removed,
changed, each changed field old → new).  Both editions are then computed
(generator.compute.compute_handbook) and ΔrH° and ΔrG° of every reaction present in both
are compared on the temperatures both grids share; a movement is attributed to the changed
inputs of the reaction (its own fields and the changed values of its species) and the
movements are ranked by size.
"""

from __future__ import annotations

import io
import json
import subprocess
import tarfile
import tempfile
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from generator.model import Handbook, Reaction, Reference, Species, Value

MOVE_THRESHOLD_KJ = 1e-3  # smaller movements of a derived value are not listed
WORKTREE = "WORKTREE"
FIELD_LABELS = {"dfH": "ΔfH°", "dfG": "ΔfG°", "S": "S°", "Cp": "Cp°", "cp": "Cp° fit",
                "equation": "equation", "measured": "measured values", "combine": "combine"}
DERIVED = (("drH", "ΔrH°"), ("drG", "ΔrG°"))


class DiffError(Exception):
    """A revision or tree could not be read."""


@dataclass(frozen=True)
class FieldChange:
    field: str  # "dfH", "cp", "name", "citation", "review", ...
    old: str | None
    new: str | None

    def to_json(self) -> dict:
        return {"field": self.field, "old": self.old, "new": self.new}


@dataclass(frozen=True)
class ItemChange:
    kind: str  # "species", "reaction" or "reference"
    item: str
    change: str  # "added", "removed" or "changed"
    fields: tuple[FieldChange, ...] = ()

    def to_json(self) -> dict:
        return {"kind": self.kind, "item": self.item, "change": self.change,
                "fields": [f.to_json() for f in self.fields]}


@dataclass(frozen=True)
class DerivedMovement:
    """A derived reaction value that moved: the largest movement over the shared grid."""

    reaction: str
    quantity: str  # "drH" or "drG"
    T: float
    old: float  # kJ/mol
    new: float
    causes: tuple[str, ...]  # e.g. ("ΔfH° of methane",)

    @property
    def delta(self) -> float:
        return self.new - self.old

    @property
    def text(self) -> str:
        label = dict(DERIVED)[self.quantity]
        why = (", from a change to " + ", ".join(self.causes)) if self.causes else (
            ", from a change elsewhere (reference states or settings)")
        return f"{label} at {self.T:g} K of {self.reaction}: {self.delta:+.1f} kJ/mol{why}"

    def to_json(self) -> dict:
        return {"reaction": self.reaction, "quantity": self.quantity, "T": self.T,
                "old": self.old, "new": self.new, "delta": self.delta,
                "unit": "kJ/mol", "causes": list(self.causes), "text": self.text}


@dataclass(frozen=True)
class DiffResult:
    old_label: str
    new_label: str
    species: tuple[ItemChange, ...] = ()
    reactions: tuple[ItemChange, ...] = ()
    references: tuple[ItemChange, ...] = ()
    settings: tuple[FieldChange, ...] = ()
    derived: tuple[DerivedMovement, ...] = ()  # largest first
    errors: tuple[str, ...] = field(default_factory=tuple)

    @property
    def empty(self) -> bool:
        return not (self.species or self.reactions or self.references or self.settings)

    def changes(self) -> list[ItemChange]:
        return [*self.species, *self.reactions, *self.references]

    def to_json(self) -> dict:
        return {"old": self.old_label, "new": self.new_label,
                "species": [c.to_json() for c in self.species],
                "reactions": [c.to_json() for c in self.reactions],
                "references": [c.to_json() for c in self.references],
                "settings": [f.to_json() for f in self.settings],
                "derived": [d.to_json() for d in self.derived],
                "errors": list(self.errors)}

    def to_text(self) -> str:
        out = [f"Changes from {self.old_label} to {self.new_label}"]
        out += [f"error: {e}" for e in self.errors]
        if not self.errors and self.empty:
            out.append("no changes")
        if self.settings:
            out.append("handbook settings:")
            out += [f"  {f.field}: {f.old} → {f.new}" for f in self.settings]
        for title, group in (("species", self.species), ("reactions", self.reactions),
                             ("references", self.references)):
            if not group:
                continue
            out.append(f"{title}:")
            for c in group:
                sign = {"added": "+", "removed": "-", "changed": "~"}[c.change]
                out.append(f"  {sign} {c.item} ({c.change})")
                for f in c.fields:
                    out.append(f"      {FIELD_LABELS.get(f.field, f.field)}: "
                               f"{f.old if f.old is not None else '—'} → "
                               f"{f.new if f.new is not None else '—'}")
        if self.derived:
            out.append("derived results that moved, largest first:")
            out += [f"  {d.text}" for d in self.derived]
        return "\n".join(out) + "\n"


# --- comparing the sources -----------------------------------------------------------------


def _num(x: float) -> str:
    return f"{x:.10g}"


def _value_text(v: Value) -> str:
    """The value as written in the source (else in canonical units), its reference, its
    preferred mark."""
    if v.written:
        text = v.written
    else:
        unc = f" ± {_num(v.unc)}" if v.unc is not None else ""
        text = f"{_num(v.value)}{unc}" + (f" {v.unit}" if v.unit else "")
    ref = f" [{v.ref}]" if v.ref else ""
    return f"{text}{ref}{' (preferred)' if v.preferred else ''}"


def _values_text(values) -> str:
    return "; ".join(_value_text(v) for v in values)


def _cp_text(sp: Species) -> str:
    return "; ".join(f"{p.kind} {_num(p.Tmin)}–{_num(p.Tmax)} K "
                     f"[{', '.join(_num(c) for c in (p.coeffs or p.table_Cp))}]"
                     for p in sp.cp)


def _species_fields(sp: Species) -> dict[str, str]:
    out = {"name": sp.name, "formula": sp.formula, "phase": sp.phase, "form": sp.form or "",
           "cas": sp.cas or "", "aliases": ", ".join(sp.aliases)}
    for name, q in sp.standard.items():
        out[name] = _values_text(q.values)
    out["cp"] = _cp_text(sp)
    out["notes"] = sp.notes
    out["review"] = _review_text(sp.review)
    return out


def _review_text(r) -> str:
    return " ".join(x for x in (r.status, r.date or "", f"by {r.by}" if r.by else "") if x)


def _reaction_fields(rx: Reaction) -> dict[str, str]:
    out = {"name": rx.name, "equation": rx.equation,
           "combine": "; ".join(f"{_num(s.factor)} × {s.reaction}" for s in rx.combine),
           "electrons": "" if rx.electrons is None else str(rx.electrons),
           "family": ", ".join(rx.family), "notes": rx.notes,
           "review": _review_text(rx.review)}
    for m in rx.measured:
        key = f"{m.quantity}@{_num(m.T)}K"
        out[key] = (out[key] + "; " if key in out else "") + _value_text(m.value)
    return out


def _reference_fields(ref: Reference) -> dict[str, str]:
    return {"citation": ref.citation, "kind": ref.kind,
            "standard_pressure": f"{_num(ref.standard_pressure)} Pa", "doi": ref.doi or "",
            "url": ref.url or ""}


def _field_changes(old: Mapping[str, str], new: Mapping[str, str]) -> tuple[FieldChange, ...]:
    out = []
    for key in list(old) + [k for k in new if k not in old]:
        a, b = old.get(key), new.get(key)
        if a == b:
            continue
        if key == "notes":
            a, b = ("(text)" if a else None), ("(text changed)" if b else None)
        out.append(FieldChange(key, a or None, b or None))
    return tuple(out)


def _compare(kind: str, old: Mapping, new: Mapping, fields) -> tuple[ItemChange, ...]:
    out = []
    for key in sorted(set(old) | set(new)):
        if key not in new:
            out.append(ItemChange(kind, key, "removed"))
        elif key not in old:
            out.append(ItemChange(kind, key, "added"))
        else:
            fc = _field_changes(fields(old[key]), fields(new[key]))
            if fc:
                out.append(ItemChange(kind, key, "changed", fc))
    return tuple(out)


def _settings_fields(hb: Handbook) -> dict[str, str]:
    s = hb.settings
    return {"title": s.title, "edition": s.edition, "organisation": s.organisation,
            "standard_pressure": f"{_num(s.standard_pressure)} Pa",
            "temperatures": ", ".join(_num(t) for t in s.temperatures),
            "review_interval_days": str(s.review_interval_days)}


# --- derived results -----------------------------------------------------------------------


_VALUE_FIELDS = ("dfH", "dfG", "S", "Cp", "cp", "formula", "phase")


def _causes(rid: str, old: Handbook, new: Handbook, species_changes: Mapping[str, ItemChange],
            reaction_changes: Mapping[str, ItemChange]) -> tuple[str, ...]:
    causes = []
    rc = reaction_changes.get(rid)
    if rc is not None:
        causes += [f"the {FIELD_LABELS.get(f.field, f.field)} of {rid}" for f in rc.fields
                   if f.field in ("equation", "combine")]
    involved = set(old.reactions[rid].stoichiometry) | set(new.reactions[rid].stoichiometry)
    for sid in sorted(involved):
        c = species_changes.get(sid)
        if c is None:
            continue
        if c.change != "changed":
            causes.append(f"{sid} ({c.change})")
            continue
        causes += [f"{FIELD_LABELS.get(f.field, f.field)} of {sid}" for f in c.fields
                   if f.field in _VALUE_FIELDS]
    return tuple(causes)


def derived_movements(old: Handbook, new: Handbook, species_changes: Mapping[str, ItemChange],
                      reaction_changes: Mapping[str, ItemChange]) -> list[DerivedMovement]:
    """ΔrH° and ΔrG° of every reaction in both editions, where they moved, largest first."""
    from generator.compute import compute_handbook

    c_old, c_new = compute_handbook(old), compute_handbook(new)
    T_old = np.asarray(old.settings.temperatures, dtype=float)
    T_new = np.asarray(new.settings.temperatures, dtype=float)
    shared = [t for t in T_old if np.any(np.isclose(T_new, t))]
    i_old = [int(np.argmin(abs(T_old - t))) for t in shared]
    i_new = [int(np.argmin(abs(T_new - t))) for t in shared]
    out = []
    for rid in sorted(set(c_old.reactions) & set(c_new.reactions)):
        go, gn = c_old.reactions[rid].grid, c_new.reactions[rid].grid
        for q, _label in DERIVED:
            a = np.asarray(getattr(go, q), dtype=float)[i_old]
            b = np.asarray(getattr(gn, q), dtype=float)[i_new]
            d = np.where(np.isfinite(a) & np.isfinite(b), b - a, 0.0)
            if not d.size or np.max(np.abs(d)) <= MOVE_THRESHOLD_KJ:
                continue
            biggest = float(np.max(np.abs(d)))
            k = int(np.flatnonzero(np.abs(d) >= biggest - 1e-6)[0])  # lowest T of a tie
            out.append(DerivedMovement(rid, q, float(shared[k]), float(a[k]), float(b[k]),
                                       _causes(rid, old, new, species_changes,
                                               reaction_changes)))
    return sorted(out, key=lambda m: (-abs(m.delta), m.reaction, m.quantity))


def diff_handbooks(old: Handbook, new: Handbook, old_label: str = "old",
                   new_label: str = "new", derived: bool = True) -> DiffResult:
    sp = _compare("species", old.species, new.species, _species_fields)
    rx = _compare("reaction", old.reactions, new.reactions, _reaction_fields)
    refs = _compare("reference", old.references, new.references, _reference_fields)
    settings = _field_changes(_settings_fields(old), _settings_fields(new))
    moved = derived_movements(old, new, {c.item: c for c in sp},
                              {c.item: c for c in rx}) if derived else []
    return DiffResult(old_label, new_label, sp, rx, refs, settings, tuple(moved))


def diff_trees(old_root: Path, new_root: Path, old_label: str | None = None,
               new_label: str | None = None) -> DiffResult:
    """Compare two source folders; a side that fails to load is reported in ``errors``."""
    from generator.load import load_handbook

    ol, nl = old_label or str(old_root), new_label or str(new_root)
    handbooks, errors = [], []
    for root, label in ((old_root, ol), (new_root, nl)):
        hb, findings = load_handbook(Path(root))
        if hb is None:
            n = sum(f.severity.value == "error" for f in findings)
            errors.append(f"{label}: the sources do not load ({n} error"
                          f"{'' if n == 1 else 's'}; run thermofolio check on them)")
        handbooks.append(hb)
    if errors:
        return DiffResult(ol, nl, errors=tuple(errors))
    return diff_handbooks(handbooks[0], handbooks[1], ol, nl)


# --- git revisions -------------------------------------------------------------------------


def git_toplevel(folder: Path) -> Path | None:
    try:
        done = subprocess.run(["git", "-C", str(folder), "rev-parse", "--show-toplevel"],
                              capture_output=True, text=True, timeout=10, check=False)
    except (OSError, subprocess.SubprocessError):
        return None
    return Path(done.stdout.strip()) if done.returncode == 0 else None


def extract_revision(repo_dir: Path, sources_rel: str, rev: str, dest: Path) -> Path:
    """Write ``sources_rel`` as of ``rev`` under ``dest``; the extracted folder."""
    rel = Path(sources_rel).as_posix().strip("/") or "."
    try:
        done = subprocess.run(["git", "-C", str(repo_dir), "archive", "--format=tar",
                               f"{rev}", "--", rel], capture_output=True, timeout=60,
                              check=False)
    except (OSError, subprocess.SubprocessError) as exc:
        raise DiffError(f"cannot run git: {exc}") from exc
    if done.returncode != 0:
        msg = done.stderr.decode("utf-8", "replace").strip().splitlines()
        raise DiffError(f"cannot read {rel} at revision '{rev}': "
                        f"{msg[-1] if msg else 'git archive failed'}")
    with tarfile.open(fileobj=io.BytesIO(done.stdout)) as tar:
        if hasattr(tarfile, "data_filter"):
            tar.extractall(dest, filter="data")
        else:  # Python before 3.11.4: refuse anything outside dest
            for m in tar.getmembers():
                if m.name.startswith(("/", "..")) or ".." in Path(m.name).parts:
                    raise DiffError(f"unsafe path in archive: {m.name}")
            tar.extractall(dest)
    return dest / rel


def diff_revisions(repo_dir: Path, sources_rel: str, old_rev: str,
                   new_rev_or_worktree: str | None = None) -> DiffResult:
    """Compare ``sources_rel`` of ``repo_dir`` at ``old_rev`` with another revision, or with
    the working tree when ``new_rev_or_worktree`` is None or ``"WORKTREE"``."""
    repo_dir = Path(repo_dir)
    with tempfile.TemporaryDirectory(prefix="thermofolio-diff-") as tmp:
        old_root = extract_revision(repo_dir, sources_rel, old_rev, Path(tmp) / "old")
        if new_rev_or_worktree in (None, WORKTREE):
            new_root, new_label = repo_dir / sources_rel, "the working tree"
        else:
            new_root = extract_revision(repo_dir, sources_rel, new_rev_or_worktree,
                                        Path(tmp) / "new")
            new_label = new_rev_or_worktree
        return diff_trees(old_root, new_root, old_rev, new_label)


def to_json_text(result: DiffResult) -> str:
    return json.dumps(result.to_json(), indent=2, ensure_ascii=False)
