"""gunicorn settings for a CPU-bound service on a small machine (2 cores): deploy/OPERATIONS.md.

One worker process per core, each with a few threads (gthread). The engine's kernels release
the GIL (numba `nogil`), and a thread waiting on a slow client costs nothing: so health and
readiness probes, and short requests, are answered while other threads of the same worker
solve a large batch or read a body that arrives a byte a second. The gthread worker keeps
connections alive between requests (`keepalive`). Values come from SHOCKPATH_* variables
(README, "Configuration"); anything else can be overridden with GUNICORN_CMD_ARGS.
"""

import multiprocessing
import os
import random
import shutil
import tempfile

bind = os.environ.get("SHOCKPATH_BIND", "127.0.0.1:8000")
workers = int(os.environ.get("SHOCKPATH_WORKERS", str(max(1, multiprocessing.cpu_count()))))
worker_class = "gthread"
# Threads per worker: requests a worker answers side by side. Probes need a free one, so keep
# it above the number of long requests (largest batches, bands) one worker may hold at once.
threads = int(os.environ.get("SHOCKPATH_THREADS", "6"))
# A connection's idle time between requests. With gthread a request never waits for another to
# finish, so a thread is not held by an idle kept-alive connection.
keepalive = int(os.environ.get("SHOCKPATH_KEEPALIVE", "5"))
# The largest request the limits allow takes about 2 s here (README, "Limits"). With gthread
# the worker's main loop keeps beating while its threads work, so `timeout` only catches a
# worker whose main loop is stuck.
timeout = int(os.environ.get("SHOCKPATH_TIMEOUT", "60"))
graceful_timeout = int(os.environ.get("SHOCKPATH_GRACEFUL_TIMEOUT", "30"))
# Recycle workers now and then so that memory fragmentation cannot accumulate; one at a time
# (service/http/workers.py): first-generation limits are staggered, and a recycle lock lets a
# worker leave only when the previous leaver's replacement has booted and has been up for
# SHOCKPATH_RECYCLE_SPACING seconds.
max_requests = int(os.environ.get("SHOCKPATH_MAX_REQUESTS", "5000"))
max_requests_jitter = max(0, max_requests // 10)
recycle_spacing = float(os.environ.get("SHOCKPATH_RECYCLE_SPACING", "2"))
recycle_defer = max(1, max_requests // 20)
# Request line and headers: small; bodies are limited by the app (SHOCKPATH_MAX_BODY_BYTES).
limit_request_line = 8190
limit_request_fields = 100
limit_request_field_size = 8190
preload_app = True
# Heartbeat files in memory, so the root filesystem can be read-only.
worker_tmp_dir = "/dev/shm" if os.path.isdir("/dev/shm") else None
# The app logs one JSON line per request itself; gunicorn's own messages go to stderr, as JSON
# lines with the pid of the process that wrote them.
accesslog = None
errorlog = "-"
loglevel = os.environ.get("SHOCKPATH_LOG_LEVEL", "info").lower()
logconfig_dict = {
    "version": 1,
    "disable_existing_loggers": False,
    "formatters": {"json": {"()": "service.http.logs.JsonFormatter"}},
    "handlers": {
        "stderr": {"class": "logging.StreamHandler", "formatter": "json", "stream": "ext://sys.stderr"}
    },
    "root": {"handlers": ["stderr"], "level": "WARNING"},
    "loggers": {
        "gunicorn.error": {"handlers": ["stderr"], "level": loglevel.upper(), "propagate": False},
        "gunicorn.access": {"handlers": [], "level": "CRITICAL", "propagate": False},
    },
}
# gunicorn 27's control socket needs a writable $HOME; a container usually has none.
control_socket_disable = True

# Prometheus multiprocess mode: every worker writes its samples here and any worker's
# /metrics aggregates them. It must be set before the app (and prometheus_client) loads,
# which with preload_app happens right after this file is read, and start empty.
_metrics_dir = os.environ.get("PROMETHEUS_MULTIPROC_DIR") or tempfile.mkdtemp(prefix="shockpath-metrics-")
shutil.rmtree(_metrics_dir, ignore_errors=True)
os.makedirs(_metrics_dir, exist_ok=True)
os.environ["PROMETHEUS_MULTIPROC_DIR"] = _metrics_dir

# numba's on-disk cache of the compiled engine kernels. With preload_app the master compiles
# (or loads) them in create_app before forking, so no worker ever compiles during a request.
# SHOCKPATH_NUMBA_CACHE_DIR points it at a writable or pre-warmed folder (the container image
# ships one warmed at build time); unset, numba caches next to the engine's source.
if os.environ.get("SHOCKPATH_NUMBA_CACHE_DIR"):
    os.environ["NUMBA_CACHE_DIR"] = os.environ["SHOCKPATH_NUMBA_CACHE_DIR"]

# The recycle lock's file: made by the master, shared by the workers it forks.
_recycle_file = os.path.join(worker_tmp_dir or tempfile.gettempdir(), f"shockpath-recycle-{os.getpid()}")


def _write_problem(sock, status_int, reason, mesg):
    """gunicorn's answer to a request it cannot parse (a request line or headers over the limits
    above, a malformed header, a bad Content-Length): the same status as an RFC 9457 problem,
    like every other answer of the service, where gunicorn writes an HTML page. It replaces
    gunicorn.util.write_error, the one function gunicorn's workers call for such an answer."""
    import orjson
    from gunicorn.util import write_nonblock

    from service.problems import problem

    body = orjson.dumps(problem(status_int, reason, mesg or reason))
    head = (
        f"HTTP/1.1 {status_int} {reason}\r\nConnection: close\r\n"
        f"Content-Type: application/problem+json\r\nContent-Length: {len(body)}\r\n\r\n"
    )
    write_nonblock(sock, head.encode("latin-1") + body)


def _problems_for_unparsed_requests():
    import gunicorn.util

    gunicorn.util.write_error = _write_problem


_problems_for_unparsed_requests()


def pre_fork(server, worker):
    """In the master, before each fork: the collector's permanent generation takes what the
    master holds (service/http/workers.py), so workers' full collections stay short."""
    from service.http.workers import freeze_before_fork

    freeze_before_fork()


def post_fork(server, worker):
    """In the new worker: its staggered request limit, and one more start in the metrics."""
    from service.http import metrics
    from service.http.workers import staggered_limit

    metrics.WORKER_STARTS.inc()
    if max_requests <= 0:
        return  # never recycled
    jitter = random.randint(0, max_requests_jitter) if max_requests_jitter else 0
    worker.max_requests = staggered_limit(max_requests, worker.age, server.num_workers, jitter)


def _recycle_lock(worker):
    from service.http.workers import RecycleLock

    lock = getattr(worker, "_shockpath_recycle", None)
    if lock is None:
        lock = worker._shockpath_recycle = RecycleLock(_recycle_file, recycle_spacing)
    return lock


def post_worker_init(worker):
    """A new worker is up: a recycle under way is over (the next may start after the spacing)."""
    _recycle_lock(worker).release()


def pre_request(worker, req):
    """Before each request: a worker about to reach its limit recycles only if it gets the
    recycle lock (else its limit moves on)."""
    _recycle_lock(worker).hold_back(worker, recycle_defer)


def worker_exit(server, worker):
    """In a worker that has answered its last request: leave at once, not object by object,
    so that gunicorn forks its replacement within milliseconds (service/http/workers.py)."""
    from service.http.workers import leave_at_once

    leave_at_once(worker)


def child_exit(server, worker):
    """In the master: a dead worker's live gauges are not reported any more; one more exit."""
    from prometheus_client import multiprocess

    from service.http import metrics

    multiprocess.mark_process_dead(worker.pid)
    metrics.WORKER_EXITS.inc()


def on_exit(server):
    try:
        os.unlink(_recycle_file)
    except OSError:
        pass
