"""POST /v1/bands and /v1/sensitivity: uncertain elasticities (service.uncertainty computes).

Both answers are deterministic (bands draw from `seed`, 0 by default), so both carry an ETag
and answer a matching If-None-Match with 304 before any draw.
"""

from __future__ import annotations

import orjson
from flask import Response, current_app, g

from ..uncertainty import bands, sensitivity
from ..workbook import bands_workbook
from .conditional import attachment, conditional, request_tag
from .csvio import bands_csv
from .documented import NOT_MODIFIED, DocumentedBlueprint, csv_twin_responses, problem_responses
from .jsonio import json_response, read_json
from .metrics import DRAWS, SCENARIOS
from .negotiation import CSV, JSON_ONLY, TABULAR, XLSX, negotiate
from .paths import csv_layout

__all__ = ["bands_answer", "bands_body", "blueprint"]

blueprint = DocumentedBlueprint("uncertainty", __name__)


@blueprint.operation(
    "post",
    "/v1/bands",
    operationId="postBands",
    summary="Percentile bands of every policy's path over draws of uncertain elasticities",
    request="BandsRequest",
    responses={
        "200": {
            "description": "Bands per policy and the central path (CSV: the bands in long form by "
            "default; `layout=wide`: one row per policy and period, a column per series and percentile).",
            "content": {"application/json": "BandsResponse", "text/csv": "csv", XLSX: "xlsx"},
            "headers": ["ETag", "Content-Disposition"],
        },
        **NOT_MODIFIED,
        **problem_responses("400", "406", "413", "415", "422"),
    },
    parameters=["If-None-Match", "layout"],
)
def post_bands() -> Response:
    return _bands(negotiate(TABULAR), read_json())


def bands_answer(raw: object) -> Response:
    """The answer of /v1/bands to a request body: negotiation, ETag and formats (also what
    GET /v1/scenarios/{id}/bands answers for a stored request)."""
    return _bands(negotiate(TABULAR), raw)


@blueprint.operation(
    "post",
    "/v1/bands/csv",
    operationId="postBandsCsv",
    summary="POST /v1/bands answered as CSV whatever the Accept header (for generated clients)",
    request="BandsRequest",
    responses=csv_twin_responses(
        "The bands in long form by default; `layout=wide`: one row per policy and period."
    ),
    parameters=["If-None-Match", "layout"],
)
def post_bands_csv() -> Response:
    return _bands(CSV, read_json())  # CSV whatever the Accept header


def _bands(chosen: str, raw: object) -> Response:
    as_csv, as_xlsx = chosen == CSV, chosen == XLSX
    layout = csv_layout()  # checked whatever the format, as /v1/paths does (400 if unknown)
    csv_form = "csv" if layout == "long" else "wide.csv"
    tag = request_tag("/v1/bands", raw, csv_form if as_csv else "xlsx" if as_xlsx else "json")

    def produce() -> Response:
        body, answer = bands_body(raw)
        if as_xlsx:
            return attachment(Response(bands_workbook(body), mimetype=XLSX), f"bands-{tag[:12]}.xlsx")
        if as_csv:
            return attachment(Response(bands_csv(body, layout), mimetype=CSV), f"bands-{tag[:12]}.csv")
        return Response(answer, mimetype="application/json")

    return conditional(tag, produce)


def bands_body(raw: object, counted_as: str | None = "/v1/bands") -> tuple[dict, bytes]:
    """The bands answer of a request and its JSON, from the answer cache when the same request
    was answered before in any format or drawn as a chart (a page asks for the JSON, the long
    and the wide CSV and the band chart: one computation of the draws, not four). Cached as the
    JSON bytes, which read back to the same numbers (orjson writes the shortest repr of each
    float). `counted_as`: the endpoint whose metrics count a computation (None: not counted, as
    a chart's drawing never was)."""
    cache = current_app.extensions["shockpath.cache"]
    key = request_tag("/v1/bands", raw, "json")
    if (answer := cache.get(key)) is not None:
        body = orjson.loads(answer)
    else:
        threads = current_app.extensions["shockpath.settings"].band_threads
        body = bands(raw, threads=threads)
        if counted_as is not None:
            DRAWS.inc(body["draws"])
            SCENARIOS.labels(counted_as).inc()
        answer = json_response(body).get_data()
        cache.put(key, answer)
    g.scenario_id = body["scenario_id"]
    return body, answer


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
            "headers": ["ETag"],
        },
        **NOT_MODIFIED,
        **problem_responses("400", "406", "413", "415", "422"),
    },
    parameters=["If-None-Match"],
)
def post_sensitivity() -> Response:
    negotiate(JSON_ONLY)
    raw = read_json()

    def produce() -> Response:
        body = sensitivity(raw)
        g.scenario_id = body["scenario_id"]
        SCENARIOS.labels("/v1/sensitivity").inc(1 + 2 * len(body["inputs"]))
        return json_response(body)

    return conditional(request_tag("/v1/sensitivity", raw, "json"), produce)
