"""POST /v1/paths/batch: one result or one problem per scenario, in order, equal to one-by-one."""

from __future__ import annotations

import copy

from service import limits, simulate
from service.examples import examples


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


def test_an_empty_or_malformed_envelope_is_422(client):
    for body, pointer in [
        ({}, "/scenarios"),
        ({"scenarios": []}, "/scenarios"),
        ({"scenarios": [1]}, "/scenarios/0"),
        ([], ""),
    ]:
        response = client.post("/v1/paths/batch", json=body)
        assert response.status_code == 422, body
        assert response.get_json()["errors"][0]["pointer"] == pointer
