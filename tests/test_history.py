"""Recent git history of source files; nothing (and no exception) outside git."""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import pytest

from generator.history import Commit, file_history, source_histories

pytestmark = pytest.mark.skipif(shutil.which("git") is None, reason="needs git")


def git(repo: Path, *args: str, author: str = "Ann Author", date: str) -> None:
    env = {**os.environ, "GIT_AUTHOR_DATE": date, "GIT_COMMITTER_DATE": date}
    subprocess.run(["git", "-c", f"user.name={author}", "-c", "user.email=a@example.invalid",
                    "-c", "commit.gpgsign=false", "-C", str(repo), *args], check=True,
                   capture_output=True, env=env)


@pytest.fixture
def repo(tmp_path: Path) -> Path:
    repo = tmp_path / "repo"
    (repo / "sources" / "species").mkdir(parents=True)
    f = repo / "sources" / "species" / "methane.yaml"
    g = repo / "sources" / "species" / "water.yaml"
    git(repo, "init", "-q", date="2026-01-01T00:00:00+00:00")
    for i, (author, msg) in enumerate([("Ann Author", "Add methane"),
                                       ("Bo Builder", "Correct dfH of methane"),
                                       ("Ann Author", "Cite the second source")]):
        f.write_text(f"id: methane\nrev: {i}\n")
        if i == 1:
            g.write_text("id: water\n")
        git(repo, "add", "-A", date="2026-01-01T00:00:00+00:00")
        git(repo, "commit", "-q", "-m", msg, author=author,
            date=f"2026-0{i + 1}-15T12:00:00+00:00")
    return repo


def test_file_history_newest_first(repo: Path):
    h = file_history(repo / "sources" / "species" / "methane.yaml")
    assert [(c.date, c.author, c.message) for c in h] == [
        ("2026-03-15", "Ann Author", "Cite the second source"),
        ("2026-02-15", "Bo Builder", "Correct dfH of methane"),
        ("2026-01-15", "Ann Author", "Add methane")]
    assert all(isinstance(c, Commit) and len(c.sha) >= 7 for c in h)
    assert len(file_history(repo / "sources" / "species" / "methane.yaml", n=2)) == 2


def test_histories_of_a_folder_in_one_call(repo: Path):
    hist = source_histories(repo / "sources", n=2)
    assert set(hist) == {"species/methane.yaml", "species/water.yaml"}
    assert [c.message for c in hist["species/methane.yaml"]] == [
        "Cite the second source", "Correct dfH of methane"]
    assert [c.author for c in hist["species/water.yaml"]] == ["Bo Builder"]


def test_nothing_outside_git(tmp_path: Path, monkeypatch):
    monkeypatch.setenv("GIT_CEILING_DIRECTORIES", str(tmp_path))
    plain = tmp_path / "plain"
    plain.mkdir()
    (plain / "a.yaml").write_text("id: a\n")
    assert file_history(plain / "a.yaml") == []
    assert source_histories(plain) == {}
    assert file_history(tmp_path / "missing" / "b.yaml") == []
    assert source_histories(tmp_path / "missing") == {}


def test_uncommitted_file_has_no_history(repo: Path):
    new = repo / "sources" / "species" / "new.yaml"
    new.write_text("id: new\n")
    assert file_history(new) == []


def test_without_git_on_the_path(repo: Path, monkeypatch):
    monkeypatch.setenv("PATH", "")
    assert file_history(repo / "sources" / "species" / "methane.yaml") == []
    assert source_histories(repo / "sources") == {}
