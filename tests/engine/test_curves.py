"""service/engine/curves.py: curve integrals in closed form against scipy.integrate.quad,
including the hard corners."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

from service.engine.curves import ConstantElasticityCurves, LinearCurves


def curves(cls, eta, eps, d=0.0, s=0.0):
    a = lambda x: np.array([[x]], dtype=float)  # noqa: E731
    return cls(a(100.0), a(1000.0), a(eta), a(eps), a(d), a(s))


@pytest.mark.parametrize("eta", [-0.3, -0.999999, -1.0, -1.000001, -2.5])
@pytest.mark.parametrize(("lower", "upper"), [(600.0, 1000.0), (1000.0, 1300.0), (1200.0, 700.0)])
def test_constant_elasticity_demand_integral_equals_quadrature(eta, lower, upper):
    c = curves(ConstantElasticityCurves, eta, 0.5, d=0.05)
    exact = quad(lambda q: float(c.inverse_demand(np.array([[q]]))[0, 0]), lower, upper, epsrel=1e-12)[0]
    assert c.demand_integral(np.array([[lower]]), np.array([[upper]]))[0, 0] == pytest.approx(
        exact, rel=1e-10
    )


@pytest.mark.parametrize("eps", [0.02, 0.3, 1.0, 4.0])
def test_constant_elasticity_supply_integral_equals_quadrature(eps):
    c = curves(ConstantElasticityCurves, -0.5, eps, s=-0.03)
    lower, upper = 900.0, 1000.0
    exact = quad(lambda q: float(c.inverse_supply(np.array([[q]]))[0, 0]), lower, upper, epsrel=1e-12)[0]
    assert c.supply_integral(np.array([[lower]]), np.array([[upper]]))[0, 0] == pytest.approx(
        exact, rel=1e-10
    )


def test_linear_supply_integral_floors_marginal_cost_at_zero():
    """Units that would be offered at a negative price are offered at zero (curves.py docstring)."""
    c = curves(LinearCurves, -0.5, 0.5, s=0.2)  # zero-price quantity Q0 (1 + 0.2 - 0.5) = 700
    lower, upper = 300.0, 1000.0
    exact = quad(lambda q: float(c.inverse_supply(np.array([[q]]))[0, 0]), lower, upper, points=[700.0])[0]
    assert c.inverse_supply(np.array([[500.0]]))[0, 0] == 0.0
    assert c.supply_integral(np.array([[lower]]), np.array([[upper]]))[0, 0] == pytest.approx(
        exact, rel=1e-12
    )


def test_vertical_supply_has_zero_marginal_cost_below_capacity():
    for cls in (LinearCurves, ConstantElasticityCurves):
        c = curves(cls, -0.5, 0.0)
        assert c.inverse_supply(np.array([[900.0]]))[0, 0] == 0.0
        assert c.supply_integral(np.array([[800.0]]), np.array([[1000.0]]))[0, 0] == 0.0
        assert c.quantity_supplied(np.array([[50.0, 500.0]])).tolist() == [[1000.0, 1000.0]]


def test_curves_pass_through_the_base_point_when_nothing_shifts():
    for cls in (LinearCurves, ConstantElasticityCurves):
        c = curves(cls, -0.7, 1.3)
        p0 = np.array([[100.0]])
        assert c.quantity_demanded(p0)[0, 0] == pytest.approx(1000.0, rel=1e-15)
        assert c.quantity_supplied(p0)[0, 0] == pytest.approx(1000.0, rel=1e-15)
        assert c.inverse_demand(np.array([[1000.0]]))[0, 0] == pytest.approx(100.0, rel=1e-15)


def test_linear_demand_is_truncated_at_zero_quantity():
    c = curves(LinearCurves, -0.5, 1.0)
    assert c.quantity_demanded(np.array([[300.0, 500.0]])).tolist() == [[0.0, 0.0]]
