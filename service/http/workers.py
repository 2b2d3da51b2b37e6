"""gunicorn workers: recycled one at a time, counted in the metrics (deploy/gunicorn.conf.py).

A worker is replaced after `max_requests` requests, so that memory fragmentation cannot build
up. Left alone, workers that share a steady load reach their limits together and restart
within a fraction of a second of each other, leaving no worker to answer for as long as a
new one needs to start. Two measures keep the replacements apart:

* staggered limits: worker k (k = 0, 1, ... by generation, modulo the number of workers) of
  the first generation gets `max_requests * (1 + k / workers)`, so under an even load their
  replacements fall evenly apart; replacements get `max_requests` (plus gunicorn's jitter);
* a recycle lock: a worker about to reach its limit claims the lock, a small file shared by
  the workers of one master (under flock). The lock is free only when no recycle is under way
  (the last claim was released by a new worker that finished booting, or is older than
  `stale` seconds) and the last release is at least `spacing` seconds old. A worker that
  cannot claim it moves its limit `defer` requests on and keeps serving; it tries again then.
  So a second worker leaves only after the first one's replacement is up.

Two more measures keep a recycle (and the cyclic garbage collector) out of the latency tail:

* the master freezes the collector before each fork (`gc.freeze`, as the Python documentation
  of the gc module advises for a process that forks without exec): everything the preloaded
  app holds (about 225,000 objects) moves to a permanent generation, so a worker's full
  collection no longer walks it (about 110 ms here, over 200 ms on a busy machine, during
  which the worker answers nothing), and the pages holding those objects stay shared;
* a worker that has finished its last request leaves at once (`os._exit`, after flushing its
  logs and closing the library's pooled connections) instead of tearing the interpreter down
  object by object, which took over a second here. gunicorn forks the replacement only when
  the old worker has exited, so until then one worker fewer answers.
"""

from __future__ import annotations

import fcntl
import gc
import logging
import os
import struct
import sys
import time

__all__ = ["RecycleLock", "freeze_before_fork", "leave_at_once", "staggered_limit"]

_STATE = struct.Struct("<ddd")  # claimed at, released at, busy (1.0 while a recycle is under way)


def staggered_limit(max_requests: int, age: int, workers: int, jitter: int = 0) -> int:
    """The request limit of a worker of generation `age` (gunicorn counts from 1)."""
    if max_requests <= 0:
        return max_requests  # 0: never recycled
    if age <= workers:
        return max_requests + (max_requests * ((age - 1) % workers)) // workers + jitter
    return max_requests + jitter


class RecycleLock:
    """One worker recycle at a time among the processes that share `path` (monotonic clock)."""

    def __init__(self, path: str, spacing: float, stale: float = 120.0):
        self.path = path
        self.spacing = spacing
        self.stale = stale
        with open(path, "ab"):
            pass

    def _update(self, change) -> bool:
        with open(self.path, "r+b") as f:
            fcntl.flock(f, fcntl.LOCK_EX)
            try:
                data = f.read(_STATE.size)
                state = _STATE.unpack(data) if len(data) == _STATE.size else (float("-inf"),) * 2 + (0.0,)
                new = change(*state)
                if new is None:
                    return False
                f.seek(0)
                f.write(_STATE.pack(*new))
                f.flush()
                return True
            finally:
                fcntl.flock(f, fcntl.LOCK_UN)

    def claim(self, now: float | None = None) -> bool:
        """True (and a recycle under way) if none is, and the last one ended `spacing` ago."""
        now = time.monotonic() if now is None else now

        def change(claimed, released, busy):
            if busy and now - claimed < self.stale:
                return None
            if now - released < self.spacing:
                return None
            return (now, released, 1.0)

        return self._update(change)

    def release(self, now: float | None = None) -> None:
        """A new worker is up: the recycle under way (if any) is over."""
        now = time.monotonic() if now is None else now
        self._update(lambda claimed, released, busy: (claimed, now, 0.0))

    def hold_back(self, worker, defer: int) -> None:
        """gunicorn's pre_request: before the request that would reach the worker's limit,
        claim the lock, or move the limit `defer` requests on."""
        limit = worker.max_requests
        if 0 < limit <= worker.nr + 1 and not self.claim():
            worker.max_requests = worker.nr + 1 + defer


def freeze_before_fork() -> None:
    """gunicorn's pre_fork, in the master: what it holds now is never walked by a worker's
    garbage collector (it is only freed, by reference counting, if it ever is)."""
    gc.freeze()


def leave_at_once(worker) -> None:
    """gunicorn's worker_exit, in a worker whose loop has ended: flush the logs, close the
    scenario library's connections, and end the process now with the exit status gunicorn
    was about to give it (its boot-error status included). Nothing is left to finish: every
    request has been answered and every library write committed inside its request."""
    leaving = sys.exc_info()[1]
    if not isinstance(leaving, SystemExit):
        return  # an unexpected error: the ordinary exit, with its traceback
    code = leaving.code
    library = getattr(getattr(worker, "wsgi", None), "extensions", {}).get("shockpath.library")
    try:
        if library is not None:
            library.close()
    finally:
        logging.shutdown()
        for stream in (sys.stdout, sys.stderr):
            try:
                stream.flush()
            except (OSError, ValueError):
                pass
        os._exit(code if isinstance(code, int) else 0 if code is None else 1)
