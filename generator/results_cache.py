"""The results cache: computed numbers and rendered sheets of single items, kept between builds.

Each entry belongs to one item and one kind of work (``reaction`` engine numbers, ``design``
numbers, ``sheet`` files) and is stored under ``<cache>/results/<kind>/<name>.pickle``,
``name`` a digest of the item id, so there is at most one entry per item and kind: a changed
item overwrites its own entry and the cache never grows past the handbook.  An entry holds
the key it was made for (generator.neighbourhood's digest of everything the work could see,
salted with ``code_identity``: the package's code and templates and the library versions),
the sha256 and length of its payload, then the payload.  A get with any other key, or an
entry whose payload fails its checks (truncated, corrupted), is a miss and the work is done
again; nothing unverified is ever used.  Entries are written to a temporary file and renamed
into place.

The payload is a pickle: the folder is trusted like the sources and the code beside it (it
is the user's own, default ``.thermofolio-cache`` beside the sources); the checks guard
against damage, not against someone who may write there.
"""

from __future__ import annotations

import hashlib
import os
import pickle
import re
import sys
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any, Protocol

FOLDER = "results"
_HEAD = re.compile(rb"thermofolio-result 1 ([0-9a-f]{64}) ([0-9a-f]{64}) ([0-9]+)\n")
LIBRARIES = ("numpy", "matplotlib", "jinja2", "markupsafe", "markdown", "nh3", "pint",
             "pyyaml", "molmass")


def tree_digest(h, base: Path, skip_hidden: bool) -> float:
    """Feed every file under ``base`` (relative path and bytes, sorted; no ``__pycache__``)
    into ``h``; returns the newest modification time seen."""
    newest = 0.0
    base_s = os.path.abspath(base)
    for dirpath, dirs, names in os.walk(base_s):
        rel_dir = os.path.relpath(dirpath, base_s)
        parts = () if rel_dir == "." else tuple(rel_dir.split(os.sep))
        dirs[:] = sorted(d for d in dirs if not (skip_hidden and d.startswith("."))
                         and d != "__pycache__")
        for name in sorted(names):
            if (skip_hidden and name.startswith(".")) or name.endswith((".pyc", ".pyo")):
                continue
            full = os.path.join(dirpath, name)
            if not os.path.isfile(full):
                continue
            with open(full, "rb") as fh:
                data = fh.read()
            rel = "/".join((*parts, name))
            h.update(f"{rel}\0{len(data)}\0".encode())
            h.update(data)
            newest = max(newest, os.stat(full).st_mtime)
    return newest


def library_versions() -> str:
    """Python's version and those of the libraries the output depends on."""
    from importlib import metadata

    out = [sys.version]
    for name in LIBRARIES:
        try:
            out.append(f"{name}={metadata.version(name)}")
        except metadata.PackageNotFoundError:
            out.append(f"{name}=none")
    return "\n".join(out)


def code_identity() -> str:
    """sha256 of the package's files, the templates beside it and the library versions:
    any change to the code that computes or renders changes it."""
    import generator

    h = hashlib.sha256(b"thermofolio code 1\0")
    package = Path(generator.__file__).resolve().parent
    h.update(f"{generator.__version__}\0{library_versions()}\0".encode())
    tree_digest(h, package, skip_hidden=False)
    outside = package.parent / "site_templates"
    if outside.is_dir():
        h.update(b"\0templates\0")
        tree_digest(h, outside, skip_hidden=False)
    return h.hexdigest()


class ResultStore(Protocol):
    """What the compute and render stages need of a cache (they do no I/O themselves)."""

    def get(self, kind: str, item: str, digest: str) -> Any: ...

    def put(self, kind: str, item: str, digest: str, result: Any) -> None: ...


