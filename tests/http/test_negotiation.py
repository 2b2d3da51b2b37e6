"""One Accept rule for every endpoint: JSON, CSV where tabular, images for charts, 406 otherwise."""

from __future__ import annotations

import csv
import io

import pytest

from service.engine.results import DISTRIBUTION_GROUPS
from service.examples import example_request


def _small_bands():
    request = example_request("quillbrook-uncertain-elasticities")
    request.update(draws=400, horizon=4)
    return request


def _batch(contract_request):
    return {"scenarios": [contract_request, example_request("quillbrook-rent-freeze")]}


POSTS = {
    "/v1/paths": lambda c: c,
    "/v1/paths/batch": _batch,
    "/v1/bands": lambda c: _small_bands(),
}


@pytest.mark.parametrize("path", sorted(POSTS))
def test_an_unanswerable_accept_is_406_on_every_tabular_endpoint(client, contract_request, path):
    response = client.post(path, json=POSTS[path](contract_request), headers={"Accept": "application/xml"})
    assert response.status_code == 406
    assert response.mimetype == "application/problem+json"
    assert "application/json or text/csv" in response.get_json()["detail"]


@pytest.mark.parametrize(
    ("method", "path"),
    [("GET", "/v1/examples"), ("GET", "/v1/examples/quillbrook-rent-freeze"), ("GET", "/openapi.json")],
)
def test_json_only_endpoints_refuse_other_types_with_406(client, method, path):
    assert client.open(path, method, headers={"Accept": "text/csv"}).status_code == 406
    assert client.open(path, method, headers={"Accept": "application/*"}).status_code == 200


def test_sensitivity_and_charts_follow_the_same_rule(client, contract_request):
    request = _small_bands()
    for key in ("draws", "seed", "percentiles"):
        request.pop(key)
    assert client.post("/v1/sensitivity", json=request, headers={"Accept": "text/csv"}).status_code == 406
    chart = {"chart": "paths", "format": "png", "scenario": contract_request}
    # A format in the body is the one offer: Accept must allow it.
    assert client.post("/v1/charts", json=chart, headers={"Accept": "image/svg+xml"}).status_code == 406


@pytest.mark.parametrize("path", sorted(POSTS))
def test_no_accept_or_a_wildcard_gets_json(client, contract_request, path):
    body = POSTS[path](contract_request)
    assert client.post(path, json=body).mimetype == "application/json"
    assert client.post(path, json=body, headers={"Accept": "*/*"}).mimetype == "application/json"


def test_bands_answer_csv_in_long_form_with_units(client):
    request = _small_bands()
    body = client.post("/v1/bands", json=request).get_json()
    response = client.post("/v1/bands", json=request, headers={"Accept": "text/csv"})
    assert response.status_code == 200 and response.mimetype == "text/csv"
    assert response.headers["Content-Disposition"].startswith('attachment; filename="bands-')
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True))))
    assert list(rows[0]) == ["policy", "period", "variable", "percentile", "value", "unit"]
    periods, percentiles = len(body["periods"]), len(body["percentiles"])
    assert len(rows) == len(body["bands"]) * len(body["bands"][0]["series"]) * percentiles * periods
    freeze = body["bands"][1]
    got = {(r["policy"], int(r["period"]), r["variable"], r["percentile"]): r for r in rows}
    row = got[(freeze["name"], 3, "consumer_price", "95")]
    assert float(row["value"]) == freeze["series"]["consumer_price"]["95"][3]
    assert row["unit"] == "today's money (period 0) per unit per price interval"


def test_a_batch_answers_csv_with_a_row_per_value_and_a_problem_row_per_failed_scenario(
    client, contract_request
):
    bad = example_request("quillbrook-rent-freeze")
    bad["policies"] = [{"name": "huge tax", "kind": "unit_tax", "amount": 1e7}]
    request = {"scenarios": [contract_request, bad]}
    body = client.post("/v1/paths/batch", json=request).get_json()
    response = client.post("/v1/paths/batch", json=request, headers={"Accept": "text/csv"})
    assert response.status_code == 200 and response.mimetype == "text/csv"
    assert response.headers["Content-Disposition"].startswith('attachment; filename="batch-')
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True))))
    assert list(rows[0]) == ["scenario", "scenario_id", "policy", "period", "variable", "value", "unit"]
    first = body["results"][0]
    # 17 series and the six groups of who gains and who loses per path and period.
    assert sum(r["scenario"] == "0" for r in rows) == len(first["paths"]) * (
        17 + len(DISTRIBUTION_GROUPS)
    ) * len(first["periods"])
    assert all(r["scenario_id"] == first["scenario_id"] for r in rows if r["scenario"] == "0")
    (problem,) = [r for r in rows if r["scenario"] == "1"]
    assert problem["variable"] == "problem" and problem["value"] == body["results"][1]["detail"]
    dwl = next(r for r in rows if r["policy"] == "freeze" and r["variable"] == "deadweight_loss")
    assert dwl["unit"] == "today's money (period 0) per model period"


