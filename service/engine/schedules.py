"""Supply elasticity over time by partial adjustment (Nerlove 1958).

    eps_t = eps_SR + (eps_LR - eps_SR) * w_t,   w_1 = 0 (the impact period is short-run)

    linear over K periods   w_t = min((t-1)/K, 1),    K = 0: w_t = 1 from period 1
    geometric (Nerlove)     w_t = 1 - (1-lambda)^(t-1)
    explicit                eps_t given by the caller

with lambda = 1 - 0.5^(1/h) for a half-life h, and the Nerlove (1958) default
lambda = eps_SR / eps_LR when neither is given and 0 < eps_SR <= eps_LR. Period 0 reports
eps_SR. Nerlove, M. (1958), *The Dynamics of Supply*: after t periods the share
1 - (1-lambda)^t of the gap is closed; half-life ln 0.5 / ln(1-lambda).

The compiled period pass (kernel.prepare) computes eps_t; this module holds the codes and the
half-life conversions.
"""

from __future__ import annotations

import numpy as np

from . import kernel

__all__ = ["SCHEDULE_CODES", "rate_from_half_life"]

#: Codes of the schedules (defined once, in kernel.py); "constant" means no schedule.
SCHEDULE_CODES = kernel.SCHEDULE_CODES


def rate_from_half_life(half_life: np.ndarray | float) -> np.ndarray:
    """Adjustment coefficient lambda with (1 - lambda)^h = 1/2; h in periods, > 0."""
    with np.errstate(over="ignore"):  # a tiny half-life means lambda = 1 (-expm1(-inf) = 1)
        return -np.expm1(np.log(0.5) / np.asarray(half_life, dtype=float))
