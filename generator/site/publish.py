"""``publish``: compute, build every page context, render, draw the charts, then write.

Everything is read and computed before the first byte is written.  The files go into a
fresh temporary folder (generator.site.output.Staging) as they are ready — the render
workers hand their pages to it, the drawn charts follow — and the write ends in a swap of
that complete folder, so a failure leaves the previous site as it was.  The output
depends only on the sources: the build date is SOURCE_DATE_EPOCH or the newest source
file's modification time, never the clock.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from datetime import datetime, timezone
from pathlib import Path

from generator import parallel
from generator.caution import CAUTION
from generator.compute import Computed, compute_handbook
from generator.diagnostics import Finding, Severity
from generator.exports import (
    SPECIES_UNITS,
    csv_table,
    json_text,
    num,
    reaction_json,
    species_rows,
)
from generator.model import Handbook
from generator.neighbourhood import Digester, digester_for, item_view
from generator.progress import Progress
from generator.results_cache import ResultsCache, batched
from generator.site import assets, markdown_notes, output, pages
from generator.site.chart_cache import ChartCache, cache_key, default_folder, entry_bytes
from generator.site.manifest import file_digests

NOT_IN_GIT = "not under version control"
SPECIES_CSV = ("T", "Cp", "H_minus_H298", "S", "G", "gef", "dfH", "u.dfH", "dfG", "u.dfG",
               "log10Kf", "extrapolated")
REACTION_CSV = ("T", "drH", "u.drH", "drS", "u.drS", "drG", "u.drG", "drCp", "drU", "TdrS",
                "K", "log10K", "u.log10K", "E", "Etn", "extrapolated")
SEARCH_GLOBAL = "THERMOFOLIO_SEARCH"


def render_many(specs, jobs: int = 1, progress=None) -> list[bytes]:
    """generator.charts.render_many, imported late (matplotlib only when charts are drawn)."""
    from generator.charts import render_many as draw

    return draw(specs, jobs, progress)


_OWN_RENDER_MANY = render_many


# --- facts about the sources (I/O, before any writing) -------------------------------------


def build_date(root: Path) -> str:
    """UTC date of SOURCE_DATE_EPOCH, else of the newest source file's modification time."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    stamp: float | None = None
    if epoch:
        try:
            stamp = float(int(epoch))
        except ValueError:
            stamp = None
    if stamp is None:
        mtimes = [p.stat().st_mtime for p in sorted(root.rglob("*")) if p.is_file()
                  and not any(part.startswith(".") for part in p.relative_to(root).parts)]
        stamp = max(mtimes, default=0.0)
    return datetime.fromtimestamp(stamp, tz=timezone.utc).strftime("%Y-%m-%d")


def source_revision(root: Path) -> str:
    """``git rev-parse --short HEAD`` of the sources, or "not under version control"."""
    try:
        done = subprocess.run(["git", "-C", str(root), "rev-parse", "--short", "HEAD"],
                              capture_output=True, text=True, timeout=10, check=False)
    except (OSError, subprocess.SubprocessError):
        return NOT_IN_GIT
    rev = done.stdout.strip()
    return rev if done.returncode == 0 and rev else NOT_IN_GIT


# --- charts --------------------------------------------------------------------------------


def chart_entries(computed: Computed, keys: Sequence[str] | None = None) -> dict[str, list]:
    """ChartEntry lists from generator.site.chart_specs, keyed species:<id> / reaction:<id>;
    with ``keys``, those items' charts only, else every item's and the handbook pages'."""
    try:
        from generator.site import chart_specs
    except ImportError:  # the chart specs module is not part of this build
        return {}
    out: dict[str, list] = {}
    for key in pages.item_keys(computed) if keys is None else keys:
        kind, _, item = key.partition(":")
        if kind == "species":
            out[key] = list(chart_specs.species_charts(computed.species[item], computed))
        else:
            out[key] = list(chart_specs.reaction_charts(computed.reactions[item], computed))
    if keys is None:
        out.update(handbook_chart_entries(computed))  # family and element pages
    return out


def handbook_chart_entries(computed: Computed) -> dict[str, list]:
    """The charts of the family and element pages, keyed family:<name> / element:<el>."""
    try:
        from generator.site import chart_specs
    except ImportError:
        return {}
    return chart_specs.handbook_charts(computed)


