"""service/schemas/uncertainty.py: a distribution is checked against its elasticity's sign rule
and loads to the engine's Distribution with its parameters by name."""

from __future__ import annotations

import pytest

from service import ProblemError, bands
from service.engine.uncertainty import Distribution
from service.schemas.uncertainty import BandsRequestSchema

from ..engine.test_uncertainty import request


def test_a_distribution_outside_its_sign_rule_points_at_the_field():
    r = request()
    r["market"]["demand"]["price_elasticity"] = {"distribution": "uniform", "low": -0.5, "high": 0.2}
    with pytest.raises(ProblemError) as info:
        bands(r)
    assert info.value.problem["errors"][0]["pointer"] == "/market/demand/price_elasticity/high"


def test_distributions_load_with_their_parameters_by_name():
    r = request()
    r["market"]["demand"]["price_elasticity"] = {"distribution": "normal", "mean": -0.5, "sd": 0.1}
    r["market"]["supply"]["shifters"]["cost"] = {
        "distribution": "triangular",
        "low": -0.8,
        "mode": -0.4,
        "high": 0,
    }
    loaded = BandsRequestSchema().load(r)
    assert [i.pointer for i in loaded.inputs] == [
        "/market/demand/price_elasticity",
        "/market/supply/shifters/cost",
    ]
    normal, triangular = (i.distribution for i in loaded.inputs)
    assert normal == Distribution("normal", mean=-0.5, sd=0.1, lower=-100.0, upper=0.0, upper_open=True)
    assert triangular.parameters == {"low": -0.8, "mode": -0.4, "high": 0.0}
    assert loaded.scenario.market.demand_elasticity == -0.5  # the central scenario
    assert loaded.scenario.market.supply_shifters["cost"] == -0.4


def _stock(**adjustment):
    r = request()
    r["adjustment"] = {"schedule": "stock", **adjustment}
    return r


def _pointers(r) -> list[str]:
    with pytest.raises(ProblemError) as info:
        bands(r)
    assert info.value.problem["status"] == 422
    return [e["pointer"] for e in info.value.problem["errors"]]


def test_inflation_rate_and_depreciation_load_as_uncertain_inputs_in_draw_order():
    r = _stock(
        rate={"distribution": "uniform", "low": 0.1, "high": 0.5},
        depreciation={"distribution": "triangular", "low": 0.0, "mode": 0.02, "high": 0.1},
    )
    r["market"]["inflation"] = {"distribution": "normal", "mean": 0.02, "sd": 0.01}
    r["market"]["demand"]["price_elasticity"] = {"distribution": "normal", "mean": -0.5, "sd": 0.1}
    loaded = BandsRequestSchema().load(r)
    assert [(i.target, i.pointer) for i in loaded.inputs] == [
        ("demand_elasticity", "/market/demand/price_elasticity"),
        ("inflation", "/market/inflation"),
        ("schedule_rate", "/adjustment/rate"),
        ("depreciation", "/adjustment/depreciation"),
    ]
    inflation = loaded.inputs[1].distribution
    assert (inflation.lower, inflation.upper, inflation.lower_open) == (-1.0, 10.0, True)
    rate = loaded.inputs[2].distribution
    assert (rate.lower, rate.upper, rate.lower_open, rate.upper_open) == (0.0, 1.0, True, False)
    depreciation = loaded.inputs[3].distribution
    assert (depreciation.lower, depreciation.upper, depreciation.lower_open) == (0.0, 1.0, False)
    scenario = loaded.scenario  # the central scenario: mean, midpoint, mode
    assert scenario.market.inflation == 0.02
    assert (scenario.adjustment.rate, scenario.adjustment.depreciation) == (0.3, 0.02)
    assert type(scenario.adjustment).__name__ == "Adjustment"


def test_a_geometric_rate_may_be_uncertain_too():
    r = request()
    r["adjustment"] = {"schedule": "geometric", "rate": {"distribution": "uniform", "low": 0.2, "high": 0.6}}
    loaded = BandsRequestSchema().load(r)
    assert [(i.target, i.pointer) for i in loaded.inputs] == [("schedule_rate", "/adjustment/rate")]
    assert loaded.scenario.adjustment.rate == pytest.approx(0.4)


@pytest.mark.parametrize(
    ("edit", "pointer"),
    [
        (
            lambda r: r["market"].update(inflation={"distribution": "uniform", "low": -1.0, "high": 0.1}),
            "/market/inflation/low",
        ),
        (
            lambda r: r["market"].update(inflation={"distribution": "normal", "mean": -1.2, "sd": 0.1}),
            "/market/inflation/mean",
        ),
        (
            lambda r: r["market"].update(
                inflation=[0.02, {"distribution": "normal", "mean": 0.0, "sd": 0.1}]
            ),
            "/market/inflation/1",
        ),
        (
            lambda r: r.update(
                adjustment={"schedule": "stock", "rate": {"distribution": "uniform", "low": 0.0, "high": 0.5}}
            ),
            "/adjustment/rate/low",
        ),
        (
            lambda r: r.update(
                adjustment={
                    "schedule": "stock",
                    "rate": {"distribution": "triangular", "low": 0.5, "mode": 0.9, "high": 1.2},
                }
            ),
            "/adjustment/rate/high",
        ),
        (
            lambda r: r.update(
                adjustment={
                    "schedule": "stock",
                    "depreciation": {"distribution": "normal", "mean": -0.1, "sd": 0.1},
                }
            ),
            "/adjustment/depreciation/mean",
        ),
        (
            lambda r: r.update(
                adjustment={
                    "schedule": "stock",
                    "depreciation": {"distribution": "uniform", "low": 0.5, "high": 0.2},
                }
            ),
            "/adjustment/depreciation/high",
        ),
        (
            lambda r: r.update(
                adjustment={
                    "schedule": "stock",
                    "half_life": 3,
                    "rate": {"distribution": "uniform", "low": 0.1, "high": 0.2},
                }
            ),
            "/adjustment/half_life",
        ),
        (
            lambda r: r.update(
                adjustment={
                    "schedule": "linear",
                    "periods": 4,
                    "rate": {"distribution": "uniform", "low": 0.1, "high": 0.2},
                }
            ),
            "/adjustment/rate",
        ),
        (
            lambda r: r.update(
                adjustment={
                    "schedule": "geometric",
                    "depreciation": {"distribution": "uniform", "low": 0.1, "high": 0.2},
                }
            ),
            "/adjustment/depreciation",
        ),
    ],
    ids=[
        "inflation-at-minus-one",
        "inflation-mean-below-minus-one",
        "inflation-list-holds-numbers-only",
        "rate-at-zero",
        "rate-above-one",
        "depreciation-mean-negative",
        "depreciation-high-below-low",
        "rate-and-half-life",
        "rate-on-a-linear-schedule",
        "depreciation-on-a-geometric-schedule",
    ],
)
def test_uncertain_additions_outside_their_ranges_point_at_the_field(edit, pointer):
    r = request()
    edit(r)
    assert pointer in _pointers(r)


def test_distributions_without_an_open_lower_bound_keep_their_answer_ids():
    """Distribution gained lower_open with the additions; at its default it is left out of the
    canonical form, so ids of requests that existed before are unchanged."""
    from service.simulation import _canonical

    d = Distribution("normal", mean=-0.5, sd=0.1, lower=-100.0, upper=0.0, upper_open=True)
    assert "lower_open" not in _canonical(d)
    assert _canonical(Distribution("uniform", low=0.1, high=0.2, lower=0.0, lower_open=True))["lower_open"]
