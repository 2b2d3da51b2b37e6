"""Request bodies: gzip accepted and inflated under the size limit, unknown encodings 415, parse
faults at their byte offset, error documents capped, one URN scheme for every problem type."""

from __future__ import annotations

import gzip
import json

import pytest

from service import create_app, limits
from service.http.jsonio import MAX_LISTED_ERRORS
from service.problems import PROBLEM_BASE

JSON = "application/json"


def _problem(response, status):
    assert response.status_code == status, response.get_data(as_text=True)[:300]
    assert response.mimetype == "application/problem+json"
    body = response.get_json()
    assert body["type"].startswith(PROBLEM_BASE)
    return body


def test_a_gzip_body_answers_exactly_as_the_plain_one(client, contract_request):
    text = json.dumps(contract_request).encode()
    plain = client.post("/v1/paths", data=text, content_type=JSON)
    packed = client.post(
        "/v1/paths", data=gzip.compress(text), content_type=JSON, headers={"Content-Encoding": "gzip"}
    )
    assert plain.status_code == packed.status_code == 200
    assert packed.get_json() == plain.get_json()


def test_two_gzip_members_are_one_body(client, contract_request):
    text = json.dumps(contract_request).encode()
    data = gzip.compress(text[:40]) + gzip.compress(text[40:])
    response = client.post("/v1/paths", data=data, content_type=JSON, headers={"Content-Encoding": "gzip"})
    assert response.status_code == 200


def test_a_decompression_bomb_is_413_at_the_inflated_size():
    app = create_app({"TESTING": True, "max_body_bytes": 100_000})
    bomb = gzip.compress(b" " * 10_000_000)  # 10 MB of spaces, about 10 kB compressed
    assert len(bomb) < 100_000
    response = app.test_client().post(
        "/v1/paths", data=bomb, content_type=JSON, headers={"Content-Encoding": "gzip"}
    )
    body = _problem(response, 413)
    assert "after decompression" in body["detail"]


def test_a_body_that_inflates_to_just_the_limit_is_read():
    app = create_app({"TESTING": True, "max_body_bytes": 100_000})
    data = b"[" + b" " * (100_000 - 2) + b"]"
    response = app.test_client().post(
        "/v1/paths", data=gzip.compress(data), content_type=JSON, headers={"Content-Encoding": "gzip"}
    )
    assert _problem(response, 422)["errors"][0]["pointer"] == ""  # parsed: a list, not an object


@pytest.mark.parametrize("body", [b"[]", b'"text"', b"5", b"null", b"true"])
def test_a_body_that_is_not_an_object_is_named_as_the_body_in_the_detail(client, body):
    """The root's JSON Pointer is "" (RFC 6901); the detail names the body in words, never as
    "/", which is the pointer of a member named ""."""
    problem = _problem(client.post("/v1/paths", data=body, content_type=JSON), 422)
    assert problem["errors"] == [{"pointer": "", "message": "Must be a JSON object."}]
    assert problem["detail"] == "The body: Must be a JSON object."


def test_a_duplicate_key_is_not_refused_and_the_last_one_wins(client, contract_request):
    """RFC 8259 section 4 leaves duplicate names to the implementation: the last one is taken
    (API.md says so, and that clients must not send them)."""
    text = json.dumps(contract_request)
    first, last = contract_request["horizon"] + 5, contract_request["horizon"]
    twice = text.replace('"horizon":', f'"horizon": {first}, "horizon":', 1)
    assert twice.count('"horizon"') == 2
    response = client.post("/v1/paths", data=twice, content_type=JSON)
    assert response.status_code == 200
    assert response.get_json()["request"]["horizon"] == last
    assert response.get_json() == client.post("/v1/paths", json=contract_request).get_json()


@pytest.mark.parametrize("encoding", ["br", "deflate", "compress", "gzip, br", "zstd"])
def test_an_unknown_encoding_is_415(client, encoding):
    response = client.post("/v1/paths", data=b"{}", content_type=JSON, headers={"Content-Encoding": encoding})
    body = _problem(response, 415)
    assert body["type"] == PROBLEM_BASE + "unsupported-encoding"
    assert response.headers["Accept-Encoding"] == "gzip"


