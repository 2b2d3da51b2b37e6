"""Uncertain elasticities: draws, the full path model per draw, and percentile bands.

An elasticity may be normal(mean, sd) truncated to its sign rule (drawn from the truncated
distribution, never clipped), uniform(low, high) or triangular(low, mode, high). Draws come
from one seeded numpy Generator (PCG64): standard normals z, correlated where asked
(short- and long-run supply elasticity through a Gaussian copula), mapped to uniforms
u = Phi(z) and through each distribution's inverse CDF (scipy.stats ppf). Every draw runs the
whole path model of every policy; the batch is cut into blocks of draws only to bound memory,
each block one vectorised engine call. Bands are percentiles over the feasible draws, with
numpy's default ('linear') definition: Hyndman & Fan (1996), "Sample Quantiles in Statistical
Packages", *The American Statistician* 50(4), definition 7.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np
from scipy import special, stats

from . import kernel
from .batch import PolicyRows, ScenarioBatch, pack
from .paths import solve
from .results import DISTRIBUTION_GROUPS, summarise
from .scenario import ADDITION_DEFAULTS, Scenario

__all__ = [
    "BAND_SERIES",
    "BAND_SUMMARY",
    "GROUP_TOTALS",
    "PARAMETERS",
    "BandArrays",
    "Distribution",
    "UncertainInput",
    "band_names",
    "draw",
    "percentile_bands",
    "rows_for",
    "scenario_batch_with",
    "solve_rows",
]

#: The per-period series that get bands.
BAND_SERIES = (
    "consumer_price",
    "quantity",
    "shortage",
    "deadweight_loss",
    "cumulative_deadweight_loss",
    "discounted_deadweight_loss",
)
#: The summary figures that get percentiles.
BAND_SUMMARY = (
    "total_deadweight_loss",
    "discounted_deadweight_loss",
    "peak_shortage",
    "final_consumer_price",
    "final_quantity",
)
#: Who gains and who loses (MODEL.md 15): each group's total over the horizon.
GROUP_TOTALS = tuple("total_" + group for group in DISTRIBUTION_GROUPS)
#: Under the stock schedule (MODEL.md 13).
STOCK_BAND_SERIES = ("homes_below_free_path",)
STOCK_SUMMARY = ("final_homes_below_free_path", "peak_homes_below_free_path")


def band_names(scenario: Scenario) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """The banded series and summary figures of a scenario: the ones of every answer, the
    groups' totals (not under random rationing, where the split is not reported), and the homes
    below the free path under the stock schedule."""
    series, summary = BAND_SERIES, BAND_SUMMARY
    if scenario.welfare.rationing != "random":
        summary += GROUP_TOTALS
    if scenario.adjustment.schedule == "stock":
        series += STOCK_BAND_SERIES
        summary += STOCK_SUMMARY
    return series, summary


#: The parameters of each distribution, in the order a caller writes them.
PARAMETERS = {
    "normal": ("mean", "sd"),
    "uniform": ("low", "high"),
    "triangular": ("low", "mode", "high"),
}


@dataclass(frozen=True)
class Distribution:
    """One elasticity's distribution; `lower`, `upper` are its sign rule's bounds.

    A normal has mean and sd, a uniform low and high, a triangular low, mode and high
    (PARAMETERS); the others are None.
    """

    kind: str  # normal | uniform | triangular
    mean: float | None = None
    sd: float | None = None
    low: float | None = None
    mode: float | None = None
    high: float | None = None
    lower: float = -np.inf
    upper: float = np.inf
    upper_open: bool = False  # the upper bound itself is not allowed (eta < 0)
    lower_open: bool = False  # the lower bound itself is not allowed (inflation > -1, rate > 0)

    @property
    def parameters(self) -> dict[str, float]:
        """The distribution's own parameters by name (PARAMETERS[kind])."""
        return {name: getattr(self, name) for name in PARAMETERS[self.kind]}

    @property
    def central(self) -> float:
        """Mean of a normal, midpoint of a uniform, mode of a triangular."""
        if self.kind == "normal":
            return self.mean
        if self.kind == "uniform":
            return 0.5 * (self.low + self.high)
        return self.mode

    @property
    def degenerate(self) -> bool:
        if self.kind == "normal":
            return self.sd == 0.0
        return self.low == self.high

    def frozen(self):
        """The scipy.stats distribution (None when degenerate)."""
        if self.degenerate:
            return None
        if self.kind == "normal":
            a = (self.lower - self.mean) / self.sd
            b = (self.upper - self.mean) / self.sd
            return stats.truncnorm(a, b, loc=self.mean, scale=self.sd)
        if self.kind == "uniform":
            return stats.uniform(loc=self.low, scale=self.high - self.low)
        low, mode, high = self.low, self.mode, self.high
        return stats.triang((mode - low) / (high - low), loc=low, scale=high - low)

    def ppf(self, u: np.ndarray) -> np.ndarray:
        """Inverse CDF; values stay inside the sign rule (open bounds nudged inside)."""
        frozen = self.frozen()
        x = np.full(np.shape(u), self.central) if frozen is None else frozen.ppf(u)
        if self.upper_open:
            x = np.where(x >= self.upper, np.nextafter(self.upper, -np.inf), x)
        if self.lower_open:
            x = np.where(x <= self.lower, np.nextafter(self.lower, np.inf), x)
        return x

    def range(self) -> tuple[float, float]:
        """Low and high for sensitivity: the range given, or the 5th and 95th percentiles."""
        if self.kind != "normal":
            return self.low, self.high
        low, high = self.ppf(np.array([0.05, 0.95]))
        return float(low), float(high)


