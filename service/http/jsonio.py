"""Strict JSON in and fast JSON out (orjson).

orjson rejects NaN, Infinity, numbers that overflow to infinity (1e999), integers past 64
bits and nesting deeper than 1024: each is a 400 that names the byte offset of the fault (in
the body as sent, after any decompression). A body must be declared as JSON (415), and is
read with a hard limit whether or not it has a Content-Length (413 either way).

Bodies may be sent compressed with `Content-Encoding: gzip` (RFC 9110 section 8.4). The
compressed bytes are read under the same limit, then inflated in a stream that stops one
byte past the limit: a small body that inflates past it (a decompression bomb) is a 413
without ever being held whole. Any other encoding is a 415.

A body that cannot be read to its end is a 400 (`incomplete-body`), never a 500: a malformed
chunked upload (gunicorn's InvalidChunkSize, ChunkMissingTerminator, ...), a body shorter
than its Content-Length, or a client that goes away mid-body. Where the client is still
there it gets the problem document; either way the metrics count a 400.
"""

from __future__ import annotations

import zlib
from typing import Any

import orjson
from flask import Response, current_app, request
from werkzeug.exceptions import ClientDisconnected

from ..problems import ProblemError, problem

__all__ = [
    "MAX_LISTED_ERRORS",
    "cap_errors",
    "dumps",
    "json_response",
    "problem_response",
    "read_body",
    "read_json",
]

PROBLEM_JSON = "application/problem+json"
#: Field errors a problem document lists; the rest are counted in `more_errors`.
MAX_LISTED_ERRORS = 100
#: Content-Encoding names of gzip a request body may carry ("identity" is the same as none).
GZIP_NAMES = ("gzip", "x-gzip")

#: Errors a server raises while the app reads a body that cannot be read to its end, besides
#: the parse errors of gunicorn's HTTP reader (InvalidChunkSize, ChunkMissingTerminator, ...),
#: which are recognised by their module so that the app does not import the server.
_UNREADABLE = (OSError, EOFError, ClientDisconnected)


def _unreadable(error: Exception) -> bool:
    return isinstance(error, _UNREADABLE) or type(error).__module__.startswith("gunicorn.http")


def _is_json(mimetype: str) -> bool:
    return mimetype == "application/json" or (
        mimetype.startswith("application/") and mimetype.endswith("+json")
    )


def _too_large(limit: int, what: str = "The body") -> ProblemError:
    return ProblemError(problem(413, "Content Too Large", f"{what} is over {limit} bytes.", "body-too-large"))


def _encoding() -> str:
    """The body's content coding: "gzip" or "" (none); ProblemError 415 for any other."""
    header = request.headers.get("Content-Encoding", "").strip().lower()
    codings = [c.strip() for c in header.split(",") if c.strip() and c.strip() != "identity"]
    if not codings:
        return ""
    if len(codings) == 1 and codings[0] in GZIP_NAMES:
        return "gzip"
    raise ProblemError(
        problem(
            415,
            "Unsupported Media Type",
            f"Content-Encoding {header!r} is not supported: send the body as it is, or gzip-compressed "
            "with Content-Encoding: gzip.",
            "unsupported-encoding",
        ),
        {"Accept-Encoding": "gzip"},
    )


def read_body() -> bytes:
    """The request body, de-chunked and inflated, at most the size limit; ProblemError otherwise.

    415 for a body not declared as JSON or an unknown encoding, 413 past the limit (before or
    after inflating), 400 for a body that cannot be read to its end or does not inflate.
    """
    if not _is_json(request.mimetype):
        raise ProblemError(
            problem(
                415, "Unsupported Media Type", "Send the body as application/json.", "unsupported-media-type"
            )
        )
    encoding = _encoding()
    limit = current_app.config["MAX_CONTENT_LENGTH"]
    if request.content_length is not None and request.content_length > limit:
        raise _too_large(limit)
    try:
        if request.content_length is None and request.environ.get("wsgi.input_terminated"):
            # A chunked body: werkzeug's stream would stop silently at the limit, so read the
            # server's (de-chunked) input directly, one byte past the limit.
            data = request.environ["wsgi.input"].read(limit + 1)
        else:
            data = request.stream.read(_read_size(request.content_length, limit))
            if request.content_length is not None and len(data) < request.content_length:
                raise EOFError("body shorter than its Content-Length")
    except Exception as error:
        if not _unreadable(error):
            raise
        raise ProblemError(
            problem(
                400,
                "Bad Request",
                "The body could not be read to its end (a malformed or truncated chunked body, a body "
                f"shorter than its Content-Length, or the connection closed): {type(error).__name__}.",
                "incomplete-body",
            ),
            {"Connection": "close"},
        ) from None
    if len(data) > limit:
        raise _too_large(limit)
    return _gunzip(data, limit) if encoding == "gzip" else data


