"""Tests for the published site (generator.site): links, offline assets, CSP, exports equal
to the engine, sanitised notes, refusal and atomic replacement, byte-identical rebuilds.

The demo handbook is built once per module.  Chart drawing is replaced by a tiny
deterministic SVG writer there (matplotlib takes ~0.1 s a chart); one test draws real
charts for the small fixture handbook.
"""

from __future__ import annotations

import hashlib
import importlib
import json
import os
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest

from generator.cli import main
from generator.compute import compute_handbook
from generator.pipeline import check_handbook
from generator.site import markdown_notes, output, pages

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "sources"
MINI = Path(__file__).parent / "fixtures" / "mini"
publish_mod = importlib.import_module("generator.site.publish")  # the package exports the function
EPOCH = "1767225600"  # 2026-01-01T00:00:00Z, an arbitrary fixed build date
CSP = ("default-src 'none'; img-src 'self' data:; style-src 'self'; script-src 'self'; "
       "base-uri 'none'; form-action 'none'")
ALLOWED_ENDINGS = (".html", ".svg", ".css", ".js", ".json", ".csv")


def fake_render_many(specs, jobs=1):
    """A deterministic stand-in for generator.charts.render_many (one small SVG per spec)."""
    return [(f'<svg xmlns="http://www.w3.org/2000/svg" role="img"><title>'
             f'{hashlib.sha256(s.to_canonical_json().encode()).hexdigest()[:8]}</title></svg>'
             ).encode() for s in specs]


def build(sources: Path, out: Path, *extra: str) -> int:
    return main(["build", str(sources), "-o", str(out), "-q", *extra])


def tree(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes()
            for p in sorted(folder.rglob("*")) if p.is_file()}


REAL_RENDER_MANY = publish_mod.render_many


@pytest.fixture(autouse=True)
def quick_charts(monkeypatch) -> None:
    monkeypatch.setattr(publish_mod, "render_many", fake_render_many)


