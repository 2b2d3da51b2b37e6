"""service/engine/reduced_form.py: equilibrium elasticities per shifter against the published
displacement formula (cases and sources in tests/catalogue.py)."""

from __future__ import annotations

import pytest

from service import simulate

from ..catalogue import REDUCED_FORM_CASES
from .builders import market


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
    # Muth (1964); Gardner (1987); Alston, Norton & Pardey (1995), Science Under Scarcity, ch. 4-5.
    assert rf["short_run"]["price"] == pytest.approx(price, rel=1e-12, abs=1e-15)
    # Same sources: d ln Q* / d ln x = (eps eta_x - eta eps_x) / (eps - eta).
    assert rf["short_run"]["quantity"] == pytest.approx(quantity, rel=1e-12, abs=1e-15)
