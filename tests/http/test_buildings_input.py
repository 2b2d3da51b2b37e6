"""Requests with the fields of MODEL.md sections 16-18 (API.md "Second additions"): each
misplaced or out-of-range field is a 422 at its own JSON Pointer whose message says where the
field belongs, the defaults written out are the same scenario (same id, same answer), and the
uncertain versions of these fields keep the same rules in /v1/bands and /v1/sensitivity."""

from __future__ import annotations

import copy
import re

import pytest

from service import simulate
from service.schemas.compiled import Rejected, compile_loader
from service.schemas.paths import PathsRequestSchema

from ..engine.additions import scenario

FAST = compile_loader(PathsRequestSchema())
STOCK = {"schedule": "stock", "half_life": 3.0, "depreciation": 0.01}
FREEZE = {"name": "freeze", "kind": "price_ceiling", "level": "base"}
CAP = {"name": "cap", "kind": "price_ceiling", "growth": 0.02}


def _request(policy=None, adjustment=None, welfare=None):
    return scenario(
        [policy or FREEZE], horizon=6, adjustment=adjustment or dict(STOCK), welfare=welfare, eta=-1.5
    )


def _stock(**fields):
    return {**STOCK, **fields}


#: case -> (request, the one pointer of its 422, words its message must carry)
BAD = {
    "new_homes without stock": (
        _request({**FREEZE, "new_homes": "exempt"}, {"schedule": "geometric", "rate": 0.3}),
        "/policies/1/new_homes",
        "stock schedule",
    ),
    "new_homes covered without stock": (
        _request({**FREEZE, "new_homes": "covered"}, {"schedule": "linear", "periods": 3}),
        "/policies/1/new_homes",
        "no homes are built",
    ),
    "new_homes an unknown word": (
        _request({**FREEZE, "new_homes": "new"}),
        "/policies/1/new_homes",
        "covered",
    ),
    "new_homes on a floor": (
        _request({"name": "floor", "kind": "price_floor", "level": 900, "new_homes": "exempt"}),
        "/policies/1/new_homes",
        "'new_homes' belongs to a price ceiling under the stock schedule",
    ),
    "new_homes on a subsidy": (
        _request({"name": "voucher", "kind": "unit_subsidy", "amount": 50, "new_homes": "covered"}),
        "/policies/1/new_homes",
        "'new_homes' belongs to a price ceiling",
    ),
    "conversion on a geometric schedule": (
        _request(adjustment={"schedule": "geometric", "rate": 0.3, "conversion": 0.03}),
        "/adjustment/conversion",
        "belong to the stock schedule",
    ),
    "conversion on a linear schedule": (
        _request(adjustment={"schedule": "linear", "periods": 3, "conversion": 0}),
        "/adjustment/conversion",
        "stock schedule",
    ),
    "conversion below 0": (_request(adjustment=_stock(conversion=-0.01)), "/adjustment/conversion", ""),
    "conversion a string": (_request(adjustment=_stock(conversion="0.03")), "/adjustment/conversion", ""),
    "build_limit 0": (_request(adjustment=_stock(build_limit=0)), "/adjustment/build_limit", ""),
    "build_limit negative": (_request(adjustment=_stock(build_limit=-0.02)), "/adjustment/build_limit", ""),
    "build_limit on an explicit schedule": (
        _request(adjustment={"schedule": "explicit", "elasticities": [0.3, 1.0], "build_limit": 0.02}),
        "/adjustment/build_limit",
        "belong to the stock schedule",
    ),
    "vacancy_decontrol 0": (_request({**CAP, "vacancy_decontrol": 0}), "/policies/1/vacancy_decontrol", ""),
    "vacancy_decontrol above 1": (
        _request({**CAP, "vacancy_decontrol": 1.2}),
        "/policies/1/vacancy_decontrol",
        "",
    ),
    "vacancy_decontrol negative": (
        _request({**CAP, "vacancy_decontrol": -0.1}),
        "/policies/1/vacancy_decontrol",
        "",
    ),
    "vacancy_decontrol on a freeze": (
        _request({**FREEZE, "vacancy_decontrol": 0.1}),
        "/policies/1/vacancy_decontrol",
        "'vacancy_decontrol' belongs to a growth cap",
    ),
    "vacancy_decontrol on a fixed level": (
        _request({"name": "c", "kind": "price_ceiling", "level": 1000.0, "vacancy_decontrol": 0.1}),
        "/policies/1/vacancy_decontrol",
        "growth cap",
    ),
    "vacancy_decontrol on a unit tax": (
        _request({"name": "levy", "kind": "unit_tax", "amount": 20, "vacancy_decontrol": 0.1}),
        "/policies/1/vacancy_decontrol",
        "'vacancy_decontrol' belongs to a growth cap",
    ),
    "random rationing with exempt new homes": (
        _request({**FREEZE, "new_homes": "exempt"}, welfare={"rationing": "random"}),
        "/policies/1/new_homes",
        "efficient rationing",
    ),
    "random rationing with vacancy decontrol": (
        _request({**CAP, "vacancy_decontrol": 0.1}, welfare={"rationing": "random"}),
        "/policies/1/vacancy_decontrol",
        "efficient rationing",
    ),
}


