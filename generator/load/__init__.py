"""Load and validate a handbook folder: sources -> model, with every problem located.

``load_handbook`` reads every file, collects every finding (it never stops at the first),
then resolves what crosses files: reference keys, duplicate ids, the species named by each
equation, element and charge balance, and ``combine:`` definitions (Hess's law).
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path
from typing import TYPE_CHECKING

from generator.diagnostics import Finding, Location, Severity, error
from generator.load.fields import FileReader
from generator.load.reactions import RawReaction, read_reaction
from generator.load.references import read_references_bib, read_references_yaml
from generator.load.resolve import resolve_reactions
from generator.load.settings import read_settings
from generator.load.species import read_species
from generator.model import Handbook, Reference, Species
from generator.yamlsource import parse_yaml_bytes, read_source_bytes, read_yaml_file

if TYPE_CHECKING:
    from generator.results_cache import ResultStore

__all__ = ["load_handbook", "display_path"]


def display_path(file: Path) -> str:
    """The path as a person would type it: relative to the working folder when inside it."""
    try:
        rel = os.path.relpath(file)
    except ValueError:
        return str(file)
    return str(file) if rel.startswith("..") else rel


def _yaml_files(folder: Path) -> list[Path]:
    if not folder.is_dir():
        return []
    return sorted(p for p in folder.iterdir() if p.suffix in (".yaml", ".yml") and p.is_file())


def _read_items(folders: list[tuple[Path, object, str]], findings: list[Finding],
               results: ResultStore | None = None, jobs: int = 1) -> list[dict]:
    """For each (folder, reader, kind): one item per YAML file in the folder, by id; a
    second file with an id is an error.  With ``results``, each file's item and findings
    are kept under the digest of its kind, path and bytes (the reader sees nothing else),
    and reused while they are unchanged; the files still to read, of every folder at
    once, are parsed by ``jobs`` processes (one split, so one wait for the slowest)."""
    readings = _readings([(_yaml_files(folder), read, kind) for folder, read, kind in folders],
                         results, jobs)
    out: list[dict] = []
    for (_folder, _read, kind), group in zip(folders, readings, strict=True):
        items: dict = {}
        for item, own in group:
            findings += own
            if item is None:
                continue
            if item.id in items:
                findings.append(error("duplicate-id", f"duplicate {kind} id '{item.id}' "
                                      f"(first in {items[item.id].path})", item.location,
                                      hint="ids must be unique across the handbook"))
                continue
            items[item.id] = item
        out.append(items)
    return out


def _readings(groups: list[tuple[list[Path], object, str]], results: ResultStore | None,
              jobs: int) -> list[list[tuple]]:
    """For each (files, reader, kind): (item or None, the file's findings) of each file, in
    order."""
    from generator.results_cache import kept_or_made

    outs: list[list[tuple | None]] = []
    raws: dict[str, tuple[bytes, str, object]] = {}
    digests: dict[str, str] = {}
    names: list[list[str]] = []
    for files, read, kind in groups:
        out: list[tuple | None] = []
        own_names: list[str] = []
        for file in files:
            path = display_path(file)
            raw, own = read_source_bytes(file, path)
            if raw is None:
                out.append((None, own))
                continue
            name = f"{kind}:{path}"
            h = hashlib.sha256(f"{kind}\0{path}\0".encode())
            h.update(raw)
            digests[name], raws[name] = h.hexdigest(), (raw, path, read)
            own_names.append(name)
            out.append(None)
        outs.append(out)
        names.append(own_names)
    done = kept_or_made(results, "source", digests, tuple, _parse_item, raws, jobs)
    readings = []
    for out, own_names in zip(outs, names, strict=True):
        taken = iter(own_names)
        readings.append([r if r is not None else done[next(taken)] for r in out])
    return readings


def _parse_item(raws: dict, name: str) -> tuple:
    """(item or None, findings) of one file's bytes."""
    raw, path, read = raws[name]
    doc, own = parse_yaml_bytes(raw, path)
    own = list(own)
    item = None
    if doc is not None or not own:
        item = read(FileReader(path, own), doc)
    return item, own


def load_handbook(root: Path, results: ResultStore | None = None, jobs: int = 1
                  ) -> tuple[Handbook | None, list[Finding]]:
    """Read and check every source file under ``root``; the handbook is None on any error.
    ``results`` (generator.results_cache) keeps each species and reaction file's reading
    between builds; ``jobs`` forked processes parse the species and reaction files."""
    findings: list[Finding] = []
    root = Path(root)
    if not root.is_dir():
        return None, [error("no-sources", f"no handbook folder at '{display_path(root)}'",
                            hint="run from the repository root or name the sources folder")]

    settings = None
    hb_file = root / "handbook.yaml"
    if not hb_file.is_file():
        findings.append(error("missing-file", "handbook.yaml is missing",
                              Location(display_path(hb_file)),
                              hint="create it with title, edition and organisation"))
    else:
        doc, fs = read_yaml_file(hb_file, display_path(hb_file))
        findings += fs
        if doc is not None or not fs:
            settings = read_settings(FileReader(display_path(hb_file), findings), doc)

    references: dict[str, Reference] = {}
    ref_sources: list[list[Reference]] = []
    ref_file = root / "references.yaml"
    if ref_file.is_file():
        doc, fs = read_yaml_file(ref_file, display_path(ref_file))
        findings += fs
        ref_sources.append(read_references_yaml(FileReader(display_path(ref_file), findings),
                                                doc))
    bib_file = root / "references.bib"
    if bib_file.is_file():
        ref_sources.append(read_references_bib(FileReader(display_path(bib_file), findings),
                                               bib_file))
    for refs in ref_sources:
        for ref in refs:
            if ref.key in references:
                first = references[ref.key].location
                findings.append(error("duplicate-id", f"duplicate reference key '{ref.key}' "
                                      f"(first at {first})", ref.location))
            else:
                references[ref.key] = ref

    species: dict[str, Species]
    raw_reactions: dict[str, RawReaction]
    species, raw_reactions = _read_items([(root / "species", read_species, "species"),
                                          (root / "reactions", read_reaction, "reaction")],
                                         findings, results, jobs)

    reactions = resolve_reactions(raw_reactions, species, findings)
    if settings is not None:
        for fam in settings.families.values():
            if fam.per is not None and fam.per not in species:
                from generator.load.fields import did_you_mean

                findings.append(error("unknown-species", f"family '{fam.name}' is normalised "
                                      f"per mole of '{fam.per}', which is not a species",
                                      fam.location, hint=did_you_mean(fam.per, tuple(species))
                                      or "name a species id"))
    _check_reference_keys(references, species, reactions, findings)

    if settings is None or any(f.severity is Severity.ERROR for f in findings):
        return None, findings
    handbook = Handbook(
        root=str(root),
        settings=settings,
        references=dict(sorted(references.items())),
        species=dict(sorted(species.items())),
        reactions=dict(sorted(reactions.items())),
    )
    return handbook, findings


def _check_reference_keys(references, species, reactions, findings: list[Finding]) -> None:
    from generator.load.fields import did_you_mean

    keys = tuple(references)

    def check(ref: str | None, loc: Location | None) -> None:
        if ref is None or ref in references:
            return
        findings.append(error("unknown-reference", f"unknown reference key '{ref}'", loc,
                              hint=did_you_mean(ref, keys) or "add it to references.yaml"))

    for sp in species.values():
        for q in sp.standard.values():
            for v in q.values:
                check(v.ref, v.location)
        for p in sp.cp:
            check(p.ref, p.location)
    for rx in reactions.values():
        for m in rx.measured:
            check(m.value.ref, m.location)
