"""service/engine/kernel.py, clearing through simulate: the free market and a tax wedge,
against published closed forms (sources in tests/catalogue.py)."""

from __future__ import annotations

import pytest

from service import simulate

from ..catalogue import REDUCED_FORM_CASES, incidence_consumer_share
from .builders import market, one_policy


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
    # Muth (1964); Gardner (1987); Alston, Norton & Pardey (1995), ch. 4-5: dP/P0 = price x change.
    assert path["consumer_price"][1] / 100.0 - 1.0 == pytest.approx(price * change, rel=1e-10, abs=1e-14)
    # Same sources: dQ/Q0 = quantity x change.
    assert path["quantity"][1] / 1000.0 - 1.0 == pytest.approx(quantity * change, rel=1e-10, abs=1e-14)


@pytest.mark.parametrize(("eps", "eta"), [(1.0, -0.5), (0.2, -1.5), (2.5, -0.3), (0.0, -0.8)])
def test_consumers_bear_eps_over_eps_minus_eta_of_a_small_tax(eps, eta):
    tau = 0.5
    body = simulate(one_policy({"name": "tax", "kind": "unit_tax", "amount": tau}, eta=eta, eps=eps))
    rise = body["paths"][1]["consumer_price"][1] - body["paths"][0]["consumer_price"][1]
    # Fullerton & Metcalf (2002), "Tax Incidence", Handbook of Public Economics vol. 4: eps / (eps - eta).
    assert rise / tau == pytest.approx(incidence_consumer_share(eps, eta), rel=1e-10, abs=1e-12)
