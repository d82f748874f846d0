"""Provenance on the site: several sources per value with their spread, review coverage
("changed since", stale), source history from git, the network's reconciled ΔfH°, the
completed audit page, ``build --since REV`` and the build manifest.

The handbook is tests/fixtures/mini with the overlay below, committed in a git repository
made in a temporary folder; charts are drawn by a stand-in.
"""

from __future__ import annotations

import hashlib
import html
import importlib
import json
import os
import re
import subprocess
from pathlib import Path

import pytest

from conftest import assemble
from generator.cli import main

publish_mod = importlib.import_module("generator.site.publish")
EPOCH = "1767225600"  # 2026-01-01T00:00:00Z, an arbitrary fixed build date
GIT_ENV = {"GIT_AUTHOR_NAME": "Ada Tester", "GIT_AUTHOR_EMAIL": "ada@example.invalid",
           "GIT_COMMITTER_NAME": "Ada Tester", "GIT_COMMITTER_EMAIL": "ada@example.invalid",
           "GIT_AUTHOR_DATE": "2025-12-01T10:00:00Z",
           "GIT_COMMITTER_DATE": "2025-12-01T10:00:00Z",
           "GIT_CONFIG_GLOBAL": os.devnull, "GIT_CONFIG_NOSYSTEM": "1"}

TEST_LAB = """- key: test-lab
  citation: An invented laboratory report (test fixture).
  kind: measurement
"""
# Two values of ΔfH°(H2O, g): −241.826 ± 0.040 (CODATA 1989) and an invented −240.0 ± 0.5,
# 1.826 apart, beyond u_c = sqrt(0.040² + 0.5²) = 0.502 kJ/mol: disputed (hand calculation).
# The review records a digest that is not the content's and a date far beyond 365 days.
WATER_GAS = """ref: codata-1989
id: water-gas
formula: H2O
phase: g
name: water vapour
standard:
  dfH:
    - "-241.826 ± 0.040 kJ/mol"
    - {value: -240.0, unc: 0.5, unit: kJ/mol, ref: test-lab}
  S: "188.835 ± 0.010 J/(mol*K)"
cp:
  - constant: 33.6
    T: [298.15, 1500]
review:
  status: approved
  by: J. Doe
  date: "2020-01-02"
  digest: "0000000000000000"
"""
WATER_LIQUID = """ref: codata-1989
id: water-liquid
formula: H2O
phase: l
name: water
standard:
  dfH: "-285.830 ± 0.040 kJ/mol"
  S: "69.95 ± 0.03 J/(mol*K)"
cp:
  - constant: 75.3
    T: [273.15, 373.15]
review: {status: draft, note: "entered from memory; awaits checking against the printed source"}
"""
# Measured ΔrH° of 2 H2 + O2 -> 2 H2O(g), −482.9 ± 0.3 kJ/mol (invented): the weighted mean
# of the three observations of ΔfH°(H2O, g) is about −241.79 kJ/mol, so the measured value
# is about (−482.9 + 483.58)/0.3 ≈ 2.3 u off (the warning band) and the invented
# −240.0 ± 0.5 about 1.79/0.5 ≈ 3.6 u off (the error band) (hand calculation).
BURNING = """ref: codata-1989
id: burning
name: Hydrogen burning to vapour
equation: "2 H2(g) + O2(g) -> 2 H2O(g)"
measured:
  - {quantity: drH, value: -482.9, unc: 0.3, unit: kJ/mol, T: 298.15, ref: test-lab}
"""


def fake_render_many(specs, jobs=1):
    """A deterministic stand-in for the chart drawer: one tiny SVG per spec."""
    return [(f'<svg xmlns="http://www.w3.org/2000/svg"><title>'
             f'{hashlib.sha256(s.to_canonical_json().encode()).hexdigest()[:8]}</title></svg>'
             ).encode() for s in specs]


def git(repo: Path, *args: str) -> str:
    done = subprocess.run(["git", "-C", str(repo), *args], capture_output=True, text=True,
                          env={**os.environ, **GIT_ENV}, check=True)
    return done.stdout


def make_handbook(root: Path) -> Path:
    assemble(root)
    refs = root / "references.yaml"
    refs.write_text(refs.read_text(encoding="utf-8") + TEST_LAB, encoding="utf-8")
    (root / "species" / "water-gas.yaml").write_text(WATER_GAS, encoding="utf-8")
    (root / "species" / "water-liquid.yaml").write_text(WATER_LIQUID, encoding="utf-8")
    (root / "reactions" / "burning.yaml").write_text(BURNING, encoding="utf-8")
    return root


def build(sources: Path, out: Path, *extra: str) -> int:
    return main(["build", str(sources), "-o", str(out), "-q", "--no-cache", *extra])


