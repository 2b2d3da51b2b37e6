"""POST /v1/bands and /v1/sensitivity: uncertain elasticities (service.uncertainty computes)."""

from __future__ import annotations

from flask import Response, current_app, g

from ..uncertainty import bands, sensitivity
from .documented import DocumentedBlueprint, problem_responses
from .jsonio import json_response, read_json
from .metrics import DRAWS, SCENARIOS

__all__ = ["blueprint"]

blueprint = DocumentedBlueprint("uncertainty", __name__)


@blueprint.operation(
    "post",
    "/v1/bands",
    operationId="postBands",
    summary="Percentile bands of every policy's path over draws of uncertain elasticities",
    request="BandsRequest",
    responses={
        "200": {
            "description": "Bands per policy and the central path.",
            "content": {"application/json": "BandsResponse"},
        },
        **problem_responses("400", "413", "415", "422"),
    },
)
def post_bands() -> Response:
    threads = current_app.extensions["shockpath.settings"].band_threads
    body = bands(read_json(), threads=threads)
    g.scenario_id = body["scenario_id"]
    DRAWS.inc(body["draws"])
    SCENARIOS.labels("/v1/bands").inc()
    return json_response(body)


@blueprint.operation(
    "post",
    "/v1/sensitivity",
    operationId="postSensitivity",
    summary="One-at-a-time swings of each uncertain input, largest first (a tornado chart)",
    request="SensitivityRequest",
    responses={
        "200": {
            "description": "Swings per input and policy.",
            "content": {"application/json": "SensitivityResponse"},
        },
        **problem_responses("400", "413", "415", "422"),
    },
)
def post_sensitivity() -> Response:
    body = sensitivity(read_json())
    g.scenario_id = body["scenario_id"]
    SCENARIOS.labels("/v1/sensitivity").inc(1 + 2 * len(body["inputs"]))
    return json_response(body)
