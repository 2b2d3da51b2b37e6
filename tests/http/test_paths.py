"""POST /v1/paths (the answer, its ETag, CSV, the cache and the Python API agree) and
POST /v1/paths/batch (one result or one problem per scenario, in order, equal to one-by-one)."""

from __future__ import annotations

import copy
import csv
import io
import json
import math

import pytest

from service import limits, simulate, simulate_many
from service.engine.results import DISTRIBUTION_GROUPS
from service.examples import examples


def test_posting_the_contract_example_returns_a_path_per_policy(client, contract_request):
    response = client.post("/v1/paths", json=contract_request)
    assert response.status_code == 200
    body = response.get_json()
    assert [p["name"] for p in body["paths"]] == [p["name"] for p in contract_request["policies"]]
    assert [s["name"] for s in body["summary"]] == [p["name"] for p in contract_request["policies"]]
    assert body["periods"] == list(range(13))
    assert all(len(p["consumer_price"]) == 13 for p in body["paths"])
    assert body == simulate(contract_request)


def test_the_etag_is_the_scenario_id_and_a_match_gets_304(client, contract_request):
    first = client.post("/v1/paths", json=contract_request)
    sid = first.get_json()["scenario_id"]
    assert first.headers["ETag"] == f'"{sid}"'
    again = client.post("/v1/paths", json=contract_request, headers={"If-None-Match": f'"{sid}"'})
    assert again.status_code == 304 and again.data == b""
    assert again.headers["ETag"] == f'"{sid}"'
    other = client.post("/v1/paths", json=contract_request, headers={"If-None-Match": '"something-else"'})
    assert other.status_code == 200


def test_the_scenario_id_ignores_defaults_written_out_and_changes_with_any_number(client, contract_request):
    sid = client.post("/v1/paths", json=contract_request).get_json()["scenario_id"]
    explicit = {
        **contract_request,
        "shocks": [dict(s, start=s.get("start", 1)) for s in contract_request["shocks"]],
    }
    explicit["shocks"][2].pop("start")  # path shocks have no start
    assert client.post("/v1/paths", json=explicit).get_json()["scenario_id"] == sid
    changed = {**contract_request, "horizon": 11}
    assert client.post("/v1/paths", json=changed).get_json()["scenario_id"] != sid


def test_a_zero_written_minus_zero_is_the_same_scenario_with_the_same_id_and_bytes(client, contract_request):
    """-0.0 and 0.0 are one number (IEEE 754 compares them equal): one id, one ETag, the same
    bytes, and the answer's request writes 0.0, whichever was sent."""
    zero = copy.deepcopy(contract_request)
    zero["welfare"] = {**zero.get("welfare", {}), "discount_rate": 0.0}
    zero["shocks"][0]["change"] = 0.0
    minus = copy.deepcopy(zero)
    minus["welfare"]["discount_rate"] = -0.0
    minus["shocks"][0]["change"] = -0.0
    plain, signed = (
        client.post("/v1/paths", data=json.dumps(r), content_type="application/json") for r in (zero, minus)
    )
    assert b'"discount_rate": -0.0' in json.dumps(minus).encode()  # sent as written
    assert plain.status_code == signed.status_code == 200
    assert plain.headers["ETag"] == signed.headers["ETag"]
    # Computed afresh (no answer cache): the same bytes, and the request echoed with 0.0.
    fresh = simulate(copy.deepcopy(minus))
    assert json.dumps(fresh, sort_keys=True) == json.dumps(simulate(copy.deepcopy(zero)), sort_keys=True)
    assert math.copysign(1.0, fresh["request"]["welfare"]["discount_rate"]) == 1.0
    assert math.copysign(1.0, fresh["request"]["shocks"][0]["change"]) == 1.0