@pytest.fixture(scope="module")
def site(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("site") / "out"
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("SOURCE_DATE_EPOCH", EPOCH)
        mp.setattr(publish_mod, "render_many", fake_render_many)
        assert build(DEMO, out) == 0
    return out


class _Collector(HTMLParser):
    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.links: list[tuple[str, str, str]] = []  # (tag, attribute, value)
        self.ids: set[str] = set()
        self.metas: list[dict] = []
        self.inline_styles = 0
        self.inline_scripts = 0
        self.handlers = 0
        self._in_script = False
        self.th_buttons = 0
        self._in_th = False
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        for name, value in attrs:
            if name in ("href", "src") and value is not None:
                self.links.append((tag, name, value))
            if name == "style":
                self.inline_styles += 1
            if name.startswith("on"):
                self.handlers += 1
        if "id" in a:
            self.ids.add(a["id"])
        if tag == "meta":
            self.metas.append(a)
        if tag == "style":
            self.inline_styles += 1
        if tag == "script":
            self._in_script = True
            if "src" not in a:
                self.inline_scripts += 1
        if tag == "th":
            self._in_th = True
        if tag == "button" and self._in_th:
            self.th_buttons += 1

    def handle_endtag(self, tag):
        if tag == "script":
            self._in_script = False
        if tag == "th":
            self._in_th = False

    def handle_data(self, data):
        self.text.append(data)


_parsed: dict[Path, _Collector] = {}


def parse(path: Path) -> _Collector:
    if path not in _parsed:
        c = _Collector()
        c.feed(path.read_text(encoding="utf-8"))
        _parsed[path] = c
    return _parsed[path]


def html_pages(site: Path) -> list[Path]:
    return sorted(site.rglob("*.html"))


def test_expected_pages_exist(site: Path) -> None:
    for name in ("index.html", "species.html", "reactions.html", "references.html",
                 "conventions.html", "audit.html", "search.html", "search-index.js",
                 "data/handbook.json", "assets/site.css", "assets/site.js",
                 "assets/print.css", output.MARKER, "species/water-liquid.html",
                 "species/water-liquid.json", "species/water-liquid.csv",
                 "reactions/lime-burning.html", "reactions/lime-burning.json",
                 "reactions/lime-burning.csv", "references/codata-1989.html"):
        assert (site / name).is_file(), name


def test_every_internal_link_and_fragment_resolves(site: Path) -> None:
    for page in html_pages(site):
        for tag, _attr, value in parse(page).links:
            if value.startswith("data:"):
                assert tag == "link" and value == "data:,", (page, value)
                continue
            target, _, fragment = value.partition("#")
            dest = (page.parent / target).resolve() if target else page
            assert dest.is_file(), f"{page.relative_to(site)}: {value} does not resolve"
            if fragment:
                assert fragment in parse(dest).ids, f"{page.relative_to(site)}: #{fragment}"


def test_no_outside_urls_and_no_folder_links(site: Path) -> None:
    outside = ("http:", "https:", "//")
    for page in html_pages(site):
        for _tag, _attr, value in parse(page).links:
            assert not value.lower().startswith(outside), (page, value)
            target = value.partition("#")[0]
            if target and not value.startswith("data:"):
                assert target.endswith(ALLOWED_ENDINGS), (page, value)
    for css in (site / "assets").glob("*.css"):
        text = css.read_text(encoding="utf-8")
        assert "@import" not in text
        assert not re.search(r"url\(\s*['\"]?(https?:|//)", text)


def test_csp_icon_caution_and_print_footer_on_every_page(site: Path) -> None:
    settings = check_handbook(DEMO)[0].settings
    caution = " ".join(settings.caution.split())
    footer = f"Uncontrolled when printed — {settings.title}, edition {settings.edition}"
    for page in html_pages(site):
        c = parse(page)
        csp = [m for m in c.metas if m.get("http-equiv") == "Content-Security-Policy"]
        assert len(csp) == 1 and csp[0]["content"] == CSP, page
        text = " ".join("".join(c.text).split())
        assert caution in text, page
        assert footer in text, page
        assert settings.edition in text and "2026-01-01" in text, page
        assert ("link", "href", "data:,") in c.links
        assert c.inline_scripts == 0 and c.inline_styles == 0 and c.handlers == 0, page
        html = page.read_text(encoding="utf-8")
        assert not re.search(r">\s*[−-]?(inf|nan)\s*<", html, re.IGNORECASE), page
    print_css = (site / "assets" / "print.css").read_text(encoding="utf-8")
    assert "@page { size: auto; margin: 15mm; }" in print_css
    assert "Uncontrolled when printed" in print_css


def test_sheets_carry_review_status_and_value_anchors(site: Path) -> None:
    c = parse(site / "species" / "water-liquid.html")
    assert {"std-dfH", "std-S", "std-dfG", "table", "review"} <= c.ids
    text = "".join(c.text)
    assert "Review status" in text and "checked" in text  # status: checked in the source
    r = parse(site / "reactions" / "lime-burning.html")
    assert {"std-drH", "std-drG", "std-K", "balance", "contributions", "checks"} <= r.ids


def test_index_tables_are_sortable_by_buttons(site: Path) -> None:
    for name in ("species.html", "reactions.html"):
        html = (site / name).read_text(encoding="utf-8")
        assert 'class="data sortable"' in html and 'aria-sort="none"' in html
        assert parse(site / name).th_buttons >= 5


def test_exported_reaction_rows_equal_the_engine(site: Path) -> None:
    handbook, _ = check_handbook(DEMO)
    computed = compute_handbook(handbook)
    for rid, rr in computed.reactions.items():
        doc = json.loads((site / "reactions" / f"{rid}.json").read_text(encoding="utf-8"))
        assert {"equation", "units", "rows", "crossover_T", "findings", "caution"} <= set(doc)
        assert len(doc["rows"]) == len(rr.grid.T)
        for i, row in enumerate(doc["rows"]):
            for key in ("T", "drH", "drS", "drG", "log10K"):
                assert row[key] == pytest.approx(float(getattr(rr.grid, key)[i]), rel=1e-9)
        assert doc["crossover_T"] == pytest.approx(list(rr.crossover_T), rel=1e-9)
    csv_lines = (site / "reactions" / "lime-burning.csv").read_text().splitlines()
    assert csv_lines[0].startswith("T,drH,")
    assert len(csv_lines) == 1 + len(handbook.settings.temperatures)


def test_handbook_and_species_exports(site: Path) -> None:
    whole = json.loads((site / "data" / "handbook.json").read_text(encoding="utf-8"))
    assert {"settings", "references", "species", "reactions"} <= set(whole)
    water = next(s for s in whole["species"] if s["id"] == "water-liquid")
    # -285.830 kJ/mol: the dfH of water(l) written in sources/species/water-liquid.yaml
    assert water["standard"]["dfH"][0]["value"] == pytest.approx(-285.83)
    one = json.loads((site / "species" / "water-liquid.json").read_text(encoding="utf-8"))
    assert one == water
    for text in (p.read_text(encoding="utf-8") for p in site.rglob("*.json")):
        assert "NaN" not in text and "Infinity" not in text


def test_search_index_is_a_classic_script(site: Path) -> None:
    text = (site / "search-index.js").read_text(encoding="utf-8")
    prefix = f"window.{publish_mod.SEARCH_GLOBAL} = "
    assert text.startswith(prefix) and text.rstrip().endswith(";")
    data = json.loads(text[len(prefix):].rstrip().rstrip(";"))
    co2 = next(s for s in data["species"] if s["id"] == "carbon-dioxide")
    assert co2["key"] == "co2" and co2["url"] == "species/carbon-dioxide.html"
    assert co2["formula"] == "CO₂"
    assert all(e["url"].endswith(".html") for e in data["species"] + data["reactions"])
    js = (site / "assets" / "site.js").read_text(encoding="utf-8")
    assert "fetch(" not in js and "XMLHttpRequest" not in js


def test_notes_are_sanitised() -> None:
    html = markdown_notes.render(
        "<script>alert(1)</script>\n\n<img src=x onerror=alert(1)>\n\n[x](javascript:alert(1))"
        "\n\n[d](data:text/html,hi) <b style=\"color:red\" onclick=\"go()\">b</b> "
        "[ok](../species/water-gas.html) [web](https://example.org/a)")
    low = html.lower()
    for bad in ("<script", "alert(1)", "onerror", "javascript:", "data:", "<img", "style=",
                "onclick"):
        assert bad not in low, bad
    assert 'href="../species/water-gas.html"' in html
    assert 'href="https://example.org/a"' in html
    table = markdown_notes.render("| a | b |\n|---|--:|\n| 1 | 2 |")
    assert "<table>" in table and 'align="right"' in table
    assert markdown_notes.render("") == ""


def test_number_formatting() -> None:
    assert pages.fixed(-285.83, "kJ") == "−285.830"
    assert pages.fixed(-0.0001, "kJ") == "0.000"
    assert pages.fixed(float("nan"), "kJ") == "—"
    assert pages.fixed(None, "J") == "—"
    assert pages.scientific(float("inf")) == "—"
    assert pages.scientific(0.0) == "—"  # K underflowed: log10 K is shown instead
    assert pages.scientific(1.08e-23) == "1.08 × 10⁻²³"
    assert pages.signed_number(-0.5) == "−1/2"
    assert pages.uncertainty(0.04, "kJ") == "± 0.040"


def test_column_formatting() -> None:
    import numpy as np

    values = [-285.83, -0.0001, 0.0, -0.0, 1e-9, float("nan"), float("inf"), None, 12.3456789,
              -1e6, 0.0005, -0.0005, 3]
    # Written out by hand: three decimals, U+2212 minus, no minus on a rounded zero, "—".
    assert pages.fixed_all(values, "kJ") == [
        "−285.830", "0.000", "0.000", "0.000", "0.000", "—", "—", "—", "12.346", "−1000000.000",
        "0.001", "−0.001", "3.000"]
    assert pages.fixed_all(values, "T") == [
        "−285.83", "0.00", "0.00", "0.00", "0.00", "—", "—", "—", "12.35", "−1000000.00",
        "0.00", "0.00", "3.00"]
    arr = np.array([v for v in values if v is not None], dtype=float)
    assert pages.fixed_all(arr, "kJ") == pages.fixed_all(arr.tolist(), "kJ")


def test_number_cells_escape_like_the_template_would() -> None:
    from markupsafe import Markup, escape

    from generator.site.assets import num_cells

    def one_by_one(cells) -> str:
        return "".join(f'<td class="num">{escape(c)}</td>' for c in cells)

    for cells in (["1.000", "−2.5", "—"], ['a<b & "c"', "x'y"], [Markup("<sub>2</sub>"), "<"],
                  ["\x1f<", "b"], []):
        assert str(num_cells(cells)) == one_by_one(cells), cells
        assert isinstance(num_cells(cells), Markup)


def test_template_escape_is_markupsafe_escape() -> None:
    from markupsafe import Markup, escape

    from generator.site.assets import template_escape

    class Html:
        def __html__(self) -> str:
            return "<i>ok</i>"

    class Text(str):
        pass

    for value in ('a<b & "c"', "x'y", "", "−2.5 ΔfH°", 3, -7, 2.5, float("nan"), True, None,
                  Markup("<sub>2</sub>"), Html(), Text("<t>"), ("<", 1)):
        got, want = template_escape(value), escape(value)
        assert type(got) is Markup and got == want, value


def test_compiled_templates_escape_with_template_escape(tmp_path: Path) -> None:
    """Every printed value goes through template_escape, and a page renders exactly as with
    jinja2's own code generator and markupsafe's escape."""
    import jinja2
    from markupsafe import Markup

    from generator.site import assets

    source = ('{% macro m(x) %}<b>{{ x }}</b>{% endmacro %}<p>{{ a }}|{{ b }}|{{ m(c) }}|'
              '{% for v in d %}{{ v }};{% endfor %}{% set s %}{{ a }}{% endset %}{{ s }}</p>')
    (tmp_path / "t.html").write_text(source, encoding="utf-8")
    ours = assets.environment(tmp_path)
    plain = jinja2.Environment(loader=jinja2.FileSystemLoader(str(tmp_path)), autoescape=True)
    values = {"a": "<&>", "b": 1.5, "c": Markup("<br>"), "d": ["'", 2, None]}
    assert ours.get_template("t.html").render(**values) == \
        plain.get_template("t.html").render(**values)
    code = ours.compile(source, raw=True)
    assert code.rstrip().endswith("import template_escape as escape")
    compiled = tmp_path / "compiled"
    cached = assets.shared_environment(tmp_path, str(compiled))
    assert cached.get_template("t.html").root_render_func.__globals__["escape"] is \
        assets.template_escape
    assert [p.name for p in compiled.iterdir()] and all(
        assets.COMPILED_FORM in p.name for p in compiled.iterdir())

def test_refuses_non_empty_unmarked_folder(tmp_path: Path, capsys) -> None:
    out = tmp_path / "precious"
    out.mkdir()
    (out / "thesis.txt").write_text("keep me")
    assert build(MINI, out) == 1
    assert "refusing" in capsys.readouterr().err
    assert tree(out) == {"thesis.txt": b"keep me"}
    assert sorted(p.name for p in tmp_path.iterdir()) == ["precious"]


def test_failed_build_leaves_previous_site_intact(tmp_path: Path, monkeypatch) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    out = tmp_path / "out"
    assert build(MINI, out) == 0
    before = tree(out)

    def boom(*_a, **_k):
        raise RuntimeError("renderer exploded")

    monkeypatch.setattr(publish_mod, "render_pages", boom)
    assert build(MINI, out) == 3  # internal error, reported by the CLI
    assert tree(out) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]
    with pytest.raises(ValueError):  # a failure half-way through writing
        output.write_site(out, {"a.html": b"x", "../escape.html": b"y"})
    assert tree(out) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_a_site_staged_in_parts_is_the_site_written_at_once(tmp_path: Path) -> None:
    """output.Staging: files added in several parts (a chart linked from a file holding its
    bytes) give the folder write_site gives; a path added twice is refused."""
    first = {"index.html": b"<p>1</p>", "species/a.html": b"a", "charts/c.svg": b"<svg/>"}
    output.write_site(tmp_path / "once", first)
    held = tmp_path / "entry.svg"
    held.write_bytes(b"<svg/>")
    staging = output.Staging(tmp_path / "parts")
    staging.add({"species/a.html": b"a"})
    staging.add({"index.html": b"<p>1</p>", "charts/c.svg": b"<svg/>"},
                {"charts/c.svg": str(held)})
    with pytest.raises(ValueError, match="already part"):
        staging.add({"index.html": b"again"})
    result = staging.commit()
    assert result.swapped and result.rewritten == 4 and result.kept == 0  # with the marker
    assert tree(tmp_path / "parts") == tree(tmp_path / "once")
    assert (tmp_path / "parts" / "charts" / "c.svg").stat().st_ino == held.stat().st_ino
    assert sorted(p.name for p in tmp_path.iterdir()) == ["entry.svg", "once", "parts"]


