"""Strict JSON in and fast JSON out (orjson).

orjson rejects NaN, Infinity, numbers that overflow to infinity (1e999), integers past 64
bits and nesting deeper than 1024: each is a 400. A body must be declared as JSON (415),
and is read with a hard limit whether or not it has a Content-Length (413 either way).
"""

from __future__ import annotations

from typing import Any

import orjson
from flask import Response, current_app, request

from ..problems import ProblemError, problem

__all__ = ["dumps", "json_response", "problem_response", "read_json"]

PROBLEM_JSON = "application/problem+json"


def _is_json(mimetype: str) -> bool:
    return mimetype == "application/json" or (
        mimetype.startswith("application/") and mimetype.endswith("+json")
    )


def read_json() -> Any:
    """The request body parsed as strict JSON, or a ProblemError (400, 413, 415)."""
    if not _is_json(request.mimetype):
        raise ProblemError(problem(415, "Unsupported Media Type", "Send the body as application/json."))
    limit = current_app.config["MAX_CONTENT_LENGTH"]
    if request.content_length is not None and request.content_length > limit:
        raise ProblemError(problem(413, "Content Too Large", f"The body is over {limit} bytes."))
    if request.content_length is None and request.environ.get("wsgi.input_terminated"):
        # A chunked body: werkzeug's stream would stop silently at the limit, so read the
        # server's (de-chunked) input directly, one byte past the limit.
        data = request.environ["wsgi.input"].read(limit + 1)
    else:
        data = request.stream.read(limit + 1)
    if len(data) > limit:
        raise ProblemError(problem(413, "Content Too Large", f"The body is over {limit} bytes."))
    try:
        return orjson.loads(data)
    except orjson.JSONDecodeError as error:
        raise ProblemError(
            problem(400, "Bad Request", f"The body is not valid JSON ({_reason(error)}).", "malformed-json")
        ) from None


def _reason(error: orjson.JSONDecodeError) -> str:
    return f"{error.msg} at line {error.lineno}, column {error.colno}"


def dumps(body: Any) -> bytes:
    return orjson.dumps(body)


def json_response(body: Any, status: int = 200, mimetype: str = "application/json") -> Response:
    """orjson, with numpy arrays written directly (same bytes as their lists)."""
    return Response(orjson.dumps(body, option=orjson.OPT_SERIALIZE_NUMPY), status=status, mimetype=mimetype)


def problem_response(document: dict[str, Any], headers: dict[str, str] | None = None) -> Response:
    response = Response(orjson.dumps(document), status=int(document["status"]), mimetype=PROBLEM_JSON)
    for key, value in (headers or {}).items():
        response.headers[key] = value
    return response
