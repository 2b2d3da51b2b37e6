"""The CSV carries what MODEL.md sections 12-15 add: the price index, nominal prices, covered
and uncovered homes, homes below the free path, and each group of who gains and who loses, with
the same numbers as the JSON answer."""

from __future__ import annotations

import copy
import csv
import io

import pytest


def _rows(response) -> list[dict]:
    assert response.status_code == 200
    return list(csv.DictReader(io.StringIO(response.get_data(as_text=True), newline="")))


@pytest.fixture
def additions_request(contract_request):
    request = copy.deepcopy(contract_request)
    request["market"]["inflation"] = 0.03
    request["adjustment"] = {"schedule": "stock", "half_life": 3, "depreciation": 0.02}
    ceiling = next(p for p in request["policies"] if p["kind"] == "price_ceiling")
    ceiling["coverage"] = 0.5
    return request, ceiling["name"]


def test_every_series_of_the_json_answer_is_in_the_csv_with_the_same_numbers(client, additions_request):
    request, _ = additions_request
    body = client.post("/v1/paths", json=request).get_json()
    rows = _rows(client.post("/v1/paths", json=request, headers={"Accept": "text/csv"}))
    got = {(r["policy"], int(r["period"]), r["variable"]): float(r["value"]) for r in rows}
    for t, value in zip(body["periods"], body["price_index"], strict=True):
        assert got[("", t, "price_index")] == value
    for path in body["paths"]:
        series = {k: v for k, v in path.items() if k not in ("name", "kind", "binding", "distribution")}
        series.update(path["distribution"])
        for variable, values in series.items():
            for t, value in enumerate(values):
                assert got[(path["name"], t, variable)] == value, (path["name"], variable, t)


def test_the_groups_in_the_csv_sum_to_minus_the_deadweight_loss(client, additions_request):
    # Derived identity (MODEL.md 15): all groups together lose the deadweight loss.
    request, ceiling = additions_request
    rows = _rows(client.post("/v1/paths", json=request, headers={"Accept": "text/csv"}))
    groups = [r for r in rows if r["policy"] == ceiling and r["unit"] == "money per model period"]
    by_period: dict[int, dict[str, float]] = {}
    for r in groups:
        by_period.setdefault(int(r["period"]), {})[r["variable"]] = float(r["value"])
    names = (
        "tenants_in_controlled_homes",
        "tenants_in_uncontrolled_homes",
        "households_priced_out",
        "owners_of_controlled_homes",
        "owners_of_uncontrolled_homes",
        "government",
    )
    for values in by_period.values():
        total = sum(values[n] for n in names)
        assert total == pytest.approx(-values["deadweight_loss"], rel=1e-9, abs=1e-6)


def test_without_inflation_there_is_no_price_index_row(client, contract_request):
    rows = _rows(client.post("/v1/paths", json=contract_request, headers={"Accept": "text/csv"}))
    assert not any(r["variable"] in ("price_index", "nominal_consumer_price") for r in rows)
    assert all(r["policy"] for r in rows)
