"""Workers recycle one at a time: staggered first limits, and a lock that lets a worker leave only
when the previous leaver's replacement is up; a leaving worker ends at once, and a worker's
garbage collector leaves alone what the master held when it forked (service/http/workers.py);
gunicorn itself in test_gunicorn.py."""

from __future__ import annotations

import gc
import multiprocessing
import subprocess
import sys
from types import SimpleNamespace

import pytest

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


# --- leaving at once, and a collector that does not walk what the master holds ----------------

#: A worker's last moments as gunicorn runs them (its exit raised, worker_exit in the `finally`),
#: in a fresh interpreter, where an ordinary exit runs atexit handlers: one shows whether the
#: interpreter was torn down.
_LAST_MOMENTS = """
import atexit, logging, sys
from types import SimpleNamespace
from service.http.workers import leave_at_once

folder, how = sys.argv[1], sys.argv[2]
logging.getLogger("leaving").addHandler(logging.FileHandler(folder + "/log"))
atexit.register(lambda: open(folder + "/torn-down", "w").close())

class Library:
    def close(self):
        open(folder + "/library-closed", "w").close()

worker = SimpleNamespace(wsgi=SimpleNamespace(extensions={"shockpath.library": Library()}))
try:
    logging.getLogger("leaving").warning("last line")
    if how == "error":
        raise RuntimeError("unexpected")
    sys.exit(None if how == "none" else int(how) if how.isdigit() else how)
finally:
    leave_at_once(worker)
"""


def _last_moments(folder, how: str) -> int:
    command = [sys.executable, "-c", _LAST_MOMENTS, str(folder), how]
    return subprocess.run(command, capture_output=True, timeout=60).returncode


@pytest.mark.parametrize(("how", "status"), [("none", 0), ("0", 0), ("3", 3), ("boot failed", 1)])
def test_a_leaving_worker_ends_at_once_with_its_exit_status_and_its_logs_flushed(tmp_path, how, status):
    # gunicorn's master halts when a worker exits with its boot-error status (3): it must see it.
    assert _last_moments(tmp_path, how) == status
    assert (tmp_path / "log").read_text() == "last line\n"
    assert (tmp_path / "library-closed").exists()
    assert not (tmp_path / "torn-down").exists()  # no teardown object by object


def test_a_worker_that_fails_unexpectedly_exits_the_ordinary_way(tmp_path):
    assert _last_moments(tmp_path, "error") == 1
    assert (tmp_path / "torn-down").exists() and not (tmp_path / "library-closed").exists()


def _objects_to_walk(queue) -> None:
    queue.put((len(gc.get_objects()), gc.get_freeze_count()))


def test_a_forked_worker_collector_does_not_walk_what_the_master_holds():
    from service.http.workers import freeze_before_fork

    held = [{"i": i} for i in range(100_000)]  # what a preloaded app holds, in miniature
    context = multiprocessing.get_context("fork")
    queue = context.Queue()
    try:
        freeze_before_fork()
        process = context.Process(target=_objects_to_walk, args=(queue,))
        process.start()
        walked, frozen = queue.get(timeout=30)
        process.join(30)
    finally:
        gc.unfreeze()
    assert frozen >= len(held) and walked < 10_000
