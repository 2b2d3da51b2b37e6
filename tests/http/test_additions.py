"""POST /v1/paths and /v1/paths/batch with the additions of MODEL.md sections 12-15 (openapi/API.md
"Additions"): answers carry the new fields exactly when they apply (and every response is
validated against the OpenAPI document by the `client` fixture), defaults written out change
nothing, and bad input is a 422 whose JSON Pointer names the field to change."""

from __future__ import annotations

import copy

import pytest

from service import simulate

from ..engine.additions import COVERAGE, GROUPS, NOMINAL, STOCK, scenario

EVERYTHING = scenario(
    [
        {"name": "freeze 5 years", "kind": "price_ceiling", "level": "base", "end": 5},
        {"name": "indexed cap", "kind": "price_ceiling", "growth": 0.01, "indexed": True},
        {"name": "older buildings", "kind": "price_ceiling", "level": "base", "coverage": 0.4},
        {"name": "levy", "kind": "unit_tax", "amount": 30.0, "indexed": True},
    ],
    horizon=10,
    inflation=[0.04, 0.03],
    adjustment={"schedule": "stock", "half_life": 3.0, "depreciation": 0.01},
)


def test_a_request_with_every_addition_answers_every_new_field(client):
    response = client.post("/v1/paths", json=EVERYTHING)
    assert response.status_code == 200
    body = response.get_json()
    assert body == simulate(EVERYTHING)
    assert len(body["price_index"]) == 11 and body["price_index"][0] == 1.0
    assert body["price_index"][2] == pytest.approx(1.04 * 1.03)
    for p in body["paths"]:
        assert set(NOMINAL) | set(STOCK) <= set(p)
        assert set(p["distribution"]) == set(GROUPS)
        assert (set(COVERAGE) <= set(p)) == (p["name"] == "older buildings")
    for s in body["summary"]:
        assert set(s["distribution_totals"]) == set(GROUPS)
        assert "final_homes_below_free_path" in s and "peak_homes_below_free_path" in s
    cautions = " ".join(body["cautions"])
    assert "real money of period 0" in cautions and "homes not built stay missing" in cautions
    assert "Fallis & Smith 1984" in cautions


def test_an_answer_without_the_additions_has_none_of_their_fields(client, contract_request):
    body = client.post("/v1/paths", json=contract_request).get_json()
    assert "price_index" not in body
    for p, s in zip(body["paths"], body["summary"], strict=True):
        assert not (set(NOMINAL) | set(STOCK) | set(COVERAGE)) & set(p)
        assert set(p["distribution"]) == set(GROUPS)  # who gains and who loses: every answer
        assert "final_homes_below_free_path" not in s and set(s["distribution_totals"]) == set(GROUPS)


def test_defaults_written_out_keep_the_etag_and_get_304(client, contract_request):
    """openapi/API.md "Additions": ids of requests without the new fields are unchanged, and writing
    them at their defaults (inflation 0, coverage 1, indexed false) is the same scenario."""
    first = client.post("/v1/paths", json=contract_request)
    written = copy.deepcopy(contract_request)
    written["market"]["inflation"] = 0
    for p in written["policies"]:
        if p["kind"] == "price_ceiling":
            p.update(coverage=1, indexed=False)
    again = client.post("/v1/paths", json=written, headers={"If-None-Match": first.headers["ETag"]})
    assert again.status_code == 304 and again.headers["ETag"] == first.headers["ETag"]
    changed = copy.deepcopy(written)
    changed["market"]["inflation"] = 0.02
    assert client.post("/v1/paths", json=changed).headers["ETag"] != first.headers["ETag"]


def test_a_batch_answers_each_scenario_as_alone(client, contract_request):
    scenarios = [EVERYTHING, contract_request, dict(EVERYTHING, horizon=4)]
    response = client.post("/v1/paths/batch", json={"scenarios": scenarios})
    assert response.status_code == 200
    assert response.get_json()["results"] == [simulate(s) for s in scenarios]


# --- bad input: 422 with the pointer of the field to change --------------------------------------


def _policy(kind_fields):
    return [{"name": "free", "kind": "none"}, {"name": "p", **kind_fields}]


