"""Workers recycle one at a time: staggered first limits, and a lock that lets a worker leave only
when the previous leaver's replacement is up (service/http/workers.py); gunicorn itself in
test_gunicorn.py."""

from __future__ import annotations

import multiprocessing
from types import SimpleNamespace

from service.http.workers import RecycleLock, staggered_limit


def test_first_generation_limits_are_spread_evenly_and_replacements_get_the_base():
    limits = [staggered_limit(5000, age, 4) for age in (1, 2, 3, 4)]
    assert limits == [5000, 6250, 7500, 8750]  # 5000 * (1 + k/4)
    assert staggered_limit(5000, 5, 4) == 5000 and staggered_limit(5000, 9, 4, jitter=7) == 5007
    assert staggered_limit(0, 2, 2) == 0  # 0: never recycled


def test_a_second_recycle_waits_for_the_first_ones_replacement_and_the_spacing(tmp_path):
    lock = RecycleLock(str(tmp_path / "lock"), spacing=2.0)
    other = RecycleLock(str(tmp_path / "lock"), spacing=2.0)  # another worker's handle
    assert lock.claim(now=100.0)
    assert not other.claim(now=101.0)  # the first leaver's replacement is not up yet
    assert not other.claim(now=150.0)
    lock.release(now=160.0)  # the replacement booted
    assert not other.claim(now=161.0)  # within the spacing after it booted
    assert other.claim(now=162.5)
    assert not lock.claim(now=163.0)


def test_a_claim_never_released_goes_stale(tmp_path):
    lock = RecycleLock(str(tmp_path / "lock"), spacing=1.0, stale=30.0)
    assert lock.claim(now=0.0)
    assert not lock.claim(now=29.0)
    assert lock.claim(now=31.0)


def test_a_worker_that_cannot_claim_serves_on(tmp_path):
    lock = RecycleLock(str(tmp_path / "lock"), spacing=5.0)
    first = SimpleNamespace(nr=99, max_requests=100)
    second = SimpleNamespace(nr=99, max_requests=100)
    lock.hold_back(first, defer=10)
    assert first.max_requests == 100  # claimed: gunicorn retires it after this request
    lock.hold_back(second, defer=10)
    assert second.max_requests == 110  # held back ten more requests
    far = SimpleNamespace(nr=10, max_requests=100)
    lock.hold_back(far, defer=10)
    assert far.max_requests == 100  # not near its limit: nothing to do


def _claim(path, results, i):
    results[i] = RecycleLock(path, spacing=60.0).claim()


def test_of_many_processes_claiming_at_once_exactly_one_wins(tmp_path):
    path = str(tmp_path / "lock")
    RecycleLock(path, spacing=60.0)
    context = multiprocessing.get_context("fork")
    results = context.Array("b", 8)
    processes = [context.Process(target=_claim, args=(path, results, i)) for i in range(8)]
    for p in processes:
        p.start()
    for p in processes:
        p.join(30)
    assert sum(results[:]) == 1