class ResultsCache:
    """Get and put one pickled result per (kind, item) under a key; counts hits, misses
    and rejected entries.  A cache that cannot be written is skipped silently (the build
    still has the result it just made)."""

    def __init__(self, folder: Path, salt: str | None = None) -> None:
        self.folder = Path(folder) / FOLDER
        self.salt = code_identity() if salt is None else salt
        self._made: set[str] = set()
        self.hits = 0
        self.misses = 0
        self.rejected = 0

    def key(self, digest: str) -> str:
        return hashlib.sha256(f"{self.salt}\0{digest}".encode()).hexdigest()

    def entry(self, kind: str, item: str) -> Path:
        return Path(self._entry(kind, item))

    def _entry(self, kind: str, item: str) -> str:
        if not re.fullmatch(r"[a-z]+", kind):
            raise ValueError(f"not a result kind: {kind!r}")
        name = hashlib.sha256(item.encode("utf-8")).hexdigest()[:40]
        return os.path.join(self.folder, kind, f"{name}.pickle")

    def get(self, kind: str, item: str, digest: str):
        """The result stored for ``item`` under ``digest``, or None."""
        try:
            with open(self._entry(kind, item), "rb") as fh:
                data = fh.read()
        except OSError:
            self.misses += 1
            return None
        m = _HEAD.match(data)
        payload = data[m.end():] if m else b""
        if m is None or len(payload) != int(m.group(3)) or \
                hashlib.sha256(payload).hexdigest().encode() != m.group(2):
            self.rejected += 1
            self.misses += 1
            return None
        if m.group(1).decode() != self.key(digest):
            self.misses += 1
            return None
        try:
            result = pickle.loads(payload)
        except Exception:  # a payload of an older layout; recompute  # noqa: BLE001
            self.rejected += 1
            self.misses += 1
            return None
        self.hits += 1
        return result

    def put(self, kind: str, item: str, digest: str, result) -> None:
        path = self._entry(kind, item)
        payload = pickle.dumps(result, protocol=5)
        head = (f"thermofolio-result 1 {self.key(digest)} "
                f"{hashlib.sha256(payload).hexdigest()} {len(payload)}\n").encode()
        folder = os.path.dirname(path)
        try:
            if folder not in self._made:
                os.makedirs(folder, exist_ok=True)
                self._made.add(folder)
            write_atomically(path, (head, payload))
        except OSError:
            return


def write_atomically(path: str, chunks, mode: int = 0o600) -> None:
    """Write ``chunks`` (bytes) to a temporary file beside ``path`` and rename it into
    place, so a reader sees no file or a whole one.  The temporary name is this process's
    own (no random names: a build writes thousands of entries)."""
    tmp = os.path.join(os.path.dirname(path), f".tmp-{os.getpid()}-{os.path.basename(path)}")
    try:
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, mode)
    except FileExistsError:  # left by a killed process that had this pid
        os.unlink(tmp)
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, mode)
    try:
        with os.fdopen(fd, "wb") as fh:
            for chunk in chunks:
                fh.write(chunk)
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def kept_or_made(results: ResultStore | None, kind: str, digests: Mapping[str, str],
                 result_type: type, make_one: Callable[[Any, str], Any], shared: Any,
                 jobs: int = 1) -> dict:
    """Each item's result (items: the keys of ``digests``, in order): from ``results`` when
    an entry of ``result_type`` is kept under the item's digest, else ``make_one(shared,
    item)``, made by ``jobs`` forked processes (generator.parallel.fork_map), each storing
    what it made back into ``results``."""
    from generator.parallel import fork_map

    done: dict = {}
    if results is not None:
        for item, digest in digests.items():
            hit = results.get(kind, item, digest)
            if isinstance(hit, result_type):
                done[item] = hit
    todo = [item for item in digests if item not in done]

    def make_and_keep(shared_: Any, item: str) -> Any:
        result = make_one(shared_, item)
        if results is not None:
            results.put(kind, item, digests[item], result)
        return result

    for item, result in zip(todo, fork_map(make_and_keep, todo, jobs, shared), strict=True):
        done[item] = result
    return {item: done[item] for item in digests}
