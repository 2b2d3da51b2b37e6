"""POST /v1/paths (one scenario; JSON or CSV, ETag and the answer cache) and /v1/paths/batch."""

from __future__ import annotations

from flask import Response, current_app, g, request

from ..problems import ProblemError, load_request
from ..schemas.paths import BatchRequestSchema
from ..simulation import compute, load_scenario, scenario_id, simulate_many
from .csvio import paths_csv
from .documented import DocumentedBlueprint, problem_responses
from .jsonio import json_response, read_json
from .metrics import SCENARIOS
from .negotiation import negotiate

__all__ = ["blueprint"]

blueprint = DocumentedBlueprint("paths", __name__)

_BATCH = BatchRequestSchema()
_NOT_ACCEPTABLE = "This endpoint answers application/json or text/csv."


@blueprint.operation(
    "post",
    "/v1/paths",
    operationId="postPaths",
    summary="Transition paths of one scenario under each policy",
    request="PathsRequest",
    responses={
        "200": {
            "description": "A path per policy, period 0 (the base point) first.",
            "content": {"application/json": "PathsResponse", "text/csv": "csv"},
            "headers": ["ETag"],
        },
        "304": {"description": "Not modified: If-None-Match matched the ETag.", "headers": ["ETag"]},
        **problem_responses("400", "406", "413", "415", "422"),
    },
    parameters=["If-None-Match", "Accept"],
)
def post_paths() -> Response:
    as_csv = negotiate(["application/json", "text/csv"], _NOT_ACCEPTABLE) == "text/csv"
    scenario = load_scenario(read_json())
    sid = scenario_id(scenario)
    g.scenario_id = sid
    etag = f"{sid}.csv" if as_csv else sid
    cache = current_app.extensions["shockpath.cache"]
    if request.if_none_match.contains(etag):
        response = Response(status=304)
    elif (cached := cache.get(etag)) is not None:
        response = Response(cached, mimetype="text/csv" if as_csv else "application/json")
    else:
        (body,) = compute([scenario], lists=as_csv)
        SCENARIOS.labels("/v1/paths").inc()
        if "status" in body:
            raise ProblemError(body)
        if as_csv:
            response = Response(paths_csv(body), mimetype="text/csv")
        else:
            response = json_response(body)
        cache.put(etag, response.get_data())
    response.set_etag(etag)
    response.vary.add("Accept")
    return response


@blueprint.operation(
    "post",
    "/v1/paths/batch",
    operationId="postPathsBatch",
    summary="Many scenarios in one vectorised call; one result or one problem each, in order",
    request="BatchRequest",
    responses={
        "200": {"description": "Results in request order.", "content": {"application/json": "BatchResponse"}},
        **problem_responses("400", "413", "415", "422"),
    },
)
def post_batch() -> Response:
    envelope = load_request(_BATCH, read_json())
    results = simulate_many(envelope["scenarios"], prefix="/scenarios/{i}", lists=False)
    SCENARIOS.labels("/v1/paths/batch").inc(sum("scenario_id" in r for r in results))
    return json_response({"results": results})
