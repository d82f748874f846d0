"""The incremental build: work done from an item's neighbourhood and kept in the results cache.

Soundness rests on two facts, each tested here: (1) an item computed or rendered from its
neighbourhood (generator.neighbourhood) gives the same bytes as from the whole handbook, for
every item of the demo; (2) a rebuild that takes results from the cache publishes exactly what
a clean build publishes, and redoes the work of the items whose neighbourhood changed.  Chart
drawing is a stand-in; timings belong to benchmarks/bench_build.py.
"""

from __future__ import annotations

import hashlib
import importlib
import json
import os
import re
import shutil
import sqlite3
import subprocess
import sys
from contextlib import closing
from pathlib import Path

import numpy as np
import pytest

from conftest import REPO
from generator.cli import main
from generator.compute import _reaction_result, compute_handbook
from generator.design import reaction_design
from generator.history import source_histories
from generator.load import load_handbook
from generator.neighbourhood import (
    Digester,
    canonical_pickle,
    item_view,
    reaction_handbook,
    reaction_view,
)
from generator.results_cache import DATABASE, ResultsCache, kept_or_made
from generator.site import pages
from generator.thermo.species_props import formation_coefficients, formation_functions

publish_mod = importlib.import_module("generator.site.publish")
DEMO = REPO / "sources"
EPOCH = "1767225600"  # 2026-01-01T00:00:00Z, an arbitrary fixed build date
SUMMARY = re.compile(r"(\d+) of (\d+) sheets rendered")


def fake_render_many(specs, jobs=1):
    return [(f'<svg xmlns="http://www.w3.org/2000/svg"><title>'
             f'{hashlib.sha256(s.to_canonical_json().encode()).hexdigest()[:8]}</title></svg>'
             ).encode() for s in specs]


@pytest.fixture(autouse=True)
def quick_charts(monkeypatch) -> None:
    monkeypatch.setattr(publish_mod, "render_many", fake_render_many)
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)


@pytest.fixture(scope="module")
def demo():
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("SOURCE_DATE_EPOCH", EPOCH)
        hb, findings = load_handbook(DEMO)
        assert hb is not None
        computed = compute_handbook(hb)
    return computed, pages.all_findings(computed, findings)


def _same_arrays(a, b) -> bool:
    """Dataclasses of arrays and plain values equal bit for bit (NaN equal to NaN)."""
    for name in a.__dataclass_fields__:
        x, y = getattr(a, name), getattr(b, name)
        if isinstance(x, np.ndarray):
            if x.shape != y.shape or x.tobytes() != y.tobytes():
                return False
        elif x != y:
            return False
    return True


# --- (1) the neighbourhood holds everything an item needs ----------------------------------


def test_every_sheet_from_its_neighbourhood_equals_the_sheet_from_the_whole(demo) -> None:
    computed, every = demo
    meta = pages.SiteMeta(build_date="2026-01-01", revision="abc1234",
                          histories=source_histories(DEMO))
    by_item: dict = {}
    for f in every:
        by_item.setdefault(f.item, []).append(f)
    for key in pages.item_keys(computed):
        item = key.partition(":")[2]
        whole = publish_mod.render_items(computed, every, meta, [key])
        view = item_view(computed, key)
        cut = publish_mod.render_items(view, by_item.get(item, []),
                                       publish_mod.sheet_meta(meta, view, key), [key])
        assert whole.files == cut.files, key
        assert whole.digests == cut.digests, key
        assert whole.texts == cut.texts, key
        if key.startswith("reaction:"):  # a real cut, not the whole handbook again
            assert len(view.handbook.species) < len(computed.handbook.species), key


def test_every_reaction_from_its_cut_equals_the_reaction_from_the_whole(demo) -> None:
    computed, _ = demo
    hb = computed.handbook
    grid = np.asarray(hb.settings.temperatures, dtype=float)
    for rid in hb.reactions:
        whole = _reaction_result((hb, grid), rid)
        cut = _reaction_result((reaction_handbook(hb, rid), grid), rid)
        for part in ("grid", "curve"):
            assert _same_arrays(getattr(whole, part), getattr(cut, part)), (rid, part)
        assert whole.crossover_T == cut.crossover_T and whole.character == cut.character
        d_whole = reaction_design(computed.reactions[rid], computed)
        view = reaction_view(computed, rid)
        d_cut = reaction_design(view.reactions[rid], view)
        assert canonical_pickle(d_whole) == canonical_pickle(d_cut), rid