@pytest.mark.parametrize("case", list(BAD))
def test_each_misplaced_or_out_of_range_field_is_a_422_at_its_pointer(client, case):
    request, pointer, words = BAD[case]
    response = client.post("/v1/paths", json=request)
    assert response.status_code == 422, response.get_json()
    assert response.mimetype == "application/problem+json"
    errors = response.get_json()["errors"]
    assert [e["pointer"] for e in errors] == [pointer], errors
    assert words in errors[0]["message"]


@pytest.mark.parametrize(
    "case", ["new_homes without stock", "vacancy_decontrol on a freeze", "build_limit 0"]
)
def test_in_a_batch_the_pointer_names_the_scenario(client, contract_request, case):
    request, pointer, _ = BAD[case]
    response = client.post("/v1/paths/batch", json={"scenarios": [contract_request, request]})
    assert response.status_code == 200
    first, second = response.get_json()["results"]
    assert "status" not in first
    assert second["status"] == 422 and [e["pointer"] for e in second["errors"]] == ["/scenarios/1" + pointer]


@pytest.mark.parametrize("case", list(BAD))
def test_the_fast_loader_refuses_each_of_them_too(case):
    """schemas/compiled.py runs the same checks, the one that reads the request as sent
    (new_homes without a stock) included, and leaves the error document to marshmallow."""
    request = BAD[case][0]
    with pytest.raises(Rejected):
        FAST(copy.deepcopy(request))


def test_the_fast_loader_loads_the_fields_as_marshmallow_does():
    request = _request({**CAP, "new_homes": "exempt", "vacancy_decontrol": 0.25})
    request["adjustment"] = _stock(build_limit=0.02, conversion=0.03)
    assert FAST(copy.deepcopy(request)) == PathsRequestSchema().load(request)
    written = _request({**FREEZE, "new_homes": "covered"})
    assert FAST(copy.deepcopy(written)) == PathsRequestSchema().load(written)


def test_covered_new_homes_under_random_rationing_are_allowed():
    """Only exempt new homes split the market; "covered" is the whole-market ceiling of today."""
    request = _request({**FREEZE, "new_homes": "covered"}, welfare={"rationing": "random"})
    assert PathsRequestSchema().load(request).policies[1].new_homes == "covered"


def test_the_fields_load_into_the_engine_scenario():
    request = _request({**CAP, "new_homes": "exempt", "vacancy_decontrol": 0.25, "coverage": 0.6})
    request["adjustment"] = _stock(build_limit=0.02, conversion=0.03)
    loaded = PathsRequestSchema().load(request)
    assert (loaded.adjustment.build_limit, loaded.adjustment.conversion) == (0.02, 0.03)
    cap = loaded.policies[1]
    assert (cap.new_homes, cap.vacancy_decontrol, cap.coverage) == ("exempt", 0.25, 0.6)
    bare = PathsRequestSchema().load(_request(CAP))
    assert (bare.adjustment.build_limit, bare.adjustment.conversion) == (None, 0.0)
    assert (bare.policies[1].new_homes, bare.policies[1].vacancy_decontrol) == ("covered", 0.0)


def test_vacancy_decontrol_of_one_is_allowed_on_a_growth_cap_under_any_schedule():
    for adjustment in (dict(STOCK), {"schedule": "geometric", "rate": 0.3}):
        loaded = PathsRequestSchema().load(_request({**CAP, "vacancy_decontrol": 1}, adjustment))
        assert loaded.policies[1].vacancy_decontrol == 1.0


# --- defaults written out are the same scenario ------------------------------------------------


