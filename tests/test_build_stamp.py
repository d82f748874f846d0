"""The whole-build stamp: an unchanged build does nothing, anything that changes output
rebuilds.  Charts are drawn by a stand-in (its name salts the stamp as it salts the cache)."""

from __future__ import annotations

import argparse
import importlib
import json
import os
import re
import shutil
from pathlib import Path

import pytest

from conftest import REPO, assemble
from generator.cli import main
from generator.commands import build as build_cmd

publish_mod = importlib.import_module("generator.site.publish")
EPOCH = "1767225600"  # 2026-01-01T00:00:00Z, an arbitrary fixed build date
SUMMARY = re.compile(r"(\d+) charts \((\d+) drawn, (\d+) cached.*?\), (\d+) files rewritten")


def stand_in(specs, jobs=1):
    return [f'<svg xmlns="http://www.w3.org/2000/svg"><title>{s.title}</title></svg>\n'
            .encode() for s in specs]


@pytest.fixture
def env(monkeypatch, tmp_path):
    monkeypatch.setattr(publish_mod, "render_many", stand_in)
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    src = assemble(tmp_path / "hb")
    return src, tmp_path / "out", tmp_path / "cache"


def build(src: Path, out: Path, cache: Path, capsys, *extra: str) -> str:
    capsys.readouterr()
    assert main(["build", str(src), "-o", str(out), "--cache", str(cache), "-j", "1",
                 *extra]) == 0
    return capsys.readouterr().err


def snapshot(folder: Path) -> dict[str, tuple[bytes, int]]:
    return {str(p.relative_to(folder)): (p.read_bytes(), p.stat().st_mtime_ns)
            for p in folder.rglob("*") if p.is_file()}


def test_unchanged_build_is_up_to_date_and_loads_nothing(env, capsys, monkeypatch):
    src, out, cache = env
    first = build(src, out, cache, capsys)
    before = snapshot(out)
    import generator.load

    def boom(*_a, **_k):
        raise AssertionError("an up-to-date build must not load the sources")

    monkeypatch.setattr(generator.load, "load_handbook", boom)
    again = build(src, out, cache, capsys)
    assert "up to date" in again
    assert SUMMARY.search(again).groups()[1:] == ("0", SUMMARY.search(first).group(1), "0")
    assert snapshot(out) == before  # not one file touched
    # the warnings of the first build are reported again
    assert findings_lines(again) == findings_lines(first)


def findings_lines(err: str) -> list[str]:
    return [ln for ln in err.splitlines() if not ln.startswith(("thermofolio", "CAUTION"))]


def test_editing_a_source_rebuilds(env, capsys):
    src, out, cache = env
    build(src, out, cache, capsys)
    path = src / "species" / "water-liquid.yaml"
    text = path.read_text(encoding="utf-8")
    assert "-285.83" in text
    path.write_text(text.replace("-285.83", "-285.50"), encoding="utf-8")
    err = build(src, out, cache, capsys)
    assert "up to date" not in err
    assert int(SUMMARY.search(err).group(4)) > 0
    assert "-285.5" in (out / "species" / "water-liquid.json").read_text(encoding="utf-8")
    assert "up to date" in build(src, out, cache, capsys)


def test_a_new_source_file_or_build_date_rebuilds(env, capsys, monkeypatch):
    src, out, cache = env
    build(src, out, cache, capsys)
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767312000")  # 2026-01-02, one day later
    assert "up to date" not in build(src, out, cache, capsys)
    assert "2026-01-02" in (out / "index.html").read_text(encoding="utf-8")
    (src / "species" / "notes.txt").write_text("not a source, still hashed\n")
    assert "up to date" not in build(src, out, cache, capsys)


def test_damaged_or_extra_output_files_are_rebuilt(env, capsys):
    src, out, cache = env
    build(src, out, cache, capsys)
    good = (out / "index.html").read_bytes()
    (out / "index.html").write_bytes(good.replace(b"<html", b"<html data-x", 1))
    assert "up to date" not in build(src, out, cache, capsys)
    assert (out / "index.html").read_bytes() == good
    (out / "stale.html").write_text("old")
    assert "up to date" not in build(src, out, cache, capsys)
    assert not (out / "stale.html").exists()
    (out / "search.html").unlink()
    assert "up to date" not in build(src, out, cache, capsys)
    assert (out / "search.html").is_file()