def test_formation_from_the_species_own_reference_states(demo) -> None:
    computed, _ = demo
    grid = np.asarray(computed.handbook.settings.temperatures, dtype=float)
    refs = computed.element_refs
    for sid, sp in computed.handbook.species.items():
        own = {el: refs[el] for el in formation_coefficients(sp) if el in refs}
        assert _same_arrays(formation_functions(sp, refs, grid),
                            formation_functions(sp, own, grid)), sid


# --- digests --------------------------------------------------------------------------------


def test_digest_ignores_sharing_and_follows_values() -> None:
    unit = "kJ" + "/mol"
    shared = ({"unit": unit}, {"unit": unit})
    separate = ({"unit": "kJ/mol"}, {"unit": "".join(["kJ", "/mol"])})
    assert canonical_pickle(shared) == canonical_pickle(separate)
    assert canonical_pickle(shared) != canonical_pickle(({"unit": "kJ/mol"}, {"unit": "J"}))
    a = np.arange(3.0)
    assert Digester().of((a, a)) == Digester().of((a, a.copy()))
    assert Digester().of((a, a)) != Digester().of((a, a + 1e-12))


_DIGESTS = """
import json, os, sys
from pathlib import Path
from generator.load import load_handbook
from generator.compute import compute_handbook
from generator.neighbourhood import digester_for, item_view
from generator.results_cache import ResultsCache
from generator.site import pages
hb, _f = load_handbook(Path(sys.argv[1]))
c = compute_handbook(hb, results=ResultsCache(Path(sys.argv[2])))
d = digester_for(c.handbook)  # the build's own: curves known by the digest of their inputs
print(json.dumps({k: d.view(item_view(c, k), k) for k in pages.item_keys(c)}))
"""


def _digests(*args: str, seed: str) -> dict:
    """Every sheet digest of a build of ``args[0]`` with the results cache ``args[1]``."""
    env = {**os.environ, "PYTHONHASHSEED": seed, "SOURCE_DATE_EPOCH": EPOCH,
           "PYTHONPATH": str(REPO)}
    done = subprocess.run([sys.executable, "-c", _DIGESTS, *args], capture_output=True,
                          text=True, env=env, check=True, cwd=REPO)
    return json.loads(done.stdout)


def test_sheet_digests_are_the_same_in_every_process_fresh_or_cached(tmp_path) -> None:
    """Hash seeds differ between the runs; the second run takes its numbers from the cache
    the first one filled (shared differently in memory), the third fills another one."""
    fresh = _digests(str(DEMO), str(tmp_path / "a"), seed="1")
    assert _digests(str(DEMO), str(tmp_path / "a"), seed="2") == fresh
    assert _digests(str(DEMO), str(tmp_path / "b"), seed="3") == fresh
    assert len(set(fresh.values())) == len(fresh)


# --- the results cache ----------------------------------------------------------------------


def _rows(cache: Path, kind: str) -> dict[str, tuple[int, bytes]]:
    """item -> (rowid, payload) of one kind, read straight from the database."""
    with closing(sqlite3.connect(cache / DATABASE)) as db:
        return {item: (rowid, bytes(payload)) for rowid, item, payload in db.execute(
            "select rowid, item, payload from entry where kind = ?", (kind,))}


def _set_payload(cache: Path, kind: str, item: str, payload: bytes) -> None:
    with closing(sqlite3.connect(cache / DATABASE)) as db:
        db.execute("update entry set payload = ? where kind = ? and item = ?",
                   (payload, kind, item))
        db.commit()


