"""Endpoints: each view validates, calls one function of the Python API, and answers.

OPERATIONS describes every operation for the OpenAPI document (openapi.py); the request
and response bodies it names are the marshmallow schemas themselves.
"""

from __future__ import annotations

from importlib import resources
from typing import Any

from flask import Blueprint, Response, current_app, g, request, url_for
from marshmallow import ValidationError

from .. import limits
from ..engine import MODEL_VERSION
from ..examples import example_request, examples
from ..metrics import DRAWS, SCENARIOS
from ..problems import ProblemError, problem, validation_problem
from ..simulation import compute, load_scenario, scenario_id, simulate_many
from ..uncertain import bands, sensitivity
from .chart_schemas import ChartRequestSchema
from .csv_output import paths_csv
from .jsonio import json_response, read_json
from .schemas import BatchRequestSchema

__all__ = ["OPERATIONS", "blueprint"]

blueprint = Blueprint("shockpath", __name__)

_BATCH = BatchRequestSchema()


def _wants_csv() -> bool:
    """Content negotiation between JSON (default) and CSV; 406 for anything else."""
    if not request.accept_mimetypes:
        return False
    best = request.accept_mimetypes.best_match(["application/json", "text/csv"])
    if best is None:
        raise ProblemError(
            problem(406, "Not Acceptable", "This endpoint answers application/json or text/csv.")
        )
    return best == "text/csv"


@blueprint.post("/v1/paths")
def post_paths() -> Response:
    as_csv = _wants_csv()
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


@blueprint.post("/v1/paths/batch")
def post_batch() -> Response:
    body = read_json()
    if not isinstance(body, dict):
        raise ProblemError(validation_problem(["Must be a JSON object."]))
    try:
        envelope = _BATCH.load(body)
    except ValidationError as error:
        raise ProblemError(validation_problem(error.messages)) from None
    scenarios = envelope["scenarios"]
    work = _policy_periods(scenarios)
    if work > limits.MAX_POLICY_PERIODS:
        raise ProblemError(
            validation_problem(
                {
                    "scenarios": [
                        f"The batch asks for {work} policy-periods (policies x (longest horizon + 1)); "
                        f"the limit is {limits.MAX_POLICY_PERIODS}."
                    ]
                }
            )
        )
    results = simulate_many(scenarios, prefix="/scenarios/{i}", lists=False)
    SCENARIOS.labels("/v1/paths/batch").inc(sum("scenario_id" in r for r in results))
    return json_response({"results": results})


def _policy_periods(scenarios: list[dict[str, Any]]) -> int:
    """Work a batch asks for, read from the raw bodies before any validation or model work."""

    def policies(s: dict[str, Any]) -> int:
        p = s.get("policies")
        return len(p) if isinstance(p, list) else 0

    def horizon(s: dict[str, Any]) -> int:
        h = s.get("horizon")
        if isinstance(h, bool) or not isinstance(h, (int, float)) or not h == h:
            return 0
        return int(min(max(h, 0), limits.MAX_HORIZON))

    return sum(policies(s) for s in scenarios) * (1 + max(horizon(s) for s in scenarios))


@blueprint.post("/v1/bands")
def post_bands() -> Response:
    threads = current_app.extensions["shockpath.settings"].band_threads
    body = bands(read_json(), threads=threads)
    g.scenario_id = body["scenario_id"]
    DRAWS.inc(body["draws"])
    SCENARIOS.labels("/v1/bands").inc()
    return json_response(body)


@blueprint.post("/v1/sensitivity")
def post_sensitivity() -> Response:
    body = sensitivity(read_json())
    g.scenario_id = body["scenario_id"]
    SCENARIOS.labels("/v1/sensitivity").inc(1 + 2 * len(body["inputs"]))
    return json_response(body)


_CHART = ChartRequestSchema()
_IMAGE = {"svg": "image/svg+xml", "png": "image/png"}


def _under(prefix: str, error: ProblemError) -> ProblemError:
    """The same problem with its pointers moved under `prefix` (the chart's scenario)."""
    document = dict(error.problem)
    if "errors" in document:
        document["errors"] = [dict(e, pointer=prefix + e["pointer"]) for e in document["errors"]]
    return ProblemError(document)


