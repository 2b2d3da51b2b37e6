"""GET /v1/examples and /v1/examples/{name}: the demo scenarios (service.examples)."""

from __future__ import annotations

from flask import Response, url_for

from ..examples import example_request, examples
from ..problems import ProblemError, problem
from .documented import DocumentedBlueprint
from .jsonio import json_response

__all__ = ["blueprint"]

blueprint = DocumentedBlueprint("examples", __name__)


@blueprint.operation(
    "get",
    "/v1/examples",
    operationId="listExamples",
    summary="Ready-made demo scenarios (invented markets)",
    responses={"200": {"description": "The examples.", "content": {"application/json": "ExampleList"}}},
)
def list_examples() -> Response:
    items = [
        {
            "name": name,
            "title": entry["title"],
            "description": entry["description"],
            "endpoint": entry.get("endpoint", "/v1/paths"),
            "href": url_for("examples.get_example", name=name),
        }
        for name, entry in examples().items()
    ]
    return json_response({"examples": items})


@blueprint.operation(
    "get",
    "/v1/examples/{name}",
    operationId="getExample",
    summary="One demo scenario, postable as it is to its endpoint",
    path_parameters=["name"],
    responses={
        "200": {
            "description": "A request body for the example's endpoint.",
            "content": {"application/json": "ExampleRequest"},
        },
        "404": {"description": "No such example.", "problem": True},
    },
)
def get_example(name: str) -> Response:
    body = example_request(name)
    if body is None:
        raise ProblemError(problem(404, "Not Found", f"No example named '{name}'."))
    return json_response(body)
