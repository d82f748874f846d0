"""Record a review in an item's source file, with the digest of the content reviewed.

Only the file's top-level ``review`` block is rewritten; every other byte of the file (its
comments, quoting, line breaks inside flow lists) stays as it was.  The block itself is
edited with ruamel.yaml in round-trip mode, so comments and the flow or block style inside
it survive too.  A file without a review block gets one before its ``notes`` (or at the
end).  The result is parsed again with the handbook's own reader before it is written: the
content digest must be unchanged and the review must read back as recorded.
"""

from __future__ import annotations

import datetime as dt
import io
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path

from ruamel.yaml import YAML
from ruamel.yaml.comments import CommentedMap
from ruamel.yaml.scalarstring import DoubleQuotedScalarString

from generator.digest import content_digest
from generator.model import REVIEW_STATUSES
from generator.yamlsource import parse_yaml_text

REVIEW_KEY = "review"


class ReviewError(Exception):
    """The review could not be recorded; the file is untouched."""


@dataclass(frozen=True)
class RecordedReview:
    path: str
    item: str
    status: str
    by: str
    date: str
    note: str | None
    digest: str
    previous_digest: str | None


def _rt() -> YAML:
    y = YAML(typ="rt")
    y.preserve_quotes = True
    y.width = 4096  # never re-wrap a long note
    y.indent(mapping=2, sequence=4, offset=2)
    return y


def _top_level_key_lines(text: str) -> dict[str, int]:
    """0-based line of each top-level key, from ruamel's round-trip line records."""
    data = _rt().load(text)
    if not isinstance(data, CommentedMap) or data.fa.flow_style():
        raise ReviewError("the file is not a block mapping; cannot record a review in it")
    return {str(k): data.lc.key(k)[0] for k in data}


def _block_end(lines: list[str], start: int, next_key_line: int) -> int:
    """End (exclusive) of the block starting at ``start``: trailing blank lines and
    column-0 comments before the next key belong to what follows, not to the block."""
    end = next_key_line
    while end > start + 1 and (not lines[end - 1].strip() or lines[end - 1].startswith("#")):
        end -= 1
    return end


def _render(block_text: str | None, status: str, by: str, date: str, note: str | None,
            digest: str) -> str:
    y = _rt()
    doc = y.load(block_text) if block_text else None
    if not isinstance(doc, CommentedMap) or not isinstance(doc.get(REVIEW_KEY), CommentedMap):
        doc = CommentedMap()
        doc[REVIEW_KEY] = CommentedMap()
    rm = doc[REVIEW_KEY]
    rm["status"] = status
    rm["by"] = DoubleQuotedScalarString(by)
    rm["date"] = DoubleQuotedScalarString(date)
    if note is not None:
        rm["note"] = DoubleQuotedScalarString(note)
    rm["digest"] = DoubleQuotedScalarString(digest)
    out = io.StringIO()
    y.dump(doc, out)
    return out.getvalue()


def review_text(text: str, display: str, status: str, by: str, date: str,
                note: str | None = None) -> tuple[str, RecordedReview]:
    """The file text with the review recorded (pure: no file access)."""
    if status not in REVIEW_STATUSES:
        raise ReviewError(f"unknown review status '{status}' (use {', '.join(REVIEW_STATUSES)})")
    try:
        dt.date.fromisoformat(date)
    except ValueError as exc:
        raise ReviewError(f"review date '{date}' is not an ISO date (YYYY-MM-DD)") from exc
    if not by.strip():
        raise ReviewError("--by needs the reviewer's name")
    doc, findings = parse_yaml_text(text, display)
    if findings or not isinstance(doc, dict):
        first = findings[0].format() if findings else f"{display}: not a mapping"
        raise ReviewError(f"cannot read the file: {first}")
    digest = content_digest(doc)
    assert digest is not None
    old = doc.get(REVIEW_KEY)
    previous = old.get("digest") if isinstance(old, dict) else None

    keys = _top_level_key_lines(text)
    lines = text.splitlines(keepends=True)
    if lines and not lines[-1].endswith("\n"):
        lines[-1] += "\n"
    order = sorted(keys.items(), key=lambda kv: kv[1])
    if REVIEW_KEY in keys:
        start = keys[REVIEW_KEY]
        later = [ln for _k, ln in order if ln > start]
        end = _block_end(lines, start, later[0] if later else len(lines))
        block = _render("".join(lines[start:end]), status, by, date, note, digest)
        new_lines = lines[:start] + [block] + lines[end:]
    else:
        block = _render(None, status, by, date, note, digest)
        at = keys.get("notes", len(lines))
        while at > 0 and lines[at - 1].startswith("#") and "notes" in keys:
            at -= 1
        new_lines = lines[:at] + [block] + lines[at:]
    new_text = "".join(new_lines)

    check, fs = parse_yaml_text(new_text, display)
    if fs or not isinstance(check, dict) or content_digest(check) != digest:
        raise ReviewError("internal error: recording the review would change the content")
    rv = check.get(REVIEW_KEY)
    if not (isinstance(rv, dict) and rv.get("status") == status and rv.get("by") == by
            and rv.get("date") == date and rv.get("digest") == digest):
        raise ReviewError("internal error: the recorded review does not read back")
    item = str(doc.get("id", ""))
    return new_text, RecordedReview(display, item, status, by, date, note, digest, previous)


def record_review(file: Path, status: str, by: str, date: str, note: str | None = None,
                  display: str | None = None) -> RecordedReview:
    """Rewrite ``file`` with the review recorded; atomic (a temporary file, then rename)."""
    file = Path(file)
    text = file.read_text(encoding="utf-8")
    new_text, rec = review_text(text, display or str(file), status, by, date, note)
    fd, tmp = tempfile.mkstemp(dir=file.parent, prefix=f".{file.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            fh.write(new_text)
        os.replace(tmp, file)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return rec


def find_item_file(root: Path, item: str) -> Path | None:
    """The species or reaction file whose ``id`` is ``item`` (or ``item`` itself, a path)."""
    p = Path(item)
    if p.suffix in (".yaml", ".yml") and p.is_file():
        return p
    for folder in ("species", "reactions"):
        d = Path(root) / folder
        if not d.is_dir():
            continue
        guess = d / f"{item}.yaml"
        candidates = ([guess] if guess.is_file() else []) + sorted(
            f for f in d.iterdir() if f.suffix in (".yaml", ".yml") and f != guess)
        for f in candidates:
            doc, fs = parse_yaml_text(f.read_text(encoding="utf-8"), str(f))
            if isinstance(doc, dict) and doc.get("id") == item:
                return f
    return None