def test_files_placed_by_a_forked_process_are_part_of_the_site(tmp_path: Path) -> None:
    """output.Staging.open/place/placed: a process forked after open() puts files into the
    new tree and hands back only where they went; the parent commits the same folder
    write_site makes, an unchanged file kept as the previous site's (its inode and time)."""
    import multiprocessing

    if "fork" not in multiprocessing.get_all_start_methods():
        pytest.skip("the platform cannot fork")
    out = tmp_path / "out"
    output.write_site(out, {"index.html": b"<p>1</p>", "species/a.html": b"a"})
    old = (out / "species" / "a.html").stat()
    new = {"index.html": b"<p>2</p>", "species/a.html": b"a", "species/b.html": b"b"}
    output.write_site(tmp_path / "once", new)
    staging = output.Staging(out)
    staging.open()
    with multiprocessing.get_context("fork").Pool(1) as pool:
        placements = pool.apply(staging.place, ({k: new[k] for k in ("species/a.html",
                                                                     "species/b.html")},))
    assert [(rel, kept) for rel, kept, _state in placements] == [("species/a.html", True),
                                                                ("species/b.html", False)]
    staging.placed(placements)
    staging.add({"index.html": new["index.html"]})
    with pytest.raises(ValueError, match="already part"):
        staging.placed(placements)
    result = staging.commit()
    assert result.swapped and result.kept == 2 and result.rewritten == 2  # with the marker
    assert tree(out) == tree(tmp_path / "once")
    kept = (out / "species" / "a.html").stat()
    assert (kept.st_ino, kept.st_mtime_ns) == (old.st_ino, old.st_mtime_ns)
    assert result.state == {str(p.relative_to(out)): [p.stat().st_size, p.stat().st_mtime_ns,
                                                      p.stat().st_ino]
                            for p in out.rglob("*") if p.is_file()}
    staging = output.Staging(out)  # an open folder that receives nothing new
    staging.open()
    staging.placed(staging.place(new))
    assert not staging.commit().swapped
    assert sorted(p.name for p in tmp_path.iterdir()) == ["once", "out"]