def _read_size(content_length: int | None, limit: int) -> int:
    """Bytes to ask the stream for: the declared length (already checked against the limit),
    or one byte past the limit when there is none, to tell an over-long body.

    werkzeug's stream makes a buffer of the size asked for, and over a server stream that
    has `readinto` (werkzeug's test client, servers built on io streams) a zero-filled one
    too: asking for limit + 1 made an 8 MiB buffer for a body of a few hundred bytes, about
    2 ms a request there (measured; about 1 us over gunicorn's stream, which has no
    `readinto`). A body cannot run past its Content-Length: the server frames it by that
    length, so asking for exactly that much misses nothing.
    """
    return limit + 1 if content_length is None else content_length


def _gunzip(data: bytes, limit: int) -> bytes:
    """Inflate gzip members one after another, never producing more than limit + 1 bytes."""
    out = bytearray()
    rest = data
    try:
        while rest:
            inflater = zlib.decompressobj(wbits=16 + zlib.MAX_WBITS)
            out += inflater.decompress(rest, limit + 1 - len(out))
            if len(out) > limit or inflater.unconsumed_tail:
                raise _too_large(limit, "The body after decompression")
            if not inflater.eof:
                raise zlib.error("the compressed body ends early")
            rest = inflater.unused_data
    except zlib.error as error:
        raise ProblemError(
            problem(400, "Bad Request", f"The body is not valid gzip ({error}).", "malformed-gzip")
        ) from None
    return bytes(out)


def read_json() -> Any:
    """The request body parsed as strict JSON, or a ProblemError (400, 413, 415)."""
    data = read_body()
    try:
        return orjson.loads(data)
    except orjson.JSONDecodeError as error:
        offset, reason = _fault(data, error)
        raise ProblemError(
            problem(
                400,
                "Bad Request",
                f"The body is not valid JSON: {reason} at byte {offset}.",
                "malformed-json",
                offset=offset,
            )
        ) from None


def _fault(data: bytes, error: orjson.JSONDecodeError) -> tuple[int, str]:
    """Byte offset (0-based, in the body as parsed) and reason of a parse error.

    orjson reports invalid UTF-8 at position 0 and other faults in characters; the byte
    offset of the first invalid UTF-8 sequence comes from Python's decoder instead.
    """
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as bad:
        return bad.start, "invalid UTF-8"
    return len(text[: error.pos].encode("utf-8")), error.msg


def dumps(body: Any) -> bytes:
    return orjson.dumps(body)


def json_response(body: Any, status: int = 200, mimetype: str = "application/json") -> Response:
    """orjson, with numpy arrays written directly (same bytes as their lists)."""
    return Response(orjson.dumps(body, option=orjson.OPT_SERIALIZE_NUMPY), status=status, mimetype=mimetype)


def cap_errors(document: dict[str, Any]) -> dict[str, Any]:
    """At most MAX_LISTED_ERRORS field errors (the first in the request's order, as
    field_errors sorts them); `more_errors` counts the ones left out. The same type comes
    back (a Problem stays a Problem). Every problem an answer carries goes through here: the
    top-level one (problem_response) and each of a batch's (service/http/paths.py)."""
    errors = document.get("errors")
    if isinstance(errors, list) and len(errors) > MAX_LISTED_ERRORS:
        document = type(document)(
            {
                **document,
                "errors": errors[:MAX_LISTED_ERRORS],
                "more_errors": len(errors) - MAX_LISTED_ERRORS,
            }
        )
    return document


def problem_response(document: dict[str, Any], headers: dict[str, str] | None = None) -> Response:
    """The problem document as application/problem+json, its field errors capped."""
    document = cap_errors(document)
    response = Response(orjson.dumps(document), status=int(document["status"]), mimetype=PROBLEM_JSON)
    for key, value in (headers or {}).items():
        response.headers[key] = value
    return response
