"""Uncertain inputs: draws, the full path model per draw, and percentile bands.

An uncertain input (an elasticity, a constant inflation rate, the adjustment rate lambda, the
stock's depreciation delta or conversion kappa, or a growth cap's vacancy decontrol tau) may
be normal(mean, sd) truncated to its sign rule (drawn from the truncated distribution, never
clipped), uniform(low, high) or triangular(low, mode, high). Draws come from one seeded numpy
Generator (PCG64): standard normals z, correlated where asked (short- and long-run supply
elasticity through a Gaussian copula), mapped to uniforms u = Phi(z) and through each
distribution's inverse CDF (scipy.stats ppf). Every draw runs the whole path model of every
policy; the batch is cut into blocks of draws only to bound memory, each block one vectorised
engine call. Bands are percentiles over the feasible draws, with numpy's default ('linear')
definition: Hyndman & Fan (1996), "Sample Quantiles in Statistical Packages", *The American
Statistician* 50(4), definition 7.

What is banded depends on the scenario (`band_layout`): every policy bands BAND_SERIES; under
the stock schedule also STOCK_BAND_SERIES; a price ceiling with coverage below 1, exempt new
homes or vacancy decontrol also COVERAGE_BAND_SERIES; under inflation the nominal consumer
price, which is the real price times the price index: with a fixed index its percentiles are
the real ones times I_t (no extra work), with a drawn inflation rate the kernel writes it per
draw like any other series. Summary percentiles add each group's total (MODEL.md 15 and 20;
none under random rationing) and, under the stock schedule, the final and peak homes below the
free path, renters against the free path (MODEL.md 19: VS_FREE_PATH_SUMMARY), the final vacant
homes (MODEL.md 16) and, where controlled homes may convert, the total converted homes
(MODEL.md 18). Every summary figure is the kernel's, by its name in kernel.SUMMARY_INDEX.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np
from scipy import special, stats

from . import kernel
from .batch import PolicyRows, ScenarioBatch, impact_elasticity, pack
from .paths import price_index, solve
from .results import DISTRIBUTION_GROUPS, summarise
from .scenario import ADDITION_DEFAULTS, Scenario

__all__ = [
    "BAND_SERIES",
    "BAND_SUMMARY",
    "CONVERSION_SUMMARY",
    "COVERAGE_BAND_SERIES",
    "GROUP_DISCOUNTED_TOTALS",
    "GROUP_TOTALS",
    "HEADLINES",
    "NOMINAL_BAND_SERIES",
    "PARAMETERS",
    "STOCK_BAND_SERIES",
    "STOCK_SUMMARY",
    "TARGETS",
    "VACANCY_DECONTROL",
    "VS_FREE_PATH_SUMMARY",
    "BandArrays",
    "BandLayout",
    "Distribution",
    "Swings",
    "UncertainInput",
    "band_layout",
    "banded_values",
    "default_rate_coupled",
    "draw",
    "headlines",
    "is_elasticity",
    "one_at_a_time",
    "percentile_bands",
    "rows_for",
    "scenario_batch_with",
    "solve_rows",
]

#: The per-period series that every policy bands.
BAND_SERIES = (
    "consumer_price",
    "quantity",
    "shortage",
    "deadweight_loss",
    "cumulative_deadweight_loss",
    "discounted_deadweight_loss",
)
#: Banded too under the stock schedule (MODEL.md 13), for every policy (the vacant homes of
#: MODEL.md 16 are banded by their final value in the summary: memory stays 2 series a policy).
STOCK_BAND_SERIES = ("homes_below_free_path", "rent_above_free_path")
#: Banded too on a price ceiling with coverage below 1, exempt new homes or vacancy decontrol
#: (MODEL.md 14 and 17).
COVERAGE_BAND_SERIES = ("covered_price", "uncovered_price")
#: Banded too under inflation (MODEL.md 12): consumer_price x price index.
NOMINAL_BAND_SERIES = ("nominal_consumer_price",)
#: The summary figures that every policy gets percentiles of.
BAND_SUMMARY = (
    "total_deadweight_loss",
    "discounted_deadweight_loss",
    "peak_shortage",
    "final_consumer_price",
    "final_quantity",
)
#: Each group's total over the horizon (MODEL.md 15): the summary's distribution_totals.
GROUP_TOTALS = tuple("total_" + name for name in DISTRIBUTION_GROUPS)
#: The same discounted (the summary's distribution_totals_discounted): banded too, so that a
#: discounted who-gains table has its own spread (a sum's percentiles are not the sum's parts').
GROUP_DISCOUNTED_TOTALS = tuple("discounted_" + name for name in DISTRIBUTION_GROUPS)
#: Under the stock schedule: homes below the free path (MODEL.md 13) and, last, the discounted
#: renters' surplus against the free path (MODEL.md 19), which sensitivity also ranks.
STOCK_SUMMARY = (
    "final_homes_below_free_path",
    "peak_homes_below_free_path",
    "vs_free_path_renters_discounted",
)
#: Banded too under the stock schedule: the other totals of renters against the free path
#: (MODEL.md 19) and the empty homes standing at the horizon (MODEL.md 16).
VS_FREE_PATH_SUMMARY = (
    "vs_free_path_renters",
    "vs_free_path_renters_after_end",
    "vs_free_path_extra_rent",
    "vs_free_path_extra_rent_after_end",
    "final_vacant_homes",
)
#: Banded too under the stock schedule where controlled homes may convert (MODEL.md 18).
CONVERSION_SUMMARY = ("total_converted_homes",)


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
    lower_open: bool = False  # the lower bound itself is not allowed (inflation > -1, lambda > 0)

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

    def share_between(self, low: float, high: float) -> float:
        """The probability of a draw strictly between `low` and `high` (the distribution's CDF;
        a degenerate one: 1 where its value lies between, else 0)."""
        frozen = self.frozen()
        if frozen is None:
            return 1.0 if low < self.central < high else 0.0
        return float(max(frozen.cdf(high) - frozen.cdf(low), 0.0))

    def range(self) -> tuple[float, float]:
        """Low and high for sensitivity: the range given, or the 5th and 95th percentiles."""
        if self.kind != "normal":
            return self.low, self.high
        low, high = self.ppf(np.array([0.05, 0.95]))
        return float(low), float(high)


# Added with MODEL.md 12-13 (uncertain inflation and stock rates): left out of answer ids at
# its default, so that ids of requests without it are unchanged.
ADDITION_DEFAULTS[Distribution] = {"lower_open": False}


#: What an uncertain input may replace (besides ("demand_shifter" | "supply_shifter", name)).
TARGETS = (
    "demand_elasticity",
    "short_run_elasticity",
    "long_run_elasticity",
    "inflation",  # a constant rate pi of periods 1..T (market.inflation given as a number)
    "schedule_rate",  # lambda of a geometric or stock schedule (adjustment.rate)
    "depreciation",  # delta of the stock schedule (adjustment.depreciation)
    "conversion",  # kappa of the stock schedule (adjustment.conversion)
)
#: An uncertain vacancy decontrol tau of the growth cap at policy index i has the target
#: (VACANCY_DECONTROL, i).
VACANCY_DECONTROL = "vacancy_decontrol"
_NOT_ELASTICITIES = ("inflation", "schedule_rate", "depreciation", "conversion")


def is_elasticity(target: str | tuple[str, object]) -> bool:
    """Whether an uncertain input's target is an elasticity (of a curve or a shifter)."""
    if isinstance(target, tuple):
        return target[0] != VACANCY_DECONTROL
    return target not in _NOT_ELASTICITIES


