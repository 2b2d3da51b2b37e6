"""Every error class is RFC 9457 problem+json with the documented status; no 500, no trace."""

from __future__ import annotations

import io

import pytest

from service import create_app, limits


def assert_problem(response, status):
    assert response.status_code == status
    assert response.mimetype == "application/problem+json"
    body = response.get_json()
    assert body["status"] == status and body["title"] and body["detail"] and body["type"]
    assert "Traceback" not in response.get_data(as_text=True)
    return body


@pytest.mark.parametrize(
    "text",
    [
        '{"market": ',
        "{'single': 1}",
        '{"horizon": NaN}',
        '{"horizon": Infinity}',
        '{"horizon": 1e999}',
        "[" * 5000 + "]" * 5000,
        "",
        "\xff",
    ],
)
def test_malformed_json_is_400(client, text):
    assert_problem(client.post("/v1/paths", data=text, content_type="application/json"), 400)


def test_a_huge_integer_is_read_as_a_number_and_refused_at_its_field(client):
    text = '{"horizon": 123456789012345678901234567890}'
    body = assert_problem(client.post("/v1/paths", data=text, content_type="application/json"), 422)
    assert "/horizon" in [e["pointer"] for e in body["errors"]]


@pytest.mark.parametrize(
    "content_type", ["text/plain", "application/x-www-form-urlencoded", "multipart/form-data", None]
)
def test_a_body_that_is_not_json_is_415(client, content_type):
    kwargs = {"data": "{}"}
    if content_type:
        kwargs["content_type"] = content_type
    assert_problem(client.post("/v1/paths", **kwargs), 415)


def test_a_json_subtype_is_accepted(client, contract_request):
    import json

    response = client.post(
        "/v1/paths", data=json.dumps(contract_request), content_type="application/vnd.api+json"
    )
    assert response.status_code == 200


def test_a_body_over_the_limit_is_413_with_or_without_content_length(app, client):
    limit = app.config["MAX_CONTENT_LENGTH"]
    payload = b'{"x": "' + b"a" * limit + b'"}'
    assert_problem(client.post("/v1/paths", data=payload, content_type="application/json"), 413)

    # A chunked body has no Content-Length: the limit still holds while reading.
    response = client.post(
        "/v1/paths",
        input_stream=io.BytesIO(payload),
        content_type="application/json",
        headers={"Transfer-Encoding": "chunked"},
        environ_overrides={"wsgi.input_terminated": True},
    )
    assert_problem(response, 413)


def test_unknown_paths_and_wrong_methods(client):
    assert_problem(client.get("/v2/paths"), 404)
    assert_problem(client.get("/v1/examples/no-such-place"), 404)
    body = client.get("/v1/paths")
    assert_problem(body, 405)
    assert "POST" in body.headers["Allow"]
    assert_problem(client.delete("/v1/examples"), 405)


def test_invalid_input_lists_every_field_with_a_pointer(client, contract_request):
    contract_request["market"]["demand"]["price_elasticity"] = 0.4
    contract_request["horizon"] = "12"
    contract_request["surprise"] = True
    body = assert_problem(client.post("/v1/paths", json=contract_request), 422)
    assert [e["pointer"] for e in body["errors"]] == [
        "/horizon",
        "/market/demand/price_elasticity",
        "/surprise",
    ]


@pytest.mark.parametrize(
    ("mutate", "pointer"),
    [
        (lambda r: r.update(horizon=limits.MAX_HORIZON + 1), "/horizon"),
        (
            lambda r: r.update(
                policies=[dict(r["policies"][0], name=f"p{i}") for i in range(limits.MAX_POLICIES + 1)]
            ),
            "/policies",
        ),
        (lambda r: r.update(shocks=[r["shocks"][0]] * (limits.MAX_SHOCKS + 1)), "/shocks"),
        (
            lambda r: r["market"]["demand"].update(
                shifters={f"s{i}": 0.1 for i in range(limits.MAX_SHIFTERS_PER_CURVE + 1)}
            ),
            "/market/demand/shifters",
        ),
    ],
)
def test_each_limit_is_enforced_with_422(client, contract_request, mutate, pointer):
    mutate(contract_request)
    body = assert_problem(client.post("/v1/paths", json=contract_request), 422)
    assert pointer in [e["pointer"] for e in body["errors"]]


def test_requests_at_every_limit_are_answered(client, contract_request):
    contract_request["horizon"] = limits.MAX_HORIZON
    contract_request["policies"] = [
        dict(contract_request["policies"][i % 8], name=f"p{i}") for i in range(limits.MAX_POLICIES)
    ]
    contract_request["shocks"] = [dict(contract_request["shocks"][0], change=0.001)] * limits.MAX_SHOCKS
    contract_request["market"]["form"] = "constant_elasticity"
    response = client.post("/v1/paths", json=contract_request)
    assert response.status_code == 200
    assert len(response.get_json()["periods"]) == limits.MAX_HORIZON + 1


def test_an_unexpected_failure_is_a_generic_500_with_a_request_id(monkeypatch, checker):
    app = create_app({"TESTING": False})
    client = checker.wrap(app.test_client())

    def broken(*args, **kwargs):
        raise RuntimeError("secret internals")

    monkeypatch.setattr("service.http.paths.compute", broken)
    response = client.post(
        "/v1/examples" if False else "/v1/paths", json=_tiny(), headers={"X-Request-ID": "abc-123"}
    )
    body = assert_problem(response, 500)
    assert "secret" not in response.get_data(as_text=True)
    assert body["request_id"] == "abc-123" and response.headers["X-Request-ID"] == "abc-123"
    # The detail names the id, so a page or client that shows only the detail can quote it.
    assert body["detail"] == "The server failed to answer; quote request id abc-123."


def _tiny():
    return {
        "market": {
            "price": 10.0,
            "quantity": 10.0,
            "demand": {"price_elasticity": -1.0},
            "supply": {"short_run_elasticity": 1.0, "long_run_elasticity": 1.0},
        },
        "horizon": 1,
        "policies": [{"name": "free", "kind": "none"}],
    }
