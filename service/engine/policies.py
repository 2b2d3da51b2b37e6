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
producer price at capacity and 0 below it.

Sources: the wedge equilibria of taxes and subsidies and their incidence, Fullerton & Metcalf
(2002), "Tax Incidence", *Handbook of Public Economics* vol. 4 (consumers bear eps / (eps - eta)
of a small unit tax); ceilings, floors and quantity restrictions in the displacement framework
of Alston, Norton & Pardey (1995), *Science Under Scarcity*, ch. 4-5.

The compiled period pass (kernel.py) applies these rules cell by cell, under the codes below.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["CEILING_KINDS", "KIND_CODES", "Outcome", "is_ceiling"]


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

CEILING_KINDS = (KIND_CODES["price_ceiling"], KIND_CODES["price_ceiling_growth"])


def is_ceiling(kind: np.ndarray) -> np.ndarray:
    """True where a policy row's kind code is a price ceiling (a level or a growth cap)."""
    return (kind == CEILING_KINDS[0]) | (kind == CEILING_KINDS[1])
