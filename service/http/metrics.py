"""Prometheus metrics: requests and latency per endpoint and status, and the work done.

With PROMETHEUS_MULTIPROC_DIR set (deploy/gunicorn.conf.py sets it before the app loads),
each gunicorn worker writes its samples to that directory and a scrape of any worker
aggregates all of them (prometheus-client's multiprocess mode).
"""

from __future__ import annotations

import os

from flask import request
from prometheus_client import (
    CONTENT_TYPE_LATEST,
    REGISTRY,
    CollectorRegistry,
    Counter,
    Histogram,
    generate_latest,
    multiprocess,
)

__all__ = ["DRAWS", "LATENCY", "REQUESTS", "SCENARIOS", "observe", "scrape"]

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