def test_defaults_written_out_give_the_same_scenario_id_and_answer(client):
    """DEVELOPERS.md, "Adding an optional field without changing scenario ids": a request with
    "new_homes": "covered" and "conversion": 0 is the request without them, ETag included."""
    plain = _request(CAP)
    written = copy.deepcopy(plain)
    written["policies"][1]["new_homes"] = "covered"
    written["adjustment"]["conversion"] = 0
    assert simulate(written) == simulate(plain)
    first = client.post("/v1/paths", json=plain)
    again = client.post("/v1/paths", json=written, headers={"If-None-Match": first.headers["ETag"]})
    assert again.status_code == 304 and again.headers["ETag"] == first.headers["ETag"]


@pytest.mark.parametrize(
    "change",
    [
        lambda r: r["policies"][1].update(new_homes="exempt"),
        lambda r: r["policies"][1].update(vacancy_decontrol=0.2),
        lambda r: r["adjustment"].update(conversion=0.03),
        lambda r: r["adjustment"].update(build_limit=0.02),
    ],
)
def test_any_other_value_is_another_scenario(client, change):
    plain = _request(CAP)
    changed = copy.deepcopy(plain)
    change(changed)
    first = client.post("/v1/paths", json=plain).headers["ETag"]
    assert client.post("/v1/paths", json=changed).headers["ETag"] != first


# --- uncertain conversion and vacancy decontrol ------------------------------------------------


def _uncertain(request, endpoint="/v1/bands"):
    request = copy.deepcopy(request)
    if endpoint == "/v1/bands":
        request.update(draws=50, seed=7)
    return request


@pytest.mark.parametrize(
    ("where", "value", "pointer"),
    [
        ("conversion", {"distribution": "uniform", "low": -0.01, "high": 0.05}, "/adjustment/conversion/low"),
        ("conversion", {"distribution": "normal", "mean": -0.01, "sd": 0.01}, "/adjustment/conversion/mean"),
        (
            "vacancy_decontrol",
            {"distribution": "uniform", "low": 0.0, "high": 0.3},
            "/policies/1/vacancy_decontrol/low",
        ),
        (
            "vacancy_decontrol",
            {"distribution": "triangular", "low": 0.1, "mode": 0.2, "high": 1.5},
            "/policies/1/vacancy_decontrol/high",
        ),
    ],
)
@pytest.mark.parametrize("endpoint", ["/v1/bands", "/v1/sensitivity"])
def test_uncertain_conversion_and_decontrol_keep_their_ranges(client, endpoint, where, value, pointer):
    request = _uncertain(_request(CAP), endpoint)
    if where == "conversion":
        request["adjustment"]["conversion"] = value
    else:
        request["policies"][1]["vacancy_decontrol"] = value
    response = client.post(endpoint, json=request)
    assert response.status_code == 422, response.get_json()
    assert [e["pointer"] for e in response.get_json()["errors"]] == [pointer]


@pytest.mark.parametrize("endpoint", ["/v1/bands", "/v1/sensitivity"])
def test_an_uncertain_decontrol_on_a_freeze_is_still_misplaced(client, endpoint):
    request = _uncertain(
        _request({**FREEZE, "vacancy_decontrol": {"distribution": "normal", "mean": 0.2, "sd": 0.05}}),
        endpoint,
    )
    response = client.post(endpoint, json=request)
    assert response.status_code == 422
    errors = response.get_json()["errors"]
    assert [e["pointer"] for e in errors] == ["/policies/1/vacancy_decontrol"]
    assert "growth cap" in errors[0]["message"]


@pytest.mark.parametrize("endpoint", ["/v1/bands", "/v1/sensitivity"])
@pytest.mark.parametrize("given", [{"rate": 0.3}, {"half_life": 3.0}])
def test_an_uncertain_short_run_elasticity_that_would_change_nothing_is_a_422(client, endpoint, given):
    """MODEL.md 20: under `stock` with a rate or half-life the impact elasticity is lambda eps_LR."""
    request = _uncertain(_request(CAP, {"schedule": "stock", **given}), endpoint)
    request["market"]["supply"]["short_run_elasticity"] = {"distribution": "uniform", "low": 0.1, "high": 0.3}
    response = client.post(endpoint, json=request)
    assert response.status_code == 422, response.get_json()
    errors = response.get_json()["errors"]
    assert [e["pointer"] for e in errors] == ["/market/supply/short_run_elasticity"]
    assert "would change nothing" in errors[0]["message"]


