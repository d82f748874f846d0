"""The results cache: computed numbers and rendered sheets of single items, kept between builds.

Each entry belongs to one item and one kind of work (``source`` file readings, ``species``
curves, ``reaction`` engine numbers, ``design`` numbers, ``sheet`` files) and is one row of
the SQLite database ``<cache>/results.sqlite`` with the primary key (kind, item), so there is
at most one entry per item and kind: a changed item overwrites its own entry and the cache
never grows past the handbook.  A row holds the key it was made for (generator.neighbourhood's
digest of everything the work could see, salted with ``code_identity``: the package's code
and templates and the library versions), the sha256 and length of its payload, then the
payload.  A get with any other key, or a row whose payload fails its checks (truncated,
corrupted), is a miss and the work is done again; nothing unverified is ever used.  One
database file instead of a file per entry: creating thousands of files costs far more than
writing the same bytes into one on some file systems, and SQLite (Python's standard library)
gives atomic writes and locking between the worker processes without code of ours.

The payload is a pickle: the folder is trusted like the sources and the code beside it (it
is the user's own, default ``.thermofolio-cache`` beside the sources); the checks guard
against damage, not against someone who may write there.
"""

from __future__ import annotations

import contextlib
import hashlib
import os
import pickle
import re
import sqlite3
import sys
from collections.abc import Callable, Iterator, Mapping
from pathlib import Path
from typing import Any, Protocol

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

    def put(self, kind: str, item: str, digest: str, result: Any) -> bytes | None: ...


class ResultsCache:
    """Get and put one pickled result per (kind, item) under a key, in one SQLite database
    (``<cache>/results.sqlite``); counts hits, misses and rejected entries.  A cache that
    cannot be read or written is skipped silently (the build still has the result it just
    made); a database that is not one any more is set aside and started afresh.

    Each process opens its own connection (a forked worker never uses its parent's), in
    autocommit mode: one row is one transaction, except the puts inside ``batch()``, which
    are written in one.  Write-ahead logging lets workers read while another writes;
    ``synchronous=NORMAL`` keeps the file sound after a crash at the price of the last
    writes, which a cache can lose."""

    def __init__(self, folder: Path, salt: str | None = None) -> None:
        self.path = os.path.join(os.path.abspath(folder), DATABASE)
        self.salt = code_identity() if salt is None else salt
        self._db: sqlite3.Connection | None = None
        self._pid = -1
        self._pending: tuple[int, list[tuple]] | None = None  # (pid, rows) inside batch()
        self.hits = 0
        self.misses = 0
        self.rejected = 0

    def __getstate__(self) -> dict:
        return {**self.__dict__, "_db": None, "_pid": -1,  # a connection does not travel
                "_pending": None}

    def key(self, digest: str) -> str:
        return hashlib.sha256(f"{self.salt}\0{digest}".encode()).hexdigest()

    def _connection(self) -> sqlite3.Connection:
        if self._db is None or self._pid != os.getpid():
            if self._db is not None:  # a parent's, inherited by fork: never used or closed
                _INHERITED.append(self._db)  # here (kept referenced, so never deallocated)
            self._db = None
            os.makedirs(os.path.dirname(self.path), exist_ok=True)
            db = sqlite3.connect(self.path, timeout=60.0, isolation_level=None,
                                 check_same_thread=False)
            try:
                db.execute("pragma journal_mode=wal")
                db.execute("pragma synchronous=normal")
                db.execute(_SCHEMA)
            except sqlite3.DatabaseError:
                db.close()
                raise
            self._db, self._pid = db, os.getpid()
        return self._db

    def _set_aside(self) -> None:
        """Move a damaged database out of the way (the next use starts a new one)."""
        if self._db is not None and self._pid == os.getpid():
            self._db.close()
        self._db = None
        for suffix in ("", "-wal", "-shm"):
            try:
                os.replace(self.path + suffix, f"{self.path}.damaged{suffix}")
            except OSError:
                pass

    def _on_database(self, work: Callable[[sqlite3.Connection], Any]) -> Any:
        """``work(connection)`` on this process's connection; a damaged database is set
        aside once and the work tried on a fresh one; other failures raise sqlite3.Error."""
        for attempt in (0, 1):
            try:
                return work(self._connection())
            except sqlite3.OperationalError:
                raise  # busy past the timeout, read-only folder, ...: not damage
            except sqlite3.DatabaseError:
                if attempt:
                    raise
                self._set_aside()
        raise AssertionError("unreachable")

    def _run(self, sql: str, args: tuple) -> list:
        """The rows of ``sql`` (see _on_database)."""
        return self._on_database(lambda db: db.execute(sql, args).fetchall())

    def get(self, kind: str, item: str, digest: str):
        """The result stored for ``item`` under ``digest``, or None."""
        _check_kind(kind)
        try:
            rows = self._run("select key, sha256, length, payload from entry "
                             "where kind = ? and item = ?", (kind, item))
        except (sqlite3.Error, OSError):
            rows = []
        return self._checked(rows[0] if rows else None, digest)

    def get_many(self, kind: str, digests: Mapping[str, str]) -> dict[str, Any]:
        """``get`` of every item (the keys of ``digests``) in one query: the items with a
        sound entry under their digest, each with its result."""
        _check_kind(kind)
        try:
            rows = self._run("select item, key, sha256, length, payload from entry "
                             "where kind = ?", (kind,))
        except (sqlite3.Error, OSError):
            rows = []
        stored = {row[0]: row[1:] for row in rows if row[0] in digests}
        found = {}
        for item, digest in digests.items():
            result = self._checked(stored.get(item), digest)
            if result is not None:
                found[item] = result
        return found

    def _checked(self, row: tuple | None, digest: str):
        """The result in ``row`` (key, sha256, length, payload) if it passes every check
        and was made under ``digest``, else None; counts hits, misses and rejections."""
        if row is None:
            self.misses += 1
            return None
        key, sha, length, payload = row
        payload = bytes(payload) if isinstance(payload, bytes | memoryview) else b""
        if len(payload) != length or hashlib.sha256(payload).hexdigest() != sha:
            self.rejected += 1
            self.misses += 1
            return None
        if key != self.key(digest):
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

    def put(self, kind: str, item: str, digest: str, result) -> bytes:
        """Store ``result`` for ``item`` under ``digest``; its pickled payload (which
        kept_or_made's workers send back instead of pickling the result a second time)."""
        _check_kind(kind)
        payload = pickle.dumps(result, protocol=5)
        row = (kind, item, self.key(digest), hashlib.sha256(payload).hexdigest(), len(payload),
               payload)
        if self._pending is not None and self._pending[0] == os.getpid():
            self._pending[1].append(row)
            return payload
        self._write([row])
        return payload

    @contextlib.contextmanager
    def batch(self) -> Iterator[ResultsCache]:
        """The puts inside the block are written together when it ends, in one transaction
        (a commit per row took about a third longer for the same rows on this machine);
        a block left by an exception writes nothing.  Nested blocks join the outer one; a
        block is its process's own (a process forked inside one writes its puts at once)."""
        if self._pending is not None and self._pending[0] == os.getpid():
            yield self
            return
        rows: list[tuple] = []
        self._pending = (os.getpid(), rows)
        try:
            yield self
        finally:
            self._pending = None
        self._write(rows)

    _INSERT = ("insert or replace into entry (kind, item, key, sha256, length, payload) "
               "values (?, ?, ?, ?, ?, ?)")

    def _write(self, rows: list[tuple]) -> None:
        """Store ``rows`` in one transaction (see _on_database); a cache that cannot be
        written is skipped."""
        if not rows:
            return

        def insert(db: sqlite3.Connection) -> None:
            if len(rows) == 1:
                db.execute(self._INSERT, rows[0])
                return
            db.execute("begin immediate")
            try:
                db.executemany(self._INSERT, rows)
                db.execute("commit")
            except BaseException:
                try:
                    db.execute("rollback")
                except sqlite3.Error:
                    pass  # no transaction left to roll back
                raise

        try:
            self._on_database(insert)
        except (sqlite3.Error, OSError):
            return


