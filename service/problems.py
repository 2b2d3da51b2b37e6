"""RFC 9457 problem documents: invalid requests (422 with a JSON Pointer per field), engine
errors, and the one function that checks and loads a request body."""

from __future__ import annotations

from typing import Any

from marshmallow import Schema, ValidationError

from .schemas.compiled import compile_loader, load_fast
from .schemas.pointers import field_errors

__all__ = [
    "Problem",
    "ProblemError",
    "engine_problem",
    "is_problem",
    "load_request",
    "moved_under",
    "problem",
    "validation_problem",
]

PROBLEM_BASE = "urn:shockpath:problem:"
#: Problem codes of plain HTTP statuses: every problem `type` is a URN of the one scheme
#: urn:shockpath:problem:<code> (`http-<status>` for a status not listed), never about:blank.
STATUS_CODES = {
    400: "bad-request",
    401: "unauthorized",
    403: "forbidden",
    404: "not-found",
    405: "method-not-allowed",
    406: "not-acceptable",
    413: "body-too-large",
    415: "unsupported-media-type",
    422: "invalid-request",
    429: "too-many-requests",
    500: "internal-error",
    503: "unavailable",
}


class Problem(dict):
    """An RFC 9457 problem document: a dict (written as JSON as it is) whose type says that it is
    one. Where a list holds answers and problems side by side (a batch, compute's output), a
    problem is told from an answer by `is_problem`, never by probing for a key."""

    __slots__ = ()

    @property
    def status(self) -> int:
        return int(self["status"])


def is_problem(value: Any) -> bool:
    """True for a problem document (Problem), false for an answer."""
    return isinstance(value, Problem)


def problem(status: int, title: str, detail: str, code: str | None = None, **extra: Any) -> Problem:
    """A problem document; `code` names our problem type, otherwise the status's code."""
    body = Problem(
        {
            "type": PROBLEM_BASE + (code or STATUS_CODES.get(status, f"http-{status}")),
            "title": title,
            "status": status,
            "detail": detail,
        }
    )
    body.update(extra)
    return body


class ProblemError(Exception):
    """Raised by the Python API and the views; carries the problem document."""

    def __init__(self, document: dict[str, Any], headers: dict[str, str] | None = None):
        super().__init__(document.get("detail", ""))
        self.problem = document if isinstance(document, Problem) else Problem(document)
        self.status = int(document["status"])
        self.headers = headers or {}


def validation_problem(messages: Any, prefix: str = "") -> Problem:
    errors = field_errors(messages, prefix)
    return problem(422, "The request is not valid", _invalid_detail(errors), "invalid-request", errors=errors)


def _invalid_detail(errors: list[dict[str, str]]) -> str:
    """The detail of a validation problem: its first error, pointer first, and how many more. The
    root pointer is "" (RFC 6901: "/" would be a member named ""), so the whole body is named in
    words."""
    first = errors[0] if errors else {"pointer": "", "message": "invalid"}
    more = f" (and {len(errors) - 1} more)" if len(errors) > 1 else ""
    return f"{first['pointer'] or 'The body'}: {first['message']}{more}"


def moved_under(prefix: str, document: dict[str, Any]) -> Problem:
    """The same problem for a request nested at `prefix` (a chart's scenario): every error's
    pointer under it, and a validation problem's detail written again from the moved errors."""
    moved = Problem(document)
    if document.get("errors"):
        moved["errors"] = [dict(e, pointer=prefix + e["pointer"]) for e in document["errors"]]
        if moved.get("type") == PROBLEM_BASE + "invalid-request":
            moved["detail"] = _invalid_detail(moved["errors"])
    return moved


def engine_problem(error, prefix: str = "") -> Problem:
    """Problem document of an engine error (422: the inputs are the cause)."""
    pointer = prefix + error.pointer
    extra: dict[str, Any] = {"errors": [{"pointer": pointer, "message": error.message}]}
    if error.period is not None:
        extra["period"] = error.period
    return problem(422, error.title, error.message, error.code.replace("_", "-"), **extra)


#: Fast loaders generated from each schema instance on first use (schemas.compiled).
_FAST_LOADERS: dict[int, tuple[Schema, Any]] = {}


def load_request(schema: Schema, body: Any, prefix: str = "") -> Any:
    """`body` loaded by `schema`, or ProblemError (422) with pointers under `prefix`.

    The body must be a JSON object; marshmallow's messages become JSON Pointers.
    """
    if not isinstance(body, dict):
        raise ProblemError(validation_problem(["Must be a JSON object."], prefix))
    key = id(schema)
    if key not in _FAST_LOADERS:
        _FAST_LOADERS[key] = (schema, compile_loader(schema))  # the schema kept alive with its id
    try:
        return load_fast(schema, _FAST_LOADERS[key][1], body)
    except ValidationError as error:
        raise ProblemError(validation_problem(error.messages, prefix)) from None