CEILING = {"kind": "price_ceiling", "level": "base"}
BAD = {
    "inflation -1": ({"market.inflation": -1}, "/market/inflation"),
    "inflation below -1": ({"market.inflation": -1.5}, "/market/inflation"),
    "inflation a string": ({"market.inflation": "0.03"}, "/market/inflation"),
    "inflation a boolean": ({"market.inflation": True}, "/market/inflation"),
    "inflation an empty list": ({"market.inflation": []}, "/market/inflation"),
    "inflation list item -1": ({"market.inflation": [0.02, 0.03, -1.0]}, "/market/inflation/2"),
    "stock rate 0": ({"adjustment": {"schedule": "stock", "rate": 0.0}}, "/adjustment/rate"),
    "stock rate above 1": ({"adjustment": {"schedule": "stock", "rate": 1.2}}, "/adjustment/rate"),
    "stock rate negative": ({"adjustment": {"schedule": "stock", "rate": -0.1}}, "/adjustment/rate"),
    "stock half-life 0": ({"adjustment": {"schedule": "stock", "half_life": 0.0}}, "/adjustment/half_life"),
    "stock rate and half-life": (
        {"adjustment": {"schedule": "stock", "rate": 0.2, "half_life": 3.0}},
        "/adjustment/half_life",
    ),
    "depreciation below 0": (
        {"adjustment": {"schedule": "stock", "rate": 0.2, "depreciation": -0.01}},
        "/adjustment/depreciation",
    ),
    "depreciation above 1": (
        {"adjustment": {"schedule": "stock", "rate": 0.2, "depreciation": 1.01}},
        "/adjustment/depreciation",
    ),
    "depreciation on another schedule": (
        {"adjustment": {"schedule": "geometric", "rate": 0.2, "depreciation": 0.01}},
        "/adjustment/depreciation",
    ),
    "stock without rate, short run 0": (
        {"adjustment": {"schedule": "stock"}, "market.supply.short_run_elasticity": 0.0},
        "/adjustment",
    ),
    "stock without rate, short run above long run": (
        {"adjustment": {"schedule": "stock"}, "market.supply.short_run_elasticity": 2.0},
        "/adjustment",
    ),
    "indexed on ad valorem tax": (
        {"policies": _policy({"kind": "ad_valorem_tax", "rate": 0.05, "indexed": True})},
        "/policies/1/indexed",
    ),
    "indexed on quantity cap": (
        {"policies": _policy({"kind": "quantity_cap", "level": 9000, "indexed": True})},
        "/policies/1/indexed",
    ),
    "indexed on none": ({"policies": _policy({"kind": "none", "indexed": False})}, "/policies/1/indexed"),
    "indexed 1": ({"policies": _policy({**CEILING, "indexed": 1})}, "/policies/1/indexed"),
    "indexed 'true'": (
        {"policies": _policy({"kind": "unit_tax", "amount": 5, "indexed": "true"})},
        "/policies/1/indexed",
    ),
    "coverage 0": ({"policies": _policy({**CEILING, "coverage": 0})}, "/policies/1/coverage"),
    "coverage negative": ({"policies": _policy({**CEILING, "coverage": -0.3})}, "/policies/1/coverage"),
    "coverage above 1": ({"policies": _policy({**CEILING, "coverage": 1.01})}, "/policies/1/coverage"),
    "coverage a string": ({"policies": _policy({**CEILING, "coverage": "0.5"})}, "/policies/1/coverage"),
    "coverage on a floor": (
        {"policies": _policy({"kind": "price_floor", "level": 1200, "coverage": 0.5})},
        "/policies/1/coverage",
    ),
    "coverage on a unit tax": (
        {"policies": _policy({"kind": "unit_tax", "amount": 5, "coverage": 0.5})},
        "/policies/1/coverage",
    ),
    "coverage on a quantity cap": (
        {"policies": _policy({"kind": "quantity_cap", "level": 9000, "coverage": 1.0})},
        "/policies/1/coverage",
    ),
    "random rationing with coverage below 1": (
        {"policies": _policy({**CEILING, "coverage": 0.5}), "welfare": {"rationing": "random"}},
        "/policies/1/coverage",
    ),
}