def chart_digest(spec) -> str:
    from generator.charts import spec_digest

    return spec_digest(spec)


def chart_path(spec, digest: str | None = None) -> str:
    return f"charts/{(digest or chart_digest(spec))[:16]}.svg"


def _is_level(spec) -> bool:
    from generator.charts import LevelDiagramSpec

    return isinstance(spec, LevelDiagramSpec)


def plan_charts(entries: Mapping[str, Sequence]
                ) -> tuple[dict[str, list[pages.ChartView]], dict[str, object]]:
    """Views per item and the distinct specs to draw, by their content-addressed path."""
    views, specs, _digests = _plan(entries)
    return views, specs


def _plan(entries: Mapping[str, Sequence]):
    views: dict[str, list[pages.ChartView]] = {}
    specs: dict[str, object] = {}
    digests: dict[str, str] = {}
    for key in sorted(entries):
        for entry in entries[key]:
            digest = chart_digest(entry.spec)
            path = chart_path(entry.spec, digest)
            if path not in specs:
                specs[path] = entry.spec
                digests[path] = digest
            views.setdefault(key, []).append(pages.ChartView(
                path=path, caption=entry.caption, alt=entry.spec.description,
                level=_is_level(entry.spec)))
    return views, specs, digests


@dataclass(frozen=True)
class ChartStats:
    """Charts published, drawn this build, taken from the cache, and cache entries rejected."""

    total: int
    drawn: int
    cached: int
    rejected: int


def _renderer_name() -> str:
    """"" for the real drawer; a stand-in's qualified name salts its cache keys."""
    fn = render_many
    if fn is _OWN_RENDER_MANY:
        return ""
    name = getattr(fn, "__qualname__", type(fn).__qualname__)
    return f"{getattr(fn, '__module__', type(fn).__module__)}.{name}"


class ChartDrawing:
    """The charts of one build that the render workers did not take from the cache (no
    entry, or one that failed its checks there): they start drawing when this is made,
    once, in a pool of ``jobs`` processes that works while the caller goes on
    (generator.charts.start_many), and ``finish`` waits for them and stores them back.
    matplotlib is imported only if something is drawn, and never in this process while
    other processes draw."""

    def __init__(self, specs: Mapping[str, object], digests: Mapping[str, str],
                 cache: ChartCache | None, jobs: int, done: set[str] | frozenset = frozenset(),
                 rejected: int = 0) -> None:
        """``done``: charts already taken from the cache and put into the site by the render
        workers (every other chart is drawn); ``rejected``: the cache entries they found
        corrupt (removed, so those charts are among the drawn)."""
        self._specs, self._cache, self._jobs = specs, cache, jobs
        self._rejected = rejected
        self._renderer = _renderer_name()
        self._keys = {path: cache_key(digests[path], self._renderer) for path in sorted(digests)}
        self.sources: dict[str, str] = {}  # chart path -> cache entry holding its bytes
        self._parts: list[tuple[list[str], object]] = []  # (chart paths, their drawing)
        self._drawn = 0
        self._draw([path for path in self._keys if path not in done])

    def _draw(self, paths: list[str]) -> None:
        if not paths:
            return
        todo = [self._specs[p] for p in paths]
        if self._renderer:  # a stand-in renderer takes (specs, jobs) and draws at once
            n_jobs = self._jobs if len(todo) > 2 * self._jobs else 1
            self._parts.append((paths, _Drawn(render_many(todo, n_jobs))))
        else:
            from generator.charts import start_many

            self._parts.append((paths, start_many(todo, self._jobs)))
        self._drawn += len(paths)

    def finish(self, quiet: bool = False, start: float | None = None) -> dict[str, bytes]:
        """The drawn charts' published bytes, waited for, each stored in the cache."""
        bar = Progress("drawing charts", self._drawn, quiet=quiet, start=start)
        out: dict[str, bytes] = {}
        before = 0
        parts, self._parts = self._parts, []
        try:
            for paths, pending in parts:
                drawn = pending.result(lambda n, base=before: bar.update(base + n))
                before += len(paths)
                for path, svg in zip(paths, drawn, strict=True):
                    out[path] = entry_bytes(svg)
                    key = self._keys[path]
                    if self._cache is not None and self._cache.put(key, svg):
                        self.sources[path] = self._cache.entry_name(key)
        finally:
            bar.close()
            for _paths, pending in parts:
                pending.cancel()
        return out

    def cancel(self) -> None:
        """Stop drawing what has not started (after an error)."""
        parts, self._parts = self._parts, []
        for _paths, pending in parts:
            pending.cancel()

    def stats(self) -> ChartStats:
        total = len(self._keys)
        return ChartStats(total=total, drawn=self._drawn, cached=total - self._drawn,
                          rejected=self._rejected)


