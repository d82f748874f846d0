"""Build caching: the chart cache, redrawing only what changed, and unchanged files kept.

Chart drawing is replaced by a recording stand-in (one small SVG per spec) except where a
test says otherwise; timings belong to benchmarks/bench_build.py, not here.
"""

from __future__ import annotations

import hashlib
import importlib
import os
import re
import subprocess
import sys
from dataclasses import replace
from pathlib import Path

import pytest

from conftest import REPO, assemble
from generator.charts import LineChartSpec, Series, spec_digest
from generator.cli import main
from generator.site.chart_cache import ChartCache, cache_key, entry_bytes

publish_mod = importlib.import_module("generator.site.publish")
EPOCH = "1767225600"  # 2026-01-01T00:00:00Z, an arbitrary fixed build date
SUMMARY = re.compile(r"(\d+) charts \((\d+) drawn, (\d+) cached.*?\), (\d+) files rewritten")


class Recorder:
    """Stands in for generator.charts.render_many and remembers every spec it drew."""

    def __init__(self) -> None:
        self.drawn: list = []

    def __call__(self, specs, jobs=1):
        specs = list(specs)
        self.drawn.extend(specs)
        return [(f'<?xml version="1.0"?>\n<svg xmlns="http://www.w3.org/2000/svg"><title>'
                 f'{hashlib.sha256(s.to_canonical_json().encode()).hexdigest()[:8]}</title>'
                 f'</svg>\n').encode() for s in specs]


@pytest.fixture
def recorder(monkeypatch) -> Recorder:
    rec = Recorder()
    monkeypatch.setattr(publish_mod, "render_many", rec)
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    return rec


def build(src: Path, out: Path, cache: Path, capsys) -> tuple[int, int, int, int]:
    """Build and return (charts, drawn, cached, files rewritten) from the summary line."""
    capsys.readouterr()
    assert main(["build", str(src), "-o", str(out), "--cache", str(cache), "-j", "1"]) == 0
    match = SUMMARY.search(capsys.readouterr().err)
    assert match, "no build summary printed"
    return tuple(int(g) for g in match.groups())  # type: ignore[return-value]


def build_fresh(src: Path, cache: Path, tmp_path: Path, jobs: str, recorder: Recorder, capsys,
                monkeypatch) -> tuple[Path, str]:
    """A build into a new folder with ``jobs`` processes, the small handbook's sheets forked
    too; (the folder, the build's stderr)."""
    from generator import parallel

    monkeypatch.setattr(parallel, "MIN_ITEMS", 2)
    recorder.drawn.clear()
    fresh = tmp_path / "fresh"
    capsys.readouterr()
    assert main(["build", str(src), "-o", str(fresh), "--cache", str(cache), "-j", jobs]) == 0
    return fresh, capsys.readouterr().err


def mtimes(folder: Path) -> dict[str, int]:
    return {str(p.relative_to(folder)): p.stat().st_mtime_ns
            for p in folder.rglob("*") if p.is_file()}


def test_second_build_draws_nothing_and_rewrites_nothing(tmp_path, recorder, capsys):
    src, out, cache = assemble(tmp_path / "hb"), tmp_path / "out", tmp_path / "cache"
    charts, drawn, cached, rewritten = build(src, out, cache, capsys)
    assert charts > 0 and drawn == charts and cached == 0 and rewritten > 0
    before = mtimes(out)
    recorder.drawn.clear()
    assert build(src, out, cache, capsys) == (charts, 0, charts, 0)
    assert recorder.drawn == []
    assert mtimes(out) == before  # not one file touched