def test_results_cache_round_trip_key_and_damage(tmp_path) -> None:
    cache = ResultsCache(tmp_path, salt="code-1")
    cache.put("sheet", "species:x", "d1", {"a": np.arange(4.0)})
    got = cache.get("sheet", "species:x", "d1")
    assert got["a"].tolist() == [0.0, 1.0, 2.0, 3.0]
    assert cache.get("sheet", "species:x", "d2") is None  # another key: a miss
    assert ResultsCache(tmp_path, salt="code-2").get("sheet", "species:x", "d1") is None
    data = _rows(tmp_path, "sheet")["species:x"][1]
    _set_payload(tmp_path, "sheet", "species:x", data[:-3])  # truncated
    assert cache.get("sheet", "species:x", "d1") is None and cache.rejected == 1
    _set_payload(tmp_path, "sheet", "species:x", data[:-1] + bytes([data[-1] ^ 1]))  # a bit
    assert cache.get("sheet", "species:x", "d1") is None and cache.rejected == 2
    cache.put("sheet", "species:x", "d1", 7)
    assert cache.get("sheet", "species:x", "d1") == 7
    assert list(_rows(tmp_path, "sheet")) == ["species:x"]  # one entry per item and kind


def test_many_at_once_equals_one_by_one(tmp_path) -> None:
    cache = ResultsCache(tmp_path, salt="s")
    for n in range(6):
        cache.put("design", f"r{n}", f"d{n}", {"n": n})
    cache.put("species", "r0", "d0", "another kind")
    data = _rows(tmp_path, "design")["r1"][1]
    _set_payload(tmp_path, "design", "r1", data[:-2])  # damaged
    asked = {"r0": "d0", "r1": "d1", "r2": "other digest", "r3": "d3", "gone": "d9"}
    one = ResultsCache(tmp_path, salt="s")
    singly = {i: one.get("design", i, d) for i, d in asked.items()}
    many = ResultsCache(tmp_path, salt="s")
    together = many.get_many("design", asked)
    assert together == {i: r for i, r in singly.items() if r is not None}
    assert set(together) == {"r0", "r3"}
    assert (many.hits, many.misses, many.rejected) == (one.hits, one.misses, one.rejected)


def test_a_damaged_results_database_is_set_aside(tmp_path) -> None:
    ResultsCache(tmp_path, salt="s").put("reaction", "r1", "d", 1.5)
    for suffix in ("-wal", "-shm"):
        (tmp_path / (DATABASE + suffix)).unlink(missing_ok=True)
    (tmp_path / DATABASE).write_bytes(b"not a database at all " * 200)
    cache = ResultsCache(tmp_path, salt="s")
    assert cache.get("reaction", "r1", "d") is None  # a miss, not an error
    assert (tmp_path / f"{DATABASE}.damaged").exists()
    cache.put("reaction", "r1", "d", 2.5)
    assert cache.get("reaction", "r1", "d") == 2.5



def test_a_batch_written_to_a_damaged_database_lands_in_a_fresh_one(tmp_path) -> None:
    (tmp_path / DATABASE).write_bytes(b"not a database at all " * 200)
    cache = ResultsCache(tmp_path, salt="s")
    with cache.batch():
        cache.put("reaction", "r1", "d1", 1.5)
        cache.put("reaction", "r2", "d2", 2.5)
    assert (tmp_path / f"{DATABASE}.damaged").exists()
    fresh = ResultsCache(tmp_path, salt="s")
    assert (fresh.get("reaction", "r1", "d1"), fresh.get("reaction", "r2", "d2")) == (1.5, 2.5)


def _value_and_pid(shared: int, item: str) -> tuple[int, int]:
    import time

    time.sleep(0.005)  # so that the forked worker surely takes some of the items
    return shared + int(item[1:]), os.getpid()