def test_csv_is_the_same_paths_in_long_form(client, contract_request):
    body = client.post("/v1/paths", json=contract_request).get_json()
    response = client.post("/v1/paths", json=contract_request, headers={"Accept": "text/csv"})
    assert response.status_code == 200 and response.mimetype == "text/csv"
    assert response.headers["ETag"] == f'"{body["scenario_id"]}.csv"'
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True))))
    assert list(rows[0]) == ["policy", "period", "variable", "value", "unit"]
    assert len(rows) == len(body["paths"]) * (17 + len(DISTRIBUTION_GROUPS)) * 13  # 17 series and the groups
    by_key = {(r["policy"], int(r["period"]), r["variable"]): float(r["value"]) for r in rows}
    for path in body["paths"]:
        for t in body["periods"]:
            assert by_key[(path["name"], t, "deadweight_loss")] == path["deadweight_loss"][t]
            assert by_key[(path["name"], t, "binding")] == float(path["binding"][t])


def test_an_unanswerable_accept_header_gets_406(client, contract_request):
    response = client.post("/v1/paths", json=contract_request, headers={"Accept": "application/xml"})
    assert response.status_code == 406
    assert response.mimetype == "application/problem+json"


def test_every_number_in_the_body_is_a_json_number(client, contract_request):
    # orjson writes NaN and infinity as null, so a non-finite value would show up as None.
    body = json.loads(client.post("/v1/paths", json=contract_request).get_data(as_text=True))
    for path in body["paths"]:
        series = {k: v for k, v in path.items() if k not in ("name", "kind", "binding", "distribution")}
        series.update(path["distribution"] or {})
        for name, values in series.items():
            assert all(isinstance(v, float) for v in values), name
    assert all(isinstance(v, float) for v in body["supply_elasticity"])


def test_cautions_carry_the_lower_bound_and_the_general_warning(client, contract_request):
    cautions = client.post("/v1/paths", json=contract_request).get_json()["cautions"]
    assert any("lower bound" in c for c in cautions)
    assert any("do not replace" in c for c in cautions)
    assert any("'3% cap'" in c and "Never binds" in c for c in cautions)


def test_a_repeated_request_is_answered_from_the_cache_with_the_same_bytes(app, contract_request):
    from service import create_app

    cached = create_app({"cache_bytes": 10_000_000}).test_client()
    first = cached.post("/v1/paths", json=contract_request)
    calls = []
    import service.http.paths as views

    original = views.compute
    views.compute = lambda *a, **k: calls.append(1) or original(*a, **k)
    try:
        again = cached.post("/v1/paths", json=contract_request)
    finally:
        views.compute = original
    assert calls == [] and again.data == first.data and again.headers["ETag"] == first.headers["ETag"]
    uncached = create_app({"cache_bytes": 0}).test_client()
    assert uncached.post("/v1/paths", json=contract_request).data == first.data


def test_a_batch_answers_each_scenario_in_order_as_paths_would(client):
    requests = [e["request"] for e in examples().values() if e.get("endpoint", "/v1/paths") == "/v1/paths"]
    bad = copy.deepcopy(requests[0])
    bad["market"]["price"] = -1
    batch = [*requests[:2], bad, *requests[2:]]
    response = client.post("/v1/paths/batch", json={"scenarios": batch})
    assert response.status_code == 200
    results = response.get_json()["results"]
    assert len(results) == len(batch)
    assert results[2]["status"] == 422
    assert results[2]["errors"] == [
        {"pointer": "/scenarios/2/market/price", "message": results[2]["errors"][0]["message"]}
    ]
    for request, result in zip([*requests[:2], *requests[2:]], results[:2] + results[3:], strict=True):
        assert result == simulate(request)


def test_an_engine_problem_in_one_scenario_leaves_the_others(client, contract_request):
    infeasible = copy.deepcopy(contract_request)
    infeasible["policies"].append({"name": "huge", "kind": "unit_tax", "amount": 5000})
    results = client.post("/v1/paths/batch", json={"scenarios": [infeasible, contract_request]}).get_json()[
        "results"
    ]
    assert (
        results[0]["status"] == 422 and results[0]["errors"][0]["pointer"] == "/scenarios/0/policies/8/amount"
    )
    assert results[1]["scenario_id"]