def test_shared_placement_creates_each_path_once(tmp_path: Path) -> None:
    """Paths several workers may place (content-addressed charts) are created exclusively:
    the second placement of a path changes nothing and is left out of its result, so the
    committing process claims each file once; linked from a source when one is given."""
    out = tmp_path / "out"
    entry = tmp_path / "entry.svg"
    entry.write_bytes(b"<svg>1</svg>")
    os.chmod(entry, output._new_file_mode())  # a link needs a written file's permissions
    staging = output.Staging(out)
    staging.open()
    first = staging.place({"charts/a.svg": b"<svg>1</svg>"}, {"charts/a.svg": str(entry)},
                          shared=True)
    again = staging.place({"charts/a.svg": b"<svg>X</svg>", "charts/b.svg": b"<svg>2</svg>"},
                          shared=True)
    assert [rel for rel, _kept, _state in first] == ["charts/a.svg"]
    assert [rel for rel, _kept, _state in again] == ["charts/b.svg"]
    staging.placed(first + again)
    staging.commit()
    assert (out / "charts" / "a.svg").read_bytes() == b"<svg>1</svg>"
    assert (out / "charts" / "a.svg").stat().st_ino == entry.stat().st_ino


def test_staging_touches_nothing_until_a_file_differs(tmp_path: Path) -> None:
    """No temporary folder while every file equals the previous site's; an abort leaves the
    previous site as it was and no folder behind; a file gone from the site is a change."""
    out = tmp_path / "out"
    files = {"index.html": b"<p>1</p>", "species/a.html": b"a"}
    output.write_site(out, files)
    before = tree(out)
    mtimes = {p: (out / p).stat().st_mtime_ns for p in before}
    staging = output.Staging(out)
    staging.add(files)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]  # nothing made yet
    assert staging.commit() == output.WriteResult(rewritten=0, kept=3, removed=0,
                                                  swapped=False)
    staging = output.Staging(out)
    staging.add({"index.html": b"<p>2</p>"})
    assert len(list(tmp_path.iterdir())) == 2  # the new tree, beside the output
    staging.abort()
    assert tree(out) == before and sorted(p.name for p in tmp_path.iterdir()) == ["out"]
    assert {p: (out / p).stat().st_mtime_ns for p in before} == mtimes
    staging = output.Staging(out)
    staging.add({"index.html": b"<p>1</p>"})  # species/a.html is no longer part of it
    result = staging.commit()
    assert result.swapped and result.removed == 1 and result.rewritten == 0
    assert tree(out) == {"index.html": b"<p>1</p>", output.MARKER: output.MARKER_TEXT}
    assert (out / "index.html").stat().st_mtime_ns == mtimes["index.html"]  # kept, linked


