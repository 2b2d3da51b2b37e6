"""Market clearing: the free market, and clearing with a price wedge.

Free market, linear:   EP = (D - S) / (eps_t - eta),  P* = P0 (1 + EP),  Q* = Q0 (1 + eps_t EP + S)
Free market, constant elasticity: ln(P*/P0) = (ln A - ln B) / (eps_t - eta),  Q* = Qs(P*)

A wedge makes sellers receive Pp = a Pc - b (a unit tax: a = 1, b = tau; an ad valorem tax on
the consumer price: a = 1 - r, b = 0; a unit subsidy: a = 1, b = -s) and clears
Qd(Pc) = Qs(a Pc - b). Linear curves give, with x = Pc/P0 - 1,

    x = (D - S - eps_t (a - 1 - b/P0)) / (eps_t a - eta),

constant elasticity with b = 0 gives ln(Pc/P0) = (ln A - ln B - eps_t ln a) / (eps_t - eta);
with b != 0 the root is found elementwise by Chandrupatla's bracketing method
(scipy.optimize.elementwise.find_root) on brackets that the curves imply:
tax  Pc in [Qs^-1(Qd(P* + tau)) + tau, P* + tau];  subsidy  Pc in [Qd^-1(Qs(P* + s)), P*].
eps_t - eta > 0 under the sign rules, so each equilibrium is unique.

Sources: the displacement equilibrium of Muth (1964) and Gardner (1987), as in Alston, Norton &
Pardey (1995), *Science Under Scarcity*, ch. 4-5; the wedge's incidence, Fullerton & Metcalf
(2002), "Tax Incidence", *Handbook of Public Economics* vol. 4; the root finder, Chandrupatla
(1997), *Advances in Engineering Software* 28(3).
"""

from __future__ import annotations

import numpy as np
from scipy.optimize import elementwise

from .curves import ConstantElasticityCurves, Curves, LinearCurves

__all__ = ["clear_with_wedge", "free_market"]


def free_market(curves: Curves) -> tuple[np.ndarray, np.ndarray]:
    """Equilibrium price P* and quantity Q*, each (rows, periods)."""
    eps, eta = curves.supply_elasticity, curves.demand_elasticity
    if isinstance(curves, LinearCurves):
        relative = (curves.demand_shift - curves.supply_shift) / (eps - eta)
        price = curves.base_price * (1.0 + relative)
        quantity = curves.base_quantity * (1.0 + eps * relative + curves.supply_shift)
        return price, quantity
    log_price = (curves.demand_shift - curves.supply_shift) / (eps - eta)
    price = curves.base_price * np.exp(log_price)
    quantity = curves.base_quantity * np.exp(eps * log_price + curves.supply_shift)
    return price, quantity


def _excess_log_demand(price, eta, eps, log_a, log_b, base_price, gap):
    """ln Qd(Pc) - ln Qs(Pc - gap) for constant-elasticity curves; decreasing in Pc."""
    supplier_price = np.maximum(price - gap, np.finfo(float).tiny)
    return eta * np.log(price / base_price) + log_a - eps * np.log(supplier_price / base_price) - log_b


def _constant_elasticity_root(curves, gap, free_price, solve):
    """Consumer price under Pp = Pc - gap where `solve` (rows, periods) is True."""
    rows, cols = np.nonzero(solve)
    if rows.size == 0:
        return free_price.copy()
    sub = curves.take(rows)
    col = cols[:, None]

    def pick(a):
        return np.take_along_axis(a, col, axis=1)[:, 0]

    eps, eta = pick(sub.supply_elasticity), sub.demand_elasticity[:, 0]
    log_a, log_b = pick(sub.demand_shift), pick(sub.supply_shift)
    p0, q0 = sub.base_price[:, 0], sub.base_quantity[:, 0]
    g = gap[rows, cols]
    p_star = free_price[rows, cols]

    def qd(p):
        return q0 * np.exp(eta * np.log(p / p0) + log_a)

    def qs(p):
        return q0 * np.exp(eps * np.log(p / p0) + log_b)

    def qs_inverse(q):
        return p0 * np.exp((np.log(q / q0) - log_b) / eps)

    def qd_inverse(q):
        return p0 * np.exp((np.log(q / q0) - log_a) / eta)

    is_tax = g > 0
    magnitude = np.abs(g)
    tax_low = qs_inverse(qd(p_star + magnitude)) + magnitude
    subsidy_low = qd_inverse(qs(p_star + magnitude))
    low = np.where(is_tax, tax_low, subsidy_low)
    high = np.where(is_tax, p_star + magnitude, p_star)
    # Widen by a few ulps: F is decreasing, so the signs at the ends still hold, and a tiny
    # wedge (low == high to rounding) still gets a proper bracket.
    spread = 8.0 * np.finfo(float).eps
    low = np.minimum(low, high) * (1.0 - spread)
    high = high * (1.0 + spread)
    result = elementwise.find_root(_excess_log_demand, (low, high), args=(eta, eps, log_a, log_b, p0, g))
    price = free_price.copy()
    price[rows, cols] = np.where(result.success, result.x, np.nan)
    return price


def clear_with_wedge(
    curves: Curves,
    scale: np.ndarray,
    gap: np.ndarray,
    free_price: np.ndarray,
    where: np.ndarray,
) -> np.ndarray:
    """Consumer price Pc clearing Qd(Pc) = Qs(scale Pc - gap), (rows, periods).

    scale and gap are (rows, 1); elements outside `where` get the free-market price.
    A constant-elasticity root that fails to converge is NaN (the caller reports it).
    """
    eps, eta = curves.supply_elasticity, curves.demand_elasticity
    if isinstance(curves, LinearCurves):
        shift = curves.demand_shift - curves.supply_shift
        relative = (shift - eps * (scale - 1.0 - gap / curves.base_price)) / (eps * scale - eta)
        return np.where(where, curves.base_price * (1.0 + relative), free_price)
    assert isinstance(curves, ConstantElasticityCurves)
    closed = (curves.demand_shift - curves.supply_shift - eps * np.log(scale)) / (eps - eta)
    closed_price = curves.base_price * np.exp(closed)
    # Vertical supply: the quantity is fixed, buyers pay the free-market price.
    closed_price = np.where((gap != 0.0) & curves.vertical, free_price, closed_price)
    needs_root = where & (gap != 0.0) & ~curves.vertical
    rooted = _constant_elasticity_root(curves, np.broadcast_to(gap, free_price.shape), free_price, needs_root)
    price = np.where(needs_root, rooted, closed_price)
    return np.where(where, price, free_price)