class _Drawn:
    """A stand-in renderer's charts, drawn already."""

    def __init__(self, svgs: Sequence[bytes]) -> None:
        self._svgs = list(svgs)

    def result(self, progress=None) -> list[bytes]:
        return self._svgs

    def cancel(self) -> None:
        pass


# --- exports (pure) ------------------------------------------------------------------------


def _findings_of(findings: Sequence[Finding], item: str) -> list[Finding]:
    return [f for f in findings if f.item == item]


def _value_doc(v, used: bool) -> dict:
    return {"value": num(v.value), "unc": num(v.unc), "unit": v.unit, "ref": v.ref,
            "used": used, "written": v.written, "from_memory": v.from_memory,
            "conversion": v.conversion or None}


def species_doc(computed: Computed, sid: str, findings: Sequence[Finding]) -> dict:
    sr = computed.species[sid]
    sp = sr.species
    standard = {}
    for name in sorted(sp.standard):
        q = sp.standard[name]
        best = q.preferred
        standard[name] = [_value_doc(v, v is best) for v in pages.ordered_values(q)]
    r = sp.review
    return {
        "id": sid, "name": sp.name, "formula": sp.formula, "phase": sp.phase, "form": sp.form,
        "cas": sp.cas, "aliases": list(sp.aliases), "charge": sp.charge,
        "elements": {el: n for el, n in sp.elements}, "molar_mass": num(sp.molar_mass),
        "standard": standard, "units": SPECIES_UNITS,
        "rows": species_rows(sr.grid, sr.formation),
        "review": {"status": r.status, "by": r.by, "date": r.date, "note": r.note},
        "findings": [f.to_json() for f in _findings_of(findings, sid)],
        "caution": CAUTION,
    }


def reaction_doc(computed: Computed, rid: str, findings: Sequence[Finding]) -> dict:
    """Exactly the ``calc --json`` shape (generator.exports.reaction_json), plus id and name."""
    rr = computed.reactions[rid]
    equation = pages.equation_text(rr, computed.handbook.species)
    return reaction_json(equation, rr.grid, rr.crossover_T, _findings_of(findings, rid),
                         id=rid, name=rr.reaction.name)


def handbook_doc(computed: Computed, findings: Sequence[Finding]) -> dict:
    return {**_handbook_rest(computed),
            "species": [species_doc(computed, sid, findings) for sid in sorted(computed.species)],
            "reactions": [reaction_doc(computed, rid, findings)
                          for rid in sorted(computed.reactions)]}


def _handbook_rest(computed: Computed) -> dict:
    """handbook_doc without its species and reactions."""
    s = computed.handbook.settings
    refs = computed.handbook.references
    return {
        "settings": {"title": s.title, "edition": s.edition, "organisation": s.organisation,
                     "standard_pressure_Pa": num(s.standard_pressure),
                     "temperatures": [num(t) for t in s.temperatures],
                     "units": dict(s.units), "tolerances": dict(s.tolerances),
                     "review_interval_days": s.review_interval_days},
        "references": [{"key": k, "citation": refs[k].citation, "kind": refs[k].kind,
                        "standard_pressure_Pa": num(refs[k].standard_pressure),
                        "doi": refs[k].doi, "url": refs[k].url} for k in sorted(refs)],
        "caution": CAUTION,
    }


_SLOT = "\0thermofolio-slot-{}\0"


ITEM_DEPTH = 2  # an item's export: containers two levels down (a table row) on one line
HANDBOOK_DEPTH = ITEM_DEPTH + 2  # the same rows inside data/handbook.json's item lists


def _json_text(doc) -> str:
    return json_text(doc, ITEM_DEPTH)


def _nested_list(texts: Sequence[str]) -> str:
    """A list of documents already encoded by ``_json_text``, as ``_json_text`` writes it as a
    value of a top-level key (one level deeper; JSON text holds no raw newlines)."""
    if not texts:
        return "[]"
    return "[\n  " + ",\n  ".join(t.replace("\n", "\n  ") for t in texts) + "\n ]"