# Added with MODEL.md 12-13 (uncertain inflation and stock rates): left out of answer ids at
# its default, so that ids of requests without it are unchanged.
ADDITION_DEFAULTS[Distribution] = {"lower_open": False}


@dataclass(frozen=True)
class UncertainInput:
    """Which input is uncertain: target is demand_elasticity, short_run_elasticity,
    long_run_elasticity, ("demand_shifter" | "supply_shifter", name), or, where the request
    gives them as numbers, inflation (a constant rate), schedule_rate (lambda of a geometric or
    stock schedule) or depreciation (of the stock schedule); pointer is its place in the
    request."""

    target: str | tuple[str, str]
    pointer: str
    distribution: Distribution


def draw(
    inputs: Sequence[UncertainInput], draws: int, seed: int, supply_correlation: float = 0.0
) -> np.ndarray:
    """Draws (draws, inputs), reproducible from the seed on any machine."""
    rng = np.random.Generator(np.random.PCG64(seed))
    z = rng.standard_normal((draws, len(inputs)))
    targets = [u.target for u in inputs]
    if supply_correlation and "short_run_elasticity" in targets and "long_run_elasticity" in targets:
        i, j = targets.index("short_run_elasticity"), targets.index("long_run_elasticity")
        z[:, j] = supply_correlation * z[:, i] + np.sqrt(1.0 - supply_correlation**2) * z[:, j]
    u = special.ndtr(z)
    out = np.empty_like(u)
    for k, item in enumerate(inputs):  # a loop over inputs, each over all draws at once
        out[:, k] = item.distribution.ppf(u[:, k])
    return out


_PER_SCENARIO = (
    "price",
    "quantity",
    "payments_per_period",
    "constant_elasticity",
    "demand_elasticity",
    "short_run_elasticity",
    "long_run_elasticity",
    "demand_shifter_elasticity",
    "supply_shifter_elasticity",
    "schedule",
    "schedule_periods",
    "schedule_rate",
    "horizon",
    "random_rationing",
    "stock",
    "floor_share",
    "has_inflation",
)


def scenario_batch_with(
    base: ScenarioBatch, scenario: Scenario, inputs: Sequence[UncertainInput], values: np.ndarray
) -> ScenarioBatch:
    """The one-scenario batch `base` repeated once per row of values (rows, inputs), with
    each uncertain elasticity replaced; shock paths and discounting stay shared (broadcast)."""
    n = values.shape[0]
    fields = {name: np.repeat(getattr(base, name), n, axis=0) for name in _PER_SCENARIO}
    names = scenario.market.shifter_names
    for k, item in enumerate(inputs):
        if isinstance(item.target, tuple):
            side, name = item.target
            key = f"{side}_elasticity"
            fields[key][:, names.index(name)] = values[:, k]
        elif item.target == "inflation":  # a constant rate over periods 1..T
            inflation = np.zeros((n, base.periods))
            inflation[:, 1:] = values[:, k, None]
            fields["inflation"] = inflation
            fields["has_inflation"] = np.ones(n, dtype=bool)
        elif item.target == "depreciation":
            fields["floor_share"] = 1.0 - values[:, k]
        else:
            fields[item.target] = values[:, k].copy()
    return dataclasses.replace(base, **fields)


def rows_for(policy_rows: PolicyRows, n: int) -> PolicyRows:
    """The scenario's policy rows for n scenarios, policy-major: row = policy * n + scenario,
    so that each policy's rows are one contiguous block (views, not copies, in the engine)."""
    return PolicyRows(
        scenario=np.tile(np.arange(n), policy_rows.size),
        kind=np.repeat(policy_rows.kind, n),
        value=np.repeat(policy_rows.value, n),
        start=np.repeat(policy_rows.start, n),
        end=np.repeat(policy_rows.end, n),
        indexed=np.repeat(policy_rows.indexed, n),
        coverage=np.repeat(policy_rows.coverage, n),
    )


