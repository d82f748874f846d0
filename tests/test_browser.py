"""End-to-end tests of the built demo site in a real Chromium (Debian's ``chromium`` package,
driven by Playwright; never a downloaded browser).

The demo is built once for the module (real charts) into ``<tmp>/sub/site`` and opened both
from disk (file://) and from a loopback HTTP server that serves ``<tmp>`` so the site lives
under the sub-path ``/sub/site/``.  Every request a page makes is checked: any that would
leave the page's own origin is aborted and fails the test, as does any console error (a
Content-Security-Policy refusal included).  Without chromium the module skips, unless
THERMOFOLIO_REQUIRE_BROWSER is set (CI), where it fails.
"""

from __future__ import annotations

import functools
import os
import re
import shutil
import subprocess
import sys
import threading
from http.server import SimpleHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path

import pytest

pytestmark = pytest.mark.browser

REPO = Path(__file__).resolve().parents[1]
EPOCH = "1767225600"  # 2026-01-01T00:00:00Z, an arbitrary fixed build date
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]
# A4 is 210 mm wide; print.css sets 15 mm margins, leaving 180 mm = 680 CSS px at 96 px/in.
PRINTABLE_PX = 180 / 25.4 * 96
AXE_PAGES = ["index.html", "species.html", "species/carbon-dioxide.html",
             "reactions/lime-burning.html", "audit.html", "conventions.html"]


def _unavailable(reason: str):
    if os.environ.get("THERMOFOLIO_REQUIRE_BROWSER"):
        pytest.fail(f"{reason} (THERMOFOLIO_REQUIRE_BROWSER is set)", pytrace=False)
    pytest.skip(reason)


@pytest.fixture(scope="module")
def browser():
    executable = shutil.which("chromium")
    if executable is None:
        _unavailable("chromium is not installed (apt-get install chromium)")
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        _unavailable("the playwright package is not installed (pip install playwright)")
    with sync_playwright() as pw:
        b = pw.chromium.launch(executable_path=executable, args=CHROMIUM_ARGS)
        yield b
        b.close()


@pytest.fixture(scope="module")
def site(browser, tmp_path_factory) -> Path:
    """The demo handbook built with real charts (a fresh chart cache) into <tmp>/sub/site."""
    root = tmp_path_factory.mktemp("served")
    out = root / "sub" / "site"
    done = subprocess.run(
        [sys.executable, "-m", "generator", "build", str(REPO / "sources"), "-o", str(out),
         "-q", "--cache", str(root / "chart-cache")],
        cwd=REPO, env=dict(os.environ, SOURCE_DATE_EPOCH=EPOCH), capture_output=True,
        text=True, timeout=900)
    assert done.returncode == 0, done.stderr
    return out


class _Quiet(SimpleHTTPRequestHandler):
    def log_message(self, format, *args):  # noqa: A002 - the base class's signature
        pass


