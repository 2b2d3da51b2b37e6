"""Published formulas and worked cases the engine is checked against, each with its source.

Values marked "from the formula" are computed here from the published closed form (the
source gives the formula, not a table); none is copied from memory of a table.
"""

from __future__ import annotations

import math

import pytest

# Muth (1964), "The Derived Demand Curve for a Productive Factor and the Industry Supply Curve",
# Oxford Economic Papers 16(2) (title from memory; MODEL.md gives another); Gardner (1987);
# Alston, Norton & Pardey (1995),
# Science Under Scarcity, ch. 4-5: d ln P* / d ln x = eta_x / (eps - eta) for a demand
# shifter, -eps_x / (eps - eta) for a supply shifter; quantity: eps eta_x / (eps - eta) and
# -eta eps_x / (eps - eta).
REDUCED_FORM_CASES = [
    pytest.param(-0.5, 0.5, 1.0, 0.0, 1.0, 0.5, id="muth-demand-shifter-unit-income-elasticity"),
    pytest.param(-1.0, 2.0, 0.0, -0.5, 0.5 / 3.0, -0.5 / 3.0, id="muth-supply-cost-shifter"),
    pytest.param(-0.45, 0.15, 0.9, 0.0, 1.5, 0.225, id="api-contract-income-short-run"),
    pytest.param(-0.45, 1.8, 0.9, 0.0, 0.4, 0.72, id="api-contract-income-long-run"),
    # One name on both curves: (eta_x - eps_x) / (eps - eta) and (eps eta_x - eta eps_x) / (eps - eta).
    pytest.param(-0.3, 0.2, -0.3, -0.2, -0.2, -0.24, id="interest-rate-on-both-curves"),
]


def incidence_consumer_share(eps: float, eta: float) -> float:
    """Fullerton & Metcalf (2002), Handbook of Public Economics vol. 4: eps / (eps - eta)."""
    return eps / (eps - eta)


def harberger_dwl(tau: float, p0: float, q0: float, eps: float, eta: float) -> float:
    """Harberger (1964): 1/2 tau^2 (Q0/P0) eps|eta| / (eps + |eta|); exact for linear curves."""
    return 0.5 * tau**2 * (q0 / p0) * eps * abs(eta) / (eps + abs(eta))


def nerlove_share_closed(rate: float, t: int) -> float:
    """Nerlove (1958), The Dynamics of Supply: 1 - (1 - lambda)^t of the gap after t periods."""
    return 1.0 - (1.0 - rate) ** t


def nerlove_half_life(rate: float) -> float:
    """Nerlove (1958): ln 0.5 / ln(1 - lambda)."""
    return math.log(0.5) / math.log(1.0 - rate)
