"""Generated requests from the live OpenAPI document (schemathesis, an independent client).

Every operation, a fixed seed, bounded examples, checked for server errors, response schema
conformance, documented status codes, content types and headers. Valid-looking requests that
the model refuses on economic grounds get a documented 422, so only schemathesis's 'a valid
request must succeed' check is left out.

Three kinds of cases run for each operation: the document's own examples, schemathesis's
coverage cases (each field of the example at its bounds, of the wrong type, missing, unknown
fields, other methods and content types: several thousand in all) and a bounded number of
random ones. What bounds the work, each test only costing less, none leaving a check out:

- a positive case on /v1/bands or /v1/sensitivity draws at most MAX_CASE_DRAWS (the examples ask
  for 10,000; the largest request allowed has its own test in test_hostile_corpus.py);
- each chart takes about a second to draw whatever its size, so of the coverage cases that draw
  one (the bands example again and again with other titles and unit labels) one in
  CHART_COVERAGE_SHARE runs, chosen by a checksum of the body; every case the service must
  refuse still runs;
- /v1/paths/csv, /v1/paths/batch/csv and /v1/bands/csv read their body exactly as /v1/paths,
  /v1/paths/batch and /v1/bands do (the same function, only the answer's format fixed), so of
  their coverage cases that vary the body (about 2,000 for bands, every one of which also goes to
  /v1/bands) one in TWIN_COVERAGE_SHARE runs, chosen the same way; their coverage cases of
  parameters and headers (`layout`, `If-None-Match`) and their random cases all run.
"""

from __future__ import annotations

import os
import zlib

import orjson
import pytest
import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.checks import positive_data_acceptance
from schemathesis.core.parameters import ParameterLocation
from schemathesis.generation import GenerationMode

from service import create_app

APP = create_app({"TESTING": True, "band_threads": 1})
SCHEMA = schemathesis.openapi.from_wsgi("/openapi.json", APP)
HEAVY = ("/v1/bands", "/v1/bands/csv", "/v1/sensitivity")
CHARTS = ("/v1/charts",)
#: Operations that read the body of another (the twin's path without "/csv") and only fix the format.
TWINS = ("/v1/paths/csv", "/v1/paths/batch/csv", "/v1/bands/csv")
# A briefing draws two or three charts per valid case (seconds each): explicit cases below.
DOCUMENTS = ("/v1/briefing",)
# The scenario library has its own run, on SQLite and PostgreSQL: tests/library/test_schemathesis.py.
LIBRARY = "^/v1/scenarios"
# schemathesis's WSGI transport asks for gzip but does not decode it; gzip has its own tests.
IDENTITY = {"Accept-Encoding": "identity"}
MAX_CASE_DRAWS = 500
CHART_COVERAGE_SHARE = 6
TWIN_COVERAGE_SHARE = 4
#: Random cases per operation, by test (the coverage cases, which try every field at its bounds,
#: of the wrong type, missing and so on, come on top of these and all run): as many as the
#: suite's hypothesis profile gives a property (`ci`, 60); under HYPOTHESIS_PROFILE=thorough
#: several times more.
EXAMPLES = (
    {"light": 300, "heavy": 100, "charts": 100}
    if os.environ.get("HYPOTHESIS_PROFILE") == "thorough"
    else {"light": 60, "heavy": 25, "charts": 30}
)

pytestmark = pytest.mark.slow


@pytest.fixture(autouse=True)
def floating_point_warnings_fail():
    """Overrides the suite's strict floating point: generated extremes (a quantity of 5e-324)
    overflow by design, and the service must answer them as it does in production."""


def _settings(kind: str):
    return settings(
        max_examples=EXAMPLES[kind],
        derandomize=True,
        deadline=None,
        database=None,
        suppress_health_check=list(HealthCheck),
    )


def _has_body(label: str) -> bool:
    method, path = label.split(" ", 1)
    return "requestBody" in SCHEMA.raw_schema["paths"][path][method.lower()]


@pytest.fixture()
def cases(request):
    """The labels of the cases a generated test ran. Afterwards, unless the test itself failed:
    every case was of one operation, and one with a request body ran at least its random cases
    (coverage cases come on top)."""
    failed_before = request.session.testsfailed
    ran: list[str] = []
    yield ran
    if request.session.testsfailed > failed_before:
        return  # the failure is reported; a short count would only repeat it
    labels = set(ran)
    assert len(labels) == 1, labels
    (label,) = labels
    if _has_body(label):
        kind = "charts" if label.endswith(CHARTS) else "heavy" if label.endswith(HEAVY) else "light"
        assert len(ran) >= EXAMPLES[kind], (label, len(ran))