def default_rate_coupled(scenario: Scenario, inputs: Sequence[UncertainInput]) -> bool:
    """An uncertain long-run elasticity under the Nerlove default rate lambda = eps_SR / eps_LR
    (a geometric or stock schedule with neither rate nor half-life, MODEL.md 2 and 20): each
    draw's larger eps_LR then also means a smaller lambda, slower building."""
    adj = scenario.adjustment
    default = adj.schedule in ("geometric", "stock") and adj.rate is None and adj.half_life is None
    return default and any(item.target == "long_run_elasticity" for item in inputs)


@dataclass(frozen=True)
class UncertainInput:
    """Which input is uncertain: target is one of TARGETS, ("demand_shifter" |
    "supply_shifter", name) or (VACANCY_DECONTROL, policy index); pointer is its place in the
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
    "build_limit",
    "conversion",
)


def scenario_batch_with(
    base: ScenarioBatch, scenario: Scenario, inputs: Sequence[UncertainInput], values: np.ndarray
) -> ScenarioBatch:
    """The one-scenario batch `base` repeated once per row of values (rows, inputs), with
    each uncertain input replaced; shock paths and discounting stay shared (broadcast), and so
    does inflation unless it is drawn.

    A drawn inflation rate pi becomes the rates (rows, T+1) of periods 1..T (column 0 = 0), as
    a constant market.inflation does; a drawn adjustment rate is lambda (schedule_rate; the
    Nerlove default eps_SR / eps_LR of a schedule without one is taken per draw by the engine,
    from the drawn elasticities); a drawn depreciation delta sets floor_share = 1 - delta; a
    drawn conversion is kappa. The impact elasticity is taken again from the drawn values
    (batch.impact_elasticity: lambda eps_LR under `stock` with a rate). A drawn vacancy
    decontrol belongs to policy rows: rows_for.
    """
    n = values.shape[0]
    fields = {name: np.repeat(getattr(base, name), n, axis=0) for name in _PER_SCENARIO}
    names = scenario.market.shifter_names
    for k, item in enumerate(inputs):
        column = values[:, k]
        if isinstance(item.target, tuple):
            side, name = item.target
            if side != VACANCY_DECONTROL:
                fields[f"{side}_elasticity"][:, names.index(name)] = column
        elif item.target == "inflation":
            rates = np.repeat(column[:, None], base.periods, axis=1)
            rates[:, 0] = 0.0
            fields["inflation"] = rates
            fields["has_inflation"] = np.ones(n, dtype=bool)
        elif item.target == "depreciation":
            fields["floor_share"] = 1.0 - column
        else:  # an elasticity, schedule_rate or conversion
            fields[item.target] = column.copy()
    fields["impact_elasticity"] = impact_elasticity(
        fields["stock"],
        fields["schedule_rate"],
        fields["short_run_elasticity"],
        fields["long_run_elasticity"],
    )
    return dataclasses.replace(base, **fields)


def rows_for(
    policy_rows: PolicyRows,
    n: int,
    inputs: Sequence[UncertainInput] = (),
    values: np.ndarray | None = None,
) -> PolicyRows:
    """The scenario's policy rows for n scenarios, policy-major: row = policy * n + scenario,
    so that each policy's rows are one contiguous block (views, not copies, in the engine).
    A drawn vacancy decontrol (target (VACANCY_DECONTROL, policy)) replaces that policy's tau
    with the draws' column of `values` (n, inputs)."""
    decontrol = np.repeat(policy_rows.decontrol, n)
    for k, item in enumerate(inputs):
        if isinstance(item.target, tuple) and item.target[0] == VACANCY_DECONTROL:
            policy = item.target[1]
            decontrol[policy * n : (policy + 1) * n] = values[:, k]
    return PolicyRows(
        scenario=np.tile(np.arange(n), policy_rows.size),
        kind=np.repeat(policy_rows.kind, n),
        value=np.repeat(policy_rows.value, n),
        start=np.repeat(policy_rows.start, n),
        end=np.repeat(policy_rows.end, n),
        indexed=np.repeat(policy_rows.indexed, n),
        coverage=np.repeat(policy_rows.coverage, n),
        exempt_new=np.repeat(policy_rows.exempt_new, n),
        decontrol=decontrol,
    )


