"""schemathesis over the library's operations, against SQLite and PostgreSQL: generated
bodies, ids and query parameters get documented answers (no 500, bodies and headers as the
document says). A record is saved first so that generated writes meet a real one too.

A written record's `request` is validated by the loaders of /v1/paths and /v1/bands
(service/library/records.py, `validate_write`), before the database is touched. schemathesis's
coverage cases vary each field of that nested request (some 3,000 of the 3,200 coverage cases of
a write), and tests/http/test_schemathesis.py sends every one of them to /v1/paths and /v1/bands.
Here one in REQUEST_COVERAGE_SHARE of them runs, chosen by a checksum of the body (so the same
ones on every run): enough to see that the library hands them on with pointers under /request.
Every coverage case of the library's own fields (name, notes, tags, shared, a missing or
mistyped request) and every random case still runs.
"""

from __future__ import annotations

import copy
import zlib

import orjson
import pytest
import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.checks import positive_data_acceptance
from schemathesis.generation import GenerationMode

from service import create_app
from service.examples import example_request

from .conftest import empty_postgres, postgres_url

pytestmark = pytest.mark.slow

SCHEMA = schemathesis.pytest.from_fixture("library_schema")
IDENTITY = {"Accept-Encoding": "identity"}
OPERATIONS = {"/v1/scenarios", "/v1/scenarios/{id}", "/v1/scenarios/{id}/paths", "/v1/scenarios/{id}/bands"}
REQUEST_COVERAGE_SHARE = 8


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
    schema = schemathesis.openapi.from_wsgi("/openapi.json", library_app)
    schema.hook("filter_case")(_a_share_of_the_nested_request_cases)
    return schema


@pytest.fixture(autouse=True)
def floating_point_warnings_fail():
    """As in tests/http/test_schemathesis.py: generated extremes run with the production setting."""


def _varies_the_nested_request(case) -> bool:
    """A coverage case that changes a field inside the body's `request` (and nothing else)."""
    meta = case.meta
    if meta is None or meta.phase.name != "coverage":
        return False
    data = meta.phase.data
    if meta.generation.mode == GenerationMode.POSITIVE:
        return data.description.startswith("Object with valid 'request' value:")
    return (data.location or "").startswith("/properties/request/anyOf/")


def _a_share_of_the_nested_request_cases(context, case):
    """Keeps every case but a share of the coverage cases inside the nested request."""
    if not _varies_the_nested_request(case):
        return True
    checksum = zlib.crc32(orjson.dumps(case.body, option=orjson.OPT_SORT_KEYS, default=str))
    return checksum % REQUEST_COVERAGE_SHARE == 0


@pytest.fixture()
def calls(request):
    """Operation labels the generated test called; afterwards (unless the test failed) every
    library operation was among them."""
    failed_before = request.session.testsfailed
    called: dict[str, int] = {}
    yield called
    if request.session.testsfailed == failed_before:
        assert {label.split(" ", 1)[1] for label in called} == OPERATIONS, called


@SCHEMA.include(path_regex="^/v1/scenarios").parametrize()
@settings(
    max_examples=25, derandomize=True, deadline=None, database=None, suppress_health_check=list(HealthCheck)
)
def test_generated_library_requests_are_answered_as_documented(case, calls):
    calls[case.operation.label] = calls.get(case.operation.label, 0) + 1
    case.call_and_validate(headers=IDENTITY, excluded_checks=[positive_data_acceptance])