@blueprint.post("/v1/charts")
def post_chart() -> Response:
    from .. import charts

    body = read_json()
    if not isinstance(body, dict):
        raise ProblemError(validation_problem(["Must be a JSON object."]))
    try:
        spec = _CHART.load(body)
    except ValidationError as error:
        raise ProblemError(validation_problem(error.messages)) from None
    fmt = spec.get("format")
    if fmt is None:
        best = (
            request.accept_mimetypes.best_match(["image/svg+xml", "image/png"])
            if request.accept_mimetypes
            else None
        )
        if request.accept_mimetypes and best is None:
            raise ProblemError(problem(406, "Not Acceptable", "Charts are image/svg+xml or image/png."))
        fmt = "png" if best == "image/png" else "svg"
    if not charts.available():
        raise ProblemError(problem(503, "Service Unavailable", "Charts need the charts extra (matplotlib)."))
    scenario = spec["scenario"]
    form = (
        scenario.get("market", {}).get("form", "linear")
        if isinstance(scenario.get("market"), dict)
        else "linear"
    )
    try:
        if spec["chart"] == "paths":
            result = simulate_many([scenario])[0]
            if "status" in result:
                raise ProblemError(result)
            image = charts.render_paths(result, spec["units"], fmt, form, spec.get("title"))
        elif spec["chart"] == "bands":
            threads = current_app.extensions["shockpath.settings"].band_threads
            result = bands(scenario, threads=threads)
            image = charts.render_bands(result, spec["units"], fmt, form, spec.get("title"))
        else:
            result = sensitivity(scenario)
            image = charts.render_sensitivity(
                result, spec["units"], fmt, form, spec.get("policy"), spec.get("title")
            )
    except ProblemError as error:
        raise _under("/scenario", error) from None
    g.scenario_id = result["scenario_id"]
    response = Response(image, mimetype=_IMAGE[fmt])
    response.vary.add("Accept")
    return response


@blueprint.get("/v1/examples")
def list_examples() -> Response:
    items = [
        {
            "name": name,
            "title": entry["title"],
            "description": entry["description"],
            "endpoint": entry.get("endpoint", "/v1/paths"),
            "href": url_for("shockpath.get_example", name=name),
        }
        for name, entry in examples().items()
    ]
    return json_response({"examples": items})


@blueprint.get("/v1/examples/<name>")
def get_example(name: str) -> Response:
    body = example_request(name)
    if body is None:
        raise ProblemError(problem(404, "Not Found", f"No example named '{name}'."))
    return json_response(body)


_PAGE_FILES = {"style.css": "text/css", "app.js": "text/javascript"}


def _page_file(name: str) -> bytes:
    return (resources.files("service") / "web" / name).read_bytes()


@blueprint.get("/")
def page() -> Response:
    """The built-in page to try scenarios (no build step, no outside network)."""
    return Response(_page_file("index.html"), mimetype="text/html")


@blueprint.get("/ui/<name>")
def page_file(name: str) -> Response:
    if name not in _PAGE_FILES:
        raise ProblemError(problem(404, "Not Found", "No such page file."))
    return Response(_page_file(name), mimetype=_PAGE_FILES[name])


@blueprint.get("/healthz")
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


@blueprint.get("/readyz")
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


_PROBLEMS = {
    "400": "Malformed JSON.",
    "406": "Only application/json or text/csv can be answered.",
    "413": "The body is over the size limit.",
    "415": "The body is not application/json.",
    "422": "The request is invalid; `errors` points at each field.",
}


def _problems(*codes: str) -> dict[str, Any]:
    return {code: {"description": _PROBLEMS[code], "problem": True} for code in codes}


