"""Welfare of each policy against the free market of the same period.

With (P*, Q*) the period's free-market point and (Pc, Pp, Q) the policy's:

    dCS = P* Q* - Pc Q - int_Q^Q* Qd^-1(q) dq
    dPS = Pp Q - P* Q* + int_Q^Q* Qs^-1(q) dq
    G   = (Pc - Pp) Q                       (negative for a subsidy)
    DWL = int_Q^Q* (Qd^-1 - Qs^-1) dq = -(dCS + dPS + G) >= 0

Under random rationing of a binding ceiling (Glaeser & Luttmer 2003, AER 93(4)) buyers also
lose the misallocation M = int_0^Q Qd^-1 - (Q/Qd) int_0^Qd Qd^-1 = Q (Qd^-1(Q) - c) / m, with
m = 2 for linear demand and m = 1 + 1/eta for constant elasticity (finite only for |eta| > 1);
M is added to DWL and taken from dCS. Money flows are per price interval times k payments per
model period. Discounting: the factor of period s is prod_(u<=s) 1/(1 + r_u).

Sources: surplus changes and deadweight loss as in Alston, Norton & Pardey (1995), *Science Under
Scarcity*, ch. 4-5; for a small unit tax on linear curves DWL is Harberger's (1964) triangle
1/2 tau^2 (Q0/P0) eps|eta| / (eps + |eta|); misallocation, Glaeser & Luttmer (2003), "The
Misallocation of Housing Under Rent Control", *American Economic Review* 93(4).
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from ._arrays import as_slice
from .curves import Curves
from .policies import Outcome

__all__ = ["WelfareChange", "discount_factors", "misallocation", "welfare_change"]


@dataclass(frozen=True)
class WelfareChange:
    """Money per model period, each (rows, periods); exactly 0 where nothing binds."""

    consumer_surplus_change: np.ndarray
    producer_surplus_change: np.ndarray
    government_revenue: np.ndarray
    deadweight_loss: np.ndarray
    misallocation_loss: np.ndarray


def misallocation(curves: Curves, quantity: np.ndarray, ceiling: np.ndarray) -> np.ndarray:
    """Random-rationing loss Q (Qd^-1(Q) - c) / m per price interval, (rows, periods).

    Meaningful where willingness to pay is finite (linear, or |eta| > 1); 0 elsewhere.
    """
    m = curves.misallocation_divisor()
    finite = m > 0.0
    loss = quantity * (curves.inverse_demand(quantity) - ceiling) / np.where(finite, m, 1.0)
    return np.where(finite, np.maximum(loss, 0.0), 0.0)


def welfare_change(
    curves: Curves,
    free_price: np.ndarray,
    free_quantity: np.ndarray,
    outcome: Outcome,
    payments_per_period: np.ndarray,
    random_rationing: np.ndarray,
) -> WelfareChange:
    """Surplus changes, revenue, DWL and misallocation of each row; k is (rows, 1).

    random_rationing (rows, 1) is True where a binding ceiling rations buyers at random.
    Rows whose policy never binds are exactly 0 and are not computed.
    """
    shape = outcome.binding.shape
    parts = {f.name: np.zeros(shape) for f in fields(WelfareChange)}
    rows = np.flatnonzero(outcome.binding.any(axis=1))
    if rows.size == 0:
        return WelfareChange(**parts)
    rows = as_slice(rows)
    sub = _binding_rows_welfare(
        curves.take(rows),
        free_price[rows],
        free_quantity[rows],
        outcome.take(rows),
        payments_per_period[rows],
        random_rationing[rows],
    )
    for name, values in sub.items():
        parts[name][rows] = values
    return WelfareChange(**parts)


def _binding_rows_welfare(curves, free_price, free_quantity, outcome, k, random_rationing) -> dict:
    q, pc, pp = outcome.quantity, outcome.consumer_price, outcome.producer_price
    demand_area = curves.demand_integral(q, free_quantity)
    supply_area = curves.supply_integral(q, free_quantity)
    free_spending = free_price * free_quantity
    consumer = free_spending - pc * q - demand_area
    producer = pp * q - free_spending + supply_area
    revenue = (pc - pp) * q
    deadweight = np.maximum(demand_area - supply_area, 0.0)
    rationed = outcome.rationed & random_rationing
    mis = np.where(rationed, misallocation(curves, q, pc), 0.0) if rationed.any() else np.zeros_like(q)
    b = outcome.binding
    return {
        "consumer_surplus_change": np.where(b, k * (consumer - mis), 0.0),
        "producer_surplus_change": np.where(b, k * producer, 0.0),
        "government_revenue": np.where(b, k * revenue, 0.0),
        "deadweight_loss": np.where(b, k * (deadweight + mis), 0.0),
        "misallocation_loss": np.where(b, k * mis, 0.0),
    }


def discount_factors(rates: np.ndarray) -> np.ndarray:
    """prod_(u<=s) 1/(1+r_u) for s = 0..T from per-period rates (rows, T+1); column 0 is 1."""
    log_factor = -np.cumsum(np.log1p(rates[:, 1:]), axis=1)
    return np.concatenate([np.ones((rates.shape[0], 1)), np.exp(log_factor)], axis=1)
