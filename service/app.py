"""The WSGI application factory: settings, the blueprint, and one error envelope.

    gunicorn --config deploy/gunicorn.conf.py 'service:create_app()'

Three handlers: HTTP errors (404, 405, 413, ...) keep their status and headers (Allow);
ProblemError carries its own document; anything else is logged with the request id and
answered with a generic 500 that carries no detail of the failure.
"""

from __future__ import annotations

import time
import uuid
from collections.abc import Mapping
from typing import Any

from flask import Flask, Response, g, request
from werkzeug.exceptions import HTTPException

from . import metrics
from .api.jsonio import json_response, problem_response, read_json
from .api.openapi import build_document
from .api.views import blueprint
from .auth import key_accepted, needs_key
from .cache import AnswerCache
from .logs import configure_logging
from .problems import ProblemError, problem
from .settings import load_settings

__all__ = ["create_app"]


def create_app(config: Mapping[str, Any] | None = None) -> Flask:
    """Build the app: defaults < SHOCKPATH_* environment < `config`."""
    settings = load_settings(config)
    app = Flask("shockpath")
    app.config["MAX_CONTENT_LENGTH"] = settings.max_body_bytes
    app.config["TESTING"] = bool(config and config.get("TESTING"))
    app.extensions["shockpath.settings"] = settings
    app.extensions["shockpath.cache"] = AnswerCache(settings.cache_bytes)
    app.extensions["shockpath.openapi"] = build_document()
    app.url_map.strict_slashes = False
    log = configure_logging(settings.log_level)
    app.register_blueprint(blueprint)

    @app.get("/openapi.json")
    def openapi_document():
        return json_response(app.extensions["shockpath.openapi"])

    if settings.benchmark_echo:
        # The framework floor for tests/benchmarks: same app, same parser, same serialiser,
        # no model. Off unless SHOCKPATH_BENCHMARK_ECHO is set.
        @app.post("/benchmark/echo")
        def benchmark_echo():
            return json_response(read_json())

    @app.get("/metrics")
    def prometheus_metrics():
        body, content_type = metrics.scrape()
        return Response(body, content_type=content_type)

    @app.before_request
    def _start():
        g.started = time.perf_counter()
        incoming = request.headers.get("X-Request-ID", "")
        g.request_id = incoming if 0 < len(incoming) <= 128 and incoming.isprintable() else uuid.uuid4().hex
        if settings.api_keys and needs_key(request.path, settings.metrics_require_key):
            if not key_accepted(request.headers.get("Authorization"), settings.api_keys):
                document = problem(401, "Unauthorized", "Send a valid key as 'Authorization: Bearer <key>'.")
                raise ProblemError(document, {"WWW-Authenticate": 'Bearer realm="shockpath"'})

    @app.after_request
    def _finish(response):
        response.headers["X-Request-ID"] = g.get("request_id", "")
        seconds = time.perf_counter() - g.get("started", time.perf_counter())
        endpoint = request.url_rule.rule if request.url_rule is not None else "unmatched"
        labels = (endpoint, request.method, str(response.status_code))
        metrics.REQUESTS.labels(*labels).inc()
        metrics.LATENCY.labels(*labels).observe(seconds)
        log.info(
            "request",
            extra={
                "method": request.method,
                "path": request.path,
                "status": response.status_code,
                "duration_ms": round(1000.0 * seconds, 3),
                "request_id": g.get("request_id", ""),
                "scenario_id": g.get("scenario_id"),
                "remote": request.remote_addr,
            },
        )
        return response

    @app.errorhandler(ProblemError)
    def _problem(error: ProblemError):
        return problem_response(error.problem, error.headers)

    @app.errorhandler(HTTPException)
    def _http(error: HTTPException):
        status = error.code or 500
        headers = {}
        allow = error.get_response().headers.get("Allow")
        if allow:
            headers["Allow"] = allow
        detail = {
            404: "No such resource.",
            405: "This method is not allowed here.",
            413: "The body is over the size limit.",
        }.get(status, error.description or error.name)
        return problem_response(problem(status, error.name, detail), headers)

    @app.errorhandler(Exception)
    def _unexpected(error: Exception):
        rid = g.get("request_id", "")
        log.exception("unhandled error", extra={"request_id": rid, "path": request.path})
        document = problem(
            500, "Internal Server Error", "The server failed to answer; quote the request id.", request_id=rid
        )
        return problem_response(document)

    log.info("settings %s", settings.as_log_dict())
    return app