#: Every operation: path, method, summary, request schema, success responses, problems.
OPERATIONS: list[dict[str, Any]] = [
    {
        "path": "/v1/paths",
        "method": "post",
        "operationId": "postPaths",
        "summary": "Transition paths of one scenario under each policy",
        "request": "PathsRequest",
        "responses": {
            "200": {
                "description": "A path per policy, period 0 (the base point) first.",
                "content": {"application/json": "PathsResponse", "text/csv": "csv"},
                "headers": ["ETag"],
            },
            "304": {"description": "Not modified: If-None-Match matched the ETag.", "headers": ["ETag"]},
            **_problems("400", "406", "413", "415", "422"),
        },
        "parameters": ["If-None-Match", "Accept"],
    },
    {
        "path": "/v1/paths/batch",
        "method": "post",
        "operationId": "postPathsBatch",
        "summary": "Many scenarios in one vectorised call; one result or one problem each, in order",
        "request": "BatchRequest",
        "responses": {
            "200": {
                "description": "Results in request order.",
                "content": {"application/json": "BatchResponse"},
            },
            **_problems("400", "413", "415", "422"),
        },
    },
    {
        "path": "/v1/bands",
        "method": "post",
        "operationId": "postBands",
        "summary": "Percentile bands of every policy's path over draws of uncertain elasticities",
        "request": "BandsRequest",
        "responses": {
            "200": {
                "description": "Bands per policy and the central path.",
                "content": {"application/json": "BandsResponse"},
            },
            **_problems("400", "413", "415", "422"),
        },
    },
    {
        "path": "/v1/sensitivity",
        "method": "post",
        "operationId": "postSensitivity",
        "summary": "One-at-a-time swings of each uncertain input, largest first (a tornado chart)",
        "request": "SensitivityRequest",
        "responses": {
            "200": {
                "description": "Swings per input and policy.",
                "content": {"application/json": "SensitivityResponse"},
            },
            **_problems("400", "413", "415", "422"),
        },
    },
    {
        "path": "/v1/charts",
        "method": "post",
        "operationId": "postChart",
        "summary": "A chart of paths, bands or sensitivity as SVG or PNG",
        "request": "ChartRequest",
        "responses": {
            "200": {
                "description": "The chart (1200 x 900 px).",
                "content": {"image/svg+xml": "image", "image/png": "image"},
            },
            **_problems("400", "406", "413", "415", "422"),
            "503": {"description": "The charts extra (matplotlib) is not installed.", "problem": True},
        },
    },
    {
        "path": "/v1/examples",
        "method": "get",
        "operationId": "listExamples",
        "summary": "Ready-made demo scenarios (invented markets)",
        "responses": {
            "200": {"description": "The examples.", "content": {"application/json": "ExampleList"}}
        },
    },
    {
        "path": "/v1/examples/{name}",
        "method": "get",
        "operationId": "getExample",
        "summary": "One demo scenario, postable as it is to its endpoint",
        "path_parameters": ["name"],
        "responses": {
            "200": {
                "description": "A request body for the example's endpoint.",
                "content": {"application/json": "ExampleRequest"},
            },
            "404": {"description": "No such example.", "problem": True},
        },
    },
    {
        "path": "/",
        "method": "get",
        "operationId": "page",
        "summary": "A page to try scenarios in a browser",
        "responses": {"200": {"description": "HTML.", "content": {"text/html": "text"}}},
    },
    {
        "path": "/ui/{name}",
        "method": "get",
        "operationId": "pageFile",
        "summary": "The page's style sheet and script",
        "path_parameters": ["name"],
        "responses": {
            "200": {
                "description": "CSS or JavaScript.",
                "content": {"text/css": "text", "text/javascript": "text"},
            },
            "404": {"description": "No such file.", "problem": True},
        },
    },
    {
        "path": "/healthz",
        "method": "get",
        "operationId": "liveness",
        "summary": "Liveness: the process answers",
        "responses": {"200": {"description": "Alive.", "content": {"application/json": "Health"}}},
    },
    {
        "path": "/readyz",
        "method": "get",
        "operationId": "readiness",
        "summary": "Readiness: the model solves a canned market correctly",
        "responses": {
            "200": {"description": "Ready.", "content": {"application/json": "Health"}},
            "503": {"description": "The model failed its check.", "problem": True},
        },
    },
]
