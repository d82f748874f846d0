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
             min_items: int | None = None, in_order: bool = False) -> list:
    """``[fn(shared, x) for x in items]``; ``min_items`` defaults to MIN_ITEMS, read at each
    call.  The items go out in interleaved chunks (even loads), or with ``in_order`` one by
    one in their order (items the caller has sized already, as guided makes them)."""
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
        with multiprocessing.get_context("fork").Pool(jobs) as pool:
            # one chunk per dispatch: a worker that finishes early takes the next one
            parts = pool.map(_run_chunk, chunks, chunksize=1)
    finally:
        _TASK = None
        gc.unfreeze()
    results: list = [None] * len(items)
    for i, part in enumerate(parts):
        results[i::n_chunks] = part
    return results