def test_identity_encoding_is_no_encoding(client, contract_request):
    response = client.post(
        "/v1/paths",
        data=json.dumps(contract_request),
        content_type=JSON,
        headers={"Content-Encoding": "identity"},
    )
    assert response.status_code == 200


@pytest.mark.parametrize(
    "data",
    [b"not gzip at all", gzip.compress(b'{"a": 1}', mtime=0)[:-12]],  # mtime=0: the same bytes on every run
    ids=["not gzip at all", "cut short"],
)
def test_a_body_that_is_not_gzip_is_400(client, data):
    response = client.post("/v1/paths", data=data, content_type=JSON, headers={"Content-Encoding": "gzip"})
    assert _problem(response, 400)["type"] == PROBLEM_BASE + "malformed-gzip"


@pytest.mark.parametrize(
    ("data", "fault"),
    [
        (b'{"horizon": 1, "market": \xff}', b"\xff"),
        (b'{"name": "caf\xc3\xa9", "x": \xc3}', b"\xc3}"),  # after a valid two-byte character
        (b'{"horizon": 1,\n "market": x}', b"x"),
        ('{"name": "café", "x": y}'.encode(), b"y"),  # bytes, not characters: é is two
        (b'{"horizon": NaN}', b"NaN"),
    ],
)
def test_parse_faults_name_their_byte_offset(client, data, fault):
    offset = data.index(fault)
    assert offset > 10  # never "line 1, column 1"
    body = _problem(client.post("/v1/paths", data=data, content_type=JSON), 400)
    assert body["offset"] == offset
    assert f"at byte {offset}" in body["detail"]
    assert "line 1, column 1" not in body["detail"]


def test_invalid_utf8_inside_a_gzip_body_is_at_its_inflated_offset(client):
    data = b'{"horizon": 3, "policies": "\xfe"}'
    response = client.post(
        "/v1/paths", data=gzip.compress(data), content_type=JSON, headers={"Content-Encoding": "gzip"}
    )
    assert _problem(response, 400)["offset"] == data.index(b"\xfe")


def test_error_documents_list_at_most_100_errors_and_count_the_rest(client, contract_request):
    extra = {f"unknown_{i}": i for i in range(2000)}
    response = client.post("/v1/paths", data=json.dumps({**contract_request, **extra}), content_type=JSON)
    body = _problem(response, 422)
    assert len(body["errors"]) == MAX_LISTED_ERRORS == 100
    assert body["more_errors"] == 2000 - 100
    assert len(response.get_data()) < 20_000


def test_a_document_with_few_errors_has_no_count_of_the_rest(client, contract_request):
    body = _problem(
        client.post("/v1/paths", data=json.dumps({**contract_request, "x": 1}), content_type=JSON), 422
    )
    assert "more_errors" not in body and len(body["errors"]) == 1


@pytest.mark.parametrize(
    ("method", "path", "status", "code"),
    [
        ("get", "/no/such/path", 404, "not-found"),
        ("get", "/v1/paths", 405, "method-not-allowed"),
        ("get", "/v1/examples/no-such-example", 404, "not-found"),
    ],
)
def test_plain_http_errors_have_urn_types(client, method, path, status, code):
    body = _problem(getattr(client, method)(path), status)
    assert body["type"] == PROBLEM_BASE + code


def test_a_body_over_the_limit_is_413_with_a_urn_type(client):
    data = b" " * (limits.MAX_BODY_BYTES + 1)
    assert _problem(client.post("/v1/paths", data=data, content_type=JSON), 413)["type"] == (
        PROBLEM_BASE + "body-too-large"
    )


def test_a_non_json_body_is_415_with_a_urn_type(client):
    body = _problem(client.post("/v1/paths", data=b"{}", content_type="text/plain"), 415)
    assert body["type"] == PROBLEM_BASE + "unsupported-media-type"


def test_an_unexpected_failure_is_500_with_a_urn_type(monkeypatch):
    app = create_app({"TESTING": False})
    import service.http.paths as paths

    def boom(*args, **kwargs):
        raise RuntimeError("boom")

    monkeypatch.setattr(paths, "load_scenario", boom)
    body = _problem(app.test_client().post("/v1/paths", data=b"{}", content_type=JSON), 500)
    assert body["type"] == PROBLEM_BASE + "internal-error"
    assert "boom" not in json.dumps(body)


