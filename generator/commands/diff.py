"""``thermofolio diff OLD [NEW]``: what changed between two editions of the sources."""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
from pathlib import Path

from generator.caution import CAUTION


def register(sub) -> None:
    p = sub.add_parser("diff", help="compare two editions: source trees or git revisions",
                       description="List added, removed and changed species, reactions, "
                       "references and values (old → new), then the derived results that "
                       "moved because of them, largest first.  OLD and NEW are each a "
                       "handbook folder or a git revision (HEAD~3, a tag) of the repository "
                       "holding --sources; NEW defaults to the working tree.")
    p.add_argument("old", help="handbook folder or git revision")
    p.add_argument("new", nargs="?", default=None, help="handbook folder or git revision "
                   "(default: the working tree of --sources)")
    p.add_argument("--sources", default="sources", help="the handbook folder in the "
                   "repository, for revisions (default: sources)")
    p.add_argument("--format", choices=("text", "json"), default="text")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    from generator.edition_diff import (
        DiffError,
        diff_trees,
        extract_revision,
        git_toplevel,
    )

    sources = Path(args.sources)
    with tempfile.TemporaryDirectory(prefix="thermofolio-diff-") as tmp:
        roots = []
        for name, spec in (("old", args.old), ("new", args.new)):
            if spec is None:
                roots.append((sources, f"the working tree ({args.sources})"))
                continue
            if Path(spec).is_dir():
                roots.append((Path(spec), spec))
                continue
            top = git_toplevel(sources if sources.is_dir() else Path.cwd())
            if top is None:
                print(f"thermofolio diff: '{spec}' is not a folder, and {args.sources} is not "
                      "in a git repository to read a revision from", file=sys.stderr)
                return 2
            rel = (sources.resolve().relative_to(top.resolve()).as_posix()
                   if sources.is_dir() else str(sources))
            try:
                roots.append((extract_revision(top, rel, spec, Path(tmp) / name), spec))
            except DiffError as exc:
                print(f"thermofolio diff: {exc}", file=sys.stderr)
                return 2
        (old_root, old_label), (new_root, new_label) = roots
        result = diff_trees(old_root, new_root, old_label, new_label)
    # The derived results that moved are computed output: they carry the caution too.
    if args.format == "json":
        doc = result.to_json()
        doc["caution"] = CAUTION
        print(json.dumps(doc, indent=2, ensure_ascii=False))
    else:
        sys.stdout.write(result.to_text())
        print(f"\nCAUTION: {CAUTION}")
    for e in result.errors:
        print(f"thermofolio diff: {e}", file=sys.stderr)
    return 1 if result.errors else 0
