"""Sweeps: "output": "summary" answers summaries and cautions without series (JSON and CSV), batch
scenarios carry the caller's id into results and CSV rows, and the wide CSV form."""

from __future__ import annotations

import copy
import csv
import io

import pytest

from service.http.csvio import neutralise, unit_of, wide_unit

CSV = {"Accept": "text/csv"}


def _rows(response) -> list[dict]:
    assert response.status_code == 200, response.get_data(as_text=True)[:300]
    return list(csv.DictReader(io.StringIO(response.get_data(as_text=True), newline="")))


@pytest.fixture
def sweep(contract_request):
    scenarios = []
    for end in (2, 5, 8):
        s = copy.deepcopy(contract_request)
        s["id"] = f"freeze to {end}"
        for p in s["policies"]:
            if p["kind"] == "price_ceiling":
                p["end"] = end
        scenarios.append(s)
    return {"scenarios": scenarios}


def test_a_summary_answer_is_the_full_answer_without_its_series(client, contract_request):
    full = client.post("/v1/paths", json=contract_request).get_json()
    summary = client.post("/v1/paths", json={**contract_request, "output": "summary"})
    body = summary.get_json()
    assert set(body) == {"scenario_id", "model_version", "reduced_form", "summary", "cautions", "request"}
    # Same numbers, same scenario id; the request it answers says it asked for the summary.
    assert {k: v for k, v in body.items() if k != "request"} == {k: full[k] for k in body if k != "request"}
    assert body["request"] == {**full["request"], "output": "summary"}
    assert summary.headers["ETag"] != f'"{full["scenario_id"]}"'  # another representation


def test_output_full_is_the_default_and_changes_nothing(client, contract_request):
    default = client.post("/v1/paths", json=contract_request)
    full = client.post("/v1/paths", json={**contract_request, "output": "full"})
    assert default.get_json() == full.get_json() and default.headers["ETag"] == full.headers["ETag"]


def test_an_unknown_output_is_a_422_at_its_pointer(client, contract_request):
    response = client.post("/v1/paths", json={**contract_request, "output": "everything"})
    assert response.status_code == 422
    assert [e["pointer"] for e in response.get_json()["errors"]] == ["/output"]


def test_a_batch_of_summaries_echoes_each_id_and_leaves_out_every_series(client, sweep):
    full = client.post("/v1/paths/batch", json=sweep).get_json()["results"]
    summaries = client.post("/v1/paths/batch", json={**sweep, "output": "summary"}).get_json()["results"]
    assert [r["id"] for r in full] == [r["id"] for r in summaries] == [s["id"] for s in sweep["scenarios"]]
    for f, s in zip(full, summaries, strict=True):
        assert "paths" not in s and "periods" not in s
        assert s["summary"] == f["summary"] and s["cautions"] == f["cautions"]
        assert s["scenario_id"] == f["scenario_id"]
    # the id is the caller's name for a scenario, not part of the scenario
    alone = sweep["scenarios"][0] | {}
    del alone["id"]
    assert client.post("/v1/paths", json=alone).get_json()["scenario_id"] == full[0]["scenario_id"]


def test_a_failed_scenario_keeps_its_id_and_a_bad_id_is_a_422_at_its_pointer(client, sweep):
    sweep["scenarios"][1]["market"]["demand"]["price_elasticity"] = 0.5
    sweep["scenarios"][2]["id"] = 42
    results = client.post("/v1/paths/batch", json=sweep).get_json()["results"]
    assert results[1]["id"] == "freeze to 5" and results[1]["status"] == 422
    assert results[2]["status"] == 422 and "id" not in results[2]
    assert [e["pointer"] for e in results[2]["errors"]] == ["/scenarios/2/id"]


def test_an_id_given_twice_is_a_422_at_the_later_scenarios_id(client, sweep):
    # Results are matched to scenarios by id: a second scenario with the same id would be ambiguous.
    sweep["scenarios"][2]["id"] = "freeze to 2"
    results = client.post("/v1/paths/batch", json=sweep).get_json()["results"]
    assert [r.get("status", 200) for r in results] == [200, 200, 422]
    assert results[2]["id"] == "freeze to 2"
    assert [e["pointer"] for e in results[2]["errors"]] == ["/scenarios/2/id"]
    assert "Scenario 0 of this batch" in results[2]["errors"][0]["message"]