def _bad_request(changes):
    request = scenario([], horizon=5, eta=-1.5)
    for key, value in changes.items():
        target = request
        *parents, last = key.split(".")
        for part in parents:
            target = target[part]
        target[last] = value
    return request


@pytest.mark.parametrize("case", list(BAD))
def test_bad_additions_are_422_at_their_field(client, case):
    changes, pointer = BAD[case]
    response = client.post("/v1/paths", json=_bad_request(changes))
    assert response.status_code == 422, response.get_json()
    problem = response.get_json()
    assert response.mimetype == "application/problem+json"
    assert [e["pointer"] for e in problem["errors"]] == [pointer], problem


@pytest.mark.parametrize(
    "case", ["inflation list item -1", "coverage on a floor", "random rationing with coverage below 1"]
)
def test_in_a_batch_the_pointer_names_the_scenario(client, contract_request, case):
    changes, pointer = BAD[case]
    response = client.post("/v1/paths/batch", json={"scenarios": [contract_request, _bad_request(changes)]})
    assert response.status_code == 200
    first, second = response.get_json()["results"]
    assert first == simulate(contract_request)
    assert second["status"] == 422 and [e["pointer"] for e in second["errors"]] == ["/scenarios/1" + pointer]


def test_the_messages_say_where_the_misplaced_fields_belong(client):
    floor = _bad_request(BAD["coverage on a floor"][0])
    message = client.post("/v1/paths", json=floor).get_json()["errors"][0]["message"]
    assert "'coverage' belongs to a price ceiling" in message
    vat = _bad_request(BAD["indexed on ad valorem tax"][0])
    message = client.post("/v1/paths", json=vat).get_json()["errors"][0]["message"]
    assert "'indexed' belongs to rules with money in them" in message
    random = _bad_request(BAD["random rationing with coverage below 1"][0])
    message = client.post("/v1/paths", json=random).get_json()["errors"][0]["message"]
    assert "efficient rationing" in message
    nerlove = _bad_request(BAD["stock without rate, short run 0"][0])
    message = client.post("/v1/paths", json=nerlove).get_json()["errors"][0]["message"]
    assert "Nerlove" in message and "rate" in message


# --- the demos of the additions answer the worked examples of MODEL.md --------------------------


def _demo(client, name):
    request = client.get(f"/v1/examples/{name}").get_json()
    response = client.post("/v1/paths", json=request)
    assert response.status_code == 200
    body = response.get_json()
    return {p["name"]: p for p in body["paths"]}, {s["name"]: s for s in body["summary"]}


def test_the_essvane_demo_answers_its_worked_example(client):
    """MODEL.md, "Worked examples", Essvane (numbers from running the demo). The checks by
    hand: MODEL.md section 12 (a freeze's real rent P0/I_t) and section 13 (the stock rule, and
    rho = (1-lambda)|eta|/(|eta| + lambda eps_LR) for the gap after the freeze: derived, and true
    here although incomes and households grow, since both paths face the same linear curves)."""
    paths, summary = _demo(client, "essvane-freeze-under-inflation")
    freeze, free = paths["freeze for 5 years"], paths["free market"]
    assert freeze["consumer_price"][1] == pytest.approx(1350 / 1.03) == pytest.approx(1310.68, abs=0.005)
    assert freeze["consumer_price"][5] == pytest.approx(1164.52, abs=0.005)
    assert free["consumer_price"][1] == pytest.approx(1413.45, abs=0.005)
    desired = 72000 * (1 + 1.2 * (1350 / 1.03 / 1350 - 1))
    assert freeze["quantity"][1] == pytest.approx(0.875 * 72000 + 0.125 * desired, rel=1e-12)
    assert round(freeze["quantity"][1]) == 71685 and round(free["quantity"][1]) == 72508
    assert freeze["quantity"][5] == pytest.approx(0.99 * freeze["quantity"][4], rel=1e-15)  # the floor
    assert round(freeze["homes_below_free_path"][5]) == 7764
    assert freeze["consumer_price"][6] == pytest.approx(1841.84, abs=0.005)
    assert freeze["nominal_consumer_price"][6] == pytest.approx(2199.26, abs=0.005)
    assert freeze["rent_above_free_path"][6] == pytest.approx(254.76, abs=0.005)
    gap = freeze["homes_below_free_path"]
    assert [round(gap[t]) for t in (6, 7, 15)] == [4755, 2913, 58]
    rho = 0.875 * 0.35 / (0.35 + 0.125 * 1.2)
    for t in range(7, 16):
        assert gap[t] / gap[t - 1] == pytest.approx(rho, rel=1e-9)
    assert freeze["deadweight_loss"][6:] == [0.0] * 10
    assert summary["freeze for 5 years"]["total_deadweight_loss"] == pytest.approx(42.4e6, abs=0.05e6)
    nominal, indexed = paths["2% nominal cap"], paths["inflation + 1% cap"]
    assert nominal["consumer_price"][15] == pytest.approx(1166.21, abs=0.005)
    assert nominal["nominal_consumer_price"][15] == pytest.approx(1816.92, abs=0.005)
    assert round(nominal["shortage"][15]) == 38350
    assert indexed["consumer_price"][15] == pytest.approx(1560.54, abs=0.005)
    assert round(indexed["shortage"][15]) == 15963
    assert round(summary["inflation + 1% cap"]["total_deadweight_loss"] / 1e6) == 146
    assert round(summary["2% nominal cap"]["total_deadweight_loss"] / 1e6) == 725
    assert round(summary["inflation + 1% cap"]["discounted_deadweight_loss"] / 1e6) == 105
    assert round(summary["2% nominal cap"]["discounted_deadweight_loss"] / 1e6) == 513