def _handbook_bytes(computed: Computed, species_texts: Sequence[str],
                    reaction_texts: Sequence[str]) -> bytes:
    """``json_text(handbook_doc(...), HANDBOOK_DEPTH)`` + newline from the documents already
    encoded, byte for byte."""
    doc = {**_handbook_rest(computed), "species": _SLOT.format("species"),
           "reactions": _SLOT.format("reactions")}
    text = json_text(doc, HANDBOOK_DEPTH)
    for name, texts in (("species", species_texts), ("reactions", reaction_texts)):
        slot = json.dumps(_SLOT.format(name))
        assert text.count(slot) == 1
        text = text.replace(slot, _nested_list(texts))
    return (text + "\n").encode("utf-8")


def _by_item(findings: Sequence[Finding]) -> dict[str | None, list[Finding]]:
    """Findings grouped by the item they concern, in their order."""
    out: dict[str | None, list[Finding]] = {}
    for f in findings:
        out.setdefault(f.item, []).append(f)
    return out


def item_exports(computed: Computed, findings: Sequence[Finding], keys: Sequence[str]
                 ) -> tuple[dict[str, bytes], dict[str, str]]:
    """The JSON and CSV files of the items ``keys`` and each item's JSON text (for
    data/handbook.json)."""
    files: dict[str, bytes] = {}
    texts: dict[str, str] = {}
    by_item = _by_item(findings)
    for key in keys:
        kind, _, item = key.partition(":")
        own = by_item.get(item, [])
        if kind == "species":
            doc, folder, columns = species_doc(computed, item, own), "species", SPECIES_CSV
        else:
            doc, folder, columns = reaction_doc(computed, item, own), "reactions", REACTION_CSV
        texts[key] = _json_text(doc)
        files[export_path(key)] = (texts[key] + "\n").encode("utf-8")
        files[f"{folder}/{item}.csv"] = csv_table(doc["rows"], columns).encode("utf-8")
    return files, texts


def export_path(key: str) -> str:
    """The site path of an item's JSON file (species:<id> or reaction:<id>)."""
    kind, _, item = key.partition(":")
    return f"{'species' if kind == 'species' else 'reactions'}/{item}.json"


def handbook_exports(computed: Computed, texts: Mapping[str, str]) -> dict[str, bytes]:
    """data/handbook.json from every item's JSON text, and the search index."""
    species = [texts[f"species:{sid}"] for sid in sorted(computed.species)]
    reactions = [texts[f"reaction:{rid}"] for rid in sorted(computed.reactions)]
    index = json.dumps(pages.search_entries(computed), sort_keys=True, ensure_ascii=False,
                       separators=(",", ":"))
    return {"data/handbook.json": _handbook_bytes(computed, species, reactions),
            "search-index.js": f"window.{SEARCH_GLOBAL} = {index};\n".encode()}


def export_files(computed: Computed, findings: Sequence[Finding]) -> dict[str, bytes]:
    files, texts = item_exports(computed, findings, pages.item_keys(computed))
    files.update(handbook_exports(computed, texts))
    return files


# --- the command's last step ---------------------------------------------------------------


def compiled_templates(results: ResultsCache | None) -> str | None:
    """The folder keeping the compiled templates beside ``results``'s database (none
    without a results cache: ``--no-cache`` writes nothing)."""
    path = getattr(results, "path", None)
    return None if path is None else os.path.join(os.path.dirname(path), "templates")


def render_pages(site_pages: Sequence[pages.Page], compiled: str | None = None
                 ) -> dict[str, bytes]:
    """Each page's HTML; ``compiled``: see compiled_templates."""
    env = assets.shared_environment(assets.templates_dir(), compiled)
    return {p.path: env.get_template(p.template).render(**p.context).encode("utf-8")
            for p in site_pages}


def notes_html(computed: Computed, keys: Sequence[str] | None = None) -> dict[str, str]:
    out = {}
    for key in pages.item_keys(computed) if keys is None else keys:
        kind, _, item = key.partition(":")
        item_of = computed.species[item].species if kind == "species" else \
            computed.reactions[item].reaction
        out[key] = markdown_notes.render(item_of.notes)
    return out


# --- the sheets, rendered in worker processes ----------------------------------------------