def test_a_scenario_cannot_contradict_its_batchs_output(client, sweep):
    sweep["scenarios"][1]["output"] = "full"
    response = client.post("/v1/paths/batch", json={**sweep, "output": "summary"})
    assert response.status_code == 422
    assert [e["pointer"] for e in response.get_json()["errors"]] == ["/scenarios/1/output"]


def test_the_batch_csv_scenario_column_is_the_callers_id(client, sweep):
    sweep["scenarios"][0]["id"] = "=1+1"  # neutralised like a policy name
    results = client.post("/v1/paths/batch", json=sweep).get_json()["results"]
    rows = _rows(client.post("/v1/paths/batch", json=sweep, headers=CSV))
    assert list(dict.fromkeys(r["scenario"] for r in rows)) == ["'=1+1", "freeze to 5", "freeze to 8"]
    for result in results:
        mine = [r for r in rows if r["scenario"] == neutralise(result["id"])]
        assert {r["scenario_id"] for r in mine} == {result["scenario_id"]}
        got = {(r["policy"], r["variable"], int(r["period"])): float(r["value"]) for r in mine}
        for path in result["paths"]:
            assert [got[(path["name"], "quantity", t)] for t in result["periods"]] == path["quantity"]
            assert [got[(path["name"], "binding", t)] for t in result["periods"]] == [
                float(b) for b in path["binding"]
            ]


def test_a_summary_csv_has_one_row_per_scenario_and_policy(client, sweep):
    body = {**sweep, "output": "summary"}
    results = client.post("/v1/paths/batch", json=body).get_json()["results"]
    rows = _rows(client.post("/v1/paths/batch", json=body, headers=CSV))
    assert len(rows) == sum(len(r["summary"]) for r in results)
    for result in results:
        mine = [r for r in rows if r["scenario"] == result["id"]]
        for row, summary in zip(mine, result["summary"], strict=True):
            assert row["policy"] == summary["name"] and row["kind"] == summary["kind"]
            assert float(row["total_deadweight_loss"]) == summary["total_deadweight_loss"]
            for group, total in (summary["distribution_totals"] or {}).items():
                assert float(row[f"distribution_totals.{group}"]) == total
            assert row["cautions"] == " | ".join(result["cautions"])
    alone = {k: v for k, v in sweep["scenarios"][0].items() if k != "id"}  # id: batches only
    single = _rows(client.post("/v1/paths", json={**alone, "output": "summary"}, headers=CSV))
    assert [r["policy"] for r in single] == [s["name"] for s in results[0]["summary"]]


def test_the_wide_form_has_one_column_per_variable_and_the_same_numbers(client, contract_request):
    contract_request["market"]["inflation"] = 0.03
    body = client.post("/v1/paths", json=contract_request).get_json()
    response = client.post("/v1/paths?layout=wide", json=contract_request, headers=CSV)
    rows = _rows(response)
    header = next(csv.reader(io.StringIO(response.get_data(as_text=True))))
    assert header[:2] == ["policy", "period"]
    assert "consumer_price [today's money (period 0) per unit per price interval]" in header
    assert "nominal_consumer_price [money of the day per unit per price interval]" in header
    assert "quantity [units per price interval]" in header
    assert len(rows) == len(body["paths"]) * len(body["periods"])
    for path in body["paths"]:
        mine = [r for r in rows if r["policy"] == path["name"]]
        assert [int(r["period"]) for r in mine] == body["periods"]
        for variable in ("consumer_price", "nominal_consumer_price", "deadweight_loss", "binding"):
            column = f"{variable} [{wide_unit(variable)}]"
            assert [float(r[column]) for r in mine] == [float(v) for v in path[variable]]
        for group, values in path["distribution"].items():
            assert [float(r[f"{group} [{wide_unit(group)}]"]) for r in mine] == values
        assert [float(r["price_index [index, period 0 = 1]"]) for r in mine] == body["price_index"]