@dataclass(frozen=True)
class BandLayout:
    """What one scenario's bands hold.

    `kept`: per policy, the kernel series written per draw into the float32 buffer (one slot
    each, policy 0's first); `series`: per policy, the banded series of the answer, in answer
    order (`kept`, plus the nominal consumer price when it is the real band times a fixed
    index: `scaled_nominal`); `summary`: the summary figures of every policy.
    """

    kept: tuple[tuple[str, ...], ...]
    series: tuple[tuple[str, ...], ...]
    summary: tuple[str, ...]
    scaled_nominal: bool

    @property
    def slots(self) -> int:
        return sum(len(names) for names in self.kept)

    @property
    def offsets(self) -> tuple[int, ...]:
        """First slot of each policy."""
        return tuple(int(x) for x in np.cumsum([0, *(len(names) for names in self.kept)])[:-1])


def band_layout(scenario: Scenario, inputs: Sequence[UncertainInput]) -> BandLayout:
    """The series and figures a scenario's bands carry: only those that apply to it."""
    stock = scenario.adjustment.schedule == "stock"
    drawn = any(item.target == "inflation" for item in inputs)
    inflated = drawn or scenario.market.inflation != 0.0  # as batch.has_inflation
    kept, series = [], []
    for policy in scenario.policies:
        partial = policy.kind == "price_ceiling" and (
            policy.coverage < 1.0 or policy.new_homes == "exempt" or policy.vacancy_decontrol != 0.0
        )
        extra = (COVERAGE_BAND_SERIES if partial else ()) + (STOCK_BAND_SERIES if stock else ())
        kept.append(BAND_SERIES + (NOMINAL_BAND_SERIES if drawn else ()) + extra)
        series.append(BAND_SERIES + (NOMINAL_BAND_SERIES if inflated else ()) + extra)
    summary = BAND_SUMMARY
    if scenario.welfare.rationing != "random":
        summary += GROUP_TOTALS + GROUP_DISCOUNTED_TOTALS
    if stock:
        summary += STOCK_SUMMARY + VS_FREE_PATH_SUMMARY
        converts = scenario.adjustment.conversion != 0.0 or any(i.target == "conversion" for i in inputs)
        summary += CONVERSION_SUMMARY if converts else ()
    return BandLayout(tuple(kept), tuple(series), summary, inflated and not drawn)


