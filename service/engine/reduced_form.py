"""Reduced-form elasticities of the equilibrium.

For a shifter with demand elasticity eta_i and supply elasticity eps_j (either may be 0),
at supply elasticity eps (short or long run):

    price     d ln P* / d ln x = (eta_i - eps_j) / (eps - eta)
    quantity  d ln Q* / d ln x = (eps eta_i - eta eps_j) / (eps - eta)

the equilibrium displacement formulas of Muth (1964), "The Derived Demand Curve for a Productive
Factor and the Industry Supply Curve", *Oxford Economic Papers* 16(2) (title from memory), and
Gardner (1987); Alston, Norton & Pardey (1995), *Science Under Scarcity*, ch. 4-5.

The short-run rows are taken at the impact elasticity (`ScenarioBatch.impact_elasticity`):
eps_SR, except under the stock schedule with an explicit `rate` or `half_life`, where the
impact-period supply elasticity at the base point is lambda eps_LR (MODEL.md 20).
"""

from __future__ import annotations

import numpy as np

from .batch import ScenarioBatch

__all__ = ["reduced_form", "short_and_long_run"]


def reduced_form(
    demand_elasticity: np.ndarray,
    supply_elasticity: np.ndarray,
    demand_shifter_elasticity: np.ndarray,
    supply_shifter_elasticity: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Price and quantity elasticities (scenarios, shifters) at one supply elasticity.

    demand_elasticity and supply_elasticity are (scenarios,); shifter elasticities are
    (scenarios, shifters), 0 where a shifter does not enter a curve.
    """
    eta = demand_elasticity[:, None]
    eps = supply_elasticity[:, None]
    denominator = eps - eta
    price = (demand_shifter_elasticity - supply_shifter_elasticity) / denominator
    quantity = (eps * demand_shifter_elasticity - eta * supply_shifter_elasticity) / denominator
    return price, quantity


def short_and_long_run(
    batch: ScenarioBatch,
) -> tuple[tuple[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]]:
    """((price, quantity) at the impact elasticity, (price, quantity) at eps_LR), each
    (scenarios, shifters): the short- and long-run rows of every scenario of a batch."""
    n = batch.size
    price, quantity = reduced_form(  # both rows at once: scenarios stacked twice
        np.concatenate((batch.demand_elasticity, batch.demand_elasticity)),
        np.concatenate((batch.impact_elasticity, batch.long_run_elasticity)),
        np.concatenate((batch.demand_shifter_elasticity, batch.demand_shifter_elasticity)),
        np.concatenate((batch.supply_shifter_elasticity, batch.supply_shifter_elasticity)),
    )
    return (price[:n], quantity[:n]), (price[n:], quantity[n:])
