"""Cross-origin calls (CORS, with flask-cors): off unless SHOCKPATH_CORS_ORIGINS names origins.

When on, the /v1 endpoints and /openapi.json answer preflights (OPTIONS with Origin and
Access-Control-Request-Method) for the configured origins, expose the headers a dashboard reads
(ETag, Content-Disposition, X-Request-ID) and always send `Vary: Origin`, so that a shared cache
never gives one origin the answer meant for another. No cookies are involved: keys travel in
the Authorization header, which the preflight allows.
"""

from __future__ import annotations

from flask import Flask
from flask_cors import CORS

from .settings import Settings

__all__ = ["ALLOWED_HEADERS", "EXPOSED_HEADERS", "enable_cors"]

ALLOWED_HEADERS = ("Content-Type", "Accept", "Authorization", "If-None-Match", "If-Match", "X-Request-ID")
EXPOSED_HEADERS = (
    "ETag",
    "Content-Disposition",
    "X-Request-ID",
    "Content-Encoding",
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
    }
    CORS(app, resources={r"/v1/*": options, r"/openapi.json": options})

    @app.after_request
    def _vary_origin(response):
        # flask-cors adds Vary: Origin only when it answers an allowed origin; a cache must
        # also keep apart the answers it gave without CORS headers.
        response.vary.add("Origin")
        return response