def banded_values(scenario: Scenario, inputs: Sequence[UncertainInput], draws: int) -> int:
    """Float32 values a bands request keeps: draws x (horizon + 1) x slots (the memory bound)."""
    return draws * (int(scenario.horizon) + 1) * band_layout(scenario, inputs).slots


@dataclass(frozen=True)
class BandArrays:
    """Percentiles per policy, in request order: series {name: (percentiles, T+1)} and summary
    {name: (percentiles,)} (the names of its BandLayout); binding share and infeasible and
    feasible draws (policies,)."""

    series: tuple[dict[str, np.ndarray], ...]
    summary: tuple[dict[str, np.ndarray], ...]
    binding_share: np.ndarray
    infeasible_draws: np.ndarray
    feasible_draws: np.ndarray

    def finite(self, policy: int) -> bool:
        """Every band value of the policy is finite (bands are kept in float32, about 3.4e38 at
        most: a draw can pass that where the path itself, in float64, does not)."""
        parts = (self.series[policy], self.summary[policy])
        return all(bool(np.isfinite(v).all()) for part in parts for v in part.values())


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


def _each(function, items, threads: int) -> list:
    """function(item) for every item, in order; on `threads` threads side by side where more
    than one (the compiled kernels release the GIL)."""
    if threads > 1:
        with ThreadPoolExecutor(threads) as pool:
            return list(pool.map(function, items))
    return [function(item) for item in items]


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
    percentile; memory is draws x (T+1) x the layout's slots float32 values (banded_values).
    """
    base, base_rows = pack([scenario])
    layout = band_layout(scenario, inputs)
    p = base_rows.size
    periods = int(scenario.horizon) + 1
    values = draw(inputs, draws, seed, supply_correlation)
    # Draws last, so that each period's values over the draws are one contiguous row.
    kept = np.empty((layout.slots, periods, draws), dtype=np.float32)
    figures = layout.summary
    kept_summary = np.empty((p, len(figures), draws))
    feasible = np.empty((p, draws), dtype=bool)
    binds = np.empty((p, draws), dtype=bool)

    def solve_block(start: int) -> None:
        stop = min(start + block, draws)
        batch = scenario_batch_with(base, scenario, inputs, values[start:stop])
        rows = rows_for(base_rows, stop - start, inputs, values[start:stop])
        # The kernel writes the banded series straight into `kept` (rows are policy-major).
        ok, _, summary, bound = solve_rows(batch, rows, band=(layout.kept, kept, stop - start, start))
        shape = (p, stop - start)
        feasible[:, start:stop] = ok.reshape(shape)
        binds[:, start:stop] = bound.reshape(shape)
        for f, name in enumerate(figures):
            kept_summary[:, f, start:stop] = summary[name].reshape(shape)

    _each(solve_block, range(0, draws, block), threads)  # blocks of draws, each vectorised

    q = np.asarray(percentiles, dtype=float)
    none_feasible = ~feasible.any(axis=1)  # such a policy has no band; the caller reports it
    feasible = feasible | none_feasible[:, None]
    index = price_index(np.ascontiguousarray(base.inflation))[0] if layout.scaled_nominal else None
    offsets = layout.offsets

    # Order statistics selected in compiled code (O(draws) each) over the feasible draws, in
    # tasks of about equal size (each policy's rows in four parts a thread, and the summary
    # figures) so that threads share the work evenly whatever the number of policies and
    # wherever the rows of heavy-tailed series (slower to select) fall.
    keeps = [np.flatnonzero(feasible[policy]) for policy in range(p)]
    slots = [slice(offsets[policy], offsets[policy] + len(layout.kept[policy])) for policy in range(p)]
    blocks = [kept[slot].reshape(-1, draws) for slot in slots]
    found = [np.empty((block.shape[0], len(q))) for block in blocks]
    parts = 4 * threads if threads > 1 else 1
    tasks = [(policy, part) for policy in range(p) for part in range(parts)]

    def select(task: tuple[int, int]) -> None:
        policy, part = task
        rows = blocks[policy].shape[0]
        lo, hi = rows * part // parts, rows * (part + 1) // parts
        found[policy][lo:hi] = kernel.percentiles(blocks[policy][lo:hi], keeps[policy], q)

    def summary_figures(policy: int) -> np.ndarray:
        return kernel.percentiles(kept_summary[policy], keeps[policy], q)

    _each(select, tasks, threads)
    figures_q = _each(summary_figures, range(p), threads)
    series_q, summary_q = [], []
    for policy in range(p):
        names = layout.kept[policy]
        by_slot = found[policy].reshape(len(names), periods, len(q))
        out = {name: by_slot[s].T for s, name in enumerate(names)}
        if index is not None:  # a fixed index: percentiles of x I_t are those of x, times I_t
            out["nominal_consumer_price"] = out["consumer_price"] * index[None, :]
        series_q.append({name: out[name] for name in layout.series[policy]})
        summary_q.append({name: figures_q[policy][f] for f, name in enumerate(figures)})
    count = np.where(none_feasible, 0, feasible.sum(axis=1))
    share = np.where(count > 0, (binds & feasible).sum(axis=1) / np.maximum(count, 1), 0.0)
    return BandArrays(
        series=tuple(series_q),
        summary=tuple(summary_q),
        binding_share=share,
        infeasible_draws=draws - count,
        feasible_draws=count,
    )


#: The headline figures whose swings sensitivity reports, in ranking order; then, unless
#: rationing is random, each group's total (GROUP_TOTALS), and under the stock schedule the
#: homes below the free path and the renters' discounted surplus against the free path
#: (STOCK_SUMMARY): the order of the band summary.
HEADLINES = ("discounted_deadweight_loss", "peak_shortage", "final_consumer_price")


def headlines(scenario: Scenario) -> tuple[str, ...]:
    """The headline figures of a scenario's sensitivity, in ranking order."""
    out = HEADLINES
    if scenario.welfare.rationing != "random":
        out += GROUP_TOTALS
    if scenario.adjustment.schedule == "stock":
        out += STOCK_SUMMARY
    return out