def test_forked_workers_write_the_same_database(tmp_path, monkeypatch) -> None:
    from generator import parallel

    monkeypatch.setattr(parallel, "MIN_ITEMS", 2)
    cache = ResultsCache(tmp_path, salt="s")
    cache.put("species", "parent", "d", 0)  # the parent's connection is open at the fork
    items = [f"i{n}" for n in range(40)]
    got = kept_or_made(cache, "reaction", {i: f"d-{i}" for i in items}, tuple,
                       _value_and_pid, 100, jobs=2)
    assert {i: v for i, (v, _pid) in got.items()} == {i: 100 + int(i[1:]) for i in items}
    # made by this process and by the forked worker (parallel.fork_map), both writing
    assert {pid for _v, pid in got.values()} - {os.getpid()}
    fresh = ResultsCache(tmp_path, salt="s")
    assert all(fresh.get("reaction", i, f"d-{i}") == got[i] for i in items)
    assert fresh.get("species", "parent", "d") == 0
    assert cache.get("species", "parent", "d") == 0  # the parent's connection still works



def _put_in_child(cache: ResultsCache) -> None:
    cache.put("species", "child", "d", os.getpid())
    os._exit(0)


def test_a_batch_writes_its_puts_together_when_it_ends(tmp_path) -> None:
    import multiprocessing

    cache = ResultsCache(tmp_path, salt="s")
    reader = ResultsCache(tmp_path, salt="s")
    with cache.batch():
        cache.put("reaction", "a", "da", 1)
        with cache.batch():  # a nested block joins the outer one
            cache.put("reaction", "b", "db", 2)
        assert reader.get("reaction", "a", "da") is None  # not written yet
        child = multiprocessing.get_context("fork").Process(target=_put_in_child,
                                                            args=(cache,))
        child.start()
        child.join()
        assert child.exitcode == 0
        assert reader.get("species", "child", "d") == child.pid  # a forked child's: at once
    assert reader.get("reaction", "a", "da") == 1 and reader.get("reaction", "b", "db") == 2
    with pytest.raises(RuntimeError), cache.batch():
        cache.put("reaction", "c", "dc", 3)
        raise RuntimeError("the block fails")
    assert reader.get("reaction", "c", "dc") is None  # a failed block writes nothing
    cache.put("reaction", "c", "dc", 4)  # outside a block: at once
    assert reader.get("reaction", "c", "dc") == 4


# --- (2) rebuilds publish what a clean build publishes ---------------------------------------


def _build(src: Path, out: Path, capsys, *extra: str) -> tuple[int, int]:
    capsys.readouterr()
    assert main(["build", str(src), "-o", str(out), "-j", "1", *extra]) == 0
    m = SUMMARY.search(capsys.readouterr().err)
    assert m, "no build summary"
    return int(m.group(1)), int(m.group(2))


