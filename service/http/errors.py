"""One error envelope (RFC 9457 application/problem+json) and its three handlers.

HTTP errors (404, 405, 413, ...) keep their status and headers (Allow); ProblemError carries
its own document; anything else is logged with the request id and answered with a generic
500 that carries no detail of the failure.
"""

from __future__ import annotations

import logging

from flask import Flask, g, request
from werkzeug.exceptions import HTTPException

from ..problems import ProblemError, problem
from .jsonio import problem_response

__all__ = ["register_error_handlers"]

_DETAILS = {
    404: "No such resource.",
    405: "This method is not allowed here.",
    413: "The body is over the size limit.",
}


def register_error_handlers(app: Flask, log: logging.Logger) -> None:
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
        detail = _DETAILS.get(status, error.description or error.name)
        return problem_response(problem(status, error.name, detail), headers)

    @app.errorhandler(Exception)
    def _unexpected(error: Exception):
        rid = g.get("request_id", "")
        log.exception("unhandled error", extra={"request_id": rid, "path": request.path})
        detail = (
            f"The server failed to answer; quote request id {rid}." if rid else "The server failed to answer."
        )
        document = problem(500, "Internal Server Error", detail, request_id=rid)
        return problem_response(document)
