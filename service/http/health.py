"""GET /healthz, /readyz, /metrics and /openapi.json: what operators and clients poll."""

from __future__ import annotations

from flask import Response, current_app

from ..engine import MODEL_VERSION
from ..problems import ProblemError, problem
from ..simulation import simulate_many
from . import metrics
from .conditional import conditional
from .documented import DocumentedBlueprint
from .jsonio import json_response
from .negotiation import negotiate

__all__ = ["blueprint"]

blueprint = DocumentedBlueprint("health", __name__)

_PROBLEM = {"application/problem+json": {"schema": {"$ref": "#/components/schemas/Problem"}}}


@blueprint.operation(
    "get",
    "/healthz",
    operationId="liveness",
    summary="Liveness: the process answers",
    responses={"200": {"description": "Alive.", "content": {"application/json": "Health"}}},
)
def healthz() -> Response:
    return json_response({"status": "ok", "model_version": MODEL_VERSION})


_CANNED = {
    "market": {
        "price": 100.0,
        "quantity": 1000.0,
        "demand": {"price_elasticity": -1.0, "shifters": {"income": 1.0}},
        "supply": {"short_run_elasticity": 1.0, "long_run_elasticity": 1.0},
    },
    "shocks": [{"shifter": "income", "profile": "step", "change": 0.1}],
    "horizon": 1,
    "policies": [{"name": "free market", "kind": "none"}],
}


@blueprint.operation(
    "get",
    "/readyz",
    operationId="readiness",
    summary="Readiness: the model solves a canned market correctly",
    responses={
        "200": {"description": "Ready.", "content": {"application/json": "Health"}},
        "503": {"description": "The model failed its check.", "problem": True},
    },
)
def readyz() -> Response:
    """Solve a tiny market whose answer is known: EP = 0.10 / (1 + 1), so P* = 105."""
    (body,) = simulate_many([_CANNED])
    try:
        price = body["paths"][0]["consumer_price"][1]
        ok = abs(price - 105.0) < 1e-9
    except (KeyError, IndexError, TypeError):
        ok = False
    if not ok:
        current_app.logger.error("readiness check failed: canned market gave %r", body)
        raise ProblemError(problem(503, "Service Unavailable", "The model failed its readiness check."))
    return json_response({"status": "ready", "model_version": MODEL_VERSION})


@blueprint.operation(
    "get",
    "/metrics",
    document={
        "operationId": "metrics",
        "summary": "Prometheus metrics (text exposition format), aggregated over workers",
        "responses": {
            "200": {"description": "Metrics.", "content": {"text/plain": {"schema": {"type": "string"}}}},
            "401": {
                "description": "Keys are configured and SHOCKPATH_METRICS_REQUIRE_KEY is on.",
                "content": _PROBLEM,
            },
        },
    },
)
def prometheus_metrics() -> Response:
    body, content_type = metrics.scrape()
    return Response(body, content_type=content_type)


@blueprint.operation(
    "get",
    "/openapi.json",
    document={
        "operationId": "openapiDocument",
        "summary": "This document",
        "parameters": ["If-None-Match"],
        "responses": {
            "200": {
                "description": "OpenAPI 3.1",
                "content": {"application/json": {"schema": {"type": "object"}}},
                "headers": {"ETag": "ETag"},
            },
            "304": {
                "description": "Not modified: If-None-Match matched the ETag.",
                "headers": {"ETag": "ETag"},
            },
            "406": {"description": "Only application/json can be answered.", "content": _PROBLEM},
        },
    },
)
def openapi_document() -> Response:
    negotiate()
    document = current_app.extensions["shockpath.openapi"]
    tag = current_app.extensions["shockpath.openapi_tag"]
    return conditional(tag, lambda: json_response(document))