@pytest.fixture(scope="module")
def repo(tmp_path_factory) -> Path:
    """A git repository holding the handbook under hb/: two commits, then a working-tree
    edit (ΔfH° of water, liquid, from −285.830 to −285.000 kJ/mol, invented)."""
    top = tmp_path_factory.mktemp("repo")
    hb = make_handbook(top / "hb")
    git(top, "init", "-q")
    git(top, "add", ".")
    git(top, "commit", "-q", "-m", "First edition of the test handbook")
    path = hb / "species" / "water-gas.yaml"
    path.write_text(path.read_text(encoding="utf-8").replace("name: water vapour",
                                                             "name: steam"), encoding="utf-8")
    git(top, "commit", "-q", "-am", "Rename water vapour to steam")
    liquid = hb / "species" / "water-liquid.yaml"
    liquid.write_text(liquid.read_text(encoding="utf-8").replace("-285.830", "-285.000"),
                      encoding="utf-8")
    return hb


@pytest.fixture(scope="module")
def site(repo: Path, tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("prov-site") / "out"
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("SOURCE_DATE_EPOCH", EPOCH)
        for k, v in GIT_ENV.items():
            mp.setenv(k, v)
        mp.setattr(publish_mod, "render_many", fake_render_many)
        assert build(repo, out, "--since", "HEAD") == 0
    return out


def text_of(path: Path) -> str:
    s = path.read_text(encoding="utf-8")
    s = re.sub(r"<script.*?</script>", "", s, flags=re.S)
    return " ".join(html.unescape(re.sub(r"<[^>]+>", " ", s)).split())


def section(page: Path, anchor: str) -> str:
    """The visible text of the <section id=anchor> of a page."""
    s = page.read_text(encoding="utf-8")
    m = re.search(rf'<section id="{anchor}">(.*?)</section>', s, flags=re.S)
    assert m, anchor
    return " ".join(html.unescape(re.sub(r"<[^>]+>", " ", m.group(1))).split())


def test_several_sources_spread_and_rule(site: Path) -> None:
    page = site / "species" / "water-gas.html"
    ids = page.read_text(encoding="utf-8")
    assert 'id="std-dfH"' in ids and 'id="std-dfH-2"' in ids  # both values shown
    assert 'class="value-used"' in ids and 'class="value-alternative"' in ids
    spreads = section(page, "spreads")
    # max − min = 1.826, u_c = 0.502 kJ/mol (hand calculation, see WATER_GAS)
    assert "1.826" in spreads and "0.502" in spreads and "disputed" in spreads
    assert "smallest stated uncertainty" in spreads  # the rule that picked CODATA's value
    assert "codata-1989" in spreads


def test_review_changed_since_and_stale(site: Path) -> None:
    page = site / "species" / "water-gas.html"
    review = section(page, "review")
    assert "approved 2020-01-02 by J. Doe; changed since" in review
    assert "Changed since review" in review and "Stale review" in review
    assert "older than the 365-day review interval" in review  # the default interval
    band = text_of(page)
    assert "changed since the review" in band and "stale review" in band


def test_history_from_git(site: Path) -> None:
    history = section(site / "species" / "water-gas.html", "history")
    assert "species/water-gas.yaml" in history
    assert "Rename water vapour to steam" in history
    assert "First edition of the test handbook" in history
    assert "Ada Tester" in history and "2025-12-01" in history
    assert history.index("Rename") < history.index("First edition")  # newest first
    only_first = section(site / "reactions" / "burning.html", "history")
    assert "First edition" in only_first and "Rename" not in only_first


def test_no_history_outside_git(tmp_path: Path, monkeypatch) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    monkeypatch.setenv("GIT_CEILING_DIRECTORIES", str(tmp_path))
    monkeypatch.setattr(publish_mod, "render_many", fake_render_many)
    hb = make_handbook(tmp_path / "hb")
    out = tmp_path / "out"
    assert build(hb, out) == 0
    history = section(out / "species" / "water-gas.html", "history")
    assert "not under version control" in history
    assert not (out / "changes.html").exists()
    assert 'href="changes.html"' not in (out / "index.html").read_text(encoding="utf-8")


def test_network_value_beside_the_cited_one(site: Path) -> None:
    page = site / "species" / "water-gas.html"
    std = section(page, "standard")
    assert "−241.826" in std  # the cited value stays in the table
    net = section(page, "network")
    assert "Cited Δ f H° (used) −241.826 ± 0.040 kJ/mol" in net
    assert "Reconciled Δ f H°" in net and "Normalised residual" in net
    html_text = page.read_text(encoding="utf-8")
    assert 'class="band-error"' in html_text  # the invented −240.0 ± 0.5, ≈ 3.6 u off


def test_audit_lists_network_outliers_in_bands(site: Path) -> None:
    page = (site / "audit.html").read_text(encoding="utf-8")
    m = re.search(r'<section id="network">(.*?)</section>', page, flags=re.S)
    net = m.group(1)
    errors = re.findall(r'class="finding sev-error band-error">(.*?)</li>', net, flags=re.S)
    warns = re.findall(r'class="finding sev-warning band-warning">(.*?)</li>', net, flags=re.S)
    assert any("test-lab" in e and "water-gas.html#network" in e for e in errors)
    assert any("burning.html#network" in w for w in warns)
    assert "more than 3 u" in errors[0] and all("more than 2 u" in w for w in warns)


def test_audit_completeness_memory_and_uncited(site: Path) -> None:
    audit = site / "audit.html"
    comp = section(audit, "completeness")
    # 4 species × 2 standard values + 1 extra ΔfH° of water vapour + 1 measured ΔrH° = 10
    # values, all with a reference and an uncertainty except ΔfH° = 0 of H2 and O2
    # (fixture files; counted by hand)
    assert "values with a reference 10 of 10 100.0 %" in comp
    assert "values with an uncertainty 8 of 10 80.0 %" in comp
    assert "values still covered by their review" in comp
    memory = audit.read_text(encoding="utf-8")
    assert 'href="species/water-liquid.html#std-dfH"' in memory
    uncited = section(audit, "uncited")
    assert "old-atm" in uncited
    assert 'href="references/old-atm.html"' in audit.read_text(encoding="utf-8")
    coverage = section(audit, "review-coverage")
    assert "water-gas" in coverage and "changed since" in coverage and "stale" in coverage
    assert "Errors" in text_of(audit) and "Warnings" in text_of(audit)


def test_changes_since_revision(site: Path) -> None:
    page = site / "changes.html"
    assert 'href="changes.html"' in (site / "index.html").read_text(encoding="utf-8")
    assert 'href="changes.html"' in (site / "audit.html").read_text(encoding="utf-8")
    text = text_of(page)
    assert "Changes since HEAD" in text and "water-liquid" in text and "changed" in text
    assert "-285.830" in text and "-285.000" in text  # old → new as written
    derived = section(page, "derived")
    # ΔrH° of vaporisation moves by −(−285.000 − −285.830) = −0.830 kJ/mol (hand calculation)
    assert "Vaporisation of water" in derived and "−0.830" in derived
    assert 'href="reactions/vaporisation.html"' in page.read_text(encoding="utf-8")


def test_bad_revision_is_a_clean_error(repo: Path, tmp_path: Path, capsys,
                                       monkeypatch) -> None:
    monkeypatch.setattr(publish_mod, "render_many", fake_render_many)
    out = tmp_path / "out"
    code = build(repo, out, "--since", "no-such-revision")
    err = capsys.readouterr().err
    assert code in (1, 2) and "no-such-revision" in err and "Traceback" not in err
    assert not out.exists()


def test_manifest(site: Path) -> None:
    doc = json.loads((site / "manifest.json").read_text(encoding="utf-8"))
    assert doc["tool"] == "thermofolio" and doc["version"]
    assert doc["build_date"] == "2026-01-01" and re.fullmatch(r"[0-9a-f]{4,}",
                                                               doc["source_revision"])
    listed = {f["path"]: f["sha256"] for f in doc["files"]}
    assert "manifest.json" not in listed
    on_disk = {p.relative_to(site).as_posix() for p in site.rglob("*") if p.is_file()}
    assert set(listed) == on_disk - {"manifest.json"}
    for path, digest in listed.items():
        assert hashlib.sha256((site / path).read_bytes()).hexdigest() == digest, path
    for f in doc["files"]:
        assert (site / f["path"]).stat().st_size == f["bytes"], f["path"]
    pages = doc["pages"]
    assert pages["species/water-gas.html"] == ["references.yaml", "species/water-gas.yaml"]
    assert pages["reactions/burning.html"] == ["reactions/burning.yaml", "species/hydrogen.yaml",
                                               "species/oxygen.yaml", "species/water-gas.yaml"]
    every = set(pages["index.html"])
    assert {"handbook.yaml", "references.yaml", "species/water-liquid.yaml",
            "reactions/vaporisation.yaml"} <= every
    assert pages["audit.html"] == pages["index.html"]


def test_one_note_leaves_nothing_behind_for_the_next():
    """The converter is reused between notes; a reference defined in one note must not
    resolve in the next (Python-Markdown's reset between documents)."""
    from generator.site import markdown_notes

    first = markdown_notes.render("See [the log][x].\n\n[x]: #ops-log\n")
    second = markdown_notes.render("See [the log][x].")
    assert 'href="#ops-log"' in first
    assert "href" not in second and "[the log][x]" in second