# Media-type parameters in Accept are ignored for matching (RFC 9110, section 12.5.1): the
# type and subtype choose, the q-values rank.
@pytest.mark.parametrize(
    ("method", "path", "accept", "answered"),
    [
        ("GET", "/v1/examples", "application/json; charset=utf-8", "application/json"),
        ("GET", "/v1/examples/quillbrook-rent-freeze", "application/json;charset=UTF-8", "application/json"),
        ("POST", "/v1/paths", "text/csv; charset=utf-8", "text/csv"),
        ("POST", "/v1/paths", "text/csv;header=present", "text/csv"),
        ("POST", "/v1/paths", "application/json;v=1", "application/json"),
        ("POST", "/v1/paths", "text/csv;q=0.5, application/json", "application/json"),
        (
            "POST",
            "/v1/paths",
            "text/csv;header=present;q=0.9, application/json;charset=utf-8;q=0.2",
            "text/csv",
        ),
        ("POST", "/v1/paths", "application/*;charset=utf-8", "application/json"),
    ],
)
def test_an_accept_with_media_type_parameters_is_matched_by_its_type(
    client, contract_request, method, path, accept, answered
):
    body = contract_request if method == "POST" else None
    response = client.open(path, method=method, json=body, headers={"Accept": accept})
    assert response.status_code == 200, response.get_data(as_text=True)[:300]
    assert response.mimetype == answered


def test_a_type_refused_with_q_0_is_still_refused_whatever_its_parameters(client, contract_request):
    response = client.post(
        "/v1/paths", json=contract_request, headers={"Accept": "text/csv;charset=utf-8;q=0"}
    )
    assert response.status_code == 406
    assert response.mimetype == "application/problem+json"


CSV_TWINS = {
    "/v1/paths/csv": lambda c: c,
    "/v1/paths/batch/csv": _batch,
    "/v1/bands/csv": lambda c: _small_bands(),
}


def test_every_csv_twin_is_covered(app):
    twins = {r.rule for r in app.url_map.iter_rules() if r.rule.endswith("/csv")}
    assert twins == set(CSV_TWINS)


@pytest.mark.parametrize("accept", ["application/json", "application/xml", "text/csv", "image/png;q=0.1"])
@pytest.mark.parametrize("path", sorted(CSV_TWINS))
def test_a_csv_twin_answers_csv_whatever_the_accept_header(client, contract_request, path, accept):
    response = client.post(path, json=CSV_TWINS[path](contract_request), headers={"Accept": accept})
    assert response.status_code == 200, response.get_data(as_text=True)[:300]
    assert response.mimetype == "text/csv"
    assert response.headers["Content-Disposition"].startswith("attachment; ")


def test_the_csv_twins_document_no_406(app):
    paths = app.extensions["shockpath.openapi"]["paths"]
    for twin in CSV_TWINS:
        assert "406" not in paths[twin]["post"]["responses"], twin
        assert "406" in paths[twin.removesuffix("/csv")]["post"]["responses"], twin


# An answer that depends on Accept says so (Vary: Accept, RFC 9110 section 12.5.5): a shared
# cache must not give a CSV client the JSON answer, nor anyone a 406 meant for another header.
@pytest.mark.parametrize(
    ("method", "path", "accept", "status"),
    [
        ("GET", "/v1/examples", None, 200),
        ("GET", "/v1/examples", "application/json", 200),
        ("GET", "/v1/examples", "text/csv", 406),
        ("GET", "/v1/examples/quillbrook-rent-freeze", "text/html", 406),
        ("GET", "/openapi.json", "text/csv", 406),
        ("POST", "/v1/paths", "application/xml", 406),
        ("POST", "/v1/paths", None, 200),
        ("POST", "/v1/paths/batch", "application/xml", 406),
        ("POST", "/v1/bands", "application/xml", 406),
    ],
)
def test_every_answer_that_depends_on_accept_carries_vary_accept(
    client, contract_request, method, path, accept, status
):
    body = POSTS[path](contract_request) if method == "POST" else None
    response = client.open(path, method=method, json=body, headers={"Accept": accept} if accept else {})
    assert response.status_code == status
    assert "Accept" in response.vary


def test_a_304_of_a_negotiated_answer_carries_vary_accept(client):
    tag = client.get("/v1/examples").headers["ETag"]
    response = client.get("/v1/examples", headers={"If-None-Match": tag})
    assert response.status_code == 304
    assert "Accept" in response.vary