def test_editing_one_species_redraws_only_its_charts(tmp_path, recorder, capsys):
    src, out, cache = assemble(tmp_path / "hb"), tmp_path / "out", tmp_path / "cache"
    build(src, out, cache, capsys)
    before = mtimes(out)
    recorder.drawn.clear()
    path = src / "species" / "water-liquid.yaml"
    text = path.read_text(encoding="utf-8")
    assert "-285.83" in text
    path.write_text(text.replace("-285.83", "-285.50"), encoding="utf-8")
    charts, drawn, _cached, rewritten = build(src, out, cache, capsys)
    assert 0 < drawn < charts
    # Every redrawn chart shows liquid water (its own sheet or the vaporisation reaction).
    for spec in recorder.drawn:
        text = spec.to_canonical_json()
        assert "H₂O(l)" in text or "water" in text.lower(), spec.title
    after = mtimes(out)
    changed = {p for p in after if after[p] != before.get(p)}
    assert "species/water-liquid.html" in changed
    assert "species/hydrogen.html" not in changed and "species/oxygen.html" not in changed
    assert "reactions/burning.html" not in changed  # burning makes vapour, not liquid
    assert rewritten == len(changed)



def test_a_rebuild_reads_no_chart_that_is_a_link_of_its_cache_entry(tmp_path, recorder, capsys,
                                                                     monkeypatch):
    """The previous site's charts are links of the entries just read and checked, so they
    are kept without being read again; a chart file the user replaced (another file, the
    same length) is compared by its bytes and written anew."""
    from generator.site import output

    src, out, cache = assemble(tmp_path / "hb"), tmp_path / "out", tmp_path / "cache"
    build(src, out, cache, capsys)
    replaced = sorted((out / "charts").glob("*.svg"))[0]
    data = replaced.read_bytes()
    replaced.unlink()
    replaced.write_bytes(data[:-2] + b"x\n")  # a new inode, the same length
    compared: list[str] = []
    real = output._same_bytes
    monkeypatch.setattr(output, "_same_bytes",
                        lambda path, d, size: compared.append(path) or real(path, d, size))
    path = src / "species" / "water-liquid.yaml"
    path.write_text(path.read_text(encoding="utf-8").replace("-285.83", "-285.50"),
                    encoding="utf-8")
    build(src, out, cache, capsys)
    compared_charts = [p for p in compared if f"{os.sep}charts{os.sep}" in p]
    assert compared_charts == [str(replaced)]
    assert replaced.read_bytes() == data  # put back from its cache entry



def test_compiled_templates_are_kept_beside_the_results_and_not_compiled_again(
        tmp_path, recorder, capsys, monkeypatch):
    import jinja2

    from generator.site import assets

    src, out, cache = assemble(tmp_path / "hb"), tmp_path / "out", tmp_path / "cache"
    assets.shared_environment.cache_clear()
    build(src, out, cache, capsys)
    kept = sorted((cache / "templates").iterdir())
    assert kept, "no compiled templates kept"
    assets.shared_environment.cache_clear()  # as a new process: nothing compiled in memory
    compiled: list[str] = []
    real = jinja2.Environment.compile
    monkeypatch.setattr(jinja2.Environment, "compile",
                        lambda self, source, name=None, *a, **k:
                        compiled.append(name) or real(self, source, name, *a, **k))
    path = src / "species" / "water-liquid.yaml"
    path.write_text(path.read_text(encoding="utf-8").replace("-285.83", "-285.50"),
                    encoding="utf-8")
    build(src, out, cache, capsys)
    assert compiled == []
    # --no-cache writes no compiled templates anywhere (and still renders: it compiles)
    assets.shared_environment.cache_clear()
    capsys.readouterr()
    assert main(["build", str(src), "-o", str(tmp_path / "plain"), "--no-cache", "-q",
                 "-j", "1"]) == 0
    assert compiled and not (src / ".thermofolio-cache").exists()
    assert sorted((cache / "templates").iterdir()) == kept


def _spec(**kw) -> LineChartSpec:
    base = dict(title="H2O(g): Cp°(T)", description="Cp of water vapour rises with T.",
                x_label="T / K", y_label="Cp° / (J mol⁻¹ K⁻¹)",
                series=(Series("Cp°", (300.0, 600.0, 900.0), (33.6, 36.3, 40.0)),))
    base.update(kw)
    return LineChartSpec(**base)


