"""RFC 9457 problem documents, and marshmallow errors turned into RFC 6901 JSON Pointers."""

from __future__ import annotations

from typing import Any

__all__ = ["ProblemError", "engine_problem", "field_errors", "problem", "validation_problem"]

PROBLEM_BASE = "urn:shockpath:problem:"


def _escape(token: Any) -> str:
    return str(token).replace("~", "~0").replace("/", "~1")


def field_errors(messages: Any, prefix: str = "") -> list[dict[str, str]]:
    """Flatten marshmallow's nested error messages into [{"pointer", "message"}], sorted."""
    out: list[dict[str, str]] = []
    if isinstance(messages, dict) and messages and set(messages) <= {"key", "value"}:
        # marshmallow's Dict nests a member's errors under "key" (its name) and "value":
        # both belong to the member itself. (No schema here has fields named key or value.)
        for value in messages.values():
            out.extend(field_errors(value, prefix))
    elif isinstance(messages, dict):
        for key, value in messages.items():
            pointer = prefix if key == "_schema" else f"{prefix}/{_escape(key)}"
            out.extend(field_errors(value, pointer))
    elif isinstance(messages, (list, tuple)):
        for item in messages:
            if isinstance(item, (dict, list, tuple)):
                out.extend(field_errors(item, prefix))
            else:
                out.append({"pointer": prefix, "message": str(item)})
    else:
        out.append({"pointer": prefix, "message": str(messages)})
    return sorted(out, key=lambda e: (e["pointer"], e["message"]))


def problem(status: int, title: str, detail: str, code: str | None = None, **extra: Any) -> dict[str, Any]:
    """A problem document; `code` names our problem type, otherwise about:blank."""
    body: dict[str, Any] = {
        "type": PROBLEM_BASE + code if code else "about:blank",
        "title": title,
        "status": status,
        "detail": detail,
    }
    body.update(extra)
    return body


class ProblemError(Exception):
    """Raised by the Python API and the views; carries the problem document."""

    def __init__(self, document: dict[str, Any], headers: dict[str, str] | None = None):
        super().__init__(document.get("detail", ""))
        self.problem = document
        self.status = int(document["status"])
        self.headers = headers or {}


def validation_problem(messages: Any, prefix: str = "") -> dict[str, Any]:
    errors = field_errors(messages, prefix)
    first = errors[0] if errors else {"pointer": "", "message": "invalid"}
    more = f" (and {len(errors) - 1} more)" if len(errors) > 1 else ""
    return problem(
        422,
        "The request is not valid",
        f"{first['pointer'] or '/'}: {first['message']}{more}",
        "invalid-request",
        errors=errors,
    )


def engine_problem(error, prefix: str = "") -> dict[str, Any]:
    """Problem document of an engine error (422: the inputs are the cause)."""
    pointer = prefix + error.pointer
    extra: dict[str, Any] = {"errors": [{"pointer": pointer, "message": error.message}]}
    if error.period is not None:
        extra["period"] = error.period
    return problem(422, error.title, error.message, error.code.replace("_", "-"), **extra)
