"""POST /v1/paths (one scenario; JSON or CSV, ETag and the answer cache) and /v1/paths/batch."""

from __future__ import annotations

from flask import Response, current_app, g

from ..problems import ProblemError, load_request
from ..schemas.paths import BatchRequestSchema
from ..simulation import compute, load_scenario, normalised_request, scenario_id, simulate_many
from ..workbook import batch_workbook, paths_workbook
from .conditional import attachment, conditional, request_tag
from .csvio import batch_csv, neutralise, paths_csv
from .documented import NOT_MODIFIED, DocumentedBlueprint, problem_responses
from .jsonio import json_response, read_json
from .metrics import SCENARIOS
from .negotiation import CSV, TABULAR, XLSX, negotiate

__all__ = ["blueprint"]

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
            "content": {"application/json": "PathsResponse", "text/csv": "csv", XLSX: "xlsx"},
            "headers": ["ETag", "Content-Disposition"],
        },
        **NOT_MODIFIED,
        **problem_responses("400", "406", "413", "415", "422"),
    },
    parameters=["If-None-Match", "Accept"],
)
def post_paths() -> Response:
    chosen = negotiate(TABULAR)
    as_csv, as_xlsx = chosen == CSV, chosen == XLSX
    raw = read_json()
    scenario = load_scenario(raw)
    sid = scenario_id(scenario)
    g.scenario_id = sid
    tag = f"{sid}.csv" if as_csv else f"{sid}.xlsx" if as_xlsx else sid
    cache = current_app.extensions["shockpath.cache"]

    def produce() -> Response:
        if (cached := cache.get(tag)) is not None:
            response = Response(cached, mimetype=chosen)
        else:
            (body,) = compute([scenario], lists=as_csv or as_xlsx)
            SCENARIOS.labels("/v1/paths").inc()
            if "status" in body:
                raise ProblemError(body)
            body["request"] = normalised_request(raw)
            if as_xlsx:
                response = Response(paths_workbook(body, neutralise), mimetype=XLSX)
            else:
                response = Response(paths_csv(body), mimetype=CSV) if as_csv else json_response(body)
            cache.put(tag, response.get_data())
        if as_csv or as_xlsx:
            attachment(response, f"paths-{sid[:12]}.{'csv' if as_csv else 'xlsx'}")
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
            "content": {"application/json": "BatchResponse", "text/csv": "csv", XLSX: "xlsx"},
            "headers": ["ETag", "Content-Disposition"],
        },
        **NOT_MODIFIED,
        **problem_responses("400", "406", "413", "415", "422"),
    },
    parameters=["If-None-Match", "Accept"],
)
def post_batch() -> Response:
    chosen = negotiate(TABULAR)
    as_csv, as_xlsx = chosen == CSV, chosen == XLSX
    raw = read_json()
    tag = request_tag("/v1/paths/batch", raw, "csv" if as_csv else "xlsx" if as_xlsx else "json")

    def produce() -> Response:
        envelope = load_request(_BATCH, raw)
        results = simulate_many(envelope["scenarios"], prefix="/scenarios/{i}", lists=as_csv or as_xlsx)
        SCENARIOS.labels("/v1/paths/batch").inc(sum("scenario_id" in r for r in results))
        if as_xlsx:
            return attachment(
                Response(batch_workbook(results, neutralise), mimetype=XLSX), f"batch-{tag[:12]}.xlsx"
            )
        if as_csv:
            return attachment(Response(batch_csv(results), mimetype=CSV), f"batch-{tag[:12]}.csv")
        return json_response({"results": results})

    response = conditional(tag, produce)
    response.vary.add("Accept")
    return response
