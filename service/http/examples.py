"""GET /v1/examples and /v1/examples/{name}: the demo scenarios (service.examples)."""

from __future__ import annotations

from flask import Response, url_for

from ..examples import example_request, examples
from ..problems import ProblemError, problem
from .conditional import conditional, request_tag
from .documented import NOT_MODIFIED, DocumentedBlueprint
from .jsonio import json_response
from .negotiation import negotiate

__all__ = ["blueprint"]

blueprint = DocumentedBlueprint("examples", __name__)


@blueprint.operation(
    "get",
    "/v1/examples",
    operationId="listExamples",
    summary="Ready-made demo scenarios (invented markets)",
    parameters=["If-None-Match"],
    responses={
        "200": {
            "description": "The examples.",
            "content": {"application/json": "ExampleList"},
            "headers": ["ETag"],
        },
        **NOT_MODIFIED,
        "406": {"description": "Only application/json can be answered.", "problem": True},
    },
)
def list_examples() -> Response:
    negotiate()
    items = [
        {
            "name": name,
            "title": entry["title"],
            "description": entry["description"],
            "endpoint": entry.get("endpoint", "/v1/paths"),
            "units": entry.get("units", {}),
            "href": url_for("examples.get_example", name=name),
        }
        for name, entry in examples().items()
    ]
    body = {"examples": items}
    return conditional(request_tag("/v1/examples", body, "json"), lambda: json_response(body))


@blueprint.operation(
    "get",
    "/v1/examples/{name}",
    operationId="getExample",
    summary="One demo scenario, postable as it is to its endpoint",
    path_parameters=["name"],
    parameters=["If-None-Match"],
    responses={
        "200": {
            "description": "A request body for the example's endpoint.",
            "content": {"application/json": "ExampleRequest"},
            "headers": ["ETag"],
        },
        **NOT_MODIFIED,
        "404": {"description": "No such example.", "problem": True},
        "406": {"description": "Only application/json can be answered.", "problem": True},
    },
)
def get_example(name: str) -> Response:
    return _example(name)


def _typed(kind: str, request: str):
    """GET /v1/examples/<kind>/{name}: one demo for /v1/<kind>, typed as its request schema."""
    return blueprint.operation(
        "get",
        f"/v1/examples/{kind}/{{name}}",
        operationId=f"get{kind.capitalize()}Example",
        summary=f"One demo scenario for /v1/{kind}, typed as its request (404 if it is for another endpoint)",
        path_parameters=["name"],
        parameters=["If-None-Match"],
        responses={
            "200": {
                "description": f"A {request} body.",
                "content": {"application/json": request},
                "headers": ["ETag"],
            },
            **NOT_MODIFIED,
            "404": {"description": f"No example for /v1/{kind} by that name.", "problem": True},
            "406": {"description": "Only application/json can be answered.", "problem": True},
        },
    )


@_typed("paths", "PathsRequest")
def get_paths_example(name: str) -> Response:
    return _example(name, "/v1/paths")


@_typed("bands", "BandsRequest")
def get_bands_example(name: str) -> Response:
    return _example(name, "/v1/bands")


def _example(name: str, endpoint: str | None = None) -> Response:
    negotiate()
    body = example_request(name)
    if body is None or (endpoint and examples()[name].get("endpoint", "/v1/paths") != endpoint):
        where = f" for {endpoint}" if endpoint else ""
        raise ProblemError(problem(404, "Not Found", f"No example named '{name}'{where}."))
    return conditional(request_tag(f"/v1/examples/{name}", body, "json"), lambda: json_response(body))