@dataclass(frozen=True)
class BandArrays:
    """Percentiles per policy: series (policies, series, percentiles, T+1), summary
    (policies, figures, percentiles), binding share and infeasible draws (policies,)."""

    series: np.ndarray
    summary: np.ndarray
    binding_share: np.ndarray
    infeasible_draws: np.ndarray
    feasible_draws: np.ndarray
    series_names: tuple[str, ...] = BAND_SERIES
    summary_names: tuple[str, ...] = BAND_SUMMARY


def solve_rows(batch: ScenarioBatch, rows: PolicyRows, band: tuple | None = None):
    """Solve and summarise; per row: feasible (R,), series (R, series, T+1) (none when the
    kernel writes them into `band`'s buffer instead, see kernel.policy_paths), summary."""
    kept = () if band is not None else BAND_SERIES
    arrays = solve(batch, rows, series=kept, alternate=False, band=band)
    feasible = ~arrays.row_failed(rows)
    summary = summarise(arrays, batch, rows)
    series = {name: arrays.named(name) for name in kept}
    binds = (arrays.binding & arrays.valid[rows.scenario]).any(axis=1)
    return feasible, series, summary, binds


def percentile_bands(
    scenario: Scenario,
    inputs: Sequence[UncertainInput],
    draws: int,
    seed: int,
    percentiles: Sequence[float],
    supply_correlation: float = 0.0,
    block: int = 2048,
    threads: int = 1,
) -> BandArrays:
    """Percentile bands of every policy over `draws` draws of the uncertain inputs.

    Blocks of `block` draws bound memory and stay in cache (each block is one vectorised
    solve); `threads` > 1 solves blocks side by side (numpy releases the GIL), with the same
    answer. Banded series are kept in float32, far finer than the Monte Carlo error of any
    percentile.
    """
    base, base_rows = pack([scenario])
    p = base_rows.size
    periods = int(scenario.horizon) + 1
    values = draw(inputs, draws, seed, supply_correlation)
    series_names, summary_names = band_names(scenario)
    # Draws last, so that each period's values over the draws are one contiguous row.
    kept = np.empty((p, len(series_names), periods, draws), dtype=np.float32)
    kept_summary = np.empty((draws, p, len(summary_names)))
    feasible = np.empty((draws, p), dtype=bool)
    binds = np.empty((draws, p), dtype=bool)

    def solve_block(start: int) -> None:
        stop = min(start + block, draws)
        batch = scenario_batch_with(base, scenario, inputs, values[start:stop])
        rows = rows_for(base_rows, stop - start)
        # The kernel writes the banded series straight into `kept` (rows are policy-major).
        ok, _, summary, bound = solve_rows(batch, rows, band=(series_names, kept, stop - start, start))
        shape = (p, stop - start)
        feasible[start:stop] = ok.reshape(shape).T
        binds[start:stop] = bound.reshape(shape).T
        for s, name in enumerate(summary_names):
            kept_summary[start:stop, :, s] = summary[name].reshape(shape).T

    starts = range(0, draws, block)  # blocks of draws, each vectorised
    if threads > 1:
        with ThreadPoolExecutor(threads) as pool:
            list(pool.map(solve_block, starts))
    else:
        for start in starts:
            solve_block(start)

    q = np.asarray(percentiles, dtype=float)
    none_feasible = ~feasible.any(axis=0)  # such a policy has no band; the caller reports it
    feasible = feasible | none_feasible[None, :]
    series_q = np.empty((len(q), p, len(series_names), periods))

    def band(policy: int) -> None:
        # Order statistics selected in compiled code (O(draws) each) over the feasible draws.
        keep = np.flatnonzero(feasible[:, policy])
        for s in range(len(series_names)):
            series_q[:, policy, s] = kernel.percentiles(kept[policy, s], keep, q).T

    if threads > 1:
        with ThreadPoolExecutor(threads) as pool:
            list(pool.map(band, range(p)))
    else:
        for policy in range(p):
            band(policy)
    summary_q = np.nanpercentile(np.where(feasible[:, :, None], kept_summary, np.nan), q, axis=0)
    count = np.where(none_feasible, 0, feasible.sum(axis=0))
    share = np.where(count > 0, (binds & feasible).sum(axis=0) / np.maximum(count, 1), 0.0)
    return BandArrays(
        series=np.moveaxis(series_q, 0, 2),  # (p, series, q, periods)
        summary=np.moveaxis(summary_q, 0, 2),  # (p, figures, q)
        binding_share=share,
        infeasible_draws=draws - count,
        feasible_draws=count,
        series_names=series_names,
        summary_names=summary_names,
    )
