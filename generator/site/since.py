"""``build --since REV``: the edition diff of the sources against a git revision.

The sources' working tree is compared with REV of the git repository that holds them
(generator.edition_diff.diff_revisions); the result becomes the site's "changes since"
page.  This module runs git; the page itself is formatted by generator.site.provenance_view.
"""

from __future__ import annotations

from pathlib import Path

from generator.edition_diff import DiffError, DiffResult, diff_revisions, git_toplevel


class SinceError(Exception):
    """The revision cannot be compared (no git repository, unknown revision)."""


def diff_since(sources: Path, rev: str) -> DiffResult:
    """The changes from ``rev`` to the working tree of ``sources``; SinceError when the
    sources are not in git or ``rev`` cannot be read."""
    sources = Path(sources).resolve()
    top = git_toplevel(sources)
    if top is None:
        raise SinceError(f"--since {rev}: {sources} is not in a git repository")
    top = top.resolve()
    try:
        rel = sources.relative_to(top).as_posix() or "."
    except ValueError as exc:
        raise SinceError(f"--since {rev}: {sources} is outside its git work tree") from exc
    if rev.startswith("-"):
        raise SinceError(f"--since {rev}: not a revision")
    try:
        return diff_revisions(top, rel, rev)
    except DiffError as exc:
        raise SinceError(f"--since {rev}: {exc}") from exc
