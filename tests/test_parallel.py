"""fork_map: the same results in the same order with one process or several."""

from __future__ import annotations

import os

import pytest

from generator import parallel


def _square_and_pid(shared, x):
    return shared * x * x, os.getpid()


def test_results_keep_the_order_of_the_items_whatever_the_split():
    items = list(range(23))
    one = parallel.fork_map(_square_and_pid, items, 1, 3, min_items=2)
    many = parallel.fork_map(_square_and_pid, items, 3, 3, min_items=2)
    assert [r for r, _pid in one] == [3 * x * x for x in items]
    assert [r for r, _pid in many] == [r for r, _pid in one]
    assert {pid for _r, pid in one} == {os.getpid()}


def _slow_square_and_pid(shared, x):
    import time

    time.sleep(0.02)  # long enough for every process to take some of the work
    return shared * x * x, os.getpid()


@pytest.mark.skipif(not parallel.can_fork(), reason="the platform does not fork")
def test_this_process_and_its_workers_share_the_chunks():
    items = list(range(40))
    many = parallel.fork_map(_slow_square_and_pid, items, 3, 2, min_items=2)
    assert [r for r, _pid in many] == [2 * x * x for x in items]
    pids = {pid for _r, pid in many}
    assert os.getpid() in pids and len(pids) == 3  # this process and two forked workers
    assert parallel.can_fork()  # its reading threads are gone: the next stage forks again


def _pickled_result(shared, x):
    import pickle

    return pickle.dumps(x * shared)


@pytest.mark.skipif(not parallel.can_fork(), reason="the platform does not fork")
def test_receive_applies_to_the_results_workers_send_only():
    import pickle

    items = list(range(30))
    seen = []

    def receive(r):
        seen.append(r)
        return ("received", pickle.loads(r))

    out = parallel.fork_map(_slow_bytes, items, 2, 5, min_items=2, in_order=True,
                            receive=receive)
    for x, r in zip(items, out, strict=True):
        assert r == ("received", 5 * x) or r == pickle.dumps(5 * x)
    assert seen and len(seen) < len(items)  # some made here, some sent by the worker


def _slow_bytes(shared, x):
    import time

    time.sleep(0.02)
    return _pickled_result(shared, x)


def _dies(_shared, x):
    import time

    if os.getpid() != _PARENT[0]:
        os._exit(7)  # a worker killed mid-work: nothing sent back
    time.sleep(0.05)  # this process is slow, so the worker surely takes an item
    return x


_PARENT = [os.getpid()]


@pytest.mark.skipif(not parallel.can_fork(), reason="the platform does not fork")
def test_a_worker_that_dies_is_an_error_not_a_hang():
    _PARENT[0] = os.getpid()
    with pytest.raises(RuntimeError, match="ended without sending"):
        parallel.fork_map(_dies, list(range(12)), 2, min_items=2, in_order=True)
    assert parallel.can_fork()


def test_in_order_results_keep_the_order_too():
    items = list(range(23))
    many = parallel.fork_map(_square_and_pid, items, 3, 3, min_items=2, in_order=True)
    assert [r for r, _pid in many] == [3 * x * x for x in items]


@pytest.mark.skipif(not parallel.can_fork(), reason="the platform does not fork")
def test_guided_chunks_shrink_and_hold_every_item_once():
    items = [f"k{i}" for i in range(2004)]
    chunks = parallel.guided(items, 2)
    sizes = [len(c) for c in chunks]
    # each takes a quarter of what is left (2 jobs), the last ones the minimum of 8
    assert sizes[:3] == [501, 376, 282]
    assert sizes == sorted(sizes, reverse=True) and max(sizes[-3:]) <= 8
    assert sorted(x for c in chunks for x in c) == sorted(items)
    # the long chunks mix the start and the end of the list (kinds that sit together)
    for chunk in chunks[:6]:
        assert set(chunk) & set(items[:1000]) and set(chunk) & set(items[1000:])
    assert parallel.guided(items[:5], 2) == [items[:5]]  # below MIN_ITEMS: one chunk
    assert parallel.guided([], 2) == []


def test_below_the_threshold_everything_stays_in_this_process():
    results = parallel.fork_map(_square_and_pid, [1, 2], 4, 1, min_items=5)
    assert {pid for _r, pid in results} == {os.getpid()}


def _fails(_shared, x):
    if x == 3:
        raise ValueError("three")
    return x


def test_a_failure_in_a_worker_reaches_the_caller():
    with pytest.raises(ValueError, match="three"):
        parallel.fork_map(_fails, range(8), 2, min_items=2)


def test_a_process_running_other_threads_does_not_fork():
    import threading

    stop = threading.Event()
    helper = threading.Thread(target=stop.wait)
    helper.start()
    try:
        assert not parallel.can_fork()
        results = parallel.fork_map(_square_and_pid, range(6), 2, 1, min_items=2)
        assert {pid for _r, pid in results} == {os.getpid()}
    finally:
        stop.set()
        helper.join()
