"""Reading references.yaml and, through bibtexparser, references.bib."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

from generator.diagnostics import Location
from generator.load.fields import FileReader
from generator.model import Reference
from generator.source_schema import REFERENCE_FIELDS, SLUG_PATTERN
from generator.units import UnitError, parse_pressure
from generator.yamlsource import YList

_BIB_KIND = {"book": "book", "article": "article", "techreport": "report", "report": "report",
             "inproceedings": "article", "incollection": "book", "phdthesis": "report",
             "misc": "estimate", "unpublished": "measurement"}


def read_references_yaml(r: FileReader, doc: Any) -> list[Reference]:
    if doc is None:
        return []
    if not isinstance(doc, YList):
        r.error("type", "references.yaml must be a list of references", Location(r.path, 1, 1))
        return []
    out = []
    for i, item in enumerate(doc):
        m = r.mapping(item, doc.where(i), "a reference")
        if m is None:
            continue
        r.check_fields(m, REFERENCE_FIELDS, "a reference")
        key = r.slug(m, "key", "the reference")
        citation = r.string(m, "citation", "the reference")
        kind = r.string(m, "kind", "the reference")
        if kind is not None and kind not in ("book", "article", "report", "measurement",
                                             "estimate"):
            r.error("bad-kind", f"unknown reference kind '{kind}'", m.where("kind"),
                    "use book, article, report, measurement or estimate")
            kind = None
        pressure = 1.0e5
        if "standard_pressure" in m:
            try:
                pressure = parse_pressure(m["standard_pressure"])
            except UnitError as exc:
                r.error("wrong-unit", f"standard_pressure: {exc.message}",
                        m.where("standard_pressure"), exc.hint)
        if key and citation and kind:
            out.append(Reference(key, citation, kind, pressure, r.string(m, "doi", "ref"),
                                 r.string(m, "url", "ref"), m.where("key")))
    return out


def read_references_bib(r: FileReader, file: Path) -> list[Reference]:
    """BibTeX entries as references; bibtexparser (v2) does the parsing."""
    import bibtexparser

    try:
        text = file.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        r.error("io", f"cannot read BibTeX file: {exc}", Location(r.path, 1, 1))
        return []
    library = bibtexparser.parse_string(text)
    for block in library.failed_blocks:
        r.error("bibtex-syntax", "cannot read this BibTeX entry",
                Location(r.path, block.start_line + 1, 1))
    out = []
    for entry in library.entries:
        loc = Location(r.path, entry.start_line + 1, 1)
        key = entry.key.strip()
        if not re.match(SLUG_PATTERN, key):
            r.error("bad-id", f"BibTeX key '{key}' is not a valid reference key", loc,
                    "use lowercase letters, digits, '.', '_' and '-'")
            continue
        f = {k.lower(): _clean(str(v.value)) for k, v in entry.fields_dict.items()}
        kind = f.get("kind") or _BIB_KIND.get(entry.entry_type.lower(), "report")
        pressure = 1.0e5
        if "standard_pressure" in f:
            try:
                pressure = parse_pressure(f["standard_pressure"])
            except UnitError as exc:
                r.error("wrong-unit", f"standard_pressure: {exc.message}", loc, exc.hint)
        out.append(Reference(key, _citation(f), kind, pressure, f.get("doi"), f.get("url"),
                             loc, origin="bib"))
    return out


def _clean(s: str) -> str:
    return re.sub(r"\s+", " ", s.replace("{", "").replace("}", "")).strip()


def _citation(f: dict[str, str]) -> str:
    parts = [f.get("author", ""), f.get("title", "")]
    venue = f.get("journal") or f.get("booktitle") or f.get("institution") or f.get("publisher")
    if venue:
        vol = f" {f['volume']}" if "volume" in f else ""
        pages = f", {f['pages']}" if "pages" in f else ""
        parts.append(f"{venue}{vol}{pages}")
    parts.append(f.get("year", ""))
    return ". ".join(p.rstrip(".") for p in parts if p) + "."
