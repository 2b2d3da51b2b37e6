"""POST /v1/paths (one scenario; JSON or CSV, ETag and the answer cache) and /v1/paths/batch."""

from __future__ import annotations

from flask import Response, current_app, g, request

from ..problems import ProblemError, is_problem, load_request, problem, validation_problem
from ..schemas.paths import BatchRequestSchema
from ..simulation import (
    compute,
    load_scenario,
    normalised_request,
    requested_output,
    scenario_id,
    simulate_many,
)
from ..workbook import batch_workbook, paths_workbook
from .conditional import attachment, conditional, request_tag
from .csvio import LAYOUTS, batch_csv, batch_summary_csv, paths_csv, paths_summary_csv
from .documented import NOT_MODIFIED, DocumentedBlueprint, csv_twin_responses, problem_responses
from .jsonio import cap_errors, json_response, read_json
from .metrics import SCENARIOS
from .negotiation import CSV, TABULAR, XLSX, negotiate

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
            "description": 'A path per policy, period 0 (the base point) first; with "output": "summary" '
            "only the summaries and cautions (PathsSummary).",
            "content": {"application/json": "PathsResponse | PathsSummary", "text/csv": "csv", XLSX: "xlsx"},
            "headers": ["ETag", "Content-Disposition"],
        },
        **NOT_MODIFIED,
        **problem_responses("400", "406", "413", "415", "422"),
    },
    parameters=["If-None-Match", "layout"],
)
def post_paths() -> Response:
    return _paths(negotiate(TABULAR), read_json())


def paths_answer(raw: object) -> Response:
    """The answer of /v1/paths to a request body: negotiation, ETag, cache and formats (also
    what GET /v1/scenarios/{id}/paths answers for a stored request)."""
    return _paths(negotiate(TABULAR), raw)


@blueprint.operation(
    "post",
    "/v1/paths/csv",
    operationId="postPathsCsv",
    summary="POST /v1/paths answered as CSV whatever the Accept header (for generated clients)",
    request="PathsRequest",
    responses=csv_twin_responses(
        'The paths as CSV (long form by default; `layout=wide`; summaries with `"output": "summary"`).'
    ),
    parameters=["If-None-Match", "layout"],
)
def post_paths_csv() -> Response:
    return _paths(CSV, read_json())  # CSV whatever the Accept header


def _paths(chosen: str, raw: object) -> Response:
    """The answer in the negotiated format: JSON, CSV (long, wide or summary) or a workbook."""
    as_csv, as_xlsx = chosen == CSV, chosen == XLSX
    layout = csv_layout()
    scenario = load_scenario(raw)
    output = requested_output(raw)
    sid = scenario_id(scenario)
    g.scenario_id = sid
    tag = sid + (".summary" if output == "summary" else "")
    if as_csv:
        tag += ".csv" if layout == "long" or output == "summary" else ".wide.csv"
    elif as_xlsx:
        tag += ".xlsx"
    cache = current_app.extensions["shockpath.cache"]

    def produce() -> Response:
        if (cached := cache.get(tag)) is not None:
            response = Response(cached, mimetype=chosen)
        else:
            (body,) = compute([scenario], lists=as_xlsx, output=output, ids=[sid])
            SCENARIOS.labels("/v1/paths").inc()
            if is_problem(body):
                raise ProblemError(body)
            body["request"] = normalised_request(raw)
            if as_xlsx:
                response = Response(paths_workbook(body), mimetype=XLSX)
            elif not as_csv:
                response = json_response(body)
            elif output == "summary":
                response = Response(paths_summary_csv(body), mimetype=CSV)
            else:
                response = Response(paths_csv(body, layout), mimetype=CSV)
            cache.put(tag, response.get_data())
        if as_csv or as_xlsx:
            attachment(response, f"paths-{sid[:12]}.{'csv' if as_csv else 'xlsx'}")
        return response

    return conditional(tag, produce)


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
    parameters=["If-None-Match", "layout"],
)
def post_batch() -> Response:
    return _batch(negotiate(TABULAR))


@blueprint.operation(
    "post",
    "/v1/paths/batch/csv",
    operationId="postPathsBatchCsv",
    summary="POST /v1/paths/batch answered as CSV whatever the Accept header (for generated clients)",
    request="BatchRequest",
    responses=csv_twin_responses(
        "The results as CSV, streamed (long form by default; `layout=wide`; summaries "
        'with `"output": "summary"`).'
    ),
    parameters=["If-None-Match", "layout"],
)
def post_batch_csv() -> Response:
    return _batch(CSV)  # CSV whatever the Accept header


def _batch(chosen: str) -> Response:
    as_csv, as_xlsx = chosen == CSV, chosen == XLSX
    layout = csv_layout()
    raw = read_json()
    tag = request_tag("/v1/paths/batch", raw, f"csv-{layout}" if as_csv else "xlsx" if as_xlsx else "json")

    def produce() -> Response:
        envelope = load_request(_BATCH, raw)
        output = envelope["output"]
        _same_output(envelope["scenarios"], output)
        results = simulate_many(envelope["scenarios"], prefix="/scenarios/{i}", lists=as_xlsx, output=output)
        # Each scenario's problem lists at most 100 field errors, as a top-level problem does.
        results = [cap_errors(r) if is_problem(r) else r for r in results]
        SCENARIOS.labels("/v1/paths/batch").inc(sum("scenario_id" in r for r in results))
        if as_xlsx:
            return attachment(Response(batch_workbook(results), mimetype=XLSX), f"batch-{tag[:12]}.xlsx")
        if not as_csv:
            return json_response({"results": results})
        if output == "summary":
            answer = Response(batch_summary_csv(results), mimetype=CSV)
        else:  # streamed in blocks: the first rows leave before the last are written
            answer = Response(batch_csv(results, layout), mimetype=CSV)
        return attachment(answer, f"batch-{tag[:12]}.csv")

    return conditional(tag, produce)


def csv_layout() -> str:
    """The CSV layout the `layout` query parameter asks for (long by default); 400 otherwise."""
    if not request.environ.get("QUERY_STRING"):  # no query: nothing to parse
        return LAYOUTS[0]
    layout = request.args.get("layout", LAYOUTS[0])
    if layout not in LAYOUTS:
        raise ProblemError(
            problem(400, "Bad Request", f"layout must be one of: {', '.join(LAYOUTS)}.", "invalid-parameter")
        )
    return layout


def _same_output(scenarios: list, output: str) -> None:
    """A scenario of a batch may repeat the batch's `output`, not contradict it (422)."""
    errors = {
        i: {"output": [f"The batch's output is {output!r}; a scenario cannot ask for another."]}
        for i, s in enumerate(scenarios)
        if isinstance(s, dict) and "output" in s and s["output"] != output
    }
    if errors:
        raise ProblemError(validation_problem({"scenarios": errors}))
