"""POST /v1/charts: paths, bands, sensitivity or who gains and who loses drawn as SVG or PNG
(service.charts draws)."""

from __future__ import annotations

from flask import Response, g

from .. import charts
from ..problems import ProblemError, is_problem, load_request, moved_under, problem
from ..schemas.charts import ChartRequestSchema
from ..simulation import simulate_many
from ..uncertainty import sensitivity
from .conditional import conditional, request_tag
from .documented import NOT_MODIFIED, DocumentedBlueprint, problem_responses
from .jsonio import read_json
from .negotiation import negotiate
from .uncertainty import bands_body

__all__ = ["blueprint"]

blueprint = DocumentedBlueprint("charts", __name__)

_CHART = ChartRequestSchema()
_IMAGE = {"svg": "image/svg+xml", "png": "image/png"}
_OCTETS = "application/octet-stream"


def _under(prefix: str, error: ProblemError) -> ProblemError:
    """The same problem with its pointers moved under `prefix` (the chart's scenario)."""
    return ProblemError(moved_under(prefix, error.problem))


def _draw(spec: dict, fmt: str) -> tuple[bytes, str]:
    """The image and the scenario id of the answer it draws."""
    scenario = spec["scenario"]
    market = scenario.get("market")
    form = market.get("form", "linear") if isinstance(market, dict) else "linear"
    title, panels = spec.get("title"), spec.get("panels")
    if spec["chart"] in ("paths", "gains_and_losses", "renters_vs_free_path"):
        result = simulate_many([scenario])[0]
        if is_problem(result):
            raise _under("/scenario", ProblemError(result))
        if spec["chart"] == "paths":
            image = charts.render_paths(result, spec["units"], fmt, form, title, panels)
        elif spec["chart"] == "renters_vs_free_path":
            image = _scenario_problem(
                charts.render_renters, result, scenario, spec["units"], fmt, form, title
            )
        else:
            image = _scenario_problem(
                charts.render_gains_and_losses, result, scenario, spec["units"], fmt, form, title
            )
    elif spec["chart"] == "bands":  # the answer /v1/bands gave (or would give) this request
        result, _ = _scenario_problem(bands_body, scenario, counted_as=None)
        image = charts.render_bands(result, spec["units"], fmt, form, title, panels)
    else:
        result = _scenario_problem(sensitivity, scenario)
        image = charts.render_sensitivity(
            result, spec["units"], fmt, form, spec.get("policy"), title, spec.get("output")
        )
    return image, result["scenario_id"]


def _scenario_problem(function, *args, **kwargs):
    """`function(...)`, its problems' pointers moved under /scenario (they point into it)."""
    try:
        return function(*args, **kwargs)
    except ProblemError as error:
        raise _under("/scenario", error) from None


@blueprint.operation(
    "post",
    "/v1/charts",
    operationId="postChart",
    summary="A chart of paths, bands, sensitivity or who gains and who loses as SVG or PNG",
    request="ChartRequest",
    responses={
        "200": {
            "description": (
                "The chart (1200 x 900 px) as raw bytes: SVG or PNG by `format` or Accept; "
                "Accept: application/octet-stream gets the same bytes typed generically (for generated "
                "clients that keep only octet streams)."
            ),
            "content": {
                "image/svg+xml": "image/svg+xml",
                "image/png": "image/png",
                "application/octet-stream": "octets",
            },
            "headers": ["ETag"],
        },
        **NOT_MODIFIED,
        **problem_responses("400", "406", "413", "415", "422"),
        "503": {"description": "The charts extra (matplotlib) is not installed.", "problem": True},
    },
    parameters=["If-None-Match", "Accept-Image"],
)
def post_chart() -> Response:
    raw = read_json()
    spec = load_request(_CHART, raw)
    fmt = spec.get("format")
    # One rule: Accept chooses among what is offered; a format in the body is the one offer.
    offered = ([_IMAGE[fmt]] if fmt else list(_IMAGE.values())) + [_OCTETS]
    chosen = negotiate(offered)
    fmt = fmt or ("png" if chosen == "image/png" else "svg")
    if not charts.available():
        raise ProblemError(problem(503, "Service Unavailable", "Charts need the charts extra (matplotlib)."))

    def produce() -> Response:
        image, g.scenario_id = _draw(spec, fmt)
        return Response(image, mimetype=chosen)

    return conditional(request_tag("/v1/charts", raw, chosen), produce)
