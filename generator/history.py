"""Recent git history of source files: date, author and message of the last commits.

Outside a git work tree, or without git, every function returns nothing; none raises.
"""

from __future__ import annotations

import os
import subprocess
from dataclasses import dataclass
from pathlib import Path

GIT_TIMEOUT_S = 10.0
_SEP = "\x1f"
_START = "\x1e"


@dataclass(frozen=True)
class Commit:
    sha: str  # abbreviated
    date: str  # ISO date of the author date
    author: str
    message: str  # subject line


def _git(cwd: Path, *args: str) -> str | None:
    try:
        done = subprocess.run(["git", "-C", str(cwd), *args], capture_output=True, text=True,
                              timeout=GIT_TIMEOUT_S, env={**os.environ, "GIT_PAGER": "cat",
                                                          "LC_ALL": "C"}, check=False)
    except (OSError, subprocess.SubprocessError, ValueError):
        return None
    return done.stdout if done.returncode == 0 else None


_FORMAT = f"--format={_START}%h{_SEP}%ad{_SEP}%an{_SEP}%s"


def _parse(line: str) -> Commit | None:
    parts = line.lstrip(_START).split(_SEP)
    return Commit(*parts[:4]) if len(parts) >= 4 else None


def file_history(path: Path, n: int = 5) -> list[Commit]:
    """The last ``n`` commits that touched ``path``, newest first; [] outside git."""
    path = Path(path)
    try:
        folder = path.parent if path.parent.is_dir() else Path.cwd()
        out = _git(folder, "log", f"-n{int(n)}", "--date=short", _FORMAT, "--", path.name)
        if not out:
            return []
        return [c for c in (_parse(ln) for ln in out.split("\n") if ln.strip()) if c]
    except Exception:  # never break a build for history
        return []


def source_histories(root: Path, n: int = 5) -> dict[str, list[Commit]]:
    """For every file under ``root`` with history: its last ``n`` commits, newest first.

    One ``git log`` for the whole folder; keys are paths relative to ``root`` with
    forward slashes (``species/methane.yaml``)."""
    root = Path(root)
    try:
        top = _git(root, "rev-parse", "--show-toplevel")
        prefix = _git(root, "rev-parse", "--show-prefix")
        if top is None or prefix is None:
            return {}
        prefix = prefix.strip()
        out = _git(root, "log", "--date=short", _FORMAT, "--name-only", "--no-renames",
                   "--", ".")
        if out is None:
            return {}
        hist: dict[str, list[Commit]] = {}
        commit: Commit | None = None
        for line in out.split("\n"):
            if line.startswith(_START):
                commit = _parse(line)
            elif line.strip() and commit is not None:
                name = line.strip()
                rel = name[len(prefix):] if name.startswith(prefix) else name
                lst = hist.setdefault(rel, [])
                if len(lst) < n:
                    lst.append(commit)
        return hist
    except Exception:  # never break a build for history
        return {}
