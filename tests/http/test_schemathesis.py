"""Generated requests from the live OpenAPI document (schemathesis, an independent client).

Every operation, a fixed seed, bounded examples (over 1,000 cases in all), checked for
server errors, response schema conformance, documented status codes, content types and
headers. Valid-looking requests that the model refuses on economic grounds get a documented
422, so only schemathesis's 'a valid request must succeed' check is left out.
"""

from __future__ import annotations

import pytest
import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.checks import positive_data_acceptance

from service import create_app

APP = create_app({"TESTING": True, "band_threads": 1})
SCHEMA = schemathesis.openapi.from_wsgi("/openapi.json", APP)
HEAVY = ("/v1/bands", "/v1/sensitivity")
# A briefing draws two or three charts per valid case (seconds each): explicit cases below.
DOCUMENTS = ("/v1/briefing",)
# schemathesis's WSGI transport asks for gzip but does not decode it; gzip has its own tests.
IDENTITY = {"Accept-Encoding": "identity"}

pytestmark = pytest.mark.slow


@pytest.fixture(autouse=True)
def floating_point_warnings_fail():
    """Overrides the suite's strict floating point: generated extremes (a quantity of 5e-324)
    overflow by design, and the service must answer them as it does in production."""


CALLS: dict[str, int] = {}


def _settings(examples: int):
    return settings(
        max_examples=examples,
        derandomize=True,
        deadline=None,
        database=None,
        suppress_health_check=list(HealthCheck),
    )


@SCHEMA.exclude(path=[*HEAVY, *DOCUMENTS]).parametrize()
@_settings(150)
def test_generated_requests_are_answered_as_documented(case):
    CALLS[case.operation.label] = CALLS.get(case.operation.label, 0) + 1
    case.call_and_validate(headers=IDENTITY, excluded_checks=[positive_data_acceptance])


@SCHEMA.include(path=list(HEAVY)).parametrize()
@_settings(40)
def test_generated_uncertainty_requests_are_answered_as_documented(case):
    CALLS[case.operation.label] = CALLS.get(case.operation.label, 0) + 1
    case.call_and_validate(headers=IDENTITY, excluded_checks=[positive_data_acceptance])


@pytest.mark.parametrize(
    "body",
    [
        {},
        {"title": ""},
        {"units": {"currency": "$", "colour": "red"}},
        {"horizon": 2, "title": "A $\\frac$ title"},
        {"horizon": 2, "market": {"price": -1}},
    ],
)
def test_briefing_cases_are_answered_as_documented(body):
    """Explicit cases, validated against the document like the generated ones: a generated
    briefing run spent minutes (each valid case draws two or three charts)."""
    from service.examples import example_request

    request = {**example_request("quillbrook-rent-freeze"), **body} if body else {"title": "no scenario"}
    case = SCHEMA["/v1/briefing"]["POST"].Case(body=request, media_type="application/json")
    CALLS[case.operation.label] = CALLS.get(case.operation.label, 0) + 1
    case.call_and_validate(headers=IDENTITY, excluded_checks=[positive_data_acceptance])


def test_over_a_thousand_cases_ran_over_every_operation():
    """Runs after the generated tests in this module (pytest keeps file order)."""
    documented = {f"{m.upper()} {p}" for p, ops in SCHEMA.raw_schema["paths"].items() for m in ops}
    # schemathesis does not call the document it was loaded from.
    assert set(CALLS) == documented - {"GET /openapi.json"}
    print(f"schemathesis cases: {sum(CALLS.values())} over {len(CALLS)} operations: {CALLS}")
    assert sum(CALLS.values()) >= 1000, CALLS