def _at_most_some_draws(context, case):
    """A positive case of /v1/bands or /v1/sensitivity draws at most MAX_CASE_DRAWS."""
    body = case.body
    if (
        case.meta is not None
        and case.meta.generation.mode == GenerationMode.POSITIVE
        and isinstance(body, dict)
        and type(body.get("draws")) is int
        and body["draws"] > MAX_CASE_DRAWS
    ):
        case.body = dict(body, draws=MAX_CASE_DRAWS)
    return case


def _in_share(case, share: int) -> bool:
    """One case in `share`, chosen by a checksum of its body (the same cases on every run)."""
    checksum = zlib.crc32(orjson.dumps(case.body, option=orjson.OPT_SORT_KEYS, default=str))
    return checksum % share == 0


def _a_share_of_the_charts_drawn(context, case):
    """Keeps every case but a share of the positive coverage cases, which each draw a chart."""
    meta = case.meta
    if meta is None or meta.phase.name != "coverage" or meta.generation.mode != GenerationMode.POSITIVE:
        return True
    return _in_share(case, CHART_COVERAGE_SHARE)


def _a_share_of_the_twins_body_coverage(context, case):
    """Keeps every case but a share of the coverage cases that vary the body of a CSV twin."""
    meta = case.meta
    if (
        meta is None
        or meta.phase.name != "coverage"
        or not case.operation.path.endswith(TWINS)
        or meta.phase.data.parameter_location != ParameterLocation.BODY
    ):
        return True
    return _in_share(case, TWIN_COVERAGE_SHARE)


def _run(case, cases):
    cases.append(case.operation.label)
    case.call_and_validate(headers=IDENTITY, excluded_checks=[positive_data_acceptance])


@SCHEMA.hooks.apply(_a_share_of_the_twins_body_coverage, name="filter_case")
@SCHEMA.exclude(path=[*HEAVY, *CHARTS, *DOCUMENTS]).exclude(path_regex=LIBRARY).parametrize()
@_settings("light")
def test_generated_requests_are_answered_as_documented(case, cases):
    _run(case, cases)


@SCHEMA.hooks.apply(_at_most_some_draws, name="map_case")
@SCHEMA.include(path=[path for path in HEAVY if path not in TWINS]).parametrize()
@_settings("heavy")
def test_generated_uncertainty_requests_are_answered_as_documented(case, cases):
    _run(case, cases)


# The band CSV twin has its own test: a filter hook on the test above made schemathesis fail to
# build a /v1/sensitivity strategy when other tests had run first in the same process.
@SCHEMA.hooks.apply(_at_most_some_draws, name="map_case")
@SCHEMA.hooks.apply(_a_share_of_the_twins_body_coverage, name="filter_case")
@SCHEMA.include(path=[path for path in HEAVY if path in TWINS]).parametrize()
@_settings("heavy")
def test_generated_band_csv_requests_are_answered_as_documented(case, cases):
    _run(case, cases)


@SCHEMA.hooks.apply(_a_share_of_the_charts_drawn, name="filter_case")
@SCHEMA.include(path=list(CHARTS)).parametrize()
@_settings("charts")
def test_generated_chart_requests_are_answered_as_documented(case, cases):
    _run(case, cases)


def test_every_documented_operation_gets_generated_requests():
    documented = {f"{m.upper()} {p}" for p, ops in SCHEMA.raw_schema["paths"].items() for m in ops}
    generated = {result.ok().label for result in SCHEMA.get_all_operations()}
    # schemathesis does not call the document it was loaded from.
    library = {label for label in documented if label.split(" ", 1)[1].startswith("/v1/scenarios")}
    assert generated - library == documented - {"GET /openapi.json"} - library
    # The heavy and chart tests select operations that exist (the light test takes the rest),
    # and each CSV twin's body is another operation's, run in full.
    assert {f"POST {path}" for path in (*HEAVY, *CHARTS)} <= generated
    for twin in TWINS:
        body = SCHEMA.raw_schema["paths"][twin]["post"]["requestBody"]
        assert body == SCHEMA.raw_schema["paths"][twin.removesuffix("/csv")]["post"]["requestBody"], twin


@pytest.mark.parametrize("body", [None, {}, {"title": "A council briefing"}, {"units": {"currency": "EUR"}}])
def test_briefing_cases_are_answered_as_documented(body):
    """Explicit cases, validated against the document like the generated ones: a generated
    briefing run spends minutes (each valid case draws two or three charts)."""
    from service.examples import example_request

    request = {**example_request("quillbrook-rent-freeze"), **body} if body is not None else {"title": "none"}
    case = SCHEMA["/v1/briefing"]["POST"].Case(body=request, media_type="application/json")
    case.call_and_validate(headers=IDENTITY, excluded_checks=[positive_data_acceptance])