@dataclass(frozen=True)
class ItemBatch:
    """What rendering some items' sheets gave: files by path, the sheets' paths, the charts
    they show (specs and digests by chart path), each item's JSON text and each file's
    sha256 for the manifest (made where the files were rendered, and kept with them).  A
    sheet kept in the results cache holds no specs (a chart that must be drawn has its spec
    made again from the item's view: _render_task) and no JSON text (render_sheet takes it
    from the JSON file)."""

    files: dict[str, bytes]
    page_paths: list[str]
    specs: dict[str, object]
    digests: dict[str, str]
    texts: dict[str, str]
    file_sha256: dict[str, str]
    # Files a worker put into the new tree itself (output.Staging.place), their bytes left
    # out of ``files``: (site path, kept from the previous site, [size, mtime, inode]).
    placed: list = field(default_factory=list)
    # Of those, the charts taken from the chart cache (their entries read and checked by
    # the worker); and the charts whose cache entries it found corrupt (removed, so they
    # are drawn again).
    charts_placed: list = field(default_factory=list)
    charts_rejected: list = field(default_factory=list)


def render_items(computed: Computed, findings: Sequence[Finding], meta: pages.SiteMeta,
                 keys: Sequence[str], compiled: str | None = None) -> ItemBatch:
    """Chart specs, sheets and exports of the items ``keys`` (no file is touched but the
    compiled templates in ``compiled``, see compiled_templates)."""
    views, specs, digests = _plan(chart_entries(computed, keys))
    notes = notes_html(computed, keys)
    by_item = _by_item(findings)
    sheets = [pages.item_page(computed, key, by_item.get(key.partition(":")[2], []), meta,
                              views.get(key, ()), notes.get(key, "")) for key in keys]
    files = render_pages(sheets, compiled)
    exported, texts = item_exports(computed, findings, keys)
    files.update(exported)
    return ItemBatch(files, [p.path for p in sheets], specs, digests, texts,
                     file_digests(files))


def sheet_meta(meta: pages.SiteMeta, view: Computed, key: str) -> pages.SiteMeta:
    """The build facts one sheet shows: date, revision and its own source file's history
    (``changes`` is shown on its own page only)."""
    from generator.site.provenance_view import rel_source

    kind, _, item = key.partition(":")
    of = view.species[item].species if kind == "species" else view.reactions[item].reaction
    histories = meta.histories
    if histories:
        rel = rel_source(view.handbook.root, of.path)
        histories = {rel: tuple(histories.get(rel, ()))}
    return pages.SiteMeta(build_date=meta.build_date, revision=meta.revision,
                          histories=histories)


def render_sheet(computed: Computed, key: str, findings: Sequence[Finding],
                 meta: pages.SiteMeta, results: ResultsCache | None = None,
                 digester: Digester | None = None) -> tuple[ItemBatch, bool]:
    """One item's sheet, charts and exports, rendered from the item's neighbourhood
    (generator.neighbourhood.item_view) and kept in ``results`` under the digest of that
    neighbourhood, the item's findings and its build facts; (batch, True when rendered now).
    ``findings``: the item's own."""
    view = item_view(computed, key)
    own_meta = sheet_meta(meta, view, key)
    digest = None
    if results is not None:
        digest = (digester or digester_for(computed.handbook)).view(
            view, "sheet", key, tuple(findings), own_meta)
        hit = results.get("sheet", key, digest)
        if isinstance(hit, ItemBatch):
            # the item's JSON text is its JSON file less the final newline (not kept twice)
            text = hit.files[export_path(key)].decode("utf-8")[:-1]
            return replace(hit, texts={key: text}), False
    batch = render_items(view, findings, own_meta, [key], compiled_templates(results))
    if results is not None and digest is not None:
        results.put("sheet", key, digest, replace(batch, texts={}, specs={}))
    return batch, True


def handbook_batch(computed: Computed, findings: Sequence[Finding], meta: pages.SiteMeta,
                   part: str | None = None, compiled: str | None = None) -> ItemBatch:
    """The indexes, audit, reference, family and element pages and their charts (only the
    share ``part`` of pages.HANDBOOK_PARTS, if given; ``compiled``: see
    compiled_templates)."""
    views, specs, digests = ({}, {}, {}) if part not in (None, "other") else \
        _plan(handbook_chart_entries(computed))
    site_pages = pages.handbook_pages(computed, findings, meta, views, part)
    files = render_pages(site_pages, compiled)
    return ItemBatch(files, [p.path for p in site_pages], specs, digests, {},
                     file_digests(files))