@dataclass(frozen=True)
class Swings:
    """The one-at-a-time design solved: case 0 has every input at its central value, case
    1 + 2j input j at its low and case 2 + 2j at its high, the others central."""

    ranges: tuple[tuple[float, float], ...]  # (low, high) of each input
    feasible: np.ndarray  # (2k+1, policies) bool
    figures: dict[str, np.ndarray]  # headline name -> (2k+1, policies)

    def low(self, j: int) -> int:
        """The case of input j at its low."""
        return 1 + 2 * j

    def high(self, j: int) -> int:
        """The case of input j at its high."""
        return 2 + 2 * j

    def swing(self, j: int, name: str) -> np.ndarray:
        """(policies,) |figure at the high - figure at the low| of input j, NaN where either
        case is infeasible for that policy."""
        lo, hi = self.low(j), self.high(j)
        both = self.feasible[lo] & self.feasible[hi]
        return np.where(both, np.abs(self.figures[name][hi] - self.figures[name][lo]), np.nan)

    def largest_swing(self, j: int) -> tuple[float, ...]:
        """Per headline figure (in `figures` order), input j's largest swing over the policies
        (0 where no policy has both cases feasible)."""
        return tuple(float(np.max(np.nan_to_num(self.swing(j, name), nan=0.0))) for name in self.figures)

    def ranking(self) -> list[int]:
        """The inputs, largest swing first: by the largest swing in the first headline figure,
        then the next (ties keep the request's order)."""
        return sorted(range(len(self.ranges)), key=self.largest_swing, reverse=True)


def one_at_a_time(scenario: Scenario, inputs: Sequence[UncertainInput]) -> Swings:
    """Each uncertain input moved alone to its low and high (the range given, or its 5th and 95th
    percentile) with every other at its central value: 2k + 1 cases of the scenario, solved in one
    vectorised batch, with the headline figures of each case and policy."""
    k = len(inputs)
    centre = np.array([i.distribution.central for i in inputs])
    values = np.tile(centre, (2 * k + 1, 1))
    ranges = tuple(i.distribution.range() for i in inputs)
    for j, (low, high) in enumerate(ranges):
        values[1 + 2 * j, j] = low
        values[2 + 2 * j, j] = high
    base, base_rows = pack([scenario])
    batch = scenario_batch_with(base, scenario, inputs, values)
    rows = rows_for(base_rows, values.shape[0], inputs, values)
    feasible, _, summary, _ = solve_rows(batch, rows)
    policies = base_rows.size
    return Swings(
        ranges=ranges,
        feasible=feasible.reshape(policies, -1).T,  # rows are policy-major
        figures={name: summary[name].reshape(policies, -1).T for name in headlines(scenario)},
    )
