"""Scenarios packed into arrays: one row per scenario, one row per (scenario, policy).

Packing reads the Python objects once (the only per-scenario loop, and it only copies
numbers); every computation after it runs on whole arrays. Horizons differ between
scenarios: arrays span the longest one and `horizon` masks the rest. Shock paths are built
for all shocks of all scenarios at once and summed per (scenario, shifter).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from .policies import KIND_CODES
from .scenario import Scenario
from .schedules import SCHEDULE_CODES
from .shocks import PROFILE_CODES, shifter_paths, shock_paths

__all__ = ["PolicyRows", "ScenarioBatch", "impact_elasticity", "pack", "policy_kind_code"]

#: A policy's end when it has none: later than any period.
_NO_END = np.iinfo(np.int64).max


@dataclass(frozen=True)
class ScenarioBatch:
    """Scenario-level inputs; n scenarios, m shifters, T + 1 periods (0..T)."""

    price: np.ndarray  # (n,) P0 per unit per price interval
    quantity: np.ndarray  # (n,) Q0 units per price interval
    payments_per_period: np.ndarray  # (n,) k
    constant_elasticity: np.ndarray  # (n,) bool: the form
    demand_elasticity: np.ndarray  # (n,) eta < 0
    short_run_elasticity: np.ndarray  # (n,)
    long_run_elasticity: np.ndarray  # (n,)
    demand_shifter_elasticity: np.ndarray  # (n, m); 0 where the shifter is not on demand
    supply_shifter_elasticity: np.ndarray  # (n, m); 0 where not on supply
    shifter_change: np.ndarray  # (n or 1, m, T+1) fractional change, period 0 = 0
    shock_out_of_range: np.ndarray  # (n or 1, m) bool: a growth path passed MAX_SHIFTER_CHANGE
    schedule: np.ndarray  # (n,) SCHEDULE_CODES
    schedule_periods: np.ndarray  # (n,) K of a linear schedule
    schedule_rate: np.ndarray  # (n,) lambda (geometric or stock); 0 = Nerlove default eps_SR / eps_LR
    stock: np.ndarray  # (n,) bool: the durable-stock schedule (MODEL.md 13)
    floor_share: np.ndarray  # (n,) 1 - depreciation: the stock never falls below this share; 0 = no floor
    explicit_elasticity: np.ndarray  # (n or 1, T+1) eps_t of an explicit schedule
    horizon: np.ndarray  # (n,) T of each scenario
    random_rationing: np.ndarray  # (n,) bool
    discount_rate: np.ndarray  # (n or 1, T+1) rate per model period, column 0 unused
    inflation: np.ndarray  # (n or 1, T+1) general inflation pi_t per model period, column 0 = 0
    has_inflation: np.ndarray  # (n,) bool: the request gave market.inflation (not 0)
    build_limit: np.ndarray  # (n,) b, most homes added per period / K_(t-1); 0 = no limit (MODEL.md 16)
    conversion: np.ndarray  # (n,) kappa of controlled homes' conversion; 0 = none (MODEL.md 18)
    impact_elasticity: np.ndarray  # (n,) supply elasticity at the base point: impact_elasticity()

    @property
    def size(self) -> int:
        return int(self.price.shape[0])

    @property
    def periods(self) -> int:
        """T + 1 of the longest horizon."""
        return int(self.discount_rate.shape[1])


@dataclass(frozen=True)
class PolicyRows:
    """One row per (scenario, policy), in request order within each scenario."""

    scenario: np.ndarray  # (R,) index into the batch
    kind: np.ndarray  # (R,) KIND_CODES
    value: np.ndarray  # (R,) level, growth, amount or rate by kind
    start: np.ndarray  # (R,) first active period
    end: np.ndarray  # (R,) last active period
    indexed: np.ndarray  # (R,) bool: a money rule that moves with prices (MODEL.md 12)
    coverage: np.ndarray  # (R,) share of homes a ceiling covers (MODEL.md 14); 1 elsewhere
    exempt_new: np.ndarray  # (R,) bool: a ceiling whose new homes are exempt (MODEL.md 17)
    decontrol: np.ndarray  # (R,) vacancy decontrol tau of a growth cap; 0 = off (MODEL.md 17)

    @property
    def size(self) -> int:
        return int(self.scenario.shape[0])


def policy_kind_code(kind: str, growth: float | None) -> int:
    """Internal code; a price ceiling with a growth rate is the growth cap."""
    if kind == "price_ceiling" and growth is not None:
        return KIND_CODES["price_ceiling_growth"]
    return KIND_CODES[kind]


def _policy_value(policy, base_price: float) -> float:
    if policy.kind == "price_ceiling":
        if policy.growth is not None:
            return float(policy.growth)
        return base_price if policy.base_level else float(policy.level)
    if policy.kind in ("price_floor", "quantity_cap"):
        return float(policy.level)
    if policy.kind == "ad_valorem_tax":
        return float(policy.rate)
    return float(policy.amount)


def impact_elasticity(
    stock: np.ndarray, schedule_rate: np.ndarray, short_run: np.ndarray, long_run: np.ndarray
) -> np.ndarray:
    """Supply elasticity at the base point in the impact period (MODEL.md 20), (n,).

    Under the stock schedule with an explicit `rate` or `half_life` (schedule_rate > 0) a share
    lambda of the gap to the desired stock closes in the impact period, and the desired stock
    has elasticity eps_LR at the base point, so the impact elasticity is lambda eps_LR (Nerlove
    1958: short-run elasticity = lambda x long-run elasticity); the given short-run elasticity
    is then unused. Everywhere else (the stock schedule's default lambda = eps_SR / eps_LR
    included, which gives lambda eps_LR = eps_SR) it is the short-run elasticity, unchanged.
    """
    explicit = stock & (schedule_rate > 0.0)
    return np.where(explicit, schedule_rate * long_run, short_run)


def _discount_rates(scenarios: Sequence[Scenario], periods: int) -> np.ndarray:
    """Per-period rates (n, T+1) from a number or a step schedule per scenario.

    A step applies through its `through_period` (inclusive, strictly increasing); past the
    last step the last rate holds. Column 0 is never used.
    """
    steps = [s.welfare.discount_rate for s in scenarios]
    flat = np.array([d[-1].rate if isinstance(d, tuple) else float(d) for d in steps])
    rates = np.repeat(flat[:, None], periods, axis=1)
    for i, d in enumerate(steps):  # copies numbers only: a slice per step
        if isinstance(d, tuple):
            first = 0
            for step in d:
                last = min(step.through_period, periods - 1)
                rates[i, first : last + 1] = step.rate
                first = last + 1
    return rates


def _per_period(values: Sequence[float | tuple[float, ...]], periods: int) -> np.ndarray:
    """(n, T+1) rates of periods 1..T from a number or a list of per-period rates (the last
    holds); column 0 is 0."""
    flat = np.array([v[-1] if isinstance(v, tuple) else float(v) for v in values])
    rates = np.repeat(flat[:, None], periods, axis=1)
    rates[:, 0] = 0.0
    for i, v in enumerate(values):  # copies numbers only
        if isinstance(v, tuple):
            width = min(len(v), periods - 1)
            rates[i, 1 : 1 + width] = v[:width]
    return rates


def pack(scenarios: Sequence[Scenario]) -> tuple[ScenarioBatch, PolicyRows]:
    """Copy the scenarios' numbers into arrays; no model computation beyond shock paths."""
    n = len(scenarios)
    periods = max(s.horizon for s in scenarios) + 1
    names = [s.market.shifter_names for s in scenarios]
    m = max((len(x) for x in names), default=0)

    demand_shifter = np.zeros((n, m))
    supply_shifter = np.zeros((n, m))
    shock_rows: list[tuple] = []
    explicit = np.zeros((n, periods))
    schedule = np.zeros(n, dtype=np.int64)
    schedule_periods = np.zeros(n)
    schedule_rate = np.zeros(n)
    floor_share = np.zeros(n)
    build_limit = np.zeros(n)
    conversion = np.zeros(n)
    for i, s in enumerate(scenarios):
        market = s.market
        index = {name: j for j, name in enumerate(names[i])}
        for name, e in market.demand_shifters.items():
            demand_shifter[i, index[name]] = e
        for name, e in market.supply_shifters.items():
            supply_shifter[i, index[name]] = e
        for shock in s.shocks:
            shock_rows.append((i, index[shock.shifter], shock))
        adj = s.adjustment
        code = SCHEDULE_CODES[adj.schedule or "constant"]
        schedule[i] = code
        schedule_periods[i] = adj.periods
        if adj.rate is not None:
            schedule_rate[i] = adj.rate
        elif adj.half_life is not None:
            schedule_rate[i] = -math.expm1(math.log(0.5) / adj.half_life)  # rate_from_half_life
        if adj.depreciation is not None:
            floor_share[i] = 1.0 - adj.depreciation
        if adj.build_limit is not None:
            build_limit[i] = adj.build_limit
        conversion[i] = adj.conversion
        if code == SCHEDULE_CODES["explicit"]:
            values = np.asarray(adj.elasticities[: periods - 1], dtype=float)
            explicit[i, 1 : 1 + values.size] = values
            explicit[i, 1 + values.size :] = values[-1]

    value_width = max((len(r[2].values) for r in shock_rows), default=0)
    values = np.zeros((len(shock_rows), min(value_width, periods)))
    counts = np.zeros(len(shock_rows), dtype=np.int64)
    for k, (_, _, shock) in enumerate(shock_rows):
        v = shock.values[: values.shape[1]]
        values[k, : len(v)] = v
        counts[k] = len(v)
    paths, too_large = shock_paths(
        np.array([PROFILE_CODES[r[2].profile] for r in shock_rows], dtype=np.int64),
        np.array([r[2].change for r in shock_rows], dtype=float),
        np.array([r[2].rate for r in shock_rows], dtype=float),
        np.array([r[2].start for r in shock_rows], dtype=np.int64),
        np.array([r[2].periods for r in shock_rows], dtype=np.int64),
        values,
        counts,
        periods - 1,
    )
    scenario_of = np.array([r[0] for r in shock_rows], dtype=np.int64)
    shifter_of = np.array([r[1] for r in shock_rows], dtype=np.int64)
    change = shifter_paths(paths, scenario_of, shifter_of, n, m)
    out_of_range = np.zeros((n, m), dtype=bool)
    np.logical_or.at(out_of_range, (scenario_of, shifter_of), too_large)

    stock = schedule == SCHEDULE_CODES["stock"]
    short_run = np.array([s.market.short_run_elasticity for s in scenarios], dtype=float)
    long_run = np.array([s.market.long_run_elasticity for s in scenarios], dtype=float)
    batch = ScenarioBatch(
        price=np.array([s.market.price for s in scenarios], dtype=float),
        quantity=np.array([s.market.quantity for s in scenarios], dtype=float),
        payments_per_period=np.array([s.market.payments_per_period for s in scenarios], dtype=float),
        constant_elasticity=np.array([s.market.form == "constant_elasticity" for s in scenarios]),
        demand_elasticity=np.array([s.market.demand_elasticity for s in scenarios], dtype=float),
        short_run_elasticity=short_run,
        long_run_elasticity=long_run,
        demand_shifter_elasticity=demand_shifter,
        supply_shifter_elasticity=supply_shifter,
        shifter_change=change,
        shock_out_of_range=out_of_range,
        schedule=schedule,
        schedule_periods=schedule_periods,
        schedule_rate=schedule_rate,
        explicit_elasticity=explicit,
        horizon=np.array([s.horizon for s in scenarios], dtype=np.int64),
        random_rationing=np.array([s.welfare.rationing == "random" for s in scenarios]),
        discount_rate=_discount_rates(scenarios, periods),
        stock=stock,
        floor_share=floor_share,
        inflation=_per_period([s.market.inflation for s in scenarios], periods),
        has_inflation=np.array([s.market.inflation != 0.0 for s in scenarios]),
        build_limit=build_limit,
        conversion=conversion,
        impact_elasticity=impact_elasticity(stock, schedule_rate, short_run, long_run),
    )
    flat = [(i, p) for i, s in enumerate(scenarios) for p in s.policies]
    rows = PolicyRows(
        scenario=np.array([i for i, _ in flat], dtype=np.int64),
        kind=np.array([policy_kind_code(p.kind, p.growth) for _, p in flat], dtype=np.int64),
        value=np.array([_policy_value(p, scenarios[i].market.price) for i, p in flat], dtype=float),
        start=np.array([p.start for _, p in flat], dtype=np.int64),
        end=np.array([_NO_END if p.end is None else p.end for _, p in flat], dtype=np.int64),
        indexed=np.array([p.indexed for _, p in flat], dtype=bool),
        coverage=np.array([p.coverage for _, p in flat], dtype=float),
        exempt_new=np.array([p.new_homes == "exempt" for _, p in flat], dtype=bool),
        decontrol=np.array([p.vacancy_decontrol for _, p in flat], dtype=float),
    )
    return batch, rows
