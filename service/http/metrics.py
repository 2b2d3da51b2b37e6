"""Prometheus metrics: requests and latency per endpoint and status, the work done, and the
workers' own state (requests in flight, answer-cache lookups, resident memory, exits).

With PROMETHEUS_MULTIPROC_DIR set (deploy/gunicorn.conf.py sets it before the app loads),
each gunicorn worker writes its samples to that directory and a scrape of any worker
aggregates all of them (prometheus-client's multiprocess mode).
"""

from __future__ import annotations

import os
import threading

from flask import request
from prometheus_client import (
    CONTENT_TYPE_LATEST,
    REGISTRY,
    CollectorRegistry,
    Counter,
    Gauge,
    Histogram,
    generate_latest,
    multiprocess,
)

__all__ = [
    "CACHE_LOOKUPS",
    "DRAWS",
    "IN_FLIGHT",
    "LATENCY",
    "REQUESTS",
    "RESIDENT_MEMORY",
    "SCENARIOS",
    "WORKER_EXITS",
    "WORKER_STARTS",
    "observe",
    "resident_bytes",
    "scrape",
]

REQUESTS = Counter(
    "shockpath_http_requests_total", "HTTP requests answered.", ["endpoint", "method", "status"]
)
LATENCY = Histogram(
    "shockpath_http_request_duration_seconds",
    "Time to answer an HTTP request.",
    ["endpoint", "method", "status"],
    buckets=(0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1.0, 2.5, 5.0, 10.0, 30.0),
)
SCENARIOS = Counter("shockpath_scenarios_computed_total", "Scenarios computed by the engine.", ["endpoint"])
DRAWS = Counter("shockpath_draws_computed_total", "Draws of uncertain elasticities computed for bands.")
# Gauges of live processes: summed over live workers, or one sample per live worker (pid label).
IN_FLIGHT = Gauge(
    "shockpath_http_requests_in_flight",
    "Requests being answered now, over all live workers.",
    multiprocess_mode="livesum",
)
RESIDENT_MEMORY = Gauge(
    "shockpath_worker_resident_memory_bytes",
    "Resident memory of each live worker (label pid), after its latest request.",
    multiprocess_mode="liveall",
)
CACHE_LOOKUPS = Counter(
    "shockpath_answer_cache_lookups_total",
    "Lookups in the workers' answer caches, by result (hit or miss).",
    ["result"],
)
WORKER_STARTS = Counter("shockpath_worker_starts_total", "Workers started (the first ones and replacements).")
WORKER_EXITS = Counter(
    "shockpath_worker_exits_total",
    "Workers that exited (recycled after their request limit, killed, or crashed); counted by the master.",
)

_PAGE = os.sysconf("SC_PAGE_SIZE") if hasattr(os, "sysconf") else 4096


#: (pid, descriptor) of this process's /proc/<pid>/statm, opened once per process (a worker
#: forked from the master opens its own: /proc/self is resolved when the file is opened).
_STATM: tuple[int, int] | None = None


def resident_bytes() -> int:
    """This process's resident set size in bytes (Linux /proc/self/statm), 0 where unknown.

    Read after every request, so the file stays open and is read from its start with one
    pread call: opening, reading and closing it each time took about 30 us a request.
    """
    try:
        return int(os.pread(_statm(), 64, 0).split()[1]) * _PAGE
    except (OSError, ValueError, IndexError):
        return 0


_STATM_OPENING = threading.Lock()


def _statm() -> int:
    """The descriptor of this process's statm file, (re)opened after a fork (under a lock, so
    that the threads of a new worker open it once)."""
    global _STATM
    pid = os.getpid()
    if _STATM is None or _STATM[0] != pid:
        with _STATM_OPENING:
            if _STATM is None or _STATM[0] != pid:
                _STATM = (pid, os.open(f"/proc/{pid}/statm", os.O_RDONLY | os.O_CLOEXEC))
    return _STATM[1]


def scrape() -> tuple[bytes, str]:
    """The exposition text, aggregated over workers in multiprocess mode."""
    if os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
        registry = CollectorRegistry()
        multiprocess.MultiProcessCollector(registry)
        return generate_latest(registry), CONTENT_TYPE_LATEST
    return generate_latest(REGISTRY), CONTENT_TYPE_LATEST


def observe(status: int, seconds: float) -> None:
    """Count the current request and its latency by endpoint (the route), method and status."""
    endpoint = request.url_rule.rule if request.url_rule is not None else "unmatched"
    labels = (endpoint, request.method, str(status))
    REQUESTS.labels(*labels).inc()
    LATENCY.labels(*labels).observe(seconds)
    RESIDENT_MEMORY.set(resident_bytes())
