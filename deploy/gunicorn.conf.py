"""gunicorn settings for a CPU-bound service on a small machine (2 cores).

One synchronous worker per core: each request is a burst of numpy work, so more threads per
worker would only contend for the same cores. Values come from SHOCKPATH_* variables (README,
"Configuration"); anything else can be overridden with GUNICORN_CMD_ARGS.
"""

import multiprocessing
import os
import shutil
import tempfile

bind = os.environ.get("SHOCKPATH_BIND", "127.0.0.1:8000")
workers = int(os.environ.get("SHOCKPATH_WORKERS", str(max(1, multiprocessing.cpu_count()))))
worker_class = "sync"
threads = 1
# The largest request the limits allow takes about 2 s here (openapi/API.md, "Limits"); 60 s leaves
# a wide margin before gunicorn would replace a worker.
timeout = int(os.environ.get("SHOCKPATH_TIMEOUT", "60"))
graceful_timeout = int(os.environ.get("SHOCKPATH_GRACEFUL_TIMEOUT", "30"))
keepalive = 5
# Recycle workers now and then so that memory fragmentation cannot accumulate.
max_requests = 5000
max_requests_jitter = 500
# Request line and headers: small; bodies are limited by the app (SHOCKPATH_MAX_BODY_BYTES).
limit_request_line = 8190
limit_request_fields = 100
limit_request_field_size = 8190
preload_app = True
# Heartbeat files in memory, so the root filesystem can be read-only.
worker_tmp_dir = "/dev/shm" if os.path.isdir("/dev/shm") else None
# The app logs one JSON line per request itself; gunicorn's own messages go to stderr.
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


def child_exit(server, worker):
    """A dead worker's live gauges must not be reported any more."""
    from prometheus_client import multiprocess

    multiprocess.mark_process_dead(worker.pid)