def _render_task(shared: tuple, task: str | Sequence[str] | None) -> tuple[ItemBatch, int]:
    """One task of render_site: a share of the handbook pages, or some items' sheets, put
    into the new tree when a staging is shared."""
    computed, findings, meta, results, staging, cache = shared
    if task is None or isinstance(task, str):  # None: every handbook page
        done = handbook_batch(computed, findings, meta, task, compiled_templates(results))
        return _placed(done, staging, cache), 0
    by_item = _by_item(findings)
    digester = digester_for(computed.handbook)
    merged = _no_batch()
    rendered = 0
    kept: dict[str, str] = {}  # chart path -> a sheet taken from the results cache showing it
    with batched(results):  # the task's sheet entries in one transaction
        for key in task:
            batch, fresh = render_sheet(computed, key, by_item.get(key.partition(":")[2], []),
                                        meta, results, digester)
            rendered += fresh
            if not fresh:
                kept.update(dict.fromkeys(batch.digests, key))
            _merge(merged, batch)

    def specs_of(paths: Sequence[str]) -> dict[str, object]:
        """The specs of charts to draw that only kept sheets show, made again from those
        sheets' views (as render_items made them)."""
        specs: dict[str, object] = {}
        for key in dict.fromkeys(kept[p] for p in paths):
            specs.update(_plan(chart_entries(item_view(computed, key), [key]))[1])
        return {p: specs[p] for p in paths}

    return _placed(merged, staging, cache, specs_of), rendered


def _placed(batch: ItemBatch, staging: output.Staging | None,
            cache: ChartCache | None = None,
            specs_of: Callable[[Sequence[str]], dict[str, object]] | None = None) -> ItemBatch:
    """``batch`` with its files put into ``staging``'s new tree, their bytes dropped, and
    with ``cache``, its charts that the cache holds, each entry read and checked here (the
    parent draws the rest, from the specs the batch holds or ``specs_of`` makes)."""
    if staging is None:
        return _with_specs(batch, list(batch.digests), specs_of)
    missing: list[str] = []  # charts without a sound cache entry: the parent draws them
    try:
        placed = staging.place(batch.files)
        charts: list = []
        rejected: list = []
        sha = dict(batch.file_sha256)
        if cache is not None:
            charts = _place_cached(batch.digests, cache, staging, sha, rejected, missing)
        else:
            missing = list(batch.digests)
    except OSError as exc:
        raise _CannotWrite(str(exc)) from exc
    done = [rel for rel, _kept, _state in charts]
    taken = set(done)  # the parent needs a chart's spec only to draw it
    specs = {path: spec for path, spec in batch.specs.items() if path not in taken}
    return _with_specs(replace(batch, files={}, placed=placed + charts, file_sha256=sha,
                               specs=specs, charts_placed=done, charts_rejected=rejected),
                       missing, specs_of)


def _with_specs(batch: ItemBatch, paths: Sequence[str],
                specs_of: Callable[[Sequence[str]], dict[str, object]] | None) -> ItemBatch:
    """``batch`` holding the spec of each chart of ``paths`` (those it lacks by
    ``specs_of``)."""
    lacking = [p for p in paths if p not in batch.specs]
    if not lacking:
        return batch
    if specs_of is None:
        raise ValueError(f"no spec for the charts {lacking[:3]}")
    return replace(batch, specs={**batch.specs, **specs_of(lacking)})


def _place_cached(digests: Mapping[str, str], cache: ChartCache, staging: output.Staging,
                  sha256: dict[str, str], rejected: list[str], missing: list[str]) -> list:
    """Put each chart of ``digests`` whose cache entry passes its checks into the new tree
    (hard-linked from the entry where it can be; another worker may put the same chart, see
    Staging.place's ``shared``); the placements, with each one's sha256 added to
    ``sha256``, the charts whose entries failed their checks to ``rejected``, and those and
    the charts without an entry to ``missing``."""
    renderer = _renderer_name()
    out: list = []
    for path in sorted(digests):
        key = cache_key(digests[path], renderer)
        before = cache.rejected
        found = cache.get_checked(key)
        if found is None:
            if cache.rejected != before:
                rejected.append(path)
            missing.append(path)
            continue
        data, whole = found
        done = staging.place({path: data}, {path: cache.entry_name(key)}, shared=True)
        if done:
            out += done
            sha256[path] = whole
    return out


