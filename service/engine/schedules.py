"""Supply elasticity over time by partial adjustment (Nerlove 1958).

    eps_t = eps_SR + (eps_LR - eps_SR) * w_t,   w_1 = 0 (the impact period is short-run)

    linear over K periods   w_t = min((t-1)/K, 1),    K = 0: w_t = 1 from period 1
    geometric (Nerlove)     w_t = 1 - (1-lambda)^(t-1)
    explicit                eps_t given by the caller

with lambda = 1 - 0.5^(1/h) for a half-life h, and the Nerlove (1958) default
lambda = eps_SR / eps_LR when neither is given and 0 < eps_SR <= eps_LR. Period 0 reports
eps_SR. Nerlove, M. (1958), *The Dynamics of Supply*: after t periods the share
1 - (1-lambda)^t of the gap is closed; half-life ln 0.5 / ln(1-lambda).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "SCHEDULE_CODES",
    "adjustment_weights",
    "half_life_from_rate",
    "nerlove_rate",
    "rate_from_half_life",
    "supply_elasticity_path",
]

SCHEDULE_CODES = {"constant": 0, "linear": 1, "geometric": 2, "explicit": 3}


def rate_from_half_life(half_life: np.ndarray | float) -> np.ndarray:
    """Adjustment coefficient lambda with (1 - lambda)^h = 1/2; h in periods, > 0."""
    with np.errstate(over="ignore"):  # a tiny half-life means lambda = 1 (-expm1(-inf) = 1)
        return -np.expm1(np.log(0.5) / np.asarray(half_life, dtype=float))


def half_life_from_rate(rate: np.ndarray | float) -> np.ndarray:
    """Periods to close half the gap, ln 0.5 / ln(1 - lambda), for lambda in (0, 1)."""
    return np.log(0.5) / np.log1p(-np.asarray(rate, dtype=float))


def nerlove_rate(short_run: np.ndarray, long_run: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """lambda = eps_SR / eps_LR and a boolean that is True where it applies (0 < SR <= LR)."""
    applies = (short_run > 0) & (short_run <= long_run)
    return np.where(applies, short_run / np.where(applies, long_run, 1.0), 1.0), applies


def adjustment_weights(
    schedule: np.ndarray, periods: np.ndarray, rate: np.ndarray, horizon: int
) -> np.ndarray:
    """Weights w_t (scenarios, horizon + 1) of the long-run elasticity; w_0 = w_1 = 0.

    schedule holds SCHEDULE_CODES; periods is K (linear), rate is lambda (geometric).
    Constant and explicit schedules get w = 0 (their elasticities come from elsewhere).
    """
    lag = np.maximum(np.arange(horizon + 1) - 1, 0)[None, :]
    weights = np.zeros((schedule.shape[0], horizon + 1))
    is_linear = schedule == SCHEDULE_CODES["linear"]
    is_geometric = schedule == SCHEDULE_CODES["geometric"]
    if is_linear.any():  # computed only for the schedules a batch has
        k = periods[:, None].astype(float)
        linear = np.where(k > 0, np.minimum(lag / np.where(k > 0, k, 1.0), 1.0), 1.0)
        weights = np.where(is_linear[:, None], linear, weights)
    if is_geometric.any():
        full = rate >= 1.0
        geometric = -np.expm1(lag * np.log1p(-np.where(full, 0.0, rate))[:, None])
        geometric = np.where(full[:, None], (lag > 0).astype(float), geometric)
        weights = np.where(is_geometric[:, None], geometric, weights)
    weights[:, 0] = 0.0
    return weights


def supply_elasticity_path(
    short_run: np.ndarray,
    long_run: np.ndarray,
    schedule: np.ndarray,
    periods: np.ndarray,
    rate: np.ndarray,
    explicit: np.ndarray,
    horizon: int,
) -> np.ndarray:
    """eps_t for t = 0..horizon, shape (scenarios, horizon + 1); eps_0 = eps_SR.

    `explicit` (scenarios, horizon + 1) is used where schedule is explicit.
    """
    weights = adjustment_weights(schedule, periods, rate, horizon)
    # sr (1 - w) + lr w: exactly eps_SR at w = 0 and exactly eps_LR at w = 1.
    path = short_run[:, None] * (1.0 - weights) + long_run[:, None] * weights
    path = np.where(schedule[:, None] == SCHEDULE_CODES["explicit"], explicit, path)
    path[:, 0] = short_run
    return path
