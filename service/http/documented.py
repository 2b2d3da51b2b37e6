"""Blueprints whose routes carry their own OpenAPI operation data, written beside each view.

    @blueprint.operation("post", "/v1/paths", operationId="postPaths", summary=..., ...)
    def post_paths(): ...

registers the Flask route (OpenAPI's {name} becomes Flask's <name>) and records the operation;
openapi.py builds the document from the operations of every blueprint in routes.py.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from typing import Any

from flask import Blueprint

__all__ = ["DocumentedBlueprint", "problem_responses"]

_PROBLEMS = {
    "400": "Malformed JSON.",
    "406": "The Accept header accepts none of the types this endpoint answers.",
    "413": "The body is over the size limit.",
    "415": "The body is not application/json.",
    "422": "The request is invalid; `errors` points at each field.",
}


#: The documented 304 of an operation that answers conditional requests (If-None-Match).
NOT_MODIFIED = {"304": {"description": "Not modified: If-None-Match matched the ETag.", "headers": ["ETag"]}}


def problem_responses(*codes: str) -> dict[str, Any]:
    """The documented problem responses of the common statuses."""
    return {code: {"description": _PROBLEMS[code], "problem": True} for code in codes}


def csv_twin_responses(description: str) -> dict[str, Any]:
    """The responses of a compute operation's CSV twin (POST .../csv, answered as CSV whatever
    the Accept header, so never a 406): the CSV with its ETag and file name, 304, and the
    body's problems."""
    return {
        "200": {
            "description": description,
            "content": {"text/csv": "csv"},
            "headers": ["ETag", "Content-Disposition"],
        },
        **NOT_MODIFIED,
        **problem_responses("400", "413", "415", "422"),
    }


class DocumentedBlueprint(Blueprint):
    """A Blueprint that records, for each route, the operation the OpenAPI document shows.

    An operation is the dict openapi.py reads: operationId, summary, request (a schema name),
    responses, parameters, path_parameters; or `document`, a finished OpenAPI operation.
    """

    def __init__(self, name: str, import_name: str):
        super().__init__(name, import_name)
        self.operations: list[dict[str, Any]] = []

    def operation(self, method: str, path: str, **doc: Any) -> Callable:
        def register(view: Callable) -> Callable:
            rule = re.sub(r"\{([^}]+)\}", r"<\1>", path)
            self.add_url_rule(rule, view_func=view, methods=[method.upper()])
            self.operations.append({"path": path, "method": method, **doc})
            return view

        return register