@pytest.fixture(scope="module")
def server(site: Path):
    """http://127.0.0.1:PORT serving the site's grandparent, so the site is at /sub/site/."""
    handler = functools.partial(_Quiet, directory=str(site.parent.parent))
    httpd = ThreadingHTTPServer(("127.0.0.1", 0), handler)
    thread = threading.Thread(target=httpd.serve_forever, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{httpd.server_address[1]}"
    httpd.shutdown()
    httpd.server_close()


class Tab:
    """A page in a fresh browser context that records outside requests and errors."""

    def __init__(self, browser, base: str, origin: str) -> None:
        self.base, self.origin = base, origin
        self.outside: list[str] = []
        self.errors: list[str] = []
        self.context = browser.new_context()
        self.context.route("**/*", self._route)
        self.page = self.context.new_page()
        self.page.on("request", self._request)
        self.page.on("console", lambda m: m.type == "error" and self.errors.append(m.text))
        self.page.on("pageerror", lambda e: self.errors.append(str(e)))
        self.page.on("response", self._response)

    def _allowed(self, url: str) -> bool:
        if url.startswith("data:") or url == "about:blank":
            return True
        return url.startswith(self.origin)

    def _request(self, request) -> None:
        if not self._allowed(request.url):
            self.outside.append(request.url)

    def _route(self, route) -> None:
        if self._allowed(route.request.url):
            route.continue_()
        else:
            self.outside.append(route.request.url)
            route.abort()

    def _response(self, response) -> None:
        if response.status >= 400:
            self.errors.append(f"HTTP {response.status} for {response.url}")

    def open(self, rel: str):
        self.page.goto(self.base + rel)
        self.page.wait_for_load_state("load")
        return self.page

    def assert_clean(self) -> None:
        assert sorted(set(self.outside)) == [], "requests left the page's origin"
        assert self.errors == [], "console errors"


@pytest.fixture(params=["file", "http"])
def tab(request, browser, site: Path):
    if request.param == "file":
        base = site.as_uri() + "/"
        t = Tab(browser, base, "file://")
    else:
        origin = request.getfixturevalue("server")
        t = Tab(browser, f"{origin}/sub/site/", origin + "/")
    yield t
    t.context.close()


@pytest.fixture
def disk_tab(browser, site: Path):
    t = Tab(browser, site.as_uri() + "/", "file://")
    yield t
    t.context.close()


# --- the request guard itself ----------------------------------------------------------------


def test_the_guard_catches_an_outside_request(disk_tab: Tab) -> None:
    """A navigation to a documentation address (TEST-NET-2, RFC 5737) is aborted and recorded,
    so an empty record elsewhere means something."""
    with pytest.raises(Exception, match="ERR_FAILED|ERR_"):
        disk_tab.page.goto("http://198.51.100.7/leak.png")
    assert set(disk_tab.outside) == {"http://198.51.100.7/leak.png"}


# --- search ----------------------------------------------------------------------------------


@pytest.mark.parametrize("start", ["index.html", "search.html"])
@pytest.mark.parametrize("query", ["co2", "CO2", "carbon dioxide"])
def test_search_finds_carbon_dioxide_and_opens_it(tab: Tab, start: str, query: str) -> None:
    page = tab.open(start)
    box = page.locator("#q")
    box.click()
    box.press_sequentially(query)
    first = page.locator("#search-results li a").first
    first.wait_for()
    assert first.get_attribute("href") == "species/carbon-dioxide.html"
    assert first.inner_text() == "carbon dioxide"
    status = page.locator("#search-status").inner_text()
    if status.startswith("1 match"):
        box.press("Enter")  # a single hit opens on Enter
    else:
        first.click()
    page.wait_for_url(re.compile(r"/species/carbon-dioxide\.html$"))
    assert "carbon dioxide" in page.locator("h1").inner_text().lower()
    tab.assert_clean()


def test_search_with_no_match_says_so(disk_tab: Tab) -> None:
    page = disk_tab.open("search.html")
    page.locator("#q").press_sequentially("unobtainium")
    assert page.locator("#search-status").inner_text() == "No match."
    assert page.locator("#search-results li").count() == 0
    disk_tab.assert_clean()


# --- sorting ---------------------------------------------------------------------------------


def _column(page, index: int) -> list[str]:
    return page.eval_on_selector_all(
        "table.sortable tbody tr",
        f"rows => rows.map(r => {{ const c = r.cells[{index}]; "
        "const s = c.getAttribute('data-sort'); return s === null ? c.textContent.trim() : s; })")


def _numbers(values: list[str]) -> list[float]:
    out = []
    for v in values:
        try:
            out.append(float(v.replace("−", "-")))
        except ValueError:
            pass
    return out


@pytest.mark.parametrize("index_page", ["species.html", "reactions.html"])
def test_sorting_an_index_reorders_its_rows(tab: Tab, index_page: str) -> None:
    page = tab.open(index_page)
    headers = page.locator("table.sortable thead th")
    kinds = [headers.nth(i).get_attribute("data-type") for i in range(headers.count())]
    rows_before = page.locator("table.sortable tbody tr").count()
    assert rows_before >= 10

    num = kinds.index("number")
    button = headers.nth(num).locator("button")
    button.click()
    assert headers.nth(num).get_attribute("aria-sort") == "ascending"
    values = _numbers(_column(page, num))
    assert len(values) >= 5 and values == sorted(values)
    button.click()
    assert headers.nth(num).get_attribute("aria-sort") == "descending"
    values = _numbers(_column(page, num))
    assert values == sorted(values, reverse=True)

    text = kinds.index("text")
    headers.nth(text).locator("button").click()
    assert headers.nth(text).get_attribute("aria-sort") == "ascending"
    assert headers.nth(num).get_attribute("aria-sort") == "none"
    names = [v.lower() for v in _column(page, text)]
    assert names == sorted(names)
    assert page.locator("table.sortable tbody tr").count() == rows_before
    tab.assert_clean()


# --- every page: origin, errors, charts ----------------------------------------------------


def _images(page) -> list[dict]:
    return page.eval_on_selector_all(
        "img", "imgs => imgs.map(i => ({src: i.getAttribute('src'), ok: i.complete, "
        "w: i.naturalWidth, h: i.naturalHeight, alt: i.alt}))")


def test_every_page_loads_within_its_origin_and_every_chart_renders(tab: Tab,
                                                                   site: Path) -> None:
    """Every page, from disk and over HTTP under /sub/site/: nothing requested outside the
    page's origin, no console error or failed response, and every <img> (the charts) decoded
    with a non-zero size and an alt text; together the sheets show every chart drawn."""
    pages = sorted(str(p.relative_to(site)) for p in site.rglob("*.html"))
    assert len(pages) >= 60
    seen: set[str] = set()
    for rel in pages:
        images = _images(tab.open(rel))
        if rel.startswith(("species/", "reactions/")):
            assert images, f"{rel} shows no chart"
        for img in images:
            assert img["ok"] and img["w"] > 0 and img["h"] > 0, (rel, img["src"])
            assert img["alt"].strip(), (rel, img["src"])
            seen.add(img["src"].rpartition("/")[2])
    assert seen == {p.name for p in (site / "charts").glob("*.svg")}
    tab.assert_clean()


# --- print -----------------------------------------------------------------------------------


@pytest.mark.parametrize("sheet", ["species/carbon-dioxide.html", "reactions/lime-burning.html",
                                   "species/water-liquid.html", "species.html"])
def test_print_view_fits_an_a4_page(disk_tab: Tab, sheet: str) -> None:
    page = disk_tab.page
    page.set_viewport_size({"width": int(PRINTABLE_PX), "height": 1000})
    page.emulate_media(media="print")
    disk_tab.open(sheet)
    widths = page.evaluate(
        "() => { const d = document.documentElement; let right = 0, who = '';"
        " for (const e of document.body.querySelectorAll('*')) {"
        "   const r = e.getBoundingClientRect();"
        "   if (r.width > 0 && r.right > right) { right = r.right; who = e.tagName + '.' +"
        "     e.className; } }"
        " return {scroll: d.scrollWidth, client: d.clientWidth, right: right, who: who,"
        "  nav: getComputedStyle(document.querySelector('.sitenav')).display,"
        "  footer: getComputedStyle(document.querySelector('.print-footer')).display}; }")
    assert widths["scroll"] <= widths["client"], widths
    assert widths["right"] <= PRINTABLE_PX + 1, widths
    assert widths["nav"] == "none" and widths["footer"] == "block"
    pdf = page.pdf(format="A4")
    n_pages = len(re.findall(rb"/Type\s*/Page(?!s)", pdf))
    assert 1 <= n_pages <= 12, n_pages
    disk_tab.assert_clean()


# --- accessibility ---------------------------------------------------------------------------


@pytest.fixture(scope="module")
def axe():
    try:
        from axe_playwright_python.sync_playwright import Axe
    except ImportError:
        _unavailable("axe-playwright-python is not installed (it bundles axe-core)")
    return Axe()


@pytest.mark.parametrize("rel", AXE_PAGES)
def test_accessibility_has_no_serious_violations(disk_tab: Tab, axe, rel: str) -> None:
    """axe-core (bundled by axe-playwright-python, no download) on the main page types;
    "preload": False stops axe re-reading the style sheets, which the page's CSP forbids."""
    page = disk_tab.open(rel)
    result = axe.run(page, options={"resultTypes": ["violations"], "preload": False})
    bad = [(v["id"], v["impact"], [n["target"] for n in v["nodes"]][:5])
           for v in result.response["violations"] if v["impact"] in ("serious", "critical")]
    assert bad == [], result.generate_report()
    disk_tab.assert_clean()
