"""Policies and the market outcome each one leaves in every period.

Each policy is active in periods start..end; outside them, and where it does not bind, the
period clears as the free market (P*, Q*) exactly. Where it binds:

    price ceiling c       Pc = Pp = c,  Q = Qs(c),  shortage Qd(c) - Q            (c < P*)
    growth cap            c_t = (1+g) Pc_(t-1), Pc_0 = P0, then as a ceiling        (c_t < P*)
    price floor f         Pc = Pp = f,  Q = Qd(f),  excess supply Qs(f) - Q       (f > P*)
    unit tax tau          Qd(Pc) = Qs(Pc - tau)                                     (tau > 0)
    ad valorem tax r      Qd(Pc) = Qs((1-r) Pc)                                     (r > 0)
    unit subsidy s        Qd(Pc) = Qs(Pc + s)                                       (s > 0)
    quantity cap Qbar     Q = Qbar, Pc = Pp = Qd^-1(Qbar), MC = Qs^-1(Qbar)          (Qbar < Q*)

Marginal value MV = Qd^-1(Q) and marginal cost MC = Qs^-1(Q); on vertical supply MC is the
producer price at capacity and 0 below it. Every kind is a function with one signature,
registered in KINDS under a code; the growth cap is the one kind whose period t depends on
period t-1, so it alone loops over periods (vectorised over rows).

Sources: the wedge equilibria of taxes and subsidies and their incidence, Fullerton & Metcalf
(2002), "Tax Incidence", *Handbook of Public Economics* vol. 4 (consumers bear eps / (eps - eta)
of a small unit tax); ceilings, floors and quantity restrictions in the displacement framework
of Alston, Norton & Pardey (1995), *Science Under Scarcity*, ch. 4-5.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, fields

import numpy as np

from ._arrays import as_slice
from .curves import Curves
from .equilibrium import clear_with_wedge

__all__ = ["CEILING_KINDS", "KINDS", "KIND_CODES", "Outcome", "free_outcome", "is_ceiling", "market_outcome"]


@dataclass(frozen=True)
class Outcome:
    """What one policy leaves in each period; every field is (rows, periods)."""

    consumer_price: np.ndarray
    producer_price: np.ndarray
    quantity: np.ndarray
    quantity_demanded: np.ndarray
    quantity_supplied: np.ndarray
    shortage: np.ndarray
    excess_supply: np.ndarray
    marginal_value: np.ndarray
    marginal_cost: np.ndarray
    binding: np.ndarray  # bool
    rationed: np.ndarray  # bool: a binding ceiling rations buyers

    def take(self, rows) -> Outcome:
        """The outcome of a subset of rows."""
        return Outcome(*(getattr(self, f.name)[rows] for f in fields(self)))

    def where(self, mask: np.ndarray, other: Outcome) -> Outcome:
        """This outcome where mask is True, `other` elsewhere."""
        return Outcome(*(np.where(mask, getattr(self, f.name), getattr(other, f.name)) for f in fields(self)))


def free_outcome(price, quantity) -> Outcome:
    """The free market as an outcome: Pc = Pp = MV = MC = P*, Q = Qd = Qs = Q*."""
    zero = np.zeros_like(price)
    no = np.zeros(price.shape, dtype=bool)
    return Outcome(price, price, quantity, quantity, quantity, zero, zero, price, price, no, no)


def _binding_only(binding, policy: Outcome, price, quantity) -> Outcome:
    return policy.where(binding, free_outcome(price, quantity))


def _none(curves, price, quantity, value, active):
    return free_outcome(price, quantity)


def _ceiling_outcome(curves, price, quantity, ceiling, binding):
    supplied = curves.quantity_supplied(ceiling)
    demanded = curves.quantity_demanded(ceiling)
    policy = Outcome(
        consumer_price=ceiling,
        producer_price=ceiling,
        quantity=supplied,
        quantity_demanded=demanded,
        quantity_supplied=supplied,
        shortage=demanded - supplied,
        excess_supply=np.zeros_like(price),
        marginal_value=curves.inverse_demand(supplied),
        marginal_cost=ceiling,
        binding=binding,
        rationed=binding,
    )
    return _binding_only(binding, policy, price, quantity)


def _price_ceiling(curves, price, quantity, level, active):
    ceiling = np.broadcast_to(level, price.shape)
    return _ceiling_outcome(curves, price, quantity, ceiling, active & (ceiling < price))


def _growth_ceiling(curves, price, quantity, growth, active):
    """c_t = (1+g) Pc_(t-1) with Pc_0 = P0; the only kind that needs the previous period."""
    ceiling = np.empty_like(price)
    binding = np.zeros(price.shape, dtype=bool)
    ceiling[:, 0] = curves.base_price[:, 0]
    previous = curves.base_price[:, 0]
    factor = 1.0 + growth[:, 0]
    for t in range(1, price.shape[1]):
        ceiling[:, t] = factor * previous
        binding[:, t] = active[:, t] & (ceiling[:, t] < price[:, t])
        previous = np.where(binding[:, t], ceiling[:, t], price[:, t])
    return _ceiling_outcome(curves, price, quantity, ceiling, binding)


def _price_floor(curves, price, quantity, level, active):
    floor = np.broadcast_to(level, price.shape)
    binding = active & (floor > price)
    demanded = curves.quantity_demanded(floor)
    supplied = curves.quantity_supplied(floor)
    policy = Outcome(
        consumer_price=floor,
        producer_price=floor,
        quantity=demanded,
        quantity_demanded=demanded,
        quantity_supplied=supplied,
        shortage=np.zeros_like(price),
        excess_supply=supplied - demanded,
        marginal_value=floor,
        # min(.., Q*): equal where the floor binds (Q < Q*); elsewhere it keeps a steep
        # inverse from overflowing on a value that is not reported.
        marginal_cost=curves.inverse_supply(np.minimum(demanded, quantity)),
        binding=binding,
        rationed=np.zeros_like(binding),
    )
    return _binding_only(binding, policy, price, quantity)


def _wedge(curves, price, quantity, scale, gap, binding):
    consumer = clear_with_wedge(curves, scale, gap, price, binding)
    producer = scale * consumer - gap
    demanded = curves.quantity_demanded(consumer)
    policy = Outcome(
        consumer_price=consumer,
        producer_price=producer,
        quantity=demanded,
        quantity_demanded=demanded,
        quantity_supplied=curves.quantity_supplied(producer),
        shortage=np.zeros_like(price),
        excess_supply=np.zeros_like(price),
        marginal_value=consumer,
        marginal_cost=producer,
        binding=binding,
        rationed=np.zeros_like(binding),
    )
    return _binding_only(binding, policy, price, quantity)


def _unit_tax(curves, price, quantity, amount, active):
    binding = active & (amount > 0.0)
    return _wedge(curves, price, quantity, np.ones_like(amount), amount, binding)


def _ad_valorem_tax(curves, price, quantity, rate, active):
    binding = active & (rate > 0.0)
    return _wedge(curves, price, quantity, 1.0 - rate, np.zeros_like(rate), binding)


def _unit_subsidy(curves, price, quantity, amount, active):
    binding = active & (amount > 0.0)
    return _wedge(curves, price, quantity, np.ones_like(amount), -amount, binding)


def _quantity_cap(curves, price, quantity, level, active):
    cap = np.broadcast_to(level, price.shape)
    binding = active & (cap < quantity)
    consumer = curves.inverse_demand(cap)
    supplied = curves.quantity_supplied(consumer)
    policy = Outcome(
        consumer_price=consumer,
        producer_price=consumer,
        quantity=cap,
        quantity_demanded=cap,
        quantity_supplied=supplied,
        shortage=np.zeros_like(price),
        excess_supply=supplied - cap,
        marginal_value=consumer,
        marginal_cost=curves.inverse_supply(np.minimum(cap, quantity)),  # as in the floor
        binding=binding,
        rationed=np.zeros_like(binding),
    )
    return _binding_only(binding, policy, price, quantity)


PolicyFunction = Callable[[Curves, np.ndarray, np.ndarray, np.ndarray, np.ndarray], Outcome]

#: Internal codes of the policy kinds; the growth cap is its own code.
KIND_CODES = {
    "none": 0,
    "price_ceiling": 1,
    "price_ceiling_growth": 2,
    "price_floor": 3,
    "unit_tax": 4,
    "ad_valorem_tax": 5,
    "unit_subsidy": 6,
    "quantity_cap": 7,
}

#: code -> function(curves, P*, Q*, value (rows, 1), active (rows, periods)) -> Outcome.
KINDS: dict[int, PolicyFunction] = {
    0: _none,
    1: _price_ceiling,
    2: _growth_ceiling,
    3: _price_floor,
    4: _unit_tax,
    5: _ad_valorem_tax,
    6: _unit_subsidy,
    7: _quantity_cap,
}

CEILING_KINDS = (KIND_CODES["price_ceiling"], KIND_CODES["price_ceiling_growth"])


def is_ceiling(kind: np.ndarray) -> np.ndarray:
    """True where a policy row's kind code is a price ceiling (a level or a growth cap)."""
    return (kind == CEILING_KINDS[0]) | (kind == CEILING_KINDS[1])


def market_outcome(
    curves: Curves,
    price: np.ndarray,
    quantity: np.ndarray,
    kind: np.ndarray,
    value: np.ndarray,
    active: np.ndarray,
) -> Outcome:
    """Outcome of every policy row, (rows, periods), grouping rows by kind (not by row).

    curves, price and quantity are the rows' curves and free-market equilibrium; kind and
    value are (rows,); active is (rows, periods).
    """
    codes = np.unique(kind)
    if codes.size == 1:
        return KINDS[int(codes[0])](curves, price, quantity, value[:, None], active)
    # Every row has exactly one kind, so every element below is written once.
    flags = ("binding", "rationed")
    parts = {f.name: np.empty(price.shape, dtype=bool if f.name in flags else float) for f in fields(Outcome)}
    for code in codes:
        rows = as_slice(np.flatnonzero(kind == code))
        outcome = KINDS[int(code)](
            curves.take(rows), price[rows], quantity[rows], value[rows, None], active[rows]
        )
        for f in fields(Outcome):
            parts[f.name][rows] = getattr(outcome, f.name)
    return Outcome(**parts)