class _ServerBody:
    """A server's request body as gunicorn hands it to the app (read only, no readinto),
    recording the sizes it is asked for."""

    def __init__(self, data: bytes):
        self.data, self.asked = data, []

    def read(self, size=-1):
        self.asked.append(size)
        out, self.data = (self.data, b"") if size < 0 else (self.data[:size], self.data[size:])
        return out


def test_a_body_with_a_content_length_is_read_at_that_length_not_at_the_limit():
    from werkzeug.test import EnvironBuilder

    from service.http.jsonio import read_json

    app = create_app({"TESTING": True})
    text = b'{"horizon": 3}'
    environ = EnvironBuilder(path="/v1/paths", method="POST", data=text, content_type=JSON).get_environ()
    body = _ServerBody(text)
    environ.update({"wsgi.input": body, "wsgi.input_terminated": True})
    with app.request_context(environ):
        assert read_json() == {"horizon": 3}
    assert body.asked and max(body.asked) == len(text) < limits.MAX_BODY_BYTES


def test_a_body_shorter_than_its_content_length_is_400_incomplete():
    from werkzeug.test import EnvironBuilder

    from service.http.jsonio import read_json
    from service.problems import ProblemError

    app = create_app({"TESTING": True})
    environ = EnvironBuilder(path="/v1/paths", method="POST", data=b"{}", content_type=JSON).get_environ()
    short = {"wsgi.input": _ServerBody(b'{"hor'), "wsgi.input_terminated": True, "CONTENT_LENGTH": "14"}
    environ.update(short)
    with app.request_context(environ), pytest.raises(ProblemError) as raised:
        read_json()
    assert raised.value.status == 400 and raised.value.problem["type"].endswith("incomplete-body")


def _bad_inflation(contract_request, count):
    """The contract request with `count` rates that are not numbers: one error each."""
    return {**contract_request, "market": {**contract_request["market"], "inflation": ["x"] * count}}


def test_the_errors_listed_are_the_first_in_the_request_order(client, contract_request):
    # Array indices compare as numbers: /inflation/2 comes before /inflation/10.
    body = _problem(client.post("/v1/paths", json=_bad_inflation(contract_request, 150)), 422)
    assert [e["pointer"] for e in body["errors"]] == [f"/market/inflation/{i}" for i in range(100)]
    assert body["more_errors"] == 50
    assert body["detail"].startswith("/market/inflation/0: ")


def test_each_problem_in_a_batch_lists_at_most_100_errors_and_counts_the_rest(client, contract_request):
    request = {
        "scenarios": [
            contract_request,
            _bad_inflation(contract_request, 150),
            _bad_inflation(contract_request, 3),
        ]
    }
    response = client.post("/v1/paths/batch", json=request)
    assert response.status_code == 200
    fine, capped, few = response.get_json()["results"]
    assert "scenario_id" in fine
    assert [e["pointer"] for e in capped["errors"]] == [
        f"/scenarios/1/market/inflation/{i}" for i in range(100)
    ]
    assert capped["more_errors"] == 50
    assert len(few["errors"]) == 3 and "more_errors" not in few


def test_a_batch_of_scenarios_with_many_bad_values_has_a_small_answer(client, contract_request):
    request = {"scenarios": [_bad_inflation(contract_request, 600)] * 20}
    response = client.post("/v1/paths/batch", json=request)
    results = response.get_json()["results"]
    assert all(len(r["errors"]) == 100 and r["more_errors"] == 500 for r in results)
    # 100 errors of about 70 bytes each per scenario, not 600.
    assert len(response.get_data()) < 20 * 100 * 100


@pytest.mark.parametrize("output", ["full", "summary"])
def test_a_batch_csv_gives_a_failed_scenario_one_problem_row_however_many_its_errors(
    client, contract_request, output
):
    request = {"scenarios": [contract_request, _bad_inflation(contract_request, 600)], "output": output}
    response = client.post("/v1/paths/batch", json=request, headers={"Accept": "text/csv"})
    assert response.status_code == 200 and response.mimetype == "text/csv"
    rows = [row for row in response.get_data(as_text=True).splitlines() if row.startswith("1,")]
    assert len(rows) == 1
    assert "/scenarios/1/market/inflation/0: " in rows[0] and "(and 599 more)" in rows[0]
