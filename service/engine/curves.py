"""Demand and supply curves of each period, in two forms.

With base point (P0, Q0), demand elasticity eta < 0, period-t supply elasticity eps_t >= 0,
and the period's shifts (D, S for the linear form; ln A, ln B for constant elasticity):

    linear                Qd(P) = Q0 [1 + eta (P-P0)/P0 + D]    Qs(P) = Q0 [1 + eps_t (P-P0)/P0 + S]
    constant_elasticity   Qd(P) = Q0 (P/P0)^eta A               Qs(P) = Q0 (P/P0)^eps_t B

Linear quantities are truncated at zero and the linear inverse supply price is floored at
zero. Vertical supply (eps_t = 0) has inverse 0 below its capacity. The welfare integrals
int_a^b P(q) dq are in closed form: trapezoids for straight lines; for a power law
P(q) ∝ q^(m-1) with m = 1 + 1/elasticity, (b P(b) - a P(a)) / m, evaluated through
expm1 so that it stays exact as m -> 0 (unit-elastic demand) and never overflows.

The linear form is the first-order equilibrium displacement model (Muth 1964; Gardner 1987;
Alston, Norton & Pardey 1995, *Science Under Scarcity*, ch. 4-5); the constant-elasticity form
is its exact log-linear counterpart, whose surplus areas are those of Harberger (1964) to second
order.

Every array is (rows, periods): base values and eta (rows, 1), the rest (rows, periods);
a curve of one row per scenario or per policy row alike.
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

__all__ = ["ConstantElasticityCurves", "Curves", "LinearCurves"]


@dataclass(frozen=True)
class Curves:
    """The period curves of many rows; subclasses give the functional form."""

    base_price: np.ndarray  # (rows, 1), P0 > 0
    base_quantity: np.ndarray  # (rows, 1), Q0 > 0
    demand_elasticity: np.ndarray  # (rows, 1), eta < 0
    supply_elasticity: np.ndarray  # (rows, periods), eps_t >= 0
    demand_shift: np.ndarray  # (rows, periods): D, or ln A
    supply_shift: np.ndarray  # (rows, periods): S, or ln B

    def take(self, rows: np.ndarray) -> Curves:
        """The same curves for a subset (or repetition) of rows."""
        return type(self)(*(getattr(self, f.name)[rows] for f in fields(self)))

    def period(self, t: int) -> Curves:
        """The curves of period t only, keeping two dimensions: (rows, 1)."""
        col = slice(t, t + 1)
        return type(self)(
            self.base_price,
            self.base_quantity,
            self.demand_elasticity,
            self.supply_elasticity[:, col],
            self.demand_shift[:, col],
            self.supply_shift[:, col],
        )

    @property
    def vertical(self) -> np.ndarray:
        """True where supply is vertical (eps_t = 0)."""
        return self.supply_elasticity <= 0.0

    def _safe_supply_elasticity(self) -> np.ndarray:
        return np.where(self.vertical, 1.0, self.supply_elasticity)


class LinearCurves(Curves):
    """The first-order displacement model: straight lines through the shifted base point."""

    def quantity_demanded(self, price):
        rel = (price - self.base_price) / self.base_price
        return self.base_quantity * np.maximum(1.0 + self.demand_elasticity * rel + self.demand_shift, 0.0)

    def quantity_supplied(self, price):
        rel = (price - self.base_price) / self.base_price
        return self.base_quantity * np.maximum(1.0 + self.supply_elasticity * rel + self.supply_shift, 0.0)

    def inverse_demand(self, quantity):
        excess = quantity / self.base_quantity - 1.0 - self.demand_shift
        return self.base_price * (1.0 + excess / self.demand_elasticity)

    def _supply_line(self, quantity):
        excess = quantity / self.base_quantity - 1.0 - self.supply_shift
        return self.base_price * (1.0 + excess / self._safe_supply_elasticity())

    def inverse_supply(self, quantity):
        """Marginal cost of the quantity-th unit; 0 where the line is negative or eps_t = 0."""
        return np.where(self.vertical, 0.0, np.maximum(self._supply_line(quantity), 0.0))

    def demand_integral(self, lower, upper):
        """int_lower^upper Qd^-1(q) dq (signed: negative when lower > upper)."""
        return (upper - lower) * 0.5 * (self.inverse_demand(lower) + self.inverse_demand(upper))

    def supply_integral(self, lower, upper):
        """int_lower^upper Qs^-1(q) dq with the inverse floored at zero (signed)."""
        zero_price_quantity = self.base_quantity * (1.0 + self.supply_shift - self.supply_elasticity)
        lo = np.maximum(lower, zero_price_quantity)
        hi = np.maximum(upper, zero_price_quantity)
        area = (hi - lo) * 0.5 * (self._supply_line(lo) + self._supply_line(hi))
        return np.where(self.vertical, 0.0, area)

    def misallocation_divisor(self):
        """m in M = Q (Qd^-1(Q) - c) / m; 2 for a straight line."""
        return np.full_like(self.demand_elasticity, 2.0)


def _expm1_over(y):
    """expm1(y) / y, equal to 1 at y = 0; accurate for every y <= 0."""
    safe = np.where(y == 0.0, 1.0, y)
    return np.where(y == 0.0, 1.0, np.expm1(safe) / safe)


def _power_law_integral(lower, price_lower, upper, price_upper, m):
    """int_lower^upper P(q) dq for P(q) ∝ q^(m-1), from P at both ends (signed).

    Uses (b P(b) - a P(a)) / m written from the end that keeps the exponent <= 0.
    """
    log_ratio = np.log(lower / upper)
    z = m * log_ratio
    from_upper = z <= 0.0
    phi = _expm1_over(np.where(from_upper, z, -z))
    return np.where(
        from_upper,
        -upper * price_upper * log_ratio * phi,
        -lower * price_lower * log_ratio * phi,
    )


def _safe_log(x):
    return np.log(np.where(x > 0.0, x, 1.0))


class ConstantElasticityCurves(Curves):
    """Curves of constant elasticity; shifts multiply quantities by A and B."""

    def quantity_demanded(self, price):
        log_q = self.demand_elasticity * _safe_log(price / self.base_price) + self.demand_shift
        return np.where(price > 0.0, self.base_quantity * np.exp(log_q), 0.0)

    def quantity_supplied(self, price):
        log_q = self.supply_elasticity * _safe_log(price / self.base_price) + self.supply_shift
        return np.where(price > 0.0, self.base_quantity * np.exp(log_q), 0.0)

    def inverse_demand(self, quantity):
        log_q = _safe_log(quantity / self.base_quantity) - self.demand_shift
        return self.base_price * np.exp(log_q / self.demand_elasticity)

    def inverse_supply(self, quantity):
        """Marginal cost of the quantity-th unit; 0 below capacity where eps_t = 0."""
        log_q = _safe_log(quantity / self.base_quantity) - self.supply_shift
        log_p = np.where(self.vertical, 0.0, log_q / self._safe_supply_elasticity())
        return np.where(self.vertical, 0.0, self.base_price * np.exp(log_p))

    def demand_integral(self, lower, upper):
        """int_lower^upper Qd^-1(q) dq (signed), for lower, upper > 0."""
        m = 1.0 + 1.0 / self.demand_elasticity
        return _power_law_integral(lower, self.inverse_demand(lower), upper, self.inverse_demand(upper), m)

    def supply_integral(self, lower, upper):
        """int_lower^upper Qs^-1(q) dq (signed); 0 for vertical supply below capacity."""
        m = 1.0 + 1.0 / self._safe_supply_elasticity()
        area = _power_law_integral(lower, self.inverse_supply(lower), upper, self.inverse_supply(upper), m)
        return np.where(self.vertical, 0.0, area)

    def misallocation_divisor(self):
        """m = 1 + 1/eta; willingness to pay is finite (m > 0) only when |eta| > 1."""
        return 1.0 + 1.0 / self.demand_elasticity