def test_batch_limits_are_enforced_before_any_work(client, contract_request):
    too_many = client.post("/v1/paths/batch", json={"scenarios": [{}] * (limits.MAX_BATCH_SCENARIOS + 1)})
    assert too_many.status_code == 422
    assert too_many.get_json()["errors"][0]["pointer"] == "/scenarios"
    big = copy.deepcopy(contract_request)
    big["horizon"] = limits.MAX_HORIZON
    big["policies"] = big["policies"] * 2
    for i, p in enumerate(big["policies"]):
        p["name"] = f"p{i}"
    work = client.post("/v1/paths/batch", json={"scenarios": [big] * 120})
    assert work.status_code == 422
    assert "policy-periods" in work.get_json()["errors"][0]["message"]


@pytest.mark.parametrize(
    "mistake",
    [
        {"horizon": limits.MAX_HORIZON + 1},
        {"horizon": 10**9},
        {"horizon": limits.MAX_HORIZON - 0.5},
        {
            "horizon": limits.MAX_HORIZON,
            "policies": [{"name": f"p{i}", "kind": "none"} for i in range(limits.MAX_POLICIES + 1)],
        },
    ],
    ids=["horizon-past-the-limit", "horizon-far-past-it", "horizon-not-whole", "too-many-policies"],
)
def test_a_scenario_refused_for_its_horizon_or_policies_asks_for_no_work(client, contract_request, mistake):
    """A scenario whose horizon or list of policies is out of range is never solved: it gets
    its own problem, and does not count toward the batch's work (it once counted as a horizon
    of 600, which made a batch of valid scenarios a 422 for all of them)."""
    valid = [dict(contract_request, id=f"s{i}") for i in range(45)]
    bad = {**contract_request, **mistake, "id": "bad"}
    work = (len(valid) + 1) * len(contract_request["policies"]) * (limits.MAX_HORIZON + 1)
    assert work > limits.MAX_POLICY_PERIODS  # had the bad one counted, the batch would be refused
    response = client.post("/v1/paths/batch", json={"scenarios": [*valid, bad]})
    assert response.status_code == 200, response.get_json()
    results = response.get_json()["results"]
    assert [r["id"] for r in results] == [*(f"s{i}" for i in range(45)), "bad"]
    assert all("scenario_id" in r for r in results[:-1])
    assert results[-1]["status"] == 422
    pointers = {e["pointer"] for e in results[-1]["errors"]}
    assert pointers & {"/scenarios/45/horizon", "/scenarios/45/policies"}, pointers


def test_an_empty_or_malformed_envelope_is_422(client):
    for body, pointer in [
        ({}, "/scenarios"),
        ({"scenarios": []}, "/scenarios"),
        ({"scenarios": "notalist"}, "/scenarios"),
        ({"scenarios": {"0": {}}}, "/scenarios"),
        ({"scenarios": None}, "/scenarios"),
        ([], ""),
    ]:
        response = client.post("/v1/paths/batch", json=body)
        assert response.status_code == 422, body
        assert response.get_json()["errors"][0]["pointer"] == pointer


NOT_OBJECTS = ["notanobject", None, 5, [], True]


