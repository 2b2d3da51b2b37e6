"""Welfare (MODEL.md section 6; stated in service/engine/welfare.py, computed by the kernel's
`_welfare`): surplus changes, deadweight loss, misallocation and discounting, through the public
API, against Harberger's triangle, Glaeser & Luttmer's misallocation, numpy_financial and the
facts every market obeys (sources in tests/catalogue.py)."""

from __future__ import annotations

import copy

import numpy as np
import numpy_financial as npf
import pytest
from hypothesis import given

from service import ProblemError, simulate
from service.examples import example_request

from ..catalogue import harberger_dwl
from ..strategies import requests
from .builders import one_policy, solved


@pytest.mark.parametrize("k", [1, 12])
@pytest.mark.parametrize(("eps", "eta", "tau"), [(1.0, -0.5, 2.0), (0.3, -1.2, 5.0), (2.0, -0.4, 0.5)])
def test_small_tax_deadweight_loss_is_harbergers_triangle(eps, eta, tau, k):
    body = simulate(one_policy({"name": "tax", "kind": "unit_tax", "amount": tau}, eta=eta, eps=eps, k=k))
    dwl = body["paths"][1]["deadweight_loss"][1]
    # Harberger (1964), "Taxation, Resource Allocation, and Welfare": 1/2 tau^2 (Q0/P0) eps|eta|/(eps+|eta|).
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
    # Harberger (1964) is the second-order approximation: its relative error falls with tau.
    assert errors[0] > errors[1] > errors[2]
    assert errors[2] < 2e-3


@pytest.mark.parametrize("rate", [0.0, 0.02, 0.035, 0.07])
def test_discounted_loss_equals_numpy_financial_npv(rate, contract_request):
    request = copy.deepcopy(contract_request)
    request["welfare"]["discount_rate"] = rate
    body = simulate(request)
    for path in body["paths"]:
        dwl = path["deadweight_loss"]
        # numpy_financial.npv, the reference library for present values.
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
    # The first segment is an ordinary present value at 3.5 %: numpy_financial.npv.
    assert path["discounted_deadweight_loss"][4] == pytest.approx(npf.npv(0.035, dwl[:5]), rel=1e-12)


@given(requests())
def test_deadweight_loss_is_never_negative_and_misallocation_is_glaeser_luttmers(request):
    """DWL = int_Q^Q* (Qd^-1 - Qs^-1) dq >= 0 (derived: demand lies above supply between Q and Q*),
    as the kernel reports it (a negative value beyond rounding is not clamped away). Random
    rationing of a binding ceiling adds Glaeser & Luttmer's (2003, AER 93(4)) misallocation
    M = k Q (MV - Pc) / m, checked here against the answer's own series (m = 2 for linear demand,
    1 + 1/eta for constant elasticity): the kernel floors M at 0, so its sign is checked through
    MV >= Pc (a ceiling's buyers value the last home at least at the rent), not through M."""
    body = solved(request)
    market = request["market"]
    k = market.get("payments_per_period", 1)
    eta = market["demand"]["price_elasticity"]
    random = request["welfare"]["rationing"] == "random"
    # Random rationing is offered under constant elasticity only for eta < -1 (finite M).
    m = 1.0 + 1.0 / eta if random and market.get("form") == "constant_elasticity" else 2.0
    for path in body["paths"]:
        assert min(path["deadweight_loss"]) >= 0.0
        assert np.all(np.diff(path["cumulative_deadweight_loss"]) >= 0.0)
        q, mv, pc = (np.array(path[key]) for key in ("quantity", "marginal_value", "consumer_price"))
        rationed = np.array(path["binding"]) & (path["kind"] == "price_ceiling") & random
        assert np.all(mv[rationed] >= pc[rationed] * (1 - 1e-12))
        expected = np.where(rationed, k * q * (mv - pc) / m, 0.0)
        tolerance = {"rel": 1e-9, "abs": 1e-12 * k * q.max()}
        assert path["misallocation_loss"] == pytest.approx(expected.tolist(), **tolerance)


@given(requests())
def test_surplus_changes_revenue_and_loss_add_to_zero(request):
    body = solved(request)
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


def test_a_discount_rate_whose_factors_overflow_is_refused_at_the_rate(contract_request):
    # 1 / 0.01^t passes 1e308 after about 154 periods: a discounted loss would be infinite (null
    # in JSON), and the problem is the rate, not the policy that happens to carry the loss.
    request = copy.deepcopy(contract_request)
    request["horizon"] = 600
    request["welfare"] = {**(request.get("welfare") or {}), "discount_rate": -0.99}
    with pytest.raises(ProblemError) as refused:
        simulate(request)
    assert [e["pointer"] for e in refused.value.problem["errors"]] == ["/welfare/discount_rate"]
    request["horizon"] = 100  # 100^100 = 1e200: within range, an answer
    assert all(np.isfinite(s["discounted_deadweight_loss"]) for s in simulate(request)["summary"])


@pytest.mark.parametrize(
    ("form", "eta"), [("constant_elasticity", -1e-7), ("constant_elasticity", -1e-300), ("linear", -1e-300)]
)
def test_demand_near_vertical_is_named_when_the_value_of_missing_homes_overflows(form, eta):
    """Derived: under a binding freeze households' value of the q-th home, Qd^-1(q), grows as
    (Q*/q)^(1/|eta|) (constant elasticity) or with 1/|eta| (linear), past 1e308 for such an
    elasticity. The problem points at the elasticity the caller typed, not at the policy; an
    elasticity of -0.002 still has an answer in both forms."""
    request = example_request("quillbrook-rent-freeze")
    request["market"]["form"] = form
    request["market"]["demand"]["price_elasticity"] = eta
    with pytest.raises(ProblemError) as refused:
        simulate(request)
    errors = refused.value.problem["errors"]
    assert [e["pointer"] for e in errors] == ["/market/demand/price_elasticity"]
    assert f"a price elasticity of {eta:g}" in errors[0]["message"]
    request["market"]["demand"]["price_elasticity"] = -0.002
    assert all(np.isfinite(s["discounted_deadweight_loss"]) for s in simulate(request)["summary"])
