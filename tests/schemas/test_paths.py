"""service/schemas/paths.py: invalid fields and cross-field rules of a /v1/paths request get a
422 whose errors point at each field; defaults and whole numbers load as documented."""

from __future__ import annotations

import copy

import pytest

from service import simulate

from ..engine.builders import pointers, problem_of, validation_base


@pytest.mark.parametrize(
    ("change", "pointer"),
    [
        (lambda r: r["market"]["demand"].update(price_elasticity=0.2), "/market/demand/price_elasticity"),
        (lambda r: r["market"]["demand"].update(price_elasticity=0), "/market/demand/price_elasticity"),
        (
            lambda r: r["market"]["supply"].update(short_run_elasticity=-0.1),
            "/market/supply/short_run_elasticity",
        ),
        (lambda r: r["market"].update(price=0), "/market/price"),
        (lambda r: r["market"].update(quantity=-5), "/market/quantity"),
        (lambda r: r["market"].update(price=True), "/market/price"),
        (lambda r: r["market"].update(price="100"), "/market/price"),
        (lambda r: r.update(horizon=12.5), "/horizon"),
        (lambda r: r.update(horizon=601), "/horizon"),
        (lambda r: r.update(horizon=True), "/horizon"),
        (lambda r: r.pop("adjustment"), "/adjustment"),
        (
            lambda r: r.update(adjustment={"schedule": "geometric", "rate": 0.2, "half_life": 2}),
            "/adjustment/half_life",
        ),
        (lambda r: r.update(policies=[]), "/policies"),
        (lambda r: r["policies"].append({"name": "free", "kind": "none"}), "/policies/1/name"),
        (
            lambda r: r["policies"].append({"name": "t", "kind": "unit_tax", "amount": -1}),
            "/policies/1/amount",
        ),
        (
            lambda r: r["policies"].append({"name": "v", "kind": "ad_valorem_tax", "rate": 1.0}),
            "/policies/1/rate",
        ),
        (lambda r: r["policies"].append({"name": "c", "kind": "price_ceiling"}), "/policies/1/level"),
        (lambda r: r["policies"].append({"name": "f", "kind": "price_floor"}), "/policies/1/level"),
        (
            lambda r: r["policies"].append({"name": "e", "kind": "none", "start": 4, "end": 2}),
            "/policies/1/end",
        ),
        (lambda r: r["policies"].append({"name": "x", "kind": "rent_board"}), "/policies/1/kind"),
        (
            lambda r: r.update(shocks=[{"shifter": "weather", "profile": "step", "change": 0.1}]),
            "/shocks/0/shifter",
        ),
        (
            lambda r: r.update(shocks=[{"shifter": "income", "profile": "step", "change": -1.0}]),
            "/shocks/0/change",
        ),
        (
            lambda r: r.update(shocks=[{"shifter": "income", "profile": "path", "values": []}]),
            "/shocks/0/values",
        ),
        (
            lambda r: r.update(
                shocks=[{"shifter": "income", "profile": "ramp", "change": 0.1, "periods": 0}]
            ),
            "/shocks/0/periods",
        ),
        (lambda r: r.update(colour="blue"), "/colour"),
        (
            lambda r: r.update(
                welfare={
                    "discount_rate": [
                        {"through_period": 5, "rate": 0.03},
                        {"through_period": 5, "rate": 0.02},
                    ]
                }
            ),
            "/welfare/discount_rate/1/through_period",
        ),
        (lambda r: r.update(welfare={"rationing": "lottery"}), "/welfare/rationing"),
    ],
)
def test_invalid_fields_point_at_themselves(change, pointer):
    request = validation_base()
    change(request)
    assert pointer in pointers(problem_of(request))


def test_nerlove_default_needs_short_run_below_long_run():
    request = validation_base()
    request["market"]["supply"] = {"short_run_elasticity": 1.2, "long_run_elasticity": 0.6}
    request["adjustment"] = {"schedule": "geometric"}
    assert pointers(problem_of(request)) == ["/adjustment"]


def test_equal_elasticities_need_no_adjustment():
    request = validation_base()
    request["market"]["supply"].update(short_run_elasticity=0.7, long_run_elasticity=0.7)
    request.pop("adjustment")
    assert simulate(request)["supply_elasticity"] == [0.7] * 6


def test_integers_may_be_written_with_a_zero_fraction():
    request = validation_base()
    request["horizon"] = 5.0
    request["adjustment"]["periods"] = 3.0
    assert simulate(request)["periods"] == [0, 1, 2, 3, 4, 5]


def test_the_callers_request_is_not_modified():
    request = validation_base()
    before = copy.deepcopy(request)
    simulate(request)
    assert request == before


def test_a_request_without_welfare_is_the_request_with_empty_welfare_and_shares_one_frozen_default():
    from service.engine import Welfare
    from service.simulation import load_scenario, scenario_id

    request = validation_base()
    request.pop("welfare", None)
    left_out, also_left_out = load_scenario(request), load_scenario(copy.deepcopy(request))
    empty = load_scenario({**request, "welfare": {}})
    assert left_out.welfare == empty.welfare == Welfare()  # efficient rationing, no discounting
    assert scenario_id(left_out) == scenario_id(empty)
    # One frozen value for every request that leaves welfare out, not a schema built per request.
    assert left_out.welfare is also_left_out.welfare


def test_a_number_out_of_range_is_told_in_plain_words_and_numbers():
    """An analyst reads 'Must be above 0 and at most 1,000,000,000,000.', not marshmallow's
    'greater than 0.0 and less than or equal to 1000000000000.0' (a helper's trial of the page)."""
    from service import ProblemError, simulate
    from service.examples import example_request

    request = example_request("quillbrook-rent-freeze")
    request["market"]["price"] = -5
    request["horizon"] = 5000
    with pytest.raises(ProblemError) as refused:
        simulate(request)
    messages = {e["pointer"]: e["message"] for e in refused.value.problem["errors"]}
    assert messages == {
        "/market/price": "Must be above 0 and at most 1,000,000,000,000.",
        "/horizon": "Must be at least 1 and at most 600.",
    }
