"""Work split over forked worker processes that inherit what they work on.

``fork_map(fn, items, jobs, shared)`` is ``[fn(shared, item) for item in items]``, computed
in ``jobs`` forked processes when there are at least ``min_items`` items and the platform
forks.  The workers inherit ``shared`` (a computed handbook, say) through the fork instead of
receiving it pickled; only the items go out and the results come back.  Results are in the
order of ``items`` whatever the split, and ``fn`` must be a pure function, so the output is
the same with one process or many.
"""

from __future__ import annotations

import gc
import multiprocessing
import os
import pickle
import queue
import threading
from collections.abc import Callable, Sequence
from typing import Any

MIN_ITEMS = 200  # fewer items than this are worked on in the calling process
CHUNKS_PER_JOB = 8  # small enough that no worker idles long at the end of a split
_TASK: tuple[Callable, Any] | None = None  # (fn, shared), set just before the fork


def default_jobs() -> int:
    """The cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def can_fork() -> bool:
    """The platform forks and this process runs one thread: a fork copies only the calling
    thread, so locks another thread holds (the preview server's, say) would never be
    released in the child; with other threads running, the work stays in this process."""
    return "fork" in multiprocessing.get_all_start_methods() and threading.active_count() == 1


def split(items: Sequence, jobs: int) -> list[list]:
    """``items`` in the chunks fork_map would make of them, interleaved for even loads: one
    chunk (all of them) when they would be worked on in this process, none for none."""
    items = list(items)
    if not items:
        return []
    if jobs < 2 or len(items) < MIN_ITEMS or not can_fork():
        return [items]
    return _interleaved(items, jobs)


def guided(items: Sequence, jobs: int, smallest: int = 8) -> list[list]:
    """``items`` in chunks that shrink as the work runs out, for ``fork_map(...,
    in_order=True)`` (guided self-scheduling: Polychronopoulos and Kuck, IEEE Transactions
    on Computers C-36, 1987): each chunk takes 1/(2 x jobs) of what is left, and no fewer than
    ``smallest``, so the last ones are short and no worker idles long while another
    finishes.  The items are taken in split's interleaved order, so a chunk mixes kinds that
    sit together in ``items``.  One chunk (all of them) when they would be worked on in this
    process, none for none."""
    items = list(items)
    if not items:
        return []
    if jobs < 2 or len(items) < MIN_ITEMS or not can_fork():
        return [items]
    mixed = [x for chunk in _interleaved(items, jobs) for x in chunk]
    out: list[list] = []
    start = 0
    while start < len(mixed):
        size = max(smallest, -(-(len(mixed) - start) // (2 * jobs)))
        out.append(mixed[start:start + size])
        start += size
    return out


def _interleaved(items: list, jobs: int) -> list[list]:
    """CHUNKS_PER_JOB chunks per job (fewer for fewer items), item i in chunk i mod n."""
    n = min(len(items), CHUNKS_PER_JOB * jobs)
    return [items[i::n] for i in range(n)]


def _run_chunk(items: Sequence) -> list:
    assert _TASK is not None
    fn, shared = _TASK
    return [fn(shared, item) for item in items]


def fork_map(fn: Callable[[Any, Any], Any], items: Sequence, jobs: int, shared: Any = None,
             min_items: int | None = None, in_order: bool = False,
             receive: Callable[[Any], Any] | None = None) -> list:
    """``[fn(shared, x) for x in items]``; ``min_items`` defaults to MIN_ITEMS, read at each
    call.  The items go out in interleaved chunks (even loads), or with ``in_order`` one by
    one in their order (items the caller has sized already, as guided makes them).
    This process works on the chunks too, beside ``jobs`` - 1 forked workers (each takes
    the next chunk when it finishes one), so what it makes itself is never sent between
    processes.  ``receive(result)`` is applied here to each result a worker sends back,
    not to results made in this process."""
    global _TASK
    items = list(items)
    if min_items is None:
        min_items = MIN_ITEMS
    if jobs < 2 or len(items) < min_items or not can_fork():
        return [fn(shared, x) for x in items]
    chunks = [[x] for x in items] if in_order else _interleaved(items, jobs)
    n_chunks = len(chunks)
    _TASK = (fn, shared)
    # Everything alive now is moved out of the collector's sight while the workers run
    # (gc.freeze, as the gc module's documentation advises before a fork): their full
    # collections then skip the inherited heap instead of walking it, and do not dirty its
    # pages, which would copy them.
    gc.freeze()
    try:
        parts = _shared_run(chunks, jobs - 1, receive)
    finally:
        _TASK = None
        gc.unfreeze()
    results: list = [None] * len(items)
    for i, part in enumerate(parts):
        results[i::n_chunks] = part
    return results


def _take(counter) -> int:
    """The index of the next chunk to work on (shared by this process and its workers)."""
    with counter.get_lock():
        i = counter.value
        counter.value = i + 1
    return i


def _work(chunks: Sequence[Sequence], counter, conn) -> None:
    """A forked worker: take chunks until none is left, sending each one's results back
    as (index, results, None), a failure as (index, None, exception)."""
    while (i := _take(counter)) < len(chunks):
        try:
            message = pickle.dumps((i, _run_chunk(chunks[i]), None), protocol=5)
        except BaseException as exc:  # noqa: BLE001 - every failure reaches the caller
            try:
                message = pickle.dumps((i, None, exc), protocol=5)
            except Exception:  # noqa: BLE001 - an exception that does not pickle
                message = pickle.dumps((i, None, RuntimeError(repr(exc))), protocol=5)
            conn.send_bytes(message)
            break
        conn.send_bytes(message)
    conn.close()


def _shared_run(chunks: Sequence[Sequence], workers: int,
                receive: Callable[[Any], Any] | None) -> list[list]:
    """Every chunk's results, in chunk order, made by this process and ``workers`` forked
    ones that take chunks from one shared counter.  A thread per worker reads what it
    sends (so a worker never waits on a full pipe while this process works); the results
    that arrived are taken in between this process's own chunks."""
    ctx = multiprocessing.get_context("fork")
    counter = ctx.Value("q", 0)
    procs, conns, readers = [], [], []
    finished = False
    try:
        for _ in range(workers):
            reader, writer = ctx.Pipe(duplex=False)
            proc = ctx.Process(target=_work, args=(chunks, counter, writer), daemon=True)
            proc.start()
            writer.close()
            procs.append(proc)
            conns.append(reader)
        arrived: queue.SimpleQueue = queue.SimpleQueue()
        for conn in conns:
            readers.append(threading.Thread(target=_read_all, args=(conn, arrived),
                                            daemon=True, name="thermofolio-fork-map-reader"))
            readers[-1].start()
        parts: list[list | None] = [None] * len(chunks)
        left = len(chunks)
        open_conns = len(conns)

        def take(message: bytes | None) -> None:
            nonlocal left, open_conns
            if message is None:
                open_conns -= 1
                return
            i, part, exc = pickle.loads(message)
            if exc is not None:
                raise exc
            parts[i] = part if receive is None else [receive(r) for r in part]
            left -= 1

        while (i := _take(counter)) < len(chunks):
            parts[i] = _run_chunk(chunks[i])
            left -= 1
            while not arrived.empty():
                take(arrived.get())
        while left:
            if not open_conns:
                raise RuntimeError("a worker process ended without sending its results")
            take(arrived.get())
        finished = True
        return parts  # type: ignore[return-value]
    finally:
        for proc in procs:
            if not finished:  # a failure here or in a worker: the rest of the work is moot
                proc.terminate()
            proc.join()
        for thread in readers:  # each ends at its worker's end of the pipe: the next
            thread.join()  # fork_map must find this process running one thread again
        for conn in conns:
            conn.close()


def _read_all(conn, arrived: queue.SimpleQueue) -> None:
    """Put every message ``conn`` brings into ``arrived``, then None when it closes."""
    try:
        while True:
            arrived.put(conn.recv_bytes())
    except (EOFError, OSError):
        arrived.put(None)
