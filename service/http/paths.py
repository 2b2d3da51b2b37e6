"""POST /v1/paths (one scenario; JSON or CSV, ETag and the answer cache) and /v1/paths/batch."""

from __future__ import annotations

from flask import Response, current_app, g

from ..problems import ProblemError, load_request
from ..schemas.paths import BatchRequestSchema
from ..simulation import compute, load_scenario, scenario_id, simulate_many
from .conditional import attachment, conditional, request_tag
from .csvio import batch_csv, paths_csv
from .documented import NOT_MODIFIED, DocumentedBlueprint, problem_responses
from .jsonio import json_response, read_json
from .metrics import SCENARIOS
from .negotiation import CSV, TABULAR, negotiate

__all__ = ["blueprint", "paths_answer"]

blueprint = DocumentedBlueprint("paths", __name__)

_BATCH = BatchRequestSchema()


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
            "headers": ["ETag", "Content-Disposition"],
        },
        **NOT_MODIFIED,
        **problem_responses("400", "406", "413", "415", "422"),
    },
    parameters=["If-None-Match", "Accept"],
)
def post_paths() -> Response:
    return paths_answer(read_json())


def paths_answer(raw: object) -> Response:
    """The answer of /v1/paths to a request body: negotiation, ETag, cache and formats (also
    what GET /v1/scenarios/{id}/paths answers for a stored request)."""
    as_csv = negotiate(TABULAR) == CSV
    scenario = load_scenario(raw)
    sid = scenario_id(scenario)
    g.scenario_id = sid
    tag = f"{sid}.csv" if as_csv else sid
    cache = current_app.extensions["shockpath.cache"]

    def produce() -> Response:
        if (cached := cache.get(tag)) is not None:
            response = Response(cached, mimetype=CSV if as_csv else "application/json")
        else:
            (body,) = compute([scenario], lists=as_csv)
            SCENARIOS.labels("/v1/paths").inc()
            if "status" in body:
                raise ProblemError(body)
            response = Response(paths_csv(body), mimetype=CSV) if as_csv else json_response(body)
            cache.put(tag, response.get_data())
        if as_csv:
            attachment(response, f"paths-{sid[:12]}.csv")
        return response

    response = conditional(tag, produce)
    response.vary.add("Accept")
    return response


@blueprint.operation(
    "post",
    "/v1/paths/batch",
    operationId="postPathsBatch",
    summary="Many scenarios in one vectorised call; one result or one problem each, in order",
    request="BatchRequest",
    responses={
        "200": {
            "description": "Results in request order (CSV: one row per value; a failed scenario has one "
            "`problem` row).",
            "content": {"application/json": "BatchResponse", "text/csv": "csv"},
            "headers": ["ETag", "Content-Disposition"],
        },
        **NOT_MODIFIED,
        **problem_responses("400", "406", "413", "415", "422"),
    },
    parameters=["If-None-Match", "Accept"],
)
def post_batch() -> Response:
    as_csv = negotiate(TABULAR) == CSV
    raw = read_json()
    tag = request_tag("/v1/paths/batch", raw, "csv" if as_csv else "json")

    def produce() -> Response:
        envelope = load_request(_BATCH, raw)
        results = simulate_many(envelope["scenarios"], prefix="/scenarios/{i}", lists=as_csv)
        SCENARIOS.labels("/v1/paths/batch").inc(sum("scenario_id" in r for r in results))
        if as_csv:
            return attachment(Response(batch_csv(results), mimetype=CSV), f"batch-{tag[:12]}.csv")
        return json_response({"results": results})

    response = conditional(tag, produce)
    response.vary.add("Accept")
    return response
