"""Shock profiles expanded to paths of fractional changes.

For a shock with change c, rate r, start s, ramp length n and explicit values v_1..v_L, the
fractional change of its shifter in period t = 1..T is

    step    g(t) = c                       for t >= s, else 0
    ramp    g(t) = c * min((t-s+1)/n, 1)   for t >= s, else 0
    growth  g(t) = (1+r)^(t-s+1) - 1       for t >= s, else 0
    path    g(t) = v_min(t, L)             (held at the last value, cut at the horizon)

and g(0) = 0 (the base point). Several shocks on one shifter add their changes. These are
the service's own definitions of a shock's timing (no published formula); the changes enter the
curves as the shifts of the equilibrium displacement model (Muth 1964; Gardner 1987; Alston,
Norton & Pardey 1995, *Science Under Scarcity*, ch. 4).
"""

from __future__ import annotations

import numpy as np

from ..limits import MAX_SHIFTER_CHANGE
from . import kernel

__all__ = [
    "PROFILE_CODES",
    "shifter_paths",
    "shock_paths",
]

#: Codes of the shock profiles (defined once, in kernel.py).
PROFILE_CODES = kernel.PROFILE_CODES

_MAX_LOG_GROWTH = float(np.log1p(MAX_SHIFTER_CHANGE))


def shock_paths(
    profile: np.ndarray,
    change: np.ndarray,
    rate: np.ndarray,
    start: np.ndarray,
    ramp_periods: np.ndarray,
    values: np.ndarray,
    value_count: np.ndarray,
    horizon: int,
) -> tuple[np.ndarray, np.ndarray]:
    """Fractional change of each shock's shifter per period (compiled: kernel.shock_paths).

    All inputs have shape (shocks,) except `values` (shocks, L) with `value_count` (shocks,)
    entries used per row. Returns the paths (shocks, horizon + 1), period 0 first, and a
    boolean (shocks,) that is True where a growth path would pass MAX_SHIFTER_CHANGE.
    """
    return kernel.shock_paths(
        np.asarray(profile, dtype=np.int64),
        np.asarray(change, dtype=float),
        np.asarray(rate, dtype=float),
        np.asarray(start, dtype=np.int64),
        np.asarray(ramp_periods, dtype=np.int64),
        np.ascontiguousarray(values, dtype=float),
        np.asarray(value_count, dtype=np.int64),
        horizon,
        _MAX_LOG_GROWTH,
    )


def shifter_paths(
    paths: np.ndarray,
    scenario: np.ndarray,
    shifter: np.ndarray,
    scenarios: int,
    shifters: int,
) -> np.ndarray:
    """Sum shock paths (shocks, T+1) per (scenario, shifter): (scenarios, shifters, T+1)."""
    total = np.zeros((scenarios, shifters, paths.shape[1]))
    np.add.at(total, (scenario, shifter), paths)
    return total
