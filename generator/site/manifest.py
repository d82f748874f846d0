"""The build manifest, ``manifest.json``: tool version, source revision, build date, every
output file with its sha256 (FIPS 180-4) and, for each page, the source files it was made
from.  Pure: bytes in, bytes out; it never lists itself.

Sources of a page: a species sheet, its species file and the files of the references it
cites; a reaction sheet, its file and its species' files (and the files of the reactions it
combines); a reference page, the reference file and the files citing it; a family page, its
members' files and handbook.yaml; an element ladder, the files of its species; every other
page (indexes, audit, conventions, search, changes), all source files.
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping, Sequence

from generator import __version__
from generator.compute import Computed
from generator.exports import json_text
from generator.site.output import MARKER, MARKER_TEXT
from generator.site.pages import SiteMeta
from generator.site.provenance_view import rel_source

MANIFEST = "manifest.json"
HANDBOOK_FILE = "handbook.yaml"


def _ref_file(computed: Computed, key: str) -> str | None:
    ref = computed.handbook.references.get(key)
    if ref is None:
        return None
    if ref.location is not None and ref.location.path:
        return rel_source(computed.handbook.root, ref.location.path)
    return "references.bib" if ref.origin == "bib" else "references.yaml"


def _species_refs(computed: Computed, sid: str) -> set[str]:
    sp = computed.handbook.species[sid]
    keys = {v.ref for q in sp.standard.values() for v in q.values if v.ref}
    keys |= {p.ref for p in sp.cp if p.ref}
    if sp.ref:
        keys.add(sp.ref)
    return keys


def _file(computed: Computed, path: str) -> str:
    return rel_source(computed.handbook.root, path)


def species_sources(computed: Computed, sid: str) -> list[str]:
    out = {_file(computed, computed.handbook.species[sid].path)}
    out |= {f for k in _species_refs(computed, sid) if (f := _ref_file(computed, k))}
    return sorted(out)


def reaction_sources(computed: Computed, rid: str) -> list[str]:
    hb = computed.handbook
    rx = hb.reactions[rid]
    out = {_file(computed, rx.path)}
    out |= {_file(computed, hb.species[s].path) for s in rx.stoichiometry if s in hb.species}
    out |= {_file(computed, hb.reactions[c.reaction].path) for c in rx.combine
            if c.reaction in hb.reactions}
    return sorted(out)


def all_sources(computed: Computed) -> list[str]:
    hb = computed.handbook
    out = {HANDBOOK_FILE}
    out |= {_file(computed, sp.path) for sp in hb.species.values()}
    out |= {_file(computed, rx.path) for rx in hb.reactions.values()}
    out |= {f for k in hb.references if (f := _ref_file(computed, k))}
    return sorted(out)


def _reference_sources(computed: Computed, key: str) -> list[str]:
    hb = computed.handbook
    out = {f for f in (_ref_file(computed, key),) if f}
    out |= {_file(computed, sp.path) for sid, sp in hb.species.items()
            if key in _species_refs(computed, sid)}
    out |= {_file(computed, rx.path) for rx in hb.reactions.values()
            if rx.ref == key or any(m.value.ref == key for m in rx.measured)}
    return sorted(out)


def page_sources(computed: Computed, page_path: str, every: list[str] | None = None
                 ) -> list[str]:
    """The source files (relative to the sources folder) one page was made from; ``every``:
    all_sources(computed), when the caller has it already."""
    from generator.site import design_pages as design

    hb = computed.handbook
    folder, _, name = page_path.partition("/")
    stem = name[:-5] if name.endswith(".html") else name
    if folder == "species" and stem in hb.species:
        return species_sources(computed, stem)
    if folder == "reactions" and stem in hb.reactions:
        return reaction_sources(computed, stem)
    if folder == "references" and stem in hb.references:
        return _reference_sources(computed, stem)
    if folder == "families":
        out = {HANDBOOK_FILE}
        for fam in design.family_names(computed):
            if design.slug(fam) == stem:
                for rid, rx in hb.reactions.items():
                    if fam in rx.family:
                        out |= set(reaction_sources(computed, rid))
        return sorted(out)
    if folder == "elements":
        return sorted({_file(computed, sp.path) for sp in hb.species.values()
                       if stem in sp.element_counts})
    return list(every) if every is not None else all_sources(computed)


def file_digests(files: Mapping[str, bytes]) -> dict[str, str]:
    """The sha256 (hex) of each file, as the manifest lists it."""
    return {path: hashlib.sha256(data).hexdigest() for path, data in files.items()}


def manifest_doc(files: Mapping[str, bytes], page_paths: Sequence[str], computed: Computed,
                 meta: SiteMeta, digests: Mapping[str, str] | None = None,
                 sizes: Mapping[str, int] | None = None) -> dict:
    """The manifest of a build whose output is ``files`` (``manifest.json`` left out) and
    the files of ``sizes`` (written elsewhere: their lengths, their sha256 in ``digests``);
    ``digests``: file_digests of some of them, already made."""
    files = {MARKER: MARKER_TEXT, **files}  # written beside them by generator.site.output
    known = digests or {}
    lengths = {path: len(data) for path, data in files.items()}
    lengths.update(sizes or {})
    every = all_sources(computed)  # the sources of each whole-handbook page
    return {
        "tool": "thermofolio", "version": __version__, "source_revision": meta.revision,
        "build_date": meta.build_date,
        "files": [{"path": path,
                   "sha256": known.get(path) or hashlib.sha256(files[path]).hexdigest(),
                   "bytes": lengths[path]} for path in sorted(lengths) if path != MANIFEST],
        "pages": {path: page_sources(computed, path, every) for path in sorted(page_paths)},
    }


def manifest_bytes(files: Mapping[str, bytes], page_paths: Sequence[str],
                   computed: Computed, meta: SiteMeta,
                   digests: Mapping[str, str] | None = None,
                   sizes: Mapping[str, int] | None = None) -> bytes:
    doc = manifest_doc(files, page_paths, computed, meta, digests, sizes)
    return (json_text(doc, 2) + "\n").encode()  # one file entry per line
