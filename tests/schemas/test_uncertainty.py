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