DATABASE = "results.sqlite"
_INHERITED: list[sqlite3.Connection] = []  # connections a forked process got from its parent
_SCHEMA = ("create table if not exists entry (kind text not null, item text not null, "
           "key text not null, sha256 text not null, length integer not null, "
           "payload blob not null, primary key (kind, item))")


def _check_kind(kind: str) -> None:
    if not re.fullmatch(r"[a-z]+", kind):
        raise ValueError(f"not a result kind: {kind!r}")


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
                 jobs: int = 1, prepare: Callable[[list[str]], None] | None = None) -> dict:
    """Each item's result (items: the keys of ``digests``, in order): from ``results`` when
    an entry of ``result_type`` is kept under the item's digest, else ``make_one(shared,
    item)``, made by ``jobs`` forked processes (generator.parallel.fork_map), each storing
    what it made back into ``results``.  ``prepare(items to make)`` runs here first, when
    there are any: what it warms, every worker inherits instead of making it again."""
    from generator.parallel import fork_map, split

    done: dict = {}
    if results is not None:
        many = getattr(results, "get_many", None)
        found = many(kind, digests) if many is not None else {
            item: results.get(kind, item, digest) for item, digest in digests.items()}
        done = {item: hit for item, hit in found.items() if isinstance(hit, result_type)}
    todo = [item for item in digests if item not in done]
    if todo and prepare is not None:
        prepare(todo)

    parent = os.getpid()

    def make_and_keep(shared_: Any, chunk: list[str]) -> list | Payloads:
        with batched(results):  # a chunk's entries in one transaction
            made = [make_one(shared_, item) for item in chunk]
            payloads = [] if results is None else [
                results.put(kind, item, digests[item], result)
                for item, result in zip(chunk, made, strict=True)]
        if os.getpid() != parent and payloads and all(isinstance(p, bytes) for p in payloads):
            return Payloads(payloads)  # the bytes just stored: no second pickling to send
        return made

    chunks = split(todo, jobs)
    for chunk, made in zip(chunks, fork_map(make_and_keep, chunks, jobs, shared, 2,
                                            receive=_unpickled), strict=True):
        done.update(zip(chunk, made, strict=True))
    return {item: done[item] for item in digests}


def _unpickled(made: list | Payloads) -> list:
    """A chunk's results as a worker sent them back (see make_and_keep)."""
    if isinstance(made, Payloads):
        return [pickle.loads(payload) for payload in made]
    return made


class Payloads(tuple):
    """A forked worker's results as the pickled payloads it stored in the results cache:
    sent back as they are, so each result is pickled once (the same objects a cache hit
    gives)."""


def batched(results: ResultStore | None) -> contextlib.AbstractContextManager:
    """``results.batch()`` where the store has one, else a block that does nothing."""
    batch = getattr(results, "batch", None)
    return batch() if batch is not None else contextlib.nullcontext()
