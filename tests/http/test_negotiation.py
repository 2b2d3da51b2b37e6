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
    assert row["unit"] == "money per unit per price interval"


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
    assert dwl["unit"] == "money per model period"
