"""CSV cells a spreadsheet would run as formulas are neutralised (OWASP, "CSV Injection");
numbers stay numbers; downloads carry a filename and every value its unit."""

from __future__ import annotations

import copy
import csv
import io

import pytest

from service.http.csvio import UNITS, neutralise

from ..engine.additions import GROUPS

# OWASP, "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection): cells beginning with
# =, +, -, @, tab or carriage return are read as formulas by Excel, LibreOffice and Sheets.
INJECTIONS = [
    '=HYPERLINK("http://x")',
    "+1+1",
    "-2+3",
    "@SUM(A1:A9)",
    "\t=1+1",
    "\r=1+1",
    '=cmd|"/C calc"!A0',
]


@pytest.mark.parametrize("name", INJECTIONS)
def test_a_policy_name_that_starts_a_formula_reaches_the_csv_as_text(client, contract_request, name):
    contract_request["policies"][1]["name"] = name
    response = client.post("/v1/paths", json=contract_request, headers={"Accept": "text/csv"})
    assert response.status_code == 200
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True), newline="")))
    names = {r["policy"] for r in rows}
    assert "'" + name in names and name not in names
    assert all(not r["policy"].startswith(("=", "+", "-", "@", "\t", "\r")) for r in rows)


def test_ordinary_names_and_negative_numbers_are_untouched(client, contract_request):
    response = client.post("/v1/paths", json=contract_request, headers={"Accept": "text/csv"})
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True))))
    assert {r["policy"] for r in rows} == {p["name"] for p in contract_request["policies"]}
    changes = [r["value"] for r in rows if r["variable"] == "producer_surplus_change"]
    negative = [v for v in changes if v.startswith("-")]
    assert negative and all(float(v) < 0 for v in negative)  # numbers are written as numbers


def test_neutralise_leaves_safe_text_alone():
    assert neutralise("3% cap") == "3% cap"
    assert neutralise("rent freeze (=base)") == "rent freeze (=base)"
    assert neutralise("-5% cap") == "'-5% cap"


def test_the_csv_is_a_named_download_with_a_unit_on_every_row(client, contract_request):
    response = client.post("/v1/paths", json=contract_request, headers={"Accept": "text/csv"})
    sid = response.headers["ETag"].strip('"').removesuffix(".csv")
    assert response.headers["Content-Disposition"] == f'attachment; filename="paths-{sid[:12]}.csv"'
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True))))
    assert all(r["unit"] == UNITS[r["variable"]] for r in rows)
    assert {r["unit"] for r in rows if r["variable"] == "quantity"} == {"units per price interval"}


# --- what MODEL.md 12-15 add, in every CSV ----------------------------------------------------


def _rows(response) -> list[dict]:
    assert response.status_code == 200
    return list(csv.DictReader(io.StringIO(response.get_data(as_text=True), newline="")))


@pytest.fixture
def additions(contract_request):
    request = copy.deepcopy(contract_request)
    request["market"]["inflation"] = 0.025
    request["adjustment"] = {"schedule": "stock", "half_life": 2, "depreciation": 0.03}
    ceiling = next(p for p in request["policies"] if p["kind"] == "price_ceiling")
    ceiling["coverage"] = 0.4
    return request


def test_the_groups_in_the_csv_add_up_to_the_json_totals(client, additions):
    """Round trip: each group's rows summed over the periods are the summary's
    distribution_totals (sums in period order, as the engine sums them)."""
    body = client.post("/v1/paths", json=additions).get_json()
    rows = _rows(client.post("/v1/paths", json=additions, headers={"Accept": "text/csv"}))
    for path, summary in zip(body["paths"], body["summary"], strict=True):
        for group in GROUPS:
            values = [
                float(r["value"]) for r in rows if r["policy"] == path["name"] and r["variable"] == group
            ]
            assert values == path["distribution"][group]
            assert {r["unit"] for r in rows if r["variable"] == group} == {"money per model period"}
            assert sum(values) == pytest.approx(summary["distribution_totals"][group], rel=1e-12, abs=1e-6)


