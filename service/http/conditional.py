"""ETags and conditional requests for every deterministic answer.

Every answer here is a function of the request (and the model version): /v1/paths is tagged
with its scenario id, every other answer with `request_tag`, a hash of the request's canonical
form (keys sorted), the endpoint, the format and the model version. Tags are strong; a request's
If-None-Match is compared weakly (RFC 9110, 13.1.2), so W/"<tag>" matches "<tag>" too, and a
tag that the gzip layer extended ("<tag>:gzip") matches the answer it was given for. A match is
a 304 with the tag and no body, before any model work (and, but for /v1/paths, before the body
is validated: a tag is only ever given to a valid request's answer).
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable
from typing import Any

import orjson
from flask import Response, request

from ..engine import MODEL_VERSION

__all__ = ["ENCODING_SUFFIXES", "attachment", "conditional", "matches", "request_tag"]

#: What the compression layer (flask-compress) appends to a strong tag it compresses.
ENCODING_SUFFIXES = ("", ":gzip")


def request_tag(endpoint: str, body: Any, fmt: str) -> str:
    """sha-256 of the canonical request with the endpoint, the format and the model version."""
    canonical = orjson.dumps([endpoint, fmt, MODEL_VERSION, body], option=orjson.OPT_SORT_KEYS)
    return hashlib.sha256(canonical).hexdigest()


def matches(tag: str) -> str | None:
    """The form of `tag` that If-None-Match names (weak comparison), or None.

    `*` matches a GET only: a POST's answer is made for its body, and the check runs before the
    body is validated, so a star must not turn an invalid body into a 304.
    """
    if not request.environ.get("HTTP_IF_NONE_MATCH"):  # no condition: nothing to parse
        return None
    condition = request.if_none_match
    if condition.star_tag:
        return tag if request.method in ("GET", "HEAD") else None
    for suffix in ENCODING_SUFFIXES:
        if condition.contains_weak(tag + suffix):
            return tag + suffix
    return None


def conditional(tag: str, produce: Callable[[], Response]) -> Response:
    """304 when If-None-Match names `tag`; else the produced answer, tagged."""
    matched = matches(tag)
    if matched is not None:
        response = Response(status=304)
        response.set_etag(matched)
        return response
    response = produce()
    response.set_etag(tag)
    return response


def attachment(response: Response, filename: str) -> Response:
    """Content-Disposition: attachment with a filename (downloads and spreadsheets use it)."""
    response.headers["Content-Disposition"] = f'attachment; filename="{filename}"'
    return response