def test_rebuild_replaces_marked_site(tmp_path: Path, monkeypatch) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    out = tmp_path / "out"
    assert build(MINI, out) == 0
    (out / "stale.html").write_text("old")
    assert build(MINI, out) == 0
    assert not (out / "stale.html").exists() and (out / output.MARKER).is_file()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_two_builds_are_byte_identical(site: Path, tmp_path: Path, monkeypatch) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    again = tmp_path / "again"
    assert build(DEMO, again) == 0
    first, second = tree(site), tree(again)
    assert first.keys() == second.keys()
    assert [k for k in first if first[k] != second[k]] == []


def test_sheets_rendered_by_worker_processes_are_byte_identical(site: Path, tmp_path: Path,
                                                               monkeypatch) -> None:
    """The demo has fewer items than the parallel thresholds; forcing the workers on for the
    reactions, their design numbers and the sheets must not change a byte (the module
    fixture built it in one process)."""
    import multiprocessing

    if "fork" not in multiprocessing.get_all_start_methods():
        pytest.skip("the platform cannot fork; sheets are always rendered in one process")
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    from generator import parallel

    monkeypatch.setattr(parallel, "MIN_ITEMS", 1)  # reactions, design numbers and sheets
    import os

    pids = tmp_path / "pids"
    pids.mkdir()
    real = publish_mod.render_items

    def spy(*args):
        import time

        (pids / str(os.getpid())).touch()
        time.sleep(0.02)  # so that the forked worker surely takes some of the sheets
        return real(*args)

    monkeypatch.setattr(publish_mod, "render_items", spy)
    again = tmp_path / "forked"
    assert build(DEMO, again, "-j", "2", "--no-cache") == 0
    workers = {int(p.name) for p in pids.iterdir()}
    # this process renders sheets too, beside the worker (parallel.fork_map)
    assert workers - {os.getpid()}  # some sheets really left this process
    first, second = tree(site), tree(again)
    assert first.keys() == second.keys()
    assert [k for k in first if first[k] != second[k]] == []


