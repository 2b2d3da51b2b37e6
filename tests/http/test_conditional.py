"""ETags on every deterministic answer, compared weakly (RFC 9110, 13.1.2): a match is a 304."""

from __future__ import annotations

import pytest

from service.examples import example_request


def _bands():
    request = example_request("quillbrook-uncertain-elasticities")
    request.update(draws=400, horizon=4)
    return request


def _sensitivity():
    request = _bands()
    for key in ("draws", "seed", "percentiles"):
        request.pop(key)
    return request


CASES = {
    "paths": ("POST", "/v1/paths", lambda c: c),
    "batch": ("POST", "/v1/paths/batch", lambda c: {"scenarios": [c]}),
    "bands": ("POST", "/v1/bands", lambda c: _bands()),
    "sensitivity": ("POST", "/v1/sensitivity", lambda c: _sensitivity()),
    "chart": ("POST", "/v1/charts", lambda c: {"chart": "paths", "format": "svg", "scenario": c}),
    "examples": ("GET", "/v1/examples", None),
    "example": ("GET", "/v1/examples/quillbrook-rent-freeze", None),
    "openapi": ("GET", "/openapi.json", None),
}


def _call(client, case, contract_request, headers=None):
    method, path, body = CASES[case]
    kwargs = {"json": body(contract_request)} if body else {}
    return client.open(path, method, headers=headers or {}, **kwargs)


@pytest.mark.parametrize("case", sorted(CASES))
def test_every_deterministic_answer_has_a_strong_etag_and_a_match_gets_304(client, contract_request, case):
    first = _call(client, case, contract_request)
    assert first.status_code == 200
    tag, weak = first.get_etag()
    assert tag and not weak
    assert _call(client, case, contract_request).get_etag() == (tag, False)  # same request, same tag
    for header in (f'"{tag}"', f'W/"{tag}"', f'"other", W/"{tag}"'):
        again = _call(client, case, contract_request, {"If-None-Match": header})
        assert again.status_code == 304, header
        assert again.data == b"" and again.get_etag()[0] == tag
    assert _call(client, case, contract_request, {"If-None-Match": '"other"'}).status_code == 200


def test_a_different_request_or_format_gets_a_different_tag(client, contract_request):
    json_tag = client.post("/v1/paths/batch", json={"scenarios": [contract_request]}).get_etag()[0]
    csv_tag = client.post(
        "/v1/paths/batch", json={"scenarios": [contract_request]}, headers={"Accept": "text/csv"}
    ).get_etag()[0]
    contract_request["horizon"] = 11
    other = client.post("/v1/paths/batch", json={"scenarios": [contract_request]}).get_etag()[0]
    assert len({json_tag, csv_tag, other}) == 3


def test_a_star_never_turns_an_invalid_post_into_a_304(client):
    response = client.post("/v1/paths/batch", json={}, headers={"If-None-Match": "*"})
    assert response.status_code == 422
    assert client.get("/v1/examples", headers={"If-None-Match": "*"}).status_code == 304


def test_a_gzip_answers_tag_matches_its_answer(client, contract_request):
    gz = client.post("/v1/paths", json=contract_request, headers={"Accept-Encoding": "gzip"})
    tag, _ = gz.get_etag()
    assert gz.headers["Content-Encoding"] == "gzip" and tag.endswith(":gzip")
    again = client.post(
        "/v1/paths", json=contract_request, headers={"If-None-Match": f'W/"{tag}"', "Accept-Encoding": "gzip"}
    )
    assert again.status_code == 304 and again.get_etag()[0] == tag
