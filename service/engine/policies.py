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

import numpy as np

from . import kernel

__all__ = ["CEILING_KINDS", "KIND_CODES", "is_ceiling"]


#: Internal codes of the policy kinds (defined once, in kernel.py); the growth cap is its own code.
KIND_CODES = kernel.KIND_CODES

CEILING_KINDS = (KIND_CODES["price_ceiling"], KIND_CODES["price_ceiling_growth"])


def is_ceiling(kind: np.ndarray) -> np.ndarray:
    """True where a policy row's kind code is a price ceiling (a level or a growth cap)."""
    return (kind == CEILING_KINDS[0]) | (kind == CEILING_KINDS[1])
