"""The WSGI application factory: settings, extensions, blueprints, error handlers, hooks.

gunicorn --config deploy/gunicorn.conf.py 'service:create_app()'
"""

from __future__ import annotations

import logging
import time
import uuid
from collections.abc import Mapping
from typing import Any

from flask import Flask, g, request

from ..engine import warm_up
from ..library import Library, database_url
from . import benchmark, metrics
from .auth import require_key
from .cache import AnswerCache
from .compression import enable_gzip
from .conditional import request_tag
from .cors import enable_cors
from .errors import register_error_handlers
from .logs import configure_logging, log_request
from .openapi import build_document
from .routes import BLUEPRINTS
from .settings import Settings, load_settings

__all__ = ["create_app"]


def create_app(config: Mapping[str, Any] | None = None) -> Flask:
    """Build the app: defaults < SHOCKPATH_* environment < `config`."""
    settings = load_settings(config)
    started = time.perf_counter()
    warm_up()  # compile the engine's kernels, or load them from numba's on-disk cache
    compiled_in = time.perf_counter() - started
    # No static route: the page's files are served by service/http/page.py.
    app = Flask("shockpath", static_folder=None)
    app.config["MAX_CONTENT_LENGTH"] = settings.max_body_bytes
    app.config["TESTING"] = bool(config and config.get("TESTING"))
    app.extensions["shockpath.settings"] = settings
    app.extensions["shockpath.cache"] = AnswerCache(settings.cache_bytes)
    app.extensions["shockpath.library"] = _library(settings)
    app.extensions["shockpath.openapi"] = build_document()
    app.extensions["shockpath.openapi_tag"] = request_tag(
        "/openapi.json", app.extensions["shockpath.openapi"], "json"
    )
    # No routing redirect, whose body werkzeug writes in HTML, and one spelling per path: a
    # trailing slash (/v1/paths/) and a doubled slash (/v1//paths) match no route (404
    # problem+json). Strict slashes redirect only to add a slash to a rule that ends in one, and
    # the only such rule is the root "/", whose slashless form is the empty path no request has.
    app.url_map.strict_slashes = True
    app.url_map.merge_slashes = False
    log = configure_logging(settings.log_level)
    for blueprint in BLUEPRINTS:
        app.register_blueprint(blueprint)
    if settings.benchmark_echo:  # off unless SHOCKPATH_BENCHMARK_ECHO is set
        app.register_blueprint(benchmark.blueprint)
    register_error_handlers(app, log)
    enable_cors(app, settings)
    enable_gzip(app)
    _register_hooks(app, settings, log)
    log.info("settings %s", settings.as_log_dict())
    log.info("engine kernels ready in %.2f s", compiled_in)
    return app


def _library(settings: Settings) -> Library:
    """The scenario library, migrated now; a database that is down makes only it answer 503."""
    library = Library(
        database_url(settings.database_url, settings.library_path),
        settings.library_max_records,
        settings.library_max_revisions,
        settings.library_write_delay_ms / 1000,
    )
    library.start()
    return library


def _register_hooks(app: Flask, settings: Settings, log: logging.Logger) -> None:
    """Per request: in flight, an id and a clock, the key check; then the id header, metrics, one
    log line; at teardown (always), no longer in flight."""

    @app.before_request
    def _start():
        metrics.IN_FLIGHT.inc()
        g.in_flight = True
        g.started = time.perf_counter()
        incoming = request.headers.get("X-Request-ID", "")
        g.request_id = incoming if 0 < len(incoming) <= 128 and incoming.isprintable() else uuid.uuid4().hex
        require_key(settings)

    @app.after_request
    def _finish(response):
        response.headers["X-Request-ID"] = g.get("request_id", "")
        seconds = time.perf_counter() - g.get("started", time.perf_counter())
        metrics.observe(response.status_code, seconds)
        log_request(log, response.status_code, seconds)
        return response

    @app.teardown_request
    def _done(_error=None):
        if g.pop("in_flight", False):
            metrics.IN_FLIGHT.dec()
