"""The engine against published formulas (sources in tests/catalogue.py)."""

from __future__ import annotations

import copy

import numpy as np
import numpy_financial as npf
import pytest

from service import simulate

from ..catalogue import (
    REDUCED_FORM_CASES,
    harberger_dwl,
    incidence_consumer_share,
    nerlove_half_life,
    nerlove_share_closed,
)


def market(eta=-0.5, eps=1.0, form="linear", k=1, p0=100.0, q0=1000.0, demand=None, supply=None):
    return {
        "price": p0,
        "quantity": q0,
        "payments_per_period": k,
        "form": form,
        "demand": {"price_elasticity": eta, "shifters": demand or {"income": 1.0}},
        "supply": {"short_run_elasticity": eps, "long_run_elasticity": eps, "shifters": supply or {}},
    }


def one_policy(policy, **kw):
    return {"market": market(**kw), "horizon": 3, "policies": [{"name": "free", "kind": "none"}, policy]}


@pytest.mark.parametrize(("eta", "eps", "eta_x", "eps_x", "price", "quantity"), REDUCED_FORM_CASES)
def test_reduced_form_matches_the_displacement_formula(eta, eps, eta_x, eps_x, price, quantity):
    body = simulate(
        {
            "market": market(eta=eta, eps=eps, demand={"x": eta_x}, supply={"x": eps_x}),
            "horizon": 1,
            "policies": [{"name": "free", "kind": "none"}],
        }
    )
    rf = body["reduced_form"]["x"]
    assert rf["short_run"]["price"] == pytest.approx(price, rel=1e-12, abs=1e-15)
    assert rf["short_run"]["quantity"] == pytest.approx(quantity, rel=1e-12, abs=1e-15)


@pytest.mark.parametrize(("eta", "eps", "eta_x", "eps_x", "price", "quantity"), REDUCED_FORM_CASES)
def test_linear_equilibrium_moves_by_the_reduced_form_exactly(eta, eps, eta_x, eps_x, price, quantity):
    change = 0.04
    body = simulate(
        {
            "market": market(eta=eta, eps=eps, demand={"x": eta_x}, supply={"x": eps_x}),
            "shocks": [{"shifter": "x", "profile": "step", "change": change}],
            "horizon": 1,
            "policies": [{"name": "free", "kind": "none"}],
        }
    )
    path = body["paths"][0]
    assert path["consumer_price"][1] / 100.0 - 1.0 == pytest.approx(price * change, rel=1e-10, abs=1e-14)
    assert path["quantity"][1] / 1000.0 - 1.0 == pytest.approx(quantity * change, rel=1e-10, abs=1e-14)


@pytest.mark.parametrize(("eps", "eta"), [(1.0, -0.5), (0.2, -1.5), (2.5, -0.3), (0.0, -0.8)])
def test_consumers_bear_eps_over_eps_minus_eta_of_a_small_tax(eps, eta):
    """Fullerton & Metcalf (2002): exact for linear curves."""
    tau = 0.5
    body = simulate(one_policy({"name": "tax", "kind": "unit_tax", "amount": tau}, eta=eta, eps=eps))
    rise = body["paths"][1]["consumer_price"][1] - body["paths"][0]["consumer_price"][1]
    assert rise / tau == pytest.approx(incidence_consumer_share(eps, eta), rel=1e-10, abs=1e-12)


@pytest.mark.parametrize("k", [1, 12])
@pytest.mark.parametrize(("eps", "eta", "tau"), [(1.0, -0.5, 2.0), (0.3, -1.2, 5.0), (2.0, -0.4, 0.5)])
def test_small_tax_deadweight_loss_is_harbergers_triangle(eps, eta, tau, k):
    """Harberger (1964): exact for linear curves; money scaled by k payments per period."""
    body = simulate(one_policy({"name": "tax", "kind": "unit_tax", "amount": tau}, eta=eta, eps=eps, k=k))
    dwl = body["paths"][1]["deadweight_loss"][1]
    assert dwl == pytest.approx(k * harberger_dwl(tau, 100.0, 1000.0, eps, eta), rel=1e-9)