def test_stamp_follows_templates_and_code(tmp_path, monkeypatch):
    """A copy of the package and its templates: editing a template or a module changes the
    stamp."""
    import generator

    pkg = tmp_path / "repo" / "generator"
    shutil.copytree(REPO / "generator", pkg,
                    ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copytree(REPO / "site_templates", tmp_path / "repo" / "site_templates")
    monkeypatch.setattr(generator, "__file__", str(pkg / "__init__.py"))
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    src = assemble(tmp_path / "hb")
    args = argparse.Namespace(no_cache=False, since=None, cache=None)
    first = build_cmd.build_stamp(src, args)
    assert first == build_cmd.build_stamp(src, args)
    base = tmp_path / "repo" / "site_templates" / "base.html"
    base.write_text(base.read_text(encoding="utf-8") + "\n", encoding="utf-8")
    second = build_cmd.build_stamp(src, args)
    assert second != first
    (pkg / "exports.py").write_text((pkg / "exports.py").read_text() + "\n# edited\n")
    assert build_cmd.build_stamp(src, args) not in (first, second)


def test_no_stamp_without_cache_or_with_since_or_a_replaced_step(env, monkeypatch):
    src, _out, _cache = env
    ok = argparse.Namespace(no_cache=False, since=None, cache=None)
    assert build_cmd.build_stamp(src, ok) is not None
    assert build_cmd.build_stamp(src, argparse.Namespace(no_cache=True)) is None
    assert build_cmd.build_stamp(src, argparse.Namespace(no_cache=False, since="HEAD")) is None
    monkeypatch.setattr(publish_mod, "render_pages", lambda *_a: {})
    assert build_cmd.build_stamp(src, ok) is None


def test_relative_and_absolute_sources_do_not_share_a_stamp(env, monkeypatch):
    src, _out, _cache = env
    ok = argparse.Namespace(no_cache=False, since=None, cache=None)
    monkeypatch.chdir(src.parent)
    assert build_cmd.build_stamp(Path(src.name), ok) != build_cmd.build_stamp(src, ok)
    assert os.path.isabs(src)


def test_the_working_folder_is_part_of_the_stamp(env, capsys, monkeypatch):
    """The pages show a source path relative to the working folder when it lies inside it,
    even when the sources were named by an absolute path: a build from another folder
    that shows other paths is not up to date."""
    src, out, cache = env
    monkeypatch.chdir(src.parent)
    build(src, out, cache, capsys)
    sheet = next((out / "species").glob("*.html"))
    assert f"<code>{src.name}/species/" in sheet.read_text(encoding="utf-8")
    assert "up to date" in build(src, out, cache, capsys)
    monkeypatch.chdir(REPO)
    assert "up to date" not in build(src, out, cache, capsys)
    assert f"<code>{src}/species/" in sheet.read_text(encoding="utf-8")


def test_the_record_holds_the_output_folder_as_it_is(env, capsys):
    """The writer accounts for every file it left (kept, linked from the cache or written),
    and the record it stores equals a fresh reading of the folder: after a first build,
    an edit, and a build that changes nothing but runs (its record removed)."""
    src, out, cache = env
    ok = argparse.Namespace(no_cache=False, since=None, cache=str(cache))

    def recorded() -> dict:
        path = build_cmd._record_path(src, out, ok)
        return json.loads(path.read_text(encoding="utf-8"))["files"]

    build(src, out, cache, capsys)
    assert recorded() == build_cmd.output_state(out)
    path = src / "species" / "water-liquid.yaml"
    path.write_text(path.read_text(encoding="utf-8").replace("-285.83", "-285.50"),
                    encoding="utf-8")
    err = build(src, out, cache, capsys)
    assert 0 < int(SUMMARY.search(err).group(4))
    assert recorded() == build_cmd.output_state(out)
    build_cmd._record_path(src, out, ok).unlink()
    err = build(src, out, cache, capsys)
    assert "up to date" not in err and int(SUMMARY.search(err).group(4)) == 0
    assert recorded() == build_cmd.output_state(out)
    assert "up to date" in build(src, out, cache, capsys)
