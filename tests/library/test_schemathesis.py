"""schemathesis over the library's operations, against SQLite and PostgreSQL: generated
bodies, ids and query parameters get documented answers (no 500, bodies and headers as the
document says). A record is saved first so that generated writes meet a real one too."""

from __future__ import annotations

import copy

import pytest
import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.checks import positive_data_acceptance

from service import create_app
from service.examples import example_request

from .conftest import empty_postgres, postgres_url

pytestmark = pytest.mark.slow

SCHEMA = schemathesis.pytest.from_fixture("library_schema")
IDENTITY = {"Accept-Encoding": "identity"}
CALLS: dict[str, int] = {}


@pytest.fixture(scope="module", params=["sqlite", "postgres"])
def library_app(request, tmp_path_factory):
    if request.param == "sqlite":
        database = {"library_path": str(tmp_path_factory.mktemp("schemathesis") / "library.sqlite3")}
    else:
        url = postgres_url()
        empty_postgres(url)
        database = {"database_url": url}
    app = create_app({"TESTING": True, "band_threads": 1, **database})
    saved = dict(copy.deepcopy(example_request("quillbrook-rent-freeze")), horizon=2)
    assert app.test_client().post("/v1/scenarios", json={"name": "seed", "request": saved}).status_code == 201
    yield app
    app.extensions["shockpath.library"].close()


@pytest.fixture(scope="module")
def library_schema(library_app):
    return schemathesis.openapi.from_wsgi("/openapi.json", library_app)


@pytest.fixture(autouse=True)
def floating_point_warnings_fail():
    """As in tests/http/test_schemathesis.py: generated extremes run with the production setting."""


@SCHEMA.include(path_regex="^/v1/scenarios").parametrize()
@settings(
    max_examples=25, derandomize=True, deadline=None, database=None, suppress_health_check=list(HealthCheck)
)
def test_generated_library_requests_are_answered_as_documented(case):
    CALLS[case.operation.label] = CALLS.get(case.operation.label, 0) + 1
    case.call_and_validate(headers=IDENTITY, excluded_checks=[positive_data_acceptance])


def test_every_library_operation_was_called():
    assert {label.split(" ", 1)[1] for label in CALLS} == {
        "/v1/scenarios",
        "/v1/scenarios/{id}",
        "/v1/scenarios/{id}/paths",
        "/v1/scenarios/{id}/bands",
    }, CALLS