def _no_batch() -> ItemBatch:
    return ItemBatch({}, [], {}, {}, {}, {})


def _merge(into: ItemBatch, b: ItemBatch) -> None:
    into.placed.extend(b.placed)
    into.charts_placed.extend(b.charts_placed)
    into.charts_rejected.extend(b.charts_rejected)
    into.file_sha256.update(b.file_sha256)
    into.files.update(b.files)
    into.page_paths.extend(b.page_paths)
    into.specs.update(b.specs)
    into.digests.update(b.digests)
    into.texts.update(b.texts)


def render_site(computed: Computed, findings: Sequence[Finding], meta: pages.SiteMeta,
                jobs: int, results: ResultsCache | None = None,
                staging: output.Staging | None = None, cache: ChartCache | None = None
                ) -> tuple[ItemBatch, ItemBatch, int]:
    """Every page: (the sheets (render_sheet), the handbook pages, sheets rendered now rather
    than taken from ``results``).  With at least parallel.MIN_ITEMS items the work is split
    over ``jobs`` forked workers (generator.parallel): the handbook pages as four tasks
    (pages.HANDBOOK_PARTS), then the sheets in chunks that shrink towards the end
    (parallel.guided), handed out in that order.  With an
    open ``staging`` each task puts its files into the new tree itself (the batches then
    hold where they went instead of their bytes), and with ``cache`` too the charts of its
    pages that the cache holds (ItemBatch.charts_placed)."""
    # short chunks last, so no worker idles long at the end while another finishes
    chunks = parallel.guided(pages.item_keys(computed), jobs)
    n = len(chunks)
    whole: list = list(pages.HANDBOOK_PARTS) if n > 1 else [None]
    tasks: list = whole + [tuple(chunk) for chunk in chunks]
    parts = parallel.fork_map(_render_task, tasks, jobs if n > 1 else 1,
                              (computed, findings, meta, results, staging, cache), 2,
                              in_order=True)
    handbook, sheets = _no_batch(), _no_batch()
    for i, (batch, _n) in enumerate(parts):
        _merge(handbook if i < len(whole) else sheets, batch)
    return sheets, handbook, sum(n for _b, n in parts)


class _CannotWrite(Exception):
    """A file-system error while writing the site (its cause)."""


def _writing(step, *args):
    """``step(*args)``, its OSError raised as _CannotWrite."""
    try:
        return step(*args)
    except OSError as exc:
        raise _CannotWrite() from exc


def default_jobs() -> int:
    """Worker processes for drawing and rendering: the cores this process may use."""
    return parallel.default_jobs()


def chart_cache_for(args, root: Path) -> ChartCache | None:
    """The cache of ``--cache DIR``, none with ``--no-cache``, else the default folder."""
    if getattr(args, "no_cache", False):
        return None
    folder = getattr(args, "cache", None)
    return ChartCache(Path(folder) if folder else default_folder(root))


def results_cache_for(args, root: Path) -> ResultsCache | None:
    """The results cache in the chart cache's folder; none with ``--no-cache`` or when a
    step of this module was replaced in this process (a test's stand-in must run)."""
    if getattr(args, "no_cache", False) or not _own_steps():
        return None
    folder = getattr(args, "cache", None)
    return ResultsCache(Path(folder) if folder else default_folder(root))


def _own_steps() -> bool:
    """No step of this module but the chart drawer is replaced in this process."""
    here = globals()
    return all(here.get(k) is v for k, v in _ORIGINALS.items() if k != "render_many")