@pytest.mark.parametrize(
    "adjustment",
    [{"schedule": "stock"}, {"schedule": "geometric", "rate": 0.3}, {"schedule": "linear", "periods": 2}],
)
def test_an_uncertain_short_run_elasticity_is_allowed_where_it_is_used(adjustment):
    from service.schemas.uncertainty import BandsRequestSchema

    request = _uncertain(_request(CAP, adjustment))
    request["market"]["supply"]["short_run_elasticity"] = {"distribution": "uniform", "low": 0.1, "high": 0.3}
    loaded = BandsRequestSchema().load(request)
    assert [i.pointer for i in loaded.inputs] == ["/market/supply/short_run_elasticity"]


def test_uncertain_conversion_and_decontrol_are_inputs_at_their_pointers_with_central_values():
    from service.schemas.uncertainty import BandsRequestSchema

    request = _uncertain(
        _request({**CAP, "vacancy_decontrol": {"distribution": "uniform", "low": 0.1, "high": 0.3}})
    )
    request["policies"].append({**CAP, "name": "plain cap"})
    request["adjustment"]["conversion"] = {
        "distribution": "triangular",
        "low": 0.0,
        "mode": 0.03,
        "high": 0.06,
    }
    loaded = BandsRequestSchema().load(request)
    assert [(i.target, i.pointer) for i in loaded.inputs] == [
        ("conversion", "/adjustment/conversion"),
        (("vacancy_decontrol", 1), "/policies/1/vacancy_decontrol"),
    ]
    assert loaded.scenario.adjustment.conversion == 0.03
    assert loaded.scenario.policies[1].vacancy_decontrol == pytest.approx(0.2)
    assert loaded.scenario.policies[2].vacancy_decontrol == 0.0


# --- what bands and sensitivity report with these inputs (MODEL.md 19-20) ----------------------------


def _point(value):
    """A distribution collapsed to one value: every draw is the central scenario."""
    return {"distribution": "normal", "mean": value, "sd": 0.0}


def _tollbrae():
    from service.examples import example_request

    return example_request("tollbrae-decontrol-and-exempt-building")


def test_point_draws_of_conversion_and_decontrol_give_the_paths_answer_in_every_percentile():
    """Each draw carries its own kappa and tau into the kernel: with point distributions every
    percentile is the central /v1/paths answer (bands keep float32 series)."""
    from service import bands

    request = _tollbrae()
    request["adjustment"]["conversion"] = _point(0.02)
    request["policies"][2]["vacancy_decontrol"] = _point(0.1)
    body = bands(dict(request, draws=40, seed=1))
    answer = simulate(_tollbrae())
    # The central answer is the /v1/paths answer (its own request is at the top of the bands answer).
    assert body["central"] == {k: v for k, v in answer.items() if k != "request"}
    for band, path, summary in zip(body["bands"], answer["paths"], answer["summary"], strict=True):
        for name, by_q in band["series"].items():
            for values in by_q.values():
                assert values == pytest.approx(path[name], rel=1e-6, abs=1e-3), (band["name"], name)
        totals = summary["vs_free_path_totals"]
        for key, value in totals.items():
            for q in band["summary"]["vs_free_path_" + key].values():
                assert q == pytest.approx(value, rel=1e-12, abs=1e-6), (band["name"], key)
        for key in ("final_vacant_homes", "total_converted_homes"):
            for q in band["summary"][key].values():
                assert q == pytest.approx(summary[key], rel=1e-12, abs=1e-6), (band["name"], key)


def test_a_drawn_vacancy_decontrol_moves_only_its_own_cap():
    from service import bands

    request = _tollbrae()
    request["policies"][2]["vacancy_decontrol"] = {"distribution": "uniform", "low": 0.05, "high": 0.6}
    body = bands(dict(request, draws=200, seed=5, percentiles=[5, 95]))
    strict, decontrolled = body["bands"][1], body["bands"][2]
    assert (
        strict["summary"]["discounted_deadweight_loss"]["5"]
        == strict["summary"]["discounted_deadweight_loss"]["95"]
    )
    low, high = (decontrolled["summary"]["final_consumer_price"][q] for q in ("5", "95"))
    assert abs(high - low) > 1e-6 * abs(high)  # the share of rents reset differs between draws