def test_the_batch_csv_carries_the_additions_of_each_scenario(client, additions, contract_request):
    body = {"scenarios": [additions, contract_request]}  # the second without any addition
    results = client.post("/v1/paths/batch", json=body).get_json()["results"]
    rows = _rows(client.post("/v1/paths/batch", json=body, headers={"Accept": "text/csv"}))
    assert "price_index" in results[0] and "price_index" not in results[1]
    assert any("covered_price" in p for p in results[0]["paths"])
    assert not any("homes_below_free_path" in p or "covered_price" in p for p in results[1]["paths"])
    for i, result in enumerate(results):
        mine = [r for r in rows if r["scenario"] == str(i)]
        assert {r["scenario_id"] for r in mine} == {result["scenario_id"]}
        index = [float(r["value"]) for r in mine if r["variable"] == "price_index"]
        assert index == result.get("price_index", [])
        for path in result["paths"]:
            got = {
                (r["variable"], int(r["period"])): float(r["value"])
                for r in mine
                if r["policy"] == path["name"]
            }
            for name in (
                "nominal_consumer_price",
                "homes_below_free_path",
                "rent_above_free_path",
                "covered_price",
            ):
                if name in path:
                    assert [got[(name, t)] for t in result["periods"]] == path[name]
                else:
                    assert not any(v == name for v, _ in got)
            for group in GROUPS:
                assert [got[(group, t)] for t in result["periods"]] == path["distribution"][group]


def test_the_bands_csv_carries_every_banded_series_with_its_unit(client):
    from service.examples import example_request

    request = example_request("quillbrook-uncertain-elasticities")
    request["adjustment"] = {"schedule": "stock", "half_life": 3, "depreciation": 0.02}
    request["market"]["inflation"] = {"distribution": "uniform", "low": 0.0, "high": 0.04}
    request["policies"][1]["coverage"] = 0.5
    request["policies"][1]["name"] = "=cap on half"
    request.update(draws=300)
    body = client.post("/v1/bands", json=request).get_json()
    rows = _rows(client.post("/v1/bands", json=request, headers={"Accept": "text/csv"}))
    got = {(r["policy"], r["variable"], r["percentile"], int(r["period"])): float(r["value"]) for r in rows}
    count = 0
    for band in body["bands"]:
        name = neutralise(band["name"])
        for variable, by_q in band["series"].items():
            for q, values in by_q.items():
                assert [got[(name, variable, q, t)] for t in body["periods"]] == values
                count += len(values)
    assert count == len(rows)
    assert "'=cap on half" in {r["policy"] for r in rows}
    units = {r["variable"]: r["unit"] for r in rows}
    assert units["homes_below_free_path"] == "units per price interval"
    assert units["rent_above_free_path"] == units["covered_price"] == "money per unit per price interval"
    assert units["nominal_consumer_price"] == "money of the day per unit per price interval"
    assert all(units[v] == UNITS[v] for v in units)


def test_every_series_of_the_json_answer_is_in_the_csv_with_the_same_numbers(client, additions):
    request = additions
    body = client.post("/v1/paths", json=request).get_json()
    rows = _rows(client.post("/v1/paths", json=request, headers={"Accept": "text/csv"}))
    got = {(r["policy"], int(r["period"]), r["variable"]): float(r["value"]) for r in rows}
    for t, value in zip(body["periods"], body["price_index"], strict=True):
        assert got[("", t, "price_index")] == value
    for path in body["paths"]:
        series = {
            k: v
            for k, v in path.items()
            if k not in ("name", "kind", "binding", "distribution", "vs_free_path")
        }
        series.update(path["distribution"])
        # Nested objects other than the distribution are flattened as object.member.
        series.update({f"vs_free_path.{k}": v for k, v in path.get("vs_free_path", {}).items()})
        for variable, values in series.items():
            for t, value in enumerate(values):
                assert got[(path["name"], t, variable)] == value, (path["name"], variable, t)


def test_the_groups_in_the_csv_sum_to_minus_the_deadweight_loss(client, additions):
    # Derived identity (MODEL.md 15): all groups together lose the deadweight loss.
    request = additions
    ceiling = next(p["name"] for p in request["policies"] if p["kind"] == "price_ceiling")
    rows = _rows(client.post("/v1/paths", json=request, headers={"Accept": "text/csv"}))
    groups = [r for r in rows if r["policy"] == ceiling and r["unit"] == "money per model period"]
    by_period: dict[int, dict[str, float]] = {}
    for r in groups:
        by_period.setdefault(int(r["period"]), {})[r["variable"]] = float(r["value"])
    for values in by_period.values():
        total = sum(values[n] for n in GROUPS)
        assert total == pytest.approx(-values["deadweight_loss"], rel=1e-9, abs=1e-6)


def test_without_inflation_there_is_no_price_index_row(client, contract_request):
    rows = _rows(client.post("/v1/paths", json=contract_request, headers={"Accept": "text/csv"}))
    assert not any(r["variable"] in ("price_index", "nominal_consumer_price") for r in rows)
    assert all(r["policy"] for r in rows)