def _tree(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def _sheet_entries(cache: Path) -> dict[str, int]:
    """item -> rowid of each sheet entry (a rewritten entry gets a new row)."""
    return {item: rowid for item, (rowid, _payload) in _rows(cache, "sheet").items()}


def _expected_after_editing(hb, sid: str) -> set[str]:
    """Sheets that show something of species ``sid``, read off the model directly: the
    species; every reaction whose equation, feeds or combine steps name it; every species
    in the equations of those reactions (their sheets list the reactions with their
    equations; a species only fed as an inert does not list the reaction)."""
    def in_equation(rx) -> set[str]:
        return {t.species for t in (*rx.reactants, *rx.products)}

    def names(rx) -> set[str]:
        out = in_equation(rx)
        if rx.conditions is not None:
            for feed in rx.conditions.feeds:
                out |= set(feed.species)
        return out

    direct = {rid for rid, rx in hb.reactions.items() if sid in names(rx)}
    reactions = direct | {rid for rid, rx in hb.reactions.items()
                          if any(s.reaction in direct for s in rx.combine)}
    species = {sid}
    for rid in reactions:
        species |= in_equation(hb.reactions[rid])
    return {f"species:{s}" for s in species} | {f"reaction:{r}" for r in reactions}


def test_edit_redoes_only_its_neighbourhood_and_publishes_what_a_clean_build_does(
        tmp_path, capsys) -> None:
    src, out, cache = tmp_path / "src", tmp_path / "out", tmp_path / "cache"
    shutil.copytree(DEMO, src)
    rendered, total = _build(src, out, capsys, "--cache", str(cache))
    assert rendered == total  # a cold cache renders every sheet
    before = _sheet_entries(cache)
    path = src / "species" / "methane.yaml"
    text = path.read_text(encoding="utf-8")
    assert "value: 186.251," in text
    path.write_text(text.replace("value: 186.251,", "value: 186.351,"), encoding="utf-8")
    rendered, total = _build(src, out, capsys, "--cache", str(cache))
    after = _sheet_entries(cache)
    redone = {name for name in after if after[name] != before.get(name)}
    hb, _ = load_handbook(src)
    expected = _expected_after_editing(hb, "methane")
    assert redone == expected
    assert rendered == len(expected) < total
    clean = tmp_path / "clean"
    _build(src, clean, capsys, "--no-cache")
    assert _tree(out) == _tree(clean)


def test_a_changed_tolerance_redoes_the_species_checks(tmp_path, capsys) -> None:
    """Each species' own checks are kept with its curves; the key holds the tolerances, so
    tightening them (one line of handbook.yaml) finds what a clean build finds."""
    src, out, cache = tmp_path / "src", tmp_path / "out", tmp_path / "cache"
    shutil.copytree(DEMO, src)
    _build(src, out, capsys, "--cache", str(cache))
    warnings = re.compile(r"(\d+) warnings")

    def count(err: str) -> int:
        m = warnings.search(err)
        assert m, "no build summary"
        return int(m.group(1))

    capsys.readouterr()
    assert main(["build", str(src), "-o", str(out), "-j", "1", "--cache", str(cache)]) == 0
    before = count(capsys.readouterr().err)
    path = src / "handbook.yaml"
    text = path.read_text(encoding="utf-8")
    assert "  polynomial_H_kJ: 0.5\n" in text and "  jump_Cp_J: 1.0\n" in text
    path.write_text(text.replace("  polynomial_H_kJ: 0.5\n", "  polynomial_H_kJ: 0.001\n")
                    .replace("  jump_Cp_J: 1.0\n", "  jump_Cp_J: 0.001\n"), encoding="utf-8")
    assert main(["build", str(src), "-o", str(out), "-j", "1", "--cache", str(cache)]) == 0
    assert count(capsys.readouterr().err) > before
    clean = tmp_path / "clean"
    _build(src, clean, capsys, "--no-cache")
    assert _tree(out) == _tree(clean)


def test_damaged_results_are_redone_never_used(tmp_path, capsys) -> None:
    src, out, cache = tmp_path / "src", tmp_path / "out", tmp_path / "cache"
    shutil.copytree(DEMO, src)
    _build(src, out, capsys, "--cache", str(cache))
    damaged = 0
    for kind in ("sheet", "reaction", "design", "species"):
        for i, (item, (_rowid, payload)) in enumerate(sorted(_rows(cache, kind).items())):
            data = bytearray(payload)
            if i % 2:
                data[-1] ^= 0x55  # corrupted payload
            else:
                del data[len(data) // 2:]  # truncated
            _set_payload(cache, kind, item, bytes(data))
            damaged += 1
    assert damaged > 100
    shutil.rmtree(out)  # no build stamp short-cut: the whole site is written again
    rendered, total = _build(src, out, capsys, "--cache", str(cache))
    assert rendered == total
    clean = tmp_path / "clean"
    _build(src, clean, capsys, "--no-cache")
    assert _tree(out) == _tree(clean)


def test_source_files_read_from_the_cache_equal_a_fresh_reading(tmp_path) -> None:
    """The demo and every bad-input case: the second load takes each species and reaction
    file from the results cache and must give the same model and the same findings."""
    from conftest import BAD, assemble

    cases = [DEMO] + [assemble(tmp_path / c.name, c) for c in sorted(BAD.iterdir())
                      if c.is_dir()]
    for i, root in enumerate(cases):
        cache = ResultsCache(tmp_path / f"cache-{i}")
        fresh = load_handbook(root)
        first = load_handbook(root, cache)
        again = load_handbook(root, cache)
        for hb, findings in (first, again):
            assert [f.format() for f in findings] == [f.format() for f in fresh[1]], root
            assert canonical_pickle(hb) == canonical_pickle(fresh[0]), root
        assert cache.hits > 0 or not list(root.glob("*/*.yaml")), root
