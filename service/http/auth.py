"""Optional bearer keys: when configured, every /v1 endpoint needs `Authorization: Bearer <key>`.

Several keys may be valid at once (rotation). The presented key is compared with every
configured key in constant time (hmac.compare_digest) without stopping at a match, so the
time taken says nothing about which key, or how much of one, matched.
"""

from __future__ import annotations

import hmac
from typing import TYPE_CHECKING

from flask import request

from ..problems import ProblemError, problem

if TYPE_CHECKING:
    from .settings import Settings

__all__ = ["accepted_key", "key_accepted", "needs_key", "require_key"]


def require_key(settings: Settings) -> None:
    """Before each request: 401 (with WWW-Authenticate) when keys are set and none matches."""
    if request.method == "OPTIONS":  # a CORS preflight carries no credentials by design
        return
    if settings.api_keys and needs_key(request.path, settings.metrics_require_key):
        if not key_accepted(request.headers.get("Authorization"), settings.api_keys):
            document = problem(401, "Unauthorized", "Send a valid key as 'Authorization: Bearer <key>'.")
            raise ProblemError(document, {"WWW-Authenticate": 'Bearer realm="shockpath"'})


def needs_key(path: str, metrics_require_key: bool) -> bool:
    """/v1/... always; /metrics when so configured; health and the document stay open."""
    return path.startswith("/v1/") or (metrics_require_key and path == "/metrics")


def key_accepted(header: str | None, keys: tuple[str, ...]) -> bool:
    return accepted_key(header, keys) is not None


def accepted_key(header: str | None, keys: tuple[str, ...]) -> str | None:
    """The configured key the header presents, or None (every key compared, in constant time).

    The scenario library keeps only a hash of it as the owner of what the key saves."""
    scheme, _, token = (header or "").partition(" ")
    if scheme.lower() != "bearer" or not token.strip():
        return None
    presented = token.strip().encode()
    accepted = None
    for key in keys:
        if hmac.compare_digest(presented, key.encode()):
            accepted = key
    return accepted