def test_constant_elasticity_tax_loss_approaches_harberger_for_small_taxes():
    """Harberger (1964) is the second-order approximation: the relative error falls with tau."""
    errors = []
    for tau in (1.0, 0.5, 0.25):
        body = simulate(
            one_policy(
                {"name": "tax", "kind": "unit_tax", "amount": tau},
                eta=-0.7,
                eps=0.9,
                form="constant_elasticity",
            )
        )
        exact = body["paths"][1]["deadweight_loss"][1]
        errors.append(abs(exact / harberger_dwl(tau, 100.0, 1000.0, 0.9, -0.7) - 1.0))
    assert errors[0] > errors[1] > errors[2]
    assert errors[2] < 2e-3


def supply_path(sr: float, lr: float, adjustment: dict, horizon: int) -> list[float]:
    """eps_t for t = 0..horizon of a free market with the given schedule."""
    body = simulate(
        {
            "market": {**market(), "supply": {"short_run_elasticity": sr, "long_run_elasticity": lr}},
            "adjustment": adjustment,
            "horizon": horizon,
            "policies": [{"name": "free", "kind": "none"}],
        }
    )
    return body["supply_elasticity"]


@pytest.mark.parametrize("rate", [0.1, 0.25, 0.5, 0.9])
def test_geometric_schedule_closes_nerloves_share_of_the_gap(rate):
    sr, lr = 0.2, 1.4
    eps = supply_path(sr, lr, {"schedule": "geometric", "rate": rate}, 12)
    for t in range(0, 12):
        # Period 1 is the impact period: after t more periods the share closed is Nerlove's.
        assert (eps[t + 1] - sr) / (lr - sr) == pytest.approx(
            nerlove_share_closed(rate, t), rel=1e-12, abs=1e-15
        )


@pytest.mark.parametrize("half_life", [1.0, 2.0, 3.0, 5.0])
def test_half_life_schedule_is_half_way_at_period_one_plus_h(half_life):
    sr, lr = 0.1, 2.1
    eps = supply_path(sr, lr, {"schedule": "geometric", "half_life": half_life}, 10)[1 + int(half_life)]
    assert (eps - sr) / (lr - sr) == pytest.approx(0.5, rel=1e-12)
    rate = 1.0 - 0.5 ** (1.0 / half_life)
    assert nerlove_half_life(rate) == pytest.approx(half_life, rel=1e-12)


def test_nerlove_default_rate_is_short_over_long_run():
    """Nerlove (1958): short-run elasticity = lambda x long-run elasticity."""
    sr, lr = 0.3, 1.5
    eps = supply_path(sr, lr, {"schedule": "geometric"}, 4)
    lam = sr / lr
    assert eps[2] == pytest.approx(sr + (lr - sr) * lam, rel=1e-12)


@pytest.mark.parametrize("rate", [0.0, 0.02, 0.035, 0.07])
def test_discounted_loss_equals_numpy_financial_npv(rate, contract_request):
    request = copy.deepcopy(contract_request)
    request["welfare"]["discount_rate"] = rate
    body = simulate(request)
    for path in body["paths"]:
        dwl = path["deadweight_loss"]
        assert path["discounted_deadweight_loss"][-1] == pytest.approx(
            npf.npv(rate, dwl), rel=1e-12, abs=1e-6
        )
        assert path["cumulative_deadweight_loss"] == pytest.approx(np.cumsum(dwl).tolist(), rel=1e-12)


def test_step_discount_schedule_equals_npv_of_each_segment(contract_request):
    request = copy.deepcopy(contract_request)
    request["welfare"]["discount_rate"] = [
        {"through_period": 4, "rate": 0.035},
        {"through_period": 9, "rate": 0.03},
        {"through_period": 10, "rate": 0.025},
    ]
    body = simulate(request)
    path = body["paths"][1]
    dwl = np.array(path["deadweight_loss"])
    rates = np.array([0.0] + [0.035] * 4 + [0.03] * 5 + [0.025] * 3)  # the last step holds past 10
    factors = np.cumprod(1.0 / (1.0 + rates))
    assert path["discounted_deadweight_loss"][-1] == pytest.approx(float((dwl * factors).sum()), rel=1e-12)
    # The first segment is an ordinary npv at 3.5 %.
    assert path["discounted_deadweight_loss"][4] == pytest.approx(npf.npv(0.035, dwl[:5]), rel=1e-12)