def test_build_date_falls_back_to_newest_source(tmp_path: Path, monkeypatch) -> None:
    import os

    monkeypatch.delenv("SOURCE_DATE_EPOCH", raising=False)
    src = tmp_path / "hb"
    src.mkdir()
    (src / "a.yaml").write_text("x")
    os.utime(src / "a.yaml", (0, 1700000000))  # 2023-11-14T22:13:20Z
    assert publish_mod.build_date(src) == "2023-11-14"
    assert publish_mod.source_revision(src) == publish_mod.NOT_IN_GIT


def test_real_charts_are_drawn_and_linked(tmp_path: Path, monkeypatch) -> None:
    """Draws real SVGs (matplotlib) for a one-chart plan on the small fixture handbook."""
    from collections import namedtuple

    from generator.charts import LineChartSpec, Series

    Entry = namedtuple("Entry", "name caption spec")
    spec = LineChartSpec(title="H2O(g): Cp°(T)", description="Cp of water vapour rises with T.",
                         x_label="T / K", y_label="Cp° / (J/(mol·K))",
                         series=(Series("Cp°", (300.0, 600.0, 900.0), (33.6, 36.3, 40.0)),))
    monkeypatch.setattr(publish_mod, "render_many", REAL_RENDER_MANY)
    monkeypatch.setattr(publish_mod, "chart_entries",
                        lambda computed, keys=None: {
                            "species:water-gas": [Entry("cp", "Cp° of H₂O(g)", spec)]})
    monkeypatch.setattr(publish_mod, "handbook_chart_entries", lambda computed: {})
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    out = tmp_path / "out"
    assert build(MINI, out) == 0
    svgs = list((out / "charts").glob("*.svg"))
    assert len(svgs) == 1 and re.fullmatch(r"[0-9a-f]{16}\.svg", svgs[0].name)
    assert svgs[0].read_bytes().lstrip().startswith((b"<?xml", b"<svg"))
    page = (out / "species" / "water-gas.html").read_text(encoding="utf-8")
    assert f'<img src="../charts/{svgs[0].name}" alt="Cp of water vapour rises with T.">' in page
    assert "<figcaption>Cp° of H₂O(g)</figcaption>" in page
    first = svgs[0].read_bytes()
    assert build(MINI, out) == 0  # the second build reuses the drawn chart
    assert (out / "charts" / svgs[0].name).read_bytes() == first


def test_dict_attribute_lookup_keeps_jinja_semantics() -> None:
    from generator.site.assets import environment

    env = environment()
    template = env.from_string("{{ d.a }}|{{ d.items is defined }}|{{ o.real }}|{{ d['b'] }}")
    assert template.render(d={"a": "<x>", "b": 2}, o=3) == "&lt;x&gt;|True|3|2"
    # a key named like a dict method still gives the method, as jinja2 itself does
    assert env.from_string("{{ d.keys is callable }}").render(d={"keys": 1}) == "True"
    import jinja2

    with pytest.raises(jinja2.UndefinedError, match="no attribute 'missing'"):
        env.from_string("{{ d.missing }}").render(d={})
