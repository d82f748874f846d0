"""Edition diff: two source trees, or two git revisions of a repository made here."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
from pathlib import Path

import pytest

from conftest import assemble
from generator.caution import CAUTION
from generator.cli import main
from generator.edition_diff import diff_revisions, diff_trees

pytestmark = pytest.mark.skipif(shutil.which("git") is None, reason="needs git")

GIT = ["git", "-c", "user.name=Test Author", "-c", "user.email=test@example.invalid",
       "-c", "commit.gpgsign=false", "-c", "init.defaultBranch=main"]


def git(repo: Path, *args: str, date: str = "2026-01-02T10:00:00+00:00") -> str:
    env = {**os.environ, "GIT_AUTHOR_DATE": date, "GIT_COMMITTER_DATE": date}
    return subprocess.run([*GIT, "-C", str(repo), *args], check=True, capture_output=True,
                          text=True, env=env).stdout


def _edit(root: Path, rel: str, old: str, new: str) -> None:
    f = root / rel
    text = f.read_text()
    assert old in text
    f.write_text(text.replace(old, new))


def _change_edition(root: Path) -> None:
    # dfH of water vapour moved by +0.826 kJ/mol (an invented edit for the test).
    _edit(root, "species/water-gas.yaml", "-241.826 ± 0.040", "-241.000 ± 0.040")
    (root / "species" / "oxygen.yaml").unlink()
    (root / "reactions" / "burning.yaml").unlink()
    _edit(root, "references.yaml", "A table quoted at one atmosphere (test fixture).",
          "A table quoted at one atmosphere (test fixture, second edition).")


def test_tree_vs_tree_lists_changes_and_moved_results(tmp_path: Path):
    old = assemble(tmp_path / "old")
    new = assemble(tmp_path / "new")
    _edit(new, "species/water-gas.yaml", "-241.826 ± 0.040", "-241.000 ± 0.040")
    _edit(new, "species/water-liquid.yaml", "name: water", "name: liquid water")
    shutil.copyfile(new / "species" / "hydrogen.yaml", new / "species" / "hydrogen-2.yaml")
    _edit(new, "species/hydrogen-2.yaml", "id: hydrogen", "id: hydrogen-2")
    _edit(new, "species/hydrogen-2.yaml", "phase: g", "phase: l")
    r = diff_trees(old, new, "t1", "t2")
    assert not r.errors
    kinds = {(c.item, c.change) for c in r.species}
    assert kinds == {("water-gas", "changed"), ("water-liquid", "changed"),
                     ("hydrogen-2", "added")}
    wg = next(c for c in r.species if c.item == "water-gas")
    assert [(f.field, f.old, f.new) for f in wg.fields] == [
        ("dfH", "-241.826 ± 0.040 kJ/mol [codata-1989]",
         "-241.000 ± 0.040 kJ/mol [codata-1989]")]
    # 2 H2 + O2 -> 2 H2O(g): ΔrH° and ΔrG° move by 2 × 0.826 = 1.652 kJ/mol at every T;
    # H2O(l) -> H2O(g) by 0.826 (arithmetic on the edit).
    top = r.derived[0]
    assert (top.reaction, top.delta) == ("burning", pytest.approx(1.652, abs=1e-9))
    assert top.causes == ("ΔfH° of water-gas",)
    assert top.text == ("ΔrG° at 298.15 K of burning: +1.7 kJ/mol, from a change to ΔfH° of "
                        "water-gas")
    assert [abs(d.delta) for d in r.derived] == sorted((abs(d.delta) for d in r.derived),
                                                       reverse=True)
    assert {d.reaction for d in r.derived} == {"burning", "vaporisation"}
    text = r.to_text()
    assert "~ water-gas (changed)" in text and "+ hydrogen-2 (added)" in text
    assert "-241.826 ± 0.040 kJ/mol [codata-1989] → -241.000" in text
    j = r.to_json()
    assert json.loads(json.dumps(j)) == j
    assert j["derived"][0]["delta"] == pytest.approx(1.652)


def test_unloadable_side_is_an_error(tmp_path: Path):
    old = assemble(tmp_path / "old")
    new = assemble(tmp_path / "new")
    (new / "handbook.yaml").unlink()
    r = diff_trees(old, new)
    assert r.errors and "do not load" in r.errors[0]


@pytest.fixture
def repo(tmp_path: Path) -> Path:
    repo = tmp_path / "repo"
    assemble(repo / "sources")
    git(repo, "init", "-q")
    git(repo, "add", "-A")
    git(repo, "commit", "-q", "-m", "First edition")
    git(repo, "tag", "v1")
    _change_edition(repo / "sources")
    git(repo, "add", "-A")
    git(repo, "commit", "-q", "-m", "Second edition", date="2026-02-03T10:00:00+00:00")
    return repo


def test_git_revisions(repo: Path):
    r = diff_revisions(repo, "sources", "v1", "HEAD")
    assert (r.old_label, r.new_label) == ("v1", "HEAD")
    assert {(c.item, c.change) for c in r.species} == {("water-gas", "changed"),
                                                        ("oxygen", "removed")}
    assert [(c.item, c.change) for c in r.reactions] == [("burning", "removed")]
    assert [(c.item, c.change, c.fields[0].field) for c in r.references] == [
        ("old-atm", "changed", "citation")]
    # vaporisation, H2O(l) -> H2O(g), moves by +0.826 kJ/mol (arithmetic on the edit).
    assert [(d.reaction, round(d.delta, 9)) for d in r.derived] == [
        ("vaporisation", 0.826), ("vaporisation", 0.826)]
    assert r.derived[0].causes == ("ΔfH° of water-gas",)
    same = diff_revisions(repo, "sources", "HEAD~1", "v1")
    assert same.empty and same.derived == ()


def test_worktree_and_cli(repo: Path, capsys):
    _edit(repo / "sources", "species/water-liquid.yaml", "-285.830 ± 0.040", "-285.8 ± 0.1")
    r = diff_revisions(repo, "sources", "HEAD")
    assert r.new_label == "the working tree"
    assert [c.item for c in r.species] == ["water-liquid"]
    assert main(["diff", "HEAD~1", "HEAD", "--sources", str(repo / "sources"),
                 "--format", "json"]) == 0
    j = json.loads(capsys.readouterr().out)
    assert {c["item"] for c in j["species"]} == {"water-gas", "oxygen"}
    assert j["caution"] == CAUTION
    assert main(["diff", "HEAD", "--sources", str(repo / "sources")]) == 0
    out = capsys.readouterr().out
    assert "~ water-liquid (changed)" in out and "derived results that moved" in out
    assert out.rstrip().endswith(f"CAUTION: {CAUTION}")
    assert main(["diff", "no-such-rev", "--sources", str(repo / "sources")]) == 2
    assert "no-such-rev" in capsys.readouterr().err


def test_cli_two_folders(tmp_path: Path, capsys):
    old, new = assemble(tmp_path / "a"), assemble(tmp_path / "b")
    assert main(["diff", str(old), str(new)]) == 0
    assert "no changes" in capsys.readouterr().out