def test_a_wide_batch_leaves_a_series_empty_where_a_scenario_has_none(client, contract_request):
    with_inflation = copy.deepcopy(contract_request) | {"id": "inflation"}
    with_inflation["market"]["inflation"] = 0.02
    batch = {"scenarios": [with_inflation, contract_request | {"id": "none"}]}
    rows = _rows(client.post("/v1/paths/batch?layout=wide", json=batch, headers=CSV))
    column = f"nominal_consumer_price [{wide_unit('nominal_consumer_price')}]"
    assert all(r[column] for r in rows if r["scenario"] == "inflation")
    assert all(r[column] == "" for r in rows if r["scenario"] == "none")


def test_an_unknown_layout_is_a_400(client, contract_request):
    response = client.post("/v1/paths?layout=tall", json=contract_request, headers=CSV)
    assert response.status_code == 400
    assert response.get_json()["type"] == "urn:shockpath:problem:invalid-parameter"


def test_a_new_nested_series_reaches_the_csv_without_code_changes():
    """Flattening is generic: an object of series (say a coming vs_free_path) becomes variables."""
    from service.http.csvio import paths_csv

    body = {
        "periods": [0, 1],
        "paths": [
            {
                "name": "cap",
                "kind": "price_ceiling",
                "quantity": [10.0, 9.5],
                "vs_free_path": {"renters": [0.0, -0.5], "extra_rent": [0.0, 12.25]},
            }
        ],
    }
    rows = list(csv.DictReader(io.StringIO(paths_csv(body).decode())))
    got = {(r["variable"], r["period"]): r for r in rows}
    assert got[("vs_free_path.extra_rent", "1")]["value"] == "12.25"
    assert got[("vs_free_path.renters", "1")]["value"] == "-0.5"
    assert got[("vs_free_path.renters", "1")]["unit"] == unit_of("vs_free_path.renters")
    wide = list(csv.reader(io.StringIO(paths_csv(body, "wide").decode())))
    assert wide[0][2:] == [
        "quantity [units per price interval]",
        f"vs_free_path.renters [{wide_unit('vs_free_path.renters')}]",
        f"vs_free_path.extra_rent [{wide_unit('vs_free_path.extra_rent')}]",
    ]
    assert wide[2] == ["cap", "1", "9.5", "-0.5", "12.25"]


def test_bands_have_no_summary_form(client):
    from service.examples import example_request

    request = example_request("quillbrook-uncertain-elasticities") | {"output": "summary", "draws": 100}
    response = client.post("/v1/bands", json=request)
    assert response.status_code == 422
    assert [e["pointer"] for e in response.get_json()["errors"]] == ["/output"]


def test_a_streamed_batch_csv_compresses_to_the_same_text(app, sweep):
    import gzip

    client = app.test_client()
    plain = client.post("/v1/paths/batch", json=sweep, headers=CSV)
    packed = client.post("/v1/paths/batch", json=sweep, headers={**CSV, "Accept-Encoding": "gzip"})
    assert plain.is_streamed and packed.headers["Content-Encoding"] == "gzip"
    assert gzip.decompress(packed.get_data()) == plain.get_data()


@pytest.mark.parametrize("layout", ["long", "wide"])
def test_a_failed_scenario_is_one_problem_row_under_its_id(client, sweep, layout):
    sweep["scenarios"][1]["market"]["demand"]["price_elasticity"] = 0.5
    rows = _rows(client.post(f"/v1/paths/batch?layout={layout}", json=sweep, headers=CSV))
    failed = [r for r in rows if r["scenario"] == "freeze to 5"]
    assert len(failed) == 1
    text = failed[0]["value"] if layout == "long" else failed[0]["policy"]
    assert "price_elasticity" in text or "elasticity" in text.lower()
    assert {r["scenario"] for r in rows} == {"freeze to 2", "freeze to 5", "freeze to 8"}
