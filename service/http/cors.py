"""Cross-origin calls (CORS, with flask-cors): off unless SHOCKPATH_CORS_ORIGINS names origins.

When on, the /v1 endpoints and /openapi.json answer preflights (OPTIONS with Origin and
Access-Control-Request-Method) for the configured origins, allow the request headers a
dashboard sends (Content-Encoding among them, for gzip bodies), expose the headers it reads
(ETag, Content-Disposition, X-Request-ID, ...) and send `Vary: Origin` on every answer of those
paths, so that a shared cache never gives one origin the answer meant for another. CORS headers
go only to a request whose Origin is configured: a request without an Origin (a server, curl)
gets none, so the answer does not disclose which origins are configured. No cookies are
involved: keys travel in the Authorization header, which the preflight allows.
"""

from __future__ import annotations

from flask import Flask, request
from flask_cors import CORS

from .settings import Settings

__all__ = ["ALLOWED_HEADERS", "EXPOSED_HEADERS", "enable_cors"]

ALLOWED_HEADERS = (
    "Content-Type",
    "Content-Encoding",
    "Accept",
    "Authorization",
    "If-None-Match",
    "If-Match",
    "X-Request-ID",
)
EXPOSED_HEADERS = (
    "ETag",
    "Content-Disposition",
    "X-Request-ID",
    "Content-Encoding",
    # what a refusal tells a caller to do: the methods a path takes (405), how to authenticate
    # (401; service/http/auth.py)
    "Allow",
    "WWW-Authenticate",
    # the scenario library's (service/http/library.py)
    "Location",
    "Retry-After",
    "Scenario-Model-Version",
    "Model-Version-Changed",
)
#: Seconds a browser may keep a preflight's answer.
PREFLIGHT_MAX_AGE = 600


def enable_cors(app: Flask, settings: Settings) -> None:
    """Register CORS for the configured origins; nothing at all when there are none."""
    if not settings.cors_origins:
        return
    origins = "*" if "*" in settings.cors_origins else list(settings.cors_origins)
    options = {
        "origins": origins,
        "methods": ["GET", "POST", "PUT", "DELETE", "OPTIONS"],
        "allow_headers": list(ALLOWED_HEADERS),
        "expose_headers": list(EXPOSED_HEADERS),
        "max_age": PREFLIGHT_MAX_AGE,
        "supports_credentials": False,
        "vary_header": True,
        # CORS headers only in answer to an Origin (flask-cors otherwise lists every configured
        # origin in Access-Control-Allow-Origin of a request that sent none).
        "always_send": False,
    }
    CORS(app, resources={r"/v1/*": options, r"/openapi.json": options})

    @app.after_request
    def _vary_origin(response):
        # flask-cors adds Vary: Origin only when it answers an allowed origin; a cache must
        # also keep apart the answers it gave without CORS headers (no Origin, or another
        # one). Health endpoints and the page stay same-origin: their answers do not vary.
        if request.path.startswith("/v1/") or request.path == "/openapi.json":
            response.vary.add("Origin")
        return response
