"""POST /v1/briefing: a printable HTML briefing of one scenario (service.briefing writes it)."""

from __future__ import annotations

from flask import Response, current_app, g

from .. import charts
from ..briefing import briefing
from ..problems import ProblemError, load_request, problem
from ..schemas.briefing import OPTIONS, BriefingOptionsSchema
from .conditional import conditional, request_tag
from .documented import NOT_MODIFIED, DocumentedBlueprint, problem_responses
from .jsonio import read_json
from .negotiation import negotiate

__all__ = ["blueprint"]

blueprint = DocumentedBlueprint("briefing", __name__)

_OPTIONS = BriefingOptionsSchema()
HTML = "text/html"


@blueprint.operation(
    "post",
    "/v1/briefing",
    operationId="postBriefing",
    summary="A printable briefing of one scenario as a self-contained HTML document",
    request="BriefingRequest | BandsBriefingRequest",
    responses={
        "200": {
            "description": "One HTML document, no script and no outside file: the question, the inputs in "
            "plain words, the charts as inline SVG, the summary and who-gains tables, the cautions, the "
            "model version and scenario id. Of a bands request: its central answer, and how uncertain it "
            "is (the inputs drawn, percentile ribbons, the range of each headline figure). Its print "
            "style keeps tables and figures whole on A4 and Letter.",
            "content": {HTML: "html"},
            "headers": ["ETag"],
        },
        **NOT_MODIFIED,
        **problem_responses("400", "406", "413", "415", "422"),
        "503": {"description": "The charts extra (matplotlib) is not installed.", "problem": True},
    },
    parameters=["If-None-Match"],
)
def post_briefing() -> Response:
    negotiate((HTML,))
    raw = read_json()
    if not isinstance(raw, dict):
        raise ProblemError(problem(422, "The request is not valid", "Must be a JSON object."))
    options = load_request(_OPTIONS, {k: raw[k] for k in OPTIONS if k in raw})
    scenario = {k: v for k, v in raw.items() if k not in OPTIONS}
    if not charts.available():
        raise ProblemError(
            problem(503, "Service Unavailable", "Briefings need the charts extra (matplotlib).")
        )

    def produce() -> Response:
        threads = current_app.extensions["shockpath.settings"].band_threads
        text = briefing(scenario, options["units"], options.get("title"), threads)
        g.scenario_id = text.rsplit("scenario id <code>", 1)[1][:64]
        return Response(text, mimetype=HTML)

    response = conditional(request_tag("/v1/briefing", raw, HTML), produce)
    return response
