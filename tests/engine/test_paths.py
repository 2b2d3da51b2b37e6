"""service/engine/paths.py: the period-by-period pass over every policy of every scenario:
the base point, the two curve forms to first order, batches, finite numbers."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from service import ProblemError, simulate, simulate_many
from service.examples import example_request
from service.problems import is_problem

from ..strategies import requests
from .builders import solved


@given(requests())
def test_period_zero_is_the_base_point(request):
    body = solved(request)
    p0, q0 = request["market"]["price"], request["market"]["quantity"]
    assert body["periods"][0] == 0
    assert body["supply_elasticity"][0] == request["market"]["supply"]["short_run_elasticity"]
    for path in body["paths"]:
        assert path["consumer_price"][0] == path["producer_price"][0] == p0
        assert path["quantity"][0] == q0
        assert path["binding"][0] is False
        assert path["deadweight_loss"][0] == path["consumer_surplus_change"][0] == 0.0


@pytest.mark.parametrize("kind", ["unit_tax", "price_ceiling", "quantity_cap", "none"])
def test_linear_and_constant_elasticity_agree_to_first_order_as_the_shock_vanishes(kind):
    """The linear form is the first-order expansion of the constant-elasticity one: gap ~ shock^2."""
    policy = {
        "unit_tax": {"name": "p", "kind": "unit_tax", "amount": None},
        "price_ceiling": {"name": "p", "kind": "price_ceiling", "level": "base"},
        "quantity_cap": {"name": "p", "kind": "quantity_cap", "level": 1000.0},
        "none": {"name": "p", "kind": "none"},
    }[kind]
    gaps = []
    for change in (0.08, 0.04, 0.02):
        if kind == "unit_tax":
            policy["amount"] = 12.5 * change  # the tax is a perturbation too: shrink it alike
        bodies = {}
        for form in ("linear", "constant_elasticity"):
            bodies[form] = simulate(
                {
                    "market": {
                        "price": 100.0,
                        "quantity": 1000.0,
                        "form": form,
                        "demand": {"price_elasticity": -0.6, "shifters": {"income": 1.0}},
                        "supply": {"short_run_elasticity": 0.8, "long_run_elasticity": 0.8},
                    },
                    "shocks": [{"shifter": "income", "profile": "step", "change": change}],
                    "horizon": 1,
                    "policies": [policy],
                }
            )
        lin, ce = (bodies[f]["paths"][0] for f in ("linear", "constant_elasticity"))
        gaps.append(
            max(
                abs(lin["consumer_price"][1] - ce["consumer_price"][1]) / 100.0,
                abs(lin["quantity"][1] - ce["quantity"][1]) / 1000.0,
                abs(lin["shortage"][1] - ce["shortage"][1]) / 1000.0,
                abs(lin["deadweight_loss"][1] - ce["deadweight_loss"][1]) / 100_000.0,
            )
        )
    # Halving the shock divides the gap by about four or more (second order), never by only two.
    assert gaps[0] > 0.0
    assert gaps[1] <= gaps[0] / 3.5
    assert gaps[2] <= gaps[1] / 3.5


@given(st.lists(requests(), min_size=2, max_size=5))
def test_a_batch_equals_its_scenarios_one_at_a_time(batch):
    together = simulate_many(batch)
    for request, body in zip(batch, together, strict=True):
        try:
            alone = simulate(request)
        except ProblemError as error:
            assert body == error.problem
            assert is_problem(body)  # a problem is told from an answer by its type
            continue
        assert not is_problem(body)
        for key in alone:
            assert body[key] == alone[key], key


@given(requests())
def test_every_number_is_finite(request):
    body = solved(request)
    for path in body["paths"]:
        for name, values in path.items():
            if name == "distribution" and values is not None:
                for group, series in values.items():
                    assert np.all(np.isfinite(series)), group
            elif name not in ("name", "kind", "binding", "distribution"):
                assert np.all(np.isfinite(values)), name


def test_a_batch_problem_keeps_its_type_and_its_callers_id():
    """A refused scenario in a batch is a Problem (its `id` first), an answer is not."""
    good = {"id": "kept", **example_request("vellmar-bay-transfer-tax")}
    bad = {"id": "refused", **example_request("vellmar-bay-transfer-tax")}
    bad["market"] = {**bad["market"], "price": -1.0}
    answer, refused = simulate_many([good, bad], prefix="/scenarios/{i}")
    assert not is_problem(answer) and answer["id"] == "kept"
    assert is_problem(refused) and refused["id"] == "refused" and refused["status"] == 422
    assert refused["errors"][0]["pointer"] == "/scenarios/1/market/price"
