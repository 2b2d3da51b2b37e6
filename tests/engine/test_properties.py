"""Facts that must hold in every market (hypothesis over valid requests)."""

from __future__ import annotations

import copy

import numpy as np
import pytest
from hypothesis import assume, given
from hypothesis import strategies as st

from service import ProblemError, simulate, simulate_many

from ..strategies import floats, requests


def solve(request):
    try:
        return simulate(request)
    except ProblemError:
        assume(False)


@given(requests())
def test_deadweight_loss_is_never_negative(request):
    body = solve(request)
    for path in body["paths"]:
        assert min(path["deadweight_loss"]) >= 0.0
        assert min(path["misallocation_loss"]) >= 0.0
        assert np.all(np.diff(path["cumulative_deadweight_loss"]) >= 0.0)


@given(requests())
def test_surplus_changes_revenue_and_loss_add_to_zero(request):
    body = solve(request)
    m = request["market"]
    scale = m["price"] * m["quantity"] * m.get("payments_per_period", 1)
    for path in body["paths"]:
        total = (
            np.array(path["consumer_surplus_change"])
            + path["producer_surplus_change"]
            + np.array(path["government_revenue"])
            + path["deadweight_loss"]
        )
        assert np.abs(total).max() <= 1e-9 * scale


@given(requests())
def test_a_policy_that_never_binds_equals_the_free_market_exactly(request):
    body = solve(request)
    free = body["paths"][0]
    for path in body["paths"][1:]:
        if not any(path["binding"]):
            for name, values in path.items():
                if name not in ("name", "kind"):
                    assert values == free[name], (path["name"], name)


@given(requests(), floats(1.5, 5.0))
def test_a_ceiling_above_every_free_market_price_is_the_free_market(request, factor):
    body = solve(request)
    highest = max(body["paths"][0]["consumer_price"])
    request = copy.deepcopy(request)
    request["policies"] = [
        {"name": "free", "kind": "none"},
        {"name": "loose", "kind": "price_ceiling", "level": highest * factor},
    ]
    body = simulate(request)
    free, loose = body["paths"]
    assert not any(loose["binding"])
    assert {k: v for k, v in loose.items() if k not in ("name", "kind")} == {
        k: v for k, v in free.items() if k not in ("name", "kind")
    }


@given(requests(form="linear"), floats(0.85, 1.0), floats(0.0, 0.1))
def test_a_tighter_ceiling_never_lowers_the_shortage(request, level, tighter):
    request = copy.deepcopy(request)
    p0 = request["market"]["price"]
    request["policies"] = [
        {"name": "looser", "kind": "price_ceiling", "level": p0 * level},
        {"name": "tighter", "kind": "price_ceiling", "level": p0 * level * (1.0 - tighter)},
    ]
    body = solve(request)
    looser, tight = body["paths"]
    assert all(
        t >= s - 1e-9 * request["market"]["quantity"]
        for t, s in zip(tight["shortage"], looser["shortage"], strict=True)
    )


@given(requests())
def test_period_zero_is_the_base_point(request):
    body = solve(request)
    p0, q0 = request["market"]["price"], request["market"]["quantity"]
    assert body["periods"][0] == 0
    assert body["supply_elasticity"][0] == request["market"]["supply"]["short_run_elasticity"]
    for path in body["paths"]:
        assert path["consumer_price"][0] == path["producer_price"][0] == p0
        assert path["quantity"][0] == q0
        assert path["binding"][0] is False
        assert path["deadweight_loss"][0] == path["consumer_surplus_change"][0] == 0.0


@given(st.integers(0, 10), floats(0.0, 1.0), floats(0.1, 3.0), st.integers(12, 30))
def test_linear_schedule_starts_at_short_run_and_ends_at_long_run(k, sr, lr, horizon):
    body = simulate(
        {
            "market": {
                "price": 100.0,
                "quantity": 1000.0,
                "demand": {"price_elasticity": -0.5},
                "supply": {"short_run_elasticity": sr, "long_run_elasticity": lr},
            },
            "adjustment": {"schedule": "linear", "periods": k},
            "horizon": horizon,
            "policies": [{"name": "free", "kind": "none"}],
        }
    )
    eps = body["supply_elasticity"]
    assert eps[0] == sr
    assert eps[1] == (sr if k > 0 else lr)
    assert eps[-1] == pytest.approx(lr, rel=1e-15)
    assert eps[k + 1] == pytest.approx(lr, rel=1e-15)
    steps = np.diff(eps[1:])
    assert np.all(steps >= -1e-15) if lr >= sr else np.all(steps <= 1e-15)


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
            continue
        for key in alone:
            assert body[key] == alone[key], key


@given(requests())
def test_every_number_is_finite(request):
    body = solve(request)
    for path in body["paths"]:
        for name, values in path.items():
            if name not in ("name", "kind", "binding"):
                assert np.all(np.isfinite(values)), name