def test_sensitivity_ranks_renters_against_the_free_path_and_swings_conversion():
    from service import sensitivity

    request = _tollbrae()
    request["adjustment"]["conversion"] = {"distribution": "uniform", "low": 0.0, "high": 0.06}
    body = sensitivity(request)
    assert "vs_free_path_renters_discounted" in body["headlines"]
    (entry,) = body["inputs"]
    assert entry["pointer"] == "/adjustment/conversion"
    strict = next(p for p in entry["policies"] if p["name"] == "strict 2% cap on every home")
    assert strict["swing"]["final_homes_below_free_path"] > 0.0  # converted homes are missing homes


@pytest.mark.parametrize(
    ("adjustment", "coupled"),
    [
        ({"schedule": "stock", "depreciation": 0.01}, True),
        ({"schedule": "geometric"}, True),
        ({"schedule": "stock", "rate": 0.12}, False),
        ({"schedule": "geometric", "half_life": 5.0}, False),
    ],
)
def test_the_coupling_caution_appears_under_the_default_rate_with_an_uncertain_long_run(adjustment, coupled):
    from service import bands, sensitivity

    request = _tollbrae()
    request["adjustment"] = adjustment
    request["policies"] = request["policies"][:2]
    request["market"]["supply"]["long_run_elasticity"] = {"distribution": "uniform", "low": 0.8, "high": 1.2}
    for body in (bands(dict(request, draws=20, seed=2)), sensitivity(request)):
        assert any("speed of building" in c for c in body["cautions"]) == coupled
        for caution in body["cautions"]:  # plain words for a council reader: no field names
            assert not re.search(r"\b[a-z]+_[a-z_]+\b|adjustment\.", caution), caution
    request["market"]["supply"]["long_run_elasticity"] = 1.0
    request["market"]["demand"]["price_elasticity"] = {"distribution": "uniform", "low": -0.5, "high": -0.3}
    assert not any("speed of building" in c for c in sensitivity(request)["cautions"])


def test_the_tollbrae_demo_tells_its_story(client):
    """The demo of MODEL.md 16-18: under vacancy decontrol the controlled rent is a mix of capped
    and market rents, never above the market rent, and nobody queues (MODEL.md 17); conversion
    starts in the rule's second period (MODEL.md 18); exempting new homes leaves fewer homes
    missing than a strict cap on every home (derived: all building stays at the market rent)."""
    request = client.get("/v1/examples/tollbrae-decontrol-and-exempt-building").get_json()
    body = client.post("/v1/paths", json=request).get_json()
    paths = {p["name"]: p for p in body["paths"]}
    totals = {s["name"]: s for s in body["summary"]}
    strict, mixed = "strict 2% cap on every home", "2% cap, new homes exempt, rents reset between tenants"
    cap = paths[mixed]
    assert all(c <= u for c, u in zip(cap["covered_price"], cap["uncovered_price"], strict=True))
    assert cap["covered_price"][15] < cap["uncovered_price"][15]  # the cap still binds at the horizon
    assert cap["shortage"] == [0.0] * 16
    assert "covered_price" not in paths[strict]
    for name in (strict, mixed):
        assert paths[name]["converted_homes"][:2] == [0.0, 0.0]
        assert totals[name]["total_converted_homes"] > 0.0
    assert totals[strict]["final_homes_below_free_path"] > totals[mixed]["final_homes_below_free_path"]
    assert totals[strict]["peak_shortage"] > 0.0


@pytest.mark.parametrize("endpoint", ["/v1/bands", "/v1/sensitivity"])
def test_uncertain_conversion_and_decontrol_answer_over_http_as_documented(client, endpoint):
    """The `client` fixture validates each answer against the OpenAPI document."""
    request = _uncertain(_tollbrae(), endpoint)
    request["adjustment"]["conversion"] = {"distribution": "uniform", "low": 0.0, "high": 0.04}
    request["policies"][2]["vacancy_decontrol"] = {
        "distribution": "triangular",
        "low": 0.05,
        "mode": 0.1,
        "high": 0.2,
    }
    response = client.post(endpoint, json=request)
    assert response.status_code == 200, response.get_json()
    body = response.get_json()
    pointers = [
        i["pointer"] for i in (body["uncertain_inputs"] if endpoint == "/v1/bands" else body["inputs"])
    ]
    assert sorted(pointers) == ["/adjustment/conversion", "/policies/2/vacancy_decontrol"]
    if endpoint == "/v1/bands":
        assert "total_converted_homes" in body["bands"][1]["summary"]
        assert "vs_free_path_renters_after_end" in body["bands"][1]["summary"]