def test_the_corrowdale_demo_answers_its_worked_example(client):
    """MODEL.md, "Worked examples", Corrowdale (numbers from
    running the demo): uncontrolled rents above the free rent (Fallis & Smith 1984, AER 74(1)),
    both segments clearing (MODEL.md section 14), and the groups adding up to minus the
    deadweight loss (derived, MODEL.md section 15)."""
    paths, summary = _demo(client, "corrowdale-older-buildings")
    partial, free, full = (
        paths["freeze on older buildings (40%)"],
        paths["free market"],
        paths["freeze on every home"],
    )
    assert free["consumer_price"][12] == pytest.approx(1268.05, abs=0.005)
    assert partial["covered_quantity"][12] == pytest.approx(15400, rel=1e-12)
    assert partial["uncovered_price"][12] == pytest.approx(1337.00, abs=0.005)
    assert partial["uncovered_quantity"][12] == pytest.approx(
        0.6 * 38500 * partial["uncovered_price"][12] / 1090
    )
    assert round(partial["quantity"][12]) == 43735 and round(partial["quantity_demanded"][12]) == 47945
    assert round(partial["shortage"][12]) == 4210 and round(full["shortage"][12]) == 9445
    assert partial["consumer_price"][12] == pytest.approx(1250.02, abs=0.005)
    for t in range(1, 13):  # uncontrolled rents above the free rent in every year
        assert partial["uncovered_price"][t] > free["consumer_price"][t] > partial["covered_price"][t]
    totals = summary["freeze on older buildings (40%)"]["distribution_totals"]
    quoted = {
        "tenants_in_controlled_homes": 299.4,
        "tenants_in_uncontrolled_homes": -174.6,
        "households_priced_out": -2.6,
        "owners_of_controlled_homes": -315.4,
        "owners_of_uncontrolled_homes": 171.3,
        "government": 0.0,
        "households_drawn_in": 0.0,  # MODEL.md 20: a ceiling draws no household in
    }
    assert {g: round(v / 1e6, 1) for g, v in totals.items()} == quoted
    assert round(summary["freeze on older buildings (40%)"]["total_deadweight_loss"] / 1e6, 1) == 21.9
    full_totals = {
        g: round(v / 1e6, 1) for g, v in summary["freeze on every home"]["distribution_totals"].items()
    }
    assert (full_totals["tenants_in_controlled_homes"], full_totals["owners_of_controlled_homes"]) == (
        748.5,
        -788.5,
    )
    assert full_totals["households_priced_out"] == -92.8
    assert round(summary["freeze on every home"]["total_deadweight_loss"] / 1e6, 1) == 132.8