def test_cache_key_follows_data_and_style_only():
    a, same = _spec(), _spec()
    assert spec_digest(a) == spec_digest(same)
    moved = _spec(series=(Series("Cp°", (300.0, 600.0, 900.0), (33.6, 36.3, 40.1)),))
    relabelled = _spec(y_label="Cp° / (J/(mol·K))")
    assert spec_digest(moved) != spec_digest(a)
    assert spec_digest(relabelled) != spec_digest(a)
    assert spec_digest(a, style_version="tf-style-x") != spec_digest(a)
    assert cache_key(spec_digest(a)) == spec_digest(a)
    assert cache_key(spec_digest(a), "tests.Recorder") != spec_digest(a)
    assert spec_digest(replace(a)) == spec_digest(a)


@pytest.mark.parametrize("damage", ["truncate", "flip", "drop-trailer"])
def test_corrupt_cache_entry_is_redrawn_not_published(tmp_path, recorder, capsys, damage):
    src, out, cache = assemble(tmp_path / "hb"), tmp_path / "out", tmp_path / "cache"
    charts, *_ = build(src, out, cache, capsys)
    entry = sorted(cache.rglob("*.svg"))[0]
    good = entry.read_bytes()
    svg = good[: good.rfind(b"<!--")]
    bad = {"truncate": good[: len(good) // 2],
           "flip": good.replace(b"<title>", b"<titl3>", 1),
           "drop-trailer": svg}[damage]
    entry.write_bytes(bad)
    recorder.drawn.clear()
    assert build(src, out, cache, capsys)[:3] == (charts, 1, charts - 1)
    published = {p.read_bytes() for p in (out / "charts").glob("*.svg")}
    # A site publishes the entry's bytes (the SVG and its integrity trailer), never the bad.
    assert good in published and bad not in published
    assert entry.read_bytes() == good  # the redrawn chart replaced the bad entry


@pytest.mark.parametrize("jobs", ["1", "2"])
def test_render_workers_take_cached_charts_and_report_corrupt_ones(tmp_path, recorder, capsys,
                                                                   monkeypatch, jobs):
    """Whoever renders the sheets (this process, or forked workers) reads, checks and
    places the cached charts of its pages; the entries found corrupt are counted once in
    the summary, drawn again by the parent and published good."""
    src, out, cache = assemble(tmp_path / "hb"), tmp_path / "out", tmp_path / "cache"
    charts, *_ = build(src, out, cache, capsys)
    entries = sorted(cache.rglob("*.svg"))
    good = {e: e.read_bytes() for e in entries[:2]}
    for entry, data in good.items():
        entry.write_bytes(data[: len(data) // 2])
    fresh, err = build_fresh(src, cache, tmp_path, jobs, recorder, capsys, monkeypatch)
    assert f"{charts} charts (2 drawn, {charts - 2} cached, 2 bad cache entries redrawn)" in err
    assert len(recorder.drawn) == 2
    published = {p.read_bytes() for p in (fresh / "charts").glob("*.svg")}
    assert set(good.values()) <= published
    assert all(e.read_bytes() == data for e, data in good.items())
    # Every chart is a link of its cache entry (the two redrawn ones once stored again).
    linked = [p for p in (fresh / "charts").glob("*.svg") if p.stat().st_nlink > 1]
    assert len(linked) == charts


@pytest.mark.parametrize("jobs", ["1", "2"])
def test_a_chart_missing_from_the_cache_is_drawn_for_a_kept_sheet(tmp_path, recorder, capsys,
                                                                  monkeypatch, jobs):
    """A sheet kept in the results cache holds no chart specs: when one of its charts has
    no cache entry any more, its spec is made again from the sheet's view, the chart drawn
    as the first build drew it, and the site comes out the same."""
    import pickle
    import sqlite3

    from generator.results_cache import DATABASE

    src, out, cache = assemble(tmp_path / "hb"), tmp_path / "out", tmp_path / "cache"
    charts, *_ = build(src, out, cache, capsys)
    first = {spec.title: spec.to_canonical_json() for spec in recorder.drawn}
    with sqlite3.connect(cache / DATABASE) as db:
        sheets = [pickle.loads(p) for (p,) in
                  db.execute("select payload from entry where kind = 'sheet'")]
    assert sheets and all(s.specs == {} and s.digests for s in sheets)
    gone = sorted(cache.rglob("*.svg"))[:3]
    for entry in gone:
        entry.unlink()
    fresh, err = build_fresh(src, cache, tmp_path, jobs, recorder, capsys, monkeypatch)
    assert f"{charts} charts (3 drawn, {charts - 3} cached)" in err
    assert " 0 of " in err  # every sheet was taken from the results cache
    assert len(recorder.drawn) == 3
    assert all(first[s.title] == s.to_canonical_json() for s in recorder.drawn)
    assert all(e.exists() for e in gone)  # stored again
    assert {p.relative_to(out): p.read_bytes() for p in out.rglob("*") if p.is_file()} == \
        {p.relative_to(fresh): p.read_bytes() for p in fresh.rglob("*") if p.is_file()}


def test_cache_get_put_round_trip(tmp_path):
    cache = ChartCache(tmp_path)
    key = "ab" * 32
    doc = b'<?xml version="1.0"?>\n<svg xmlns="http://www.w3.org/2000/svg"></svg>\n'
    assert cache.get(key) is None
    cache.put(key, doc)
    assert cache.entry(key) == tmp_path / "ab" / f"{key}.svg"
    assert cache.get(key) == doc and cache.hits == 1
    entry = cache.entry(key).read_bytes()
    assert entry == entry_bytes(doc)
    # The whole entry's sha256 comes with it, as hashlib makes it of the file's bytes.
    assert cache.get_checked(key) == (entry, hashlib.sha256(entry).hexdigest())
    cut = entry.rfind(b"<!--")
    for bad in (entry[:-1], entry[:cut] + entry[cut:].replace(b"bytes=", b"bytes=1"),
                entry.replace(b"<svg", b"<svG", 1), b"\n" + entry):
        cache.entry(key).write_bytes(bad)
        assert cache.get_checked(key) is None and not cache.entry(key).exists()
    assert cache.rejected == 4
    cache.put(key, b"<svg>not closed")
    assert cache.get(key) is None and cache.rejected == 5  # the parse check refuses it
    with pytest.raises(ValueError):
        cache.entry("../escape")


def test_no_cache_draws_everything(tmp_path, recorder, capsys):
    src, out, cache = assemble(tmp_path / "hb"), tmp_path / "out", tmp_path / "cache"
    charts, *_ = build(src, out, cache, capsys)
    capsys.readouterr()
    assert main(["build", str(src), "-o", str(out), "--no-cache", "-q"]) == 0
    assert len(recorder.drawn) == 2 * charts


def test_fully_cached_build_does_not_import_matplotlib(tmp_path, monkeypatch):
    """Fill the cache under the real drawer's keys, then build in a fresh interpreter."""
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    src, out, cache = assemble(tmp_path / "hb"), tmp_path / "out", tmp_path / "cache"
    from generator.compute import compute_handbook
    from generator.load import load_handbook

    handbook, _ = load_handbook(src)
    _views, specs, digests = publish_mod._plan(publish_mod.chart_entries(
        compute_handbook(handbook)))
    store = ChartCache(cache)
    svgs = Recorder()(list(specs.values()))
    for path, svg in zip(specs, svgs, strict=True):
        store.put(cache_key(digests[path]), svg)
    code = ("import sys; from generator.cli import main; "
            f"rc = main(['build', {str(src)!r}, '-o', {str(out)!r}, '--cache', {str(cache)!r}]);"
            " print('matplotlib' in sys.modules, rc)")
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          env=env, cwd=tmp_path, timeout=120, check=False)
    assert done.stdout.split() == ["False", "0"], done.stderr
    assert f"{len(specs)} cached" in done.stderr


def _tree(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*"))
            if p.is_file()}


def test_charts_are_linked_from_the_cache_and_the_site_is_the_same_without_it(
        tmp_path, recorder, capsys):
    src, cache = assemble(tmp_path / "hb"), tmp_path / "cache"
    linked, plain = tmp_path / "linked", tmp_path / "plain"
    build(src, linked, cache, capsys)
    capsys.readouterr()
    assert main(["build", str(src), "-o", str(plain), "--no-cache", "-q", "-j", "1"]) == 0
    assert _tree(linked) == _tree(plain)  # a cache changes how files are made, not bytes
    entries = {p.read_bytes(): p for p in cache.rglob("*.svg")}
    charts = sorted((linked / "charts").glob("*.svg"))
    assert charts and all(os.stat(c).st_ino == os.stat(entries[c.read_bytes()]).st_ino
                          for c in charts)
    assert all(p.stat().st_nlink == 1 for p in (plain / "charts").glob("*.svg"))
    # An entry whose permissions differ from a new file's is copied, not linked.
    for entry in entries.values():
        entry.chmod(0o600)
    third = tmp_path / "third"
    build(src, third, cache, capsys)
    assert _tree(third) == _tree(plain)
    assert all(p.stat().st_nlink == 1 for p in (third / "charts").glob("*.svg"))


class Drawing:
    """Stands in for generator.charts.start_many: notes what the output's parent holds when
    the build first waits for the charts (the new tree, staged meanwhile), then gives one
    small SVG per spec, or raises."""

    def __init__(self, parent: Path, fail: bool = False) -> None:
        self.parent, self.fail = parent, fail
        self.started: list[int] = []
        self.staged_when_waited: list[set[str]] = []

    def __call__(self, specs, jobs=1):
        specs = list(specs)
        self.started.append(len(specs))
        drawing = self

        class Pending:
            def result(self, progress=None):
                staged = [p for p in drawing.parent.iterdir() if p.name.startswith(".out.new-")]
                drawing.staged_when_waited.append(
                    {str(f.relative_to(staged[0])) for f in staged[0].rglob("*.html")}
                    if staged else set())
                if drawing.fail:
                    raise RuntimeError("the drawing pool broke")
                return Recorder()(specs)

            def cancel(self):
                pass

        return Pending()


def test_pages_are_written_while_the_missing_charts_are_drawn(tmp_path, capsys,
                                                              monkeypatch):
    """The real drawer's charts are started before anything is written and waited for
    only once every page is in the new tree; a drawing that fails then leaves the previous
    site as it was and no temporary folder."""
    import generator.charts

    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    src, out, cache = assemble(tmp_path / "hb"), tmp_path / "out", tmp_path / "cache"
    drawing = Drawing(tmp_path)
    monkeypatch.setattr(generator.charts, "start_many", drawing)
    charts, drawn, _cached, _rewritten = build(src, out, cache, capsys)
    assert drawing.started == [charts] and drawn == charts  # one pool, every chart
    pages = {str(p.relative_to(out)) for p in out.rglob("*.html")}
    assert drawing.staged_when_waited == [pages]
    before = {str(p.relative_to(out)): p.read_bytes() for p in out.rglob("*") if p.is_file()}
    path = src / "species" / "water-liquid.yaml"
    path.write_text(path.read_text(encoding="utf-8").replace("-285.83", "-285.50"),
                    encoding="utf-8")
    monkeypatch.setattr(generator.charts, "start_many", Drawing(tmp_path, fail=True))
    capsys.readouterr()
    assert main(["build", str(src), "-o", str(out), "--cache", str(cache), "-j", "1",
                 "-q"]) == 3  # an internal error, reported by the CLI
    assert "the drawing pool broke" in capsys.readouterr().err
    assert {str(p.relative_to(out)): p.read_bytes() for p in out.rglob("*")
            if p.is_file()} == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["cache", "hb", "out"]
