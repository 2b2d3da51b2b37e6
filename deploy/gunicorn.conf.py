"""gunicorn settings for a CPU-bound service on a small machine (2 cores).

One synchronous worker per core: each request is a burst of numpy work, so threads would
only contend for the same cores. Every value can be overridden by the environment
(GUNICORN_CMD_ARGS, or the SHOCKPATH_* variables read here).
"""

import multiprocessing
import os

bind = os.environ.get("SHOCKPATH_BIND", "127.0.0.1:8000")
workers = int(os.environ.get("SHOCKPATH_WORKERS", str(max(1, multiprocessing.cpu_count()))))
worker_class = "sync"
threads = 1
# The largest request the limits allow takes a few seconds here (README, "Limits");
# 60 s leaves a wide margin before gunicorn would kill a worker.
timeout = int(os.environ.get("SHOCKPATH_TIMEOUT", "60"))
graceful_timeout = 30
keepalive = 5
# Recycle workers now and then so that memory fragmentation cannot accumulate.
max_requests = 5000
max_requests_jitter = 500
# Request line and headers: small; bodies are limited by the app (SHOCKPATH_MAX_BODY_BYTES).
limit_request_line = 8190
limit_request_fields = 100
limit_request_field_size = 8190
preload_app = True
accesslog = "-"
errorlog = "-"
loglevel = os.environ.get("SHOCKPATH_LOG_LEVEL", "info").lower()
# gunicorn 27's control socket needs a writable $HOME; a container usually has none.
control_socket_disable = True
