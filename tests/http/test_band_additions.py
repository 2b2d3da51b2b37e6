"""Bands and sensitivity carry what MODEL.md sections 13 and 15 add: the homes below the free
path under the stock schedule, and the totals of who gains and who loses."""

from __future__ import annotations

import copy

import pytest

from service import bands, sensitivity
from service.examples import example_request

from ..engine.additions import GROUPS


@pytest.fixture
def stock_request():
    request = copy.deepcopy(example_request("quillbrook-uncertain-elasticities"))
    request["draws"] = 400
    request["adjustment"] = {"schedule": "stock", "half_life": 3, "depreciation": 0.02}
    request["market"]["inflation"] = 0.03
    return request


def test_the_free_market_has_no_homes_below_its_own_path_in_any_draw(stock_request):
    body = bands(stock_request)
    free = next(b for b in body["bands"] if b["kind"] == "none")
    for values in free["series"]["homes_below_free_path"].values():
        assert values == [0.0] * len(values)
    for value in free["summary"]["peak_homes_below_free_path"].values():
        assert value == 0.0


def test_a_binding_ceiling_leaves_homes_missing_in_every_percentile(stock_request):
    body = bands(stock_request)
    for band, summary in zip(body["bands"], body["central"]["summary"], strict=True):
        if band["kind"] == "price_ceiling" and summary["binding_periods"] > 0:
            assert min(band["summary"]["peak_homes_below_free_path"].values()) > 0.0


def test_degenerate_inputs_give_the_central_groups_totals_at_every_percentile(stock_request):
    # With every distribution collapsed to a point each draw is the central scenario, so every
    # percentile of a group's total is the central answer's total (float64 summary figures).
    request = copy.deepcopy(stock_request)
    request["market"]["demand"]["price_elasticity"] = {"distribution": "normal", "mean": -0.4, "sd": 0.0}
    request["market"]["demand"]["shifters"]["income"] = 0.8
    request["market"]["supply"]["short_run_elasticity"] = 0.08
    request["market"]["supply"]["long_run_elasticity"] = 0.8
    body = bands(request)
    for band, summary in zip(body["bands"], body["central"]["summary"], strict=True):
        for group in GROUPS:
            for value in band["summary"]["total_" + group].values():
                assert value == pytest.approx(summary["distribution_totals"][group], rel=1e-12, abs=1e-6)


def test_random_rationing_bands_no_groups(stock_request):
    request = copy.deepcopy(stock_request)
    request["welfare"] = {"rationing": "random"}
    body = bands(request)
    assert all(not any(k.startswith("total_tenants") for k in b["summary"]) for b in body["bands"])


def test_sensitivity_ranks_the_groups_and_the_missing_homes_too(stock_request):
    request = {k: v for k, v in stock_request.items() if k not in ("draws", "seed", "percentiles")}
    body = sensitivity(request)
    assert {"total_" + g for g in GROUPS} <= set(body["headlines"])
    assert "peak_homes_below_free_path" in body["headlines"]
    for entry in body["inputs"]:
        assert set(entry["largest_swing"]) == set(body["headlines"])


def test_inflation_rate_and_depreciation_may_be_uncertain_and_swing_the_answer(stock_request):
    request = {k: v for k, v in stock_request.items() if k not in ("draws", "seed", "percentiles")}
    request["market"]["inflation"] = {"distribution": "uniform", "low": 0.0, "high": 0.06}
    request["adjustment"] = {
        "schedule": "stock",
        "rate": {"distribution": "triangular", "low": 0.05, "mode": 0.1, "high": 0.3},
        "depreciation": {"distribution": "normal", "mean": 0.02, "sd": 0.01},
    }
    body = sensitivity(request)
    pointers = {entry["pointer"] for entry in body["inputs"]}
    assert {"/market/inflation", "/adjustment/rate", "/adjustment/depreciation"} <= pointers
    by_pointer = {entry["pointer"]: entry for entry in body["inputs"]}
    # A freeze under higher inflation loses more of its real value: its swing is not zero.
    assert by_pointer["/market/inflation"]["largest_swing"]["peak_homes_below_free_path"] > 0.0


def test_a_point_distribution_of_inflation_gives_the_paths_of_that_inflation(stock_request):
    from service import simulate

    request = copy.deepcopy(stock_request)
    request["market"]["demand"]["price_elasticity"] = -0.4
    request["market"]["demand"]["shifters"]["income"] = 0.8
    request["market"]["supply"]["long_run_elasticity"] = 1.5
    request["market"]["inflation"] = {"distribution": "normal", "mean": 0.04, "sd": 0.0}
    request["draws"] = 3
    body = bands(request)
    plain = copy.deepcopy(request)
    plain["market"]["inflation"] = 0.04
    for key in ("draws", "seed", "percentiles"):
        plain.pop(key, None)
    answer = simulate(plain)
    for band, path in zip(body["bands"], answer["paths"], strict=True):
        for values in band["series"]["quantity"].values():
            assert values == pytest.approx(path["quantity"], rel=1e-6)  # bands are float32


@pytest.mark.parametrize(
    ("where", "value", "pointer"),
    [
        ("inflation", {"distribution": "uniform", "low": -1.0, "high": 0.02}, "/market/inflation/low"),
        ("rate", {"distribution": "uniform", "low": 0.0, "high": 0.5}, "/adjustment/rate/low"),
        (
            "depreciation",
            {"distribution": "uniform", "low": 0.5, "high": 1.5},
            "/adjustment/depreciation/high",
        ),
    ],
)
def test_uncertain_additions_keep_their_ranges(client, stock_request, where, value, pointer):
    request = copy.deepcopy(stock_request)
    if where == "inflation":
        request["market"]["inflation"] = value
    else:
        request["adjustment"][where] = value
    response = client.post("/v1/bands", json=request)
    assert response.status_code == 422
    assert pointer in [e["pointer"] for e in response.get_json()["errors"]]