def publish(handbook: Handbook, findings: Sequence[Finding], out_path: Path, args,
            start_time: float, computed: Computed | None = None) -> int:
    """Publish the site into ``out_path``; returns the exit code (0 written, 1 refused).
    ``computed`` is the engine's result for ``handbook`` when the caller already has it."""
    out = Path(out_path)
    quiet = bool(getattr(args, "quiet", False))
    why = output.refusal(out)
    if why:
        print(f"thermofolio build: {why}; nothing written", file=sys.stderr)
        return 1
    if computed is None:
        computed = compute_handbook(handbook)
    every = pages.all_findings(computed, findings)
    root = Path(handbook.root)
    from generator.history import source_histories
    from generator.site import manifest

    meta = pages.SiteMeta(build_date=build_date(root), revision=source_revision(root),
                          histories=source_histories(root),
                          changes=getattr(args, "since_diff", None))
    jobs = int(getattr(args, "jobs", 0) or default_jobs())

    results = results_cache_for(args, root)
    cache = chart_cache_for(args, root)
    staging: output.Staging | None = None
    drawing: ChartDrawing | None = None
    try:
        # The workers put the pages and exports they render into the new tree themselves.
        staging = _writing(output.Staging, out)
        _writing(staging.open)
        items, whole, rendered = render_site(computed, every, meta, jobs, results, staging,
                                             cache)
        # One placement per path: a chart two workers met is reported by the one that put
        # it, and a copy made where linking failed is the same bytes.
        first: dict[str, tuple] = {}
        for placement in whole.placed + items.placed:
            first.setdefault(placement[0], placement)
        placed = list(first.values())
        _writing(staging.placed, placed)
        sizes = {rel: state[0] for rel, _kept, state in placed}
        specs = {**whole.specs, **items.specs}
        digests = {**whole.digests, **items.digests}
        page_paths = sorted(whole.page_paths + items.page_paths)
        # The workers put the charts the cache holds; the missing ones are drawn by other
        # processes while this one exports and writes everything else into the new tree.
        drawing = ChartDrawing(specs, digests, cache, jobs,
                               done=set(whole.charts_placed + items.charts_placed),
                               rejected=len(set(whole.charts_rejected + items.charts_rejected)))
        files = dict(whole.files)
        files.update(items.files)
        files.update(handbook_exports(computed, items.texts))
        files.update(assets.static_assets())
        _writing(staging.add, files)
        hashed = {**whole.file_sha256, **items.file_sha256}
        hashed.update(file_digests({p: d for p, d in files.items() if p not in hashed}))
        drawn = drawing.finish(quiet=quiet, start=start_time)
        _writing(staging.add, drawn, drawing.sources)
        files.update(drawn)
        files[manifest.MANIFEST] = manifest.manifest_bytes(files, page_paths, computed, meta,
                                                           hashed, sizes)
        _writing(staging.add, {manifest.MANIFEST: files[manifest.MANIFEST]})
        result = _writing(staging.commit)
    except _CannotWrite as exc:
        print(f"thermofolio build: cannot write {out}: {exc.__cause__ or exc}; the previous "
              "site is unchanged", file=sys.stderr)
        return 1
    finally:
        if drawing is not None:
            drawing.cancel()
        if staging is not None:
            staging.abort()  # after a commit: nothing left to remove
    stats = drawing.stats()
    if not quiet:
        n_warn = sum(f.severity is Severity.WARNING for f in every)
        elapsed = time.perf_counter() - start_time
        bad = f", {stats.rejected} bad cache entries redrawn" if stats.rejected else ""
        print(f"thermofolio build: {len(page_paths)} pages, {rendered} of "
              f"{len(items.page_paths)} sheets "
              f"rendered, {stats.total} charts "
              f"({stats.drawn} drawn, {stats.cached} cached{bad}), "
              f"{result.rewritten} files rewritten, {result.kept} unchanged, "
              f"{n_warn} warnings, {elapsed:.1f} s -> {out}", file=sys.stderr)
        print(f"CAUTION: {handbook.settings.caution or CAUTION}", file=sys.stderr)
    if hasattr(args, "__dict__"):  # what a later up-to-date build reports (commands.build)
        renderer = _renderer_name()
        args.build_record = {"pages": len(page_paths), "sheets": len(items.page_paths),
                             "charts": stats.total,
                             "warnings": sum(f.severity is Severity.WARNING for f in every),
                             "caution": handbook.settings.caution or CAUTION,
                             "cache_entries": [] if cache is None else sorted(
                                 cache.entry_name(cache_key(d, renderer))
                                 for d in digests.values()),
                             "files": result.state}
    return 0


# This module's own steps; generator.commands.build trusts no build stamp once any of them
# has been replaced in the running process (a test's stand-in), except the chart drawer,
# whose name salts the stamp as it salts the cache keys.
_ORIGINALS = {k: v for k, v in dict(globals()).items()
              if callable(v) and getattr(v, "__module__", None) == __name__}
