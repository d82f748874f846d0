"""The chart cache: drawn SVGs kept outside the site, addressed by what they show.

An entry is ``<folder>/<key[:2]>/<key>.svg`` where ``key`` is the sha256 of the chart spec's
canonical bytes (values rounded to 40 mantissa bits), the house-style version and the
matplotlib and thermofolio versions (generator.charts.spec_digest), optionally salted with
the drawing function's name.  The file is the SVG document followed by one trailing comment
line holding the sha256 and length of the document's bytes, so a truncated or corrupted entry
is detected on reading, reported as a miss and redrawn; it is never published.  Entries are
written to a temporary file and renamed into place, so a reader sees either no entry or a
whole one.
"""

from __future__ import annotations

import hashlib
import os
import re
from pathlib import Path

from generator.results_cache import write_atomically

DEFAULT_FOLDER = ".thermofolio-cache"
_TRAILER = re.compile(rb"<!-- thermofolio-cache sha256=([0-9a-f]{64}) bytes=([0-9]+) -->\n\Z")
_KEY = re.compile(r"[0-9a-f]{64}")


def default_folder(sources: Path) -> Path:
    """``.thermofolio-cache`` beside the sources folder (its parent holds both)."""
    return Path(os.path.abspath(sources)).parent / DEFAULT_FOLDER


def cache_key(spec_digest: str, renderer: str = "") -> str:
    """The entry key: the spec digest itself, or salted with the drawing function's name when
    a stand-in renderer is used, so its output never mixes with real charts."""
    if not renderer:
        return spec_digest
    return hashlib.sha256(f"{spec_digest}\n{renderer}".encode()).hexdigest()


_SPACE = b" \t\n\r\x0b\x0c"  # what bytes.strip() strips
_LEADING_SPACE = re.compile(b"[" + re.escape(_SPACE) + b"]*")


def looks_like_svg(svg: bytes, end: int | None = None) -> bool:
    """A cheap parse check of ``svg[:end]``: an XML declaration or <svg> first, a closing
    </svg> last (ASCII white space around them ignored; nothing is copied)."""
    end = len(svg) if end is None else end
    start = _LEADING_SPACE.match(svg, 0, end).end()  # type: ignore[union-attr]
    if not svg.startswith((b"<?xml", b"<svg", b"<!DOCTYPE svg"), start, end):
        return False
    while end > start and svg[end - 1] in _SPACE:
        end -= 1
    return svg.endswith(b"</svg>", start, end)


class ChartCache:
    """Get and put SVG bytes by key; counts hits, misses and rejected (corrupt) entries."""

    def __init__(self, folder: Path) -> None:
        self.folder = Path(folder)
        self._prefix = os.path.join(os.fspath(self.folder), "")
        self._names: dict[str, str] = {}
        self.hits = 0
        self.misses = 0
        self.rejected = 0

    def entry(self, key: str) -> Path:
        return Path(self.entry_name(key))

    def entry_name(self, key: str) -> str:
        """The entry's file name as a string (no Path objects, each key checked and joined
        once: a build asks for thousands, each three times)."""
        name = self._names.get(key)
        if name is None:
            if not _KEY.fullmatch(key):
                raise ValueError(f"not a chart cache key: {key!r}")
            name = self._names[key] = f"{self._prefix}{key[:2]}{os.sep}{key}.svg"
        return name

    def get(self, key: str) -> bytes | None:
        """The SVG stored under ``key``, or None if absent or failing its checks (a failing
        entry is deleted so the next put replaces it)."""
        data = self.get_entry(key)
        return None if data is None else data[:data.rfind(_MARK)]

    def get_entry(self, key: str) -> bytes | None:
        """The whole entry under ``key`` (the SVG and its trailer: the bytes a site
        publishes, see ``entry_bytes``) once it passes its checks, else None as ``get``."""
        found = self.get_checked(key)
        return None if found is None else found[0]

    def get_checked(self, key: str) -> tuple[bytes, str] | None:
        """``get_entry``'s bytes and their sha256 (hex, as the site's manifest lists the
        file), made in the same pass as the check of the document's own sha256."""
        path = self.entry_name(key)
        try:
            with open(path, "rb") as fh:
                data = fh.read()
        except OSError:
            self.misses += 1
            return None
        whole = _verified(data)
        if whole is None:
            self.rejected += 1
            self.misses += 1
            try:
                os.unlink(path)
            except OSError:
                pass
            return None
        self.hits += 1
        return data, whole

    def put(self, key: str, svg: bytes) -> bool:
        """Store ``svg`` under ``key`` atomically (as ``entry_bytes``, with the permissions
        of any new file, so a site may hard-link it); False when the cache cannot be
        written (the build still publishes the freshly drawn chart)."""
        path = self.entry_name(key)
        try:
            os.makedirs(os.path.dirname(path), exist_ok=True)
            write_atomically(path, (entry_bytes(svg),), mode=0o666)
        except OSError:
            return False
        return True


_MARK = b"<!-- thermofolio-cache "


def entry_bytes(svg: bytes) -> bytes:
    """``svg`` with its trailer: one comment line after the document holding the sha256 and
    length of the document's bytes.  Published charts are these bytes too, whether they
    came from the cache or not, so the site is the same with or without a cache."""
    return svg + (f"<!-- thermofolio-cache sha256={hashlib.sha256(svg).hexdigest()} "
                  f"bytes={len(svg)} -->\n").encode()


def _verified(data: bytes) -> str | None:
    """The sha256 (hex) of a whole entry if its document's length, sha256 and shape check
    out (the document's hash, continued over the trailer, is the whole entry's)."""
    cut = data.rfind(_MARK)
    if cut < 0:
        return None
    match = _TRAILER.match(data, cut)
    if match is None:
        return None
    if cut != int(match.group(2)):
        return None
    view = memoryview(data)
    h = hashlib.sha256(view[:cut])
    if h.hexdigest().encode() != match.group(1):
        return None
    if not looks_like_svg(data, cut):
        return None
    h.update(view[cut:])
    return h.hexdigest()
