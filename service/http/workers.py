"""gunicorn workers: recycled one at a time, counted in the metrics (deploy/gunicorn.conf.py).

A worker is replaced after `max_requests` requests, so that memory fragmentation cannot build
up. Left alone, workers that share a steady load reach their limits together and restart
within a fraction of a second of each other, leaving no worker to answer for as long as a
new one needs to start. Two measures keep the replacements apart:

* staggered limits: worker k (k = 0, 1, ... by generation, modulo the number of workers) of
  the first generation gets `max_requests * (1 + k / workers)`, so under an even load their
  replacements fall evenly apart; replacements get `max_requests` (plus gunicorn's jitter);
* a recycle lock: a worker about to reach its limit claims the lock, a file holding the time
  of the latest claim (under flock, shared by the workers of one master). If another worker
  claimed it less than `spacing` seconds ago, the worker's limit moves `defer` requests on and
  it keeps serving; it tries again then.
"""

from __future__ import annotations

import fcntl
import os
import struct
import time

__all__ = ["RecycleLock", "staggered_limit"]

_STAMP = struct.Struct("<d")


def staggered_limit(max_requests: int, age: int, workers: int, jitter: int = 0) -> int:
    """The request limit of a worker of generation `age` (gunicorn counts from 1)."""
    if max_requests <= 0:
        return max_requests  # 0: never recycled
    if age <= workers:
        return max_requests + (max_requests * ((age - 1) % workers)) // workers + jitter
    return max_requests + jitter


class RecycleLock:
    """At most one worker recycle per `spacing` seconds among the processes that share `path`."""

    def __init__(self, path: str, spacing: float):
        self.path = path
        self.spacing = spacing
        with open(path, "ab"):
            pass

    def claim(self, now: float | None = None) -> bool:
        """True (and the time recorded) if no claim was made in the last `spacing` seconds."""
        now = time.monotonic() if now is None else now
        with open(self.path, "r+b") as f:
            fcntl.flock(f, fcntl.LOCK_EX)
            try:
                data = f.read(_STAMP.size)
                last = _STAMP.unpack(data)[0] if len(data) == _STAMP.size else None
                if last is not None and 0.0 <= now - last < self.spacing:
                    return False
                f.seek(0)
                f.write(_STAMP.pack(now))
                f.flush()
                os.fsync(f.fileno())
                return True
            finally:
                fcntl.flock(f, fcntl.LOCK_UN)

    def hold_back(self, worker, defer: int) -> None:
        """gunicorn's pre_request: before the request that would reach the worker's limit,
        claim the lock, or move the limit `defer` requests on."""
        limit = worker.max_requests
        if 0 < limit <= worker.nr + 1 and not self.claim():
            worker.max_requests = worker.nr + 1 + defer