def test_a_scenario_that_is_not_an_object_gets_its_own_problem_and_the_others_are_answered(
    client, contract_request
):
    """Each non-object scenario gets the problem /v1/paths gives for such a body, at its own
    pointer, in its place; the valid scenarios are answered as they would be alone."""
    body = {"scenarios": [contract_request, *NOT_OBJECTS, contract_request]}
    response = client.post("/v1/paths/batch", json=body)
    assert response.status_code == 200
    results = response.get_json()["results"]
    assert len(results) == len(NOT_OBJECTS) + 2
    alone = simulate(contract_request)
    assert results[0] == alone and results[-1] == alone
    for i, item in enumerate(NOT_OBJECTS, start=1):
        single = client.post("/v1/paths", data=json.dumps(item), content_type="application/json").get_json()
        assert single["errors"] == [{"pointer": "", "message": "Must be a JSON object."}]
        problem = results[i]
        assert problem["errors"] == [{"pointer": f"/scenarios/{i}", "message": "Must be a JSON object."}]
        assert problem["detail"] == f"/scenarios/{i}: Must be a JSON object."
        assert {k: problem[k] for k in ("type", "title", "status")} == {
            k: single[k] for k in ("type", "title", "status")
        }
    # the Python API gives the same list
    assert simulate_many(body["scenarios"], prefix="/scenarios/{i}") == results


def test_a_scenario_that_is_not_an_object_is_a_problem_row_in_csv_and_in_the_workbook(
    client, contract_request
):
    from openpyxl import load_workbook

    from service.workbook import WORKBOOK

    body = {"scenarios": [contract_request, "notanobject", None, 5]}
    for layout in ("long", "wide"):
        response = client.post(f"/v1/paths/batch?layout={layout}", json=body, headers={"Accept": "text/csv"})
        assert response.status_code == 200
        rows = list(csv.reader(io.StringIO(response.get_data(as_text=True))))
        for i in (1, 2, 3):
            (row,) = [r for r in rows[1:] if r[0] == str(i)]  # one row: its problem
            assert f"/scenarios/{i}: Must be a JSON object." in " ".join(row)
        assert any(r[0] == "0" and r[1] for r in rows[1:])  # the valid scenario's rows
    summary = client.post(
        "/v1/paths/batch", json={**body, "output": "summary"}, headers={"Accept": "text/csv"}
    )
    assert summary.status_code == 200
    assert summary.get_data(as_text=True).count("Must be a JSON object.") == 3
    book = client.post("/v1/paths/batch", json=body, headers={"Accept": WORKBOOK})
    assert book.status_code == 200
    scenarios = [
        list(r) for r in load_workbook(io.BytesIO(book.data))["Scenarios"].iter_rows(values_only=True)
    ]
    assert [r[2] for r in scenarios[2:]] == [f"/scenarios/{i}: Must be a JSON object." for i in (1, 2, 3)]
    assert scenarios[1][1] == client.post("/v1/paths", json=contract_request).get_json()["scenario_id"]


def test_the_batch_limits_count_scenarios_that_are_not_objects(client):
    too_many = client.post("/v1/paths/batch", json={"scenarios": [None] * (limits.MAX_BATCH_SCENARIOS + 1)})
    assert too_many.status_code == 422
    assert too_many.get_json()["errors"][0]["pointer"] == "/scenarios"
    at_the_limit = client.post("/v1/paths/batch", json={"scenarios": [None] * limits.MAX_BATCH_SCENARIOS})
    assert at_the_limit.status_code == 200
    assert [r["errors"][0]["pointer"] for r in at_the_limit.get_json()["results"]] == [
        f"/scenarios/{i}" for i in range(limits.MAX_BATCH_SCENARIOS)
    ]


def test_a_batch_id_refused_is_not_echoed_back(client, contract_request):
    """Ids are checked (printable, at most their length limit) to keep such text out of the
    answers and the CSV: a refused id gets its problem at /scenarios/i/id and is not written
    back in that problem (a caller's trial saw it echoed), while a valid id is."""
    scenarios = [
        {**contract_request, "id": "ok"},
        {**contract_request, "id": "bell\u0007"},
        {**contract_request, "id": "x" * 10_000},
        {**contract_request, "id": 7},
    ]
    results = client.post("/v1/paths/batch", json={"scenarios": scenarios}).get_json()["results"]
    assert results[0]["id"] == "ok" and "scenario_id" in results[0]
    for i, result in enumerate(results[1:], start=1):
        assert "id" not in result, result
        assert [e["pointer"] for e in result["errors"]] == [f"/scenarios/{i}/id"]
