"""From path arrays to one answer per scenario: paths, summary, reduced form, cautions.

`solve_scenarios` is the engine's entry point for a list of scenarios: it packs them, solves
them vectorised (a long list in a pipeline of chunks), and returns, in order, a ScenarioResult
or the EngineError that explains why that scenario has no answer. The summary figures are computed for all
policy rows at once; only the final slicing into per-scenario objects walks the list.
"""

from __future__ import annotations

from collections.abc import Sequence
from concurrent.futures import ThreadPoolExecutor
from operator import itemgetter
from typing import Any, NamedTuple

import numpy as np

from .batch import PolicyRows, ScenarioBatch, pack
from .cautions import (
    LARGE_LOSS,
    NEGLIGIBLE,
    OTHER_FORM_FIGURES,
    form_gaps,
    misallocation_shares,
    scenario_cautions,
)
from .errors import (
    EngineError,
    InfeasiblePolicyError,
    InputError,
    LinearFormRangeError,
    NonFiniteResultError,
)
from .kernel import GROUP_NAMES, SERIES_NAMES, SUMMARY_AT, SUMMARY_INDEX
from .paths import PathArrays, any_per_scenario, finish_solve, run_period_pass, solve, start_solve
from .policies import is_ceiling
from .reduced_form import short_and_long_run
from .scenario import Scenario

__all__ = [
    "CONVERSION_SERIES",
    "COVERAGE_SERIES",
    "DISTRIBUTION_GROUPS",
    "NOMINAL_SERIES",
    "SERIES",
    "STOCK_SERIES",
    "PolicyPath",
    "PolicySummary",
    "ScenarioResult",
    "assemble",
    "solve_scenarios",
    "summarise",
]

#: The kernel's first sixteen series, around where `binding` goes in an answer's path.
_BEFORE_BINDING, _AFTER_BINDING = slice(0, 9), slice(9, 16)
#: The per-period series of every policy path, in response order: the kernel's first sixteen
#: series with `binding` after the marginal cost.
SERIES = (*SERIES_NAMES[_BEFORE_BINDING], "binding", *SERIES_NAMES[_AFTER_BINDING])
#: The series solve keeps for an answer: every reported one but the `binding` flags.
_REPORTED = SERIES_NAMES[:16]
#: Who gains and who loses (MODEL.md 15, 20): per path, in this order; money per model period.
DISTRIBUTION_GROUPS = GROUP_NAMES
#: Series of a ceiling over two groups: coverage below 1 (MODEL.md 14), exempt new homes or
#: vacancy decontrol (17).
COVERAGE_SERIES = ("covered_price", "uncovered_price", "covered_quantity", "uncovered_quantity")
#: Series of every path under the stock schedule (MODEL.md 13, 16).
STOCK_SERIES = ("homes_below_free_path", "rent_above_free_path", "vacant_homes")
#: Series of every path under the stock schedule with conversion (MODEL.md 18).
CONVERSION_SERIES = ("converted_homes",)
#: Renters against the free path under the stock schedule (MODEL.md 19): answer key -> series.
VS_FREE_PATH_SERIES = {"renters": "renters_vs_free_path", "extra_rent": "extra_rent_vs_free_path"}
#: The series the misallocation caution reads (MODEL.md 20), in the order cautions takes them.
_MISALLOCATION = ("misallocation_loss", "consumer_price", "quantity")


def _contiguous(names: Sequence[str], index: dict[str, int]) -> slice:
    """The slice of positions `names` hold, in their order, one after another; ValueError if
    they do not (the kernel's tables would have changed under the code that slices them)."""
    first = index[names[0]]
    if [index[name] for name in names] != list(range(first, first + len(names))):
        raise ValueError(f"{names} are not one run of positions")
    return slice(first, first + len(names))


#: Who gains and who loses: the summary positions of each group's total, and of its discounted
#: total, in the order of GROUP_NAMES.
_GROUP_TOTALS = _contiguous(["total_" + name for name in GROUP_NAMES], SUMMARY_INDEX)
_GROUP_DISCOUNTED = _contiguous(["discounted_" + name for name in GROUP_NAMES], SUMMARY_INDEX)
#: Their totals in the summary: answer key -> kernel summary figure.
VS_FREE_PATH_TOTALS = {
    "renters": "vs_free_path_renters",
    "renters_discounted": "vs_free_path_renters_discounted",
    "renters_after_end": "vs_free_path_renters_after_end",
    "extra_rent": "vs_free_path_extra_rent",
    "extra_rent_after_end": "vs_free_path_extra_rent_after_end",
}
#: Series of every path under inflation (MODEL.md 12): real price x price index.
NOMINAL_SERIES = ("nominal_consumer_price", "nominal_producer_price")

_POLICY_FIELD = {
    "price_ceiling": "level",
    "price_floor": "level",
    "quantity_cap": "level",
    "unit_tax": "amount",
    "unit_subsidy": "amount",
    "ad_valorem_tax": "rate",
    "none": "kind",
}


# The result types are named tuples: immutable records, made several times faster than frozen
# dataclasses (each field of which is set through object.__setattr__), which counts at one
# summary per policy and scenario.


class PolicyPath(NamedTuple):
    """One policy's series, each (T+1,), period 0 first: SERIES, then those of the additions
    that apply (NOMINAL_SERIES, COVERAGE_SERIES, STOCK_SERIES); `distribution` per group of
    DISTRIBUTION_GROUPS, None under random rationing."""

    name: str
    kind: str
    series: dict[str, np.ndarray]
    distribution: dict[str, np.ndarray] | None = None
    #: Under the stock schedule: renters' surplus and extra rent against the free path.
    vs_free_path: dict[str, np.ndarray] | None = None


class PolicySummary(NamedTuple):
    """Headline figures of one policy over the horizon; money per model period summed."""

    name: str
    kind: str
    total_deadweight_loss: float
    discounted_deadweight_loss: float
    peak_shortage: float
    peak_shortage_period: int | None
    binding_periods: int
    final_consumer_price: float
    final_quantity: float
    total_consumer_surplus_change: float
    total_producer_surplus_change: float
    total_government_revenue: float
    #: Totals of DISTRIBUTION_GROUPS over the horizon; None under random rationing.
    distribution_totals: dict[str, float] | None = None
    #: Under the stock schedule: homes below the free path in the last period, and at most.
    final_homes_below_free_path: float | None = None
    peak_homes_below_free_path: float | None = None
    #: Under the stock schedule: renters against the free path over the horizon (MODEL.md 19),
    #: homes standing empty in the last period, and (with conversion) homes converted in all.
    vs_free_path_totals: dict[str, float] | None = None
    final_vacant_homes: float | None = None
    total_converted_homes: float | None = None
    #: The same request in the other curve form (MODEL.md 20); None where it has no answer.
    other_form: dict[str, Any] | None = None
    #: Discounted totals of DISTRIBUTION_GROUPS (the discount factors of the welfare options);
    #: None under random rationing.
    distribution_totals_discounted: dict[str, float] | None = None


class ScenarioResult(NamedTuple):
    horizon: int
    supply_elasticity: np.ndarray  # (T+1,)
    reduced_form: dict[str, dict[str, dict[str, float]]]
    paths: tuple[PolicyPath, ...]
    summary: tuple[PolicySummary, ...]
    cautions: tuple[str, ...]
    price_index: np.ndarray | None = None  # (T+1,) under inflation: I_t, I_0 = 1


def summarise(arrays: PathArrays, batch: ScenarioBatch, rows: PolicyRows) -> dict[str, np.ndarray]:
    """Summary figures of every policy row, each (R,), as the compiled pass summed them."""
    figures = {name: arrays.summary[:, i] for name, i in SUMMARY_INDEX.items()}
    figures["peak_shortage_period"] = figures["peak_shortage_period"].astype(np.int64)
    figures["binding_periods"] = figures["binding_periods"].astype(np.int64)
    return figures


def _first_period(mask: np.ndarray) -> int:
    return int(np.argmax(mask))


#: A free market this far (a fraction) from the base point strains the linear form's range.
LINEAR_STRAIN = 0.5

#: What usually makes each kind of policy infeasible within the linear form's range.
_INFEASIBLE_HINT = {
    "unit_tax": "the tax is at or above the choke price",
    "ad_valorem_tax": "the tax is at or above the choke price",
    "price_ceiling": "the ceiling is below the lowest supply price",
    "price_floor": "the floor is above the highest price buyers pay",
    "unit_subsidy": "the subsidy is at or above the supply price",
}


def _policy_pointer(local: int, policy) -> str:
    """Where an infeasible policy's number is: its growth, level, amount or rate; a freeze at the
    base price (base_level, or the older "level": "base": both load alike) has no number, so the
    policy itself."""
    if policy.growth is not None:
        return f"/policies/{local}/growth"
    if policy.base_level:
        return f"/policies/{local}"
    return f"/policies/{local}/{_POLICY_FIELD[policy.kind]}"


def _infeasible_message(scenario: Scenario, arrays: PathArrays, i: int, t: int, policy) -> str:
    """Why a policy has no answer in period t: the real cause, and what to change."""
    head = f"policy '{policy.name}' leaves zero or negative quantity or price in period {t}"
    market = scenario.market
    price = float(arrays.free_price[i, t]) / market.price - 1.0
    quantity = float(arrays.free_quantity[i, t]) / market.quantity - 1.0
    if market.form == "linear" and max(abs(price), abs(quantity)) > LINEAR_STRAIN:
        name, change = ("price", price) if abs(price) >= abs(quantity) else ("quantity", quantity)
        moved = f"{name} {100 * change:+.0f} %"
        return (
            f"{head}: by then the shocks have compounded beyond the range of the linear (first-order) "
            f"form (the free market's {moved} from the base point), where its curves reach zero; use "
            '"form": "constant_elasticity", or a shorter horizon or smaller shocks'
        )
    hint = _INFEASIBLE_HINT.get(policy.kind)
    return f"{head} (most often because {hint})" if hint else head


#: A demand price elasticity closer to zero than this is named as the cause when a policy's
#: numbers overflow (see _scenario_error): far closer to zero than published estimates for rented
#: homes (cautions.INELASTIC_DEMAND gives the range, from memory, and cautions on it).
NEAR_VERTICAL_DEMAND = 1e-3


def _scenario_error(i: int, scenario: Scenario, arrays: PathArrays, row_index: np.ndarray) -> EngineError:
    """The first problem of a failed scenario, with the pointer of the input to change."""
    names = scenario.market.shifter_names
    failing = {names[j] for j in np.flatnonzero(arrays.shift_out_of_range[i])}
    if failing:  # blamed on the first shock, in the request's order, of a shifter out of range
        first = next(k for k, s in enumerate(scenario.shocks) if s.shifter in failing)
        name = scenario.shocks[first].shifter
        return InputError(
            f"the shocks on '{name}' add up to a change of -100 % or less, or above a "
            f"million-fold rise, in some period; each shifter's summed change must stay above -1",
            f"/shocks/{first}",
        )
    if arrays.schedule_undefined[i]:
        return InputError(
            f"a {scenario.adjustment.schedule} schedule without rate or half_life uses the Nerlove "
            "rate short_run / long_run, which needs 0 < short-run <= long-run elasticity; give a rate",
            "/adjustment",
        )
    if arrays.linear_out_of_range[i].any():
        t = _first_period(arrays.linear_out_of_range[i])
        return LinearFormRangeError(
            f"in period {t} the linear (first-order) form gives a free-market price or quantity "
            "of zero or less: the shock is too large for the linear form; use "
            '"form": "constant_elasticity"',
            "/shocks",
            period=t,
        )
    if arrays.price_index_out_of_range[i]:
        return InputError(
            "with this inflation the price index, or the nominal prices, leave the range of "
            "representable numbers within the horizon (they grow past about 1e308 or fall below "
            "about 1e-308); reduce the inflation or the horizon",
            "/market/inflation",
        )
    if arrays.discount_out_of_range[i]:
        return InputError(
            "with this discount rate the discount factors 1 / prod(1 + r) grow past the largest "
            "representable number (about 1e308) within the horizon, as a rate near -100 % a period "
            "compounds; raise the discount rate or shorten the horizon",
            "/welfare/discount_rate",
        )
    for local, r in enumerate(row_index):
        policy = scenario.policies[local]
        if arrays.unbounded_willingness[r]:
            return InputError(
                "random rationing needs finite willingness to pay: with constant-elasticity "
                "demand the price elasticity must be below -1 when the request has a price "
                f"ceiling ('{policy.name}')",
                "/welfare/rationing",
            )
    for local, r in enumerate(row_index):
        policy = scenario.policies[local]
        if arrays.policy_infeasible[r].any():
            t = _first_period(arrays.policy_infeasible[r])
            return InfeasiblePolicyError(
                _infeasible_message(scenario, arrays, i, t, policy),
                _policy_pointer(local, policy),
                period=t,
            )
    for local, r in enumerate(row_index):
        if arrays.non_finite[r]:
            name = scenario.policies[local].name
            eta = scenario.market.demand_elasticity
            if abs(eta) < NEAR_VERTICAL_DEMAND:
                # Derived: households' value of the q-th home, Qd^-1(q), grows as (Q*/q)^(1/|eta|),
                # past 1e308 once ln(Q*/q) / |eta| > 709 (a 10 % shortfall: |eta| < 1.5e-4).
                return NonFiniteResultError(
                    f"demand this close to vertical (a price elasticity of {eta:g}) puts what "
                    f"households would pay for the homes that policy '{name}' leaves unlet beyond "
                    "the representable range; give the demand's price elasticity as measured for "
                    "this market",
                    "/market/demand/price_elasticity",
                )
            return NonFiniteResultError(
                f"policy '{name}' produces numbers outside the representable range; reduce the "
                "shocks or the horizon",
                f"/policies/{local}",
            )
    return EngineError("the scenario could not be computed")


def _other_form_answers(batch: ScenarioBatch, rows: PolicyRows, arrays: PathArrays, refused) -> np.ndarray:
    """(n,) True where the same request sent in the other curve form has an answer (MODEL.md
    20): its free path stays in the linear form's range, every policy is feasible and finite in
    it, and no row is `refused` there (_rationing_refused_in_other_form: random rationing of a
    ceiling needs finite willingness to pay)."""
    row_ok = _other_form_rows_ok(arrays, refused)
    return arrays.alternate_feasible & ~any_per_scenario(~row_ok, rows.scenario, batch.size)


def _other_form_rows_ok(arrays: PathArrays, refused: np.ndarray) -> np.ndarray:
    """(R,) True where a row is feasible and finite in the other curve form and not `refused`."""
    return (arrays.summary[:, SUMMARY_INDEX["other_feasible"]] > 0.0) & ~refused


#: Per figure compared between the curve forms (OTHER_FORM_FIGURES): its name and its summary
#: positions in this form and in the other one.
_FORM_FIGURES = tuple((key, SUMMARY_INDEX[key], SUMMARY_INDEX["other_" + key]) for key in OTHER_FORM_FIGURES)
_FORM_HERE = np.array([here for _, here, _ in _FORM_FIGURES])
_FORM_THERE = np.array([there for _, _, there in _FORM_FIGURES])
#: What each of them is measured against: money summed (the base rent bill over the horizon),
#: rent (the base rent), homes (the base homes).
_FORM_SCALES = {
    "discounted_deadweight_loss": "rent_bill",
    "final_consumer_price": "price",
    "peak_shortage": "quantity",
}


def _form_gaps(
    summary: np.ndarray, rows: PolicyRows, batch: ScenarioBatch, rent_bills: np.ndarray, other_ok: np.ndarray
) -> list[tuple[tuple[str, int, int], ...]]:
    """Per row, the figures of _FORM_FIGURES whose two curve forms differ visibly (form_gaps,
    against each figure's scale: the base rent bill over the horizon for money, the base rent
    for prices, the base homes for quantities), for every row at once; () where the other form
    has no answer."""
    scale = {"rent_bill": rent_bills, "price": batch.price, "quantity": batch.quantity}
    gaps = form_gaps(
        summary.take(_FORM_HERE, axis=1),
        summary.take(_FORM_THERE, axis=1),
        np.column_stack([scale[_FORM_SCALES[key]] for key, _, _ in _FORM_FIGURES])[rows.scenario],
    )
    gaps &= other_ok[:, None]
    return [
        tuple(f for f, differs in zip(_FORM_FIGURES, row, strict=True) if differs) for row in gaps.tolist()
    ]


def _rationing_refused_in_other_form(batch: ScenarioBatch, rows: PolicyRows, ceiling) -> np.ndarray:
    """(R,) True for a ceiling row of a linear scenario under random rationing whose demand has
    |eta| <= 1: the constant-elasticity form refuses such a request (MODEL.md 11)."""
    s_of = rows.scenario
    return (
        ceiling
        & batch.random_rationing[s_of]
        & ~batch.constant_elasticity[s_of]
        & (batch.demand_elasticity[s_of] >= -1.0)
    )


#: Scenarios solved in one pass when a list is long enough to pipeline (solve_scenarios).
PIPELINE_CHUNK = 256


def solve_scenarios(
    scenarios: Sequence[Scenario], as_lists: bool = False
) -> list[ScenarioResult | EngineError]:
    """Every scenario's paths, vectorised; errors are returned, not raised.

    as_lists=True gives each series as a Python list (converted for the whole batch at once,
    far faster than array by array) instead of a numpy view.

    A list of more than PIPELINE_CHUNK scenarios is solved in chunks of that many, in a
    pipeline: while this thread slices chunk k into answers (Python, holding the GIL), a second
    thread runs chunk k + 1's compiled period pass (run_period_pass: one kernel call, which
    releases the GIL; everything else stays on this thread, so the second thread waits for the
    GIL only to enter and leave it). Each scenario's numbers are its own whatever else shares
    its pass, so the answers are the same bytes as from one pass; the chunks' arrays are
    smaller, too.
    """
    if len(scenarios) <= PIPELINE_CHUNK:
        return _solve_chunk(scenarios, as_lists)
    chunks = [scenarios[k : k + PIPELINE_CHUNK] for k in range(0, len(scenarios), PIPELINE_CHUNK)]
    out: list[ScenarioResult | EngineError] = []
    with ThreadPoolExecutor(1, thread_name_prefix="shockpath-solve") as period_passes:

        def start(chunk: Sequence[Scenario]):
            batch, rows = pack(chunk)
            pending = start_solve(batch, rows, reported_series(batch, rows))
            return chunk, pending, period_passes.submit(run_period_pass, pending)

        following = start(chunks[0])
        for k in range(len(chunks)):
            chunk, pending, period_pass = following
            if k + 1 < len(chunks):
                following = start(chunks[k + 1])  # its pass queued behind chunk k's
            arrays = finish_solve(pending, period_pass.result())
            out += assemble(chunk, pending.batch, pending.rows, arrays, as_lists)
    return out


def _solve_chunk(scenarios: Sequence[Scenario], as_lists: bool) -> list[ScenarioResult | EngineError]:
    """pack, solve and assemble in one pass."""
    if not scenarios:
        return []
    batch, rows = pack(scenarios)
    arrays = solve(batch, rows, series=reported_series(batch, rows))
    return assemble(scenarios, batch, rows, arrays, as_lists)


def grouped_rows(rows: PolicyRows, ceiling: np.ndarray | None = None) -> np.ndarray:
    """(R,) True where a ceiling's homes are two groups (MODEL.md 17): coverage below 1, new
    homes exempt, or vacancy decontrol. `ceiling` is is_ceiling(rows.kind) where known."""
    two = (rows.coverage < 1.0) | rows.exempt_new | (rows.decontrol > 0.0)
    if not two.any():
        return two
    return two & (is_ceiling(rows.kind) if ceiling is None else ceiling)


def reported_series(batch: ScenarioBatch, rows: PolicyRows) -> tuple[str, ...]:
    """The kernel series an answer of this batch needs: the sixteen of every answer, the
    distribution, and the additions' series only where some scenario uses them."""
    names = _REPORTED + DISTRIBUTION_GROUPS
    if grouped_rows(rows).any():
        names += COVERAGE_SERIES
    if batch.stock.any():
        names += STOCK_SERIES + tuple(VS_FREE_PATH_SERIES.values())
        if (batch.conversion > 0.0).any():
            names += CONVERSION_SERIES
    return names


def _first_periods(series, end: int):
    """Periods 0..end-1 of a row's kept series (kept x periods): one view of a numpy block, or
    the Python lists themselves where nothing is cut (as_lists: made for this answer alone)."""
    if isinstance(series, np.ndarray):
        return series[:, :end]
    return series if len(series[0]) == end else [values[:end] for values in series]


def _plan(names, position: dict[str, int]) -> tuple[tuple[str, int], ...]:
    """(name, position) of each of `names` among the kept series, or () where they were not kept."""
    names = tuple(names)
    return tuple((name, position[name]) for name in names) if all(n in position for n in names) else ()


def _homes_not_standing(summary: PolicySummary) -> float:
    """Under `stock`, the homes a path has fewer than the free path in its last period that are
    not standing at all: homes below the free path less those standing empty (MODEL.md 16:
    vacant homes are offered again at once when a floor or permit cap ends)."""
    return summary.final_homes_below_free_path - (summary.final_vacant_homes or 0.0)


def _ceilings_off_the_free_path(
    scenario: Scenario, summaries: Sequence[PolicySummary], below: np.ndarray, negligible: float
) -> tuple[dict[str, tuple[float, int]], list[str]]:
    """Under `stock`, the price ceilings whose paths leave the free path where a whole market
    would not: {name: (most homes above the free path, its period)} for each with more homes in
    some period, and the names of those that never bind and yet have fewer homes in some period.
    `below`: the scenario's homes_below_free_path, (its policies, periods)."""
    more: dict[str, tuple[float, int]] = {}
    fewer: list[str] = []
    for local, summary in enumerate(summaries):
        if summary.kind != "price_ceiling":
            continue
        path = below[local]
        lowest = int(np.argmin(path))
        if path[lowest] < -negligible:
            more[summary.name] = (float(-path[lowest]), lowest)
        elif summary.binding_periods == 0 and float(path.max()) > negligible:
            fewer.append(summary.name)
    return more, fewer


def assemble(
    scenarios: Sequence[Scenario],
    batch: ScenarioBatch,
    rows: PolicyRows,
    arrays: PathArrays,
    as_lists: bool = False,
) -> list[ScenarioResult | EngineError]:
    """Slice the batch's arrays into one result (or error) per scenario."""
    failed = arrays.scenario_failed(rows)
    (sr_price, sr_quantity), (lr_price, lr_quantity) = short_and_long_run(batch)
    ceiling = is_ceiling(rows.kind)
    starts = np.searchsorted(rows.scenario, np.arange(batch.size + 1))

    block = arrays.series  # the series solve kept (reported_series), in arrays.series_names order
    binding = arrays.binding
    position = {name: j for j, name in enumerate(arrays.series_names)}
    partial = grouped_rows(rows, ceiling)
    exempt = ceiling & (rows.exempt_new | (rows.decontrol > 0.0))
    conversion = batch.conversion
    index = nominal = None
    if batch.has_inflation.any():
        index = arrays.price_index
        with np.errstate(over="ignore", invalid="ignore"):  # overflow only where the scenario failed
            nominal = np.stack(
                [
                    block[:, position[name]] * index[rows.scenario]
                    for name in ("consumer_price", "producer_price")
                ],
                axis=1,
            )
    if as_lists:  # one conversion for the whole batch, far faster than array by array
        block, binding = block.tolist(), binding.tolist()
        if nominal is not None:
            index, nominal = index.tolist(), nominal.tolist()
    figures = arrays.summary.tolist()
    refused = _rationing_refused_in_other_form(batch, rows, ceiling)
    other_ok = _other_form_answers(batch, rows, arrays, refused)[rows.scenario]
    other_refused = any_per_scenario(refused, rows.scenario, batch.size)
    # Rows that make the other form refuse their whole request (where its free market answers).
    other_row_failed = (~_other_form_rows_ok(arrays, refused)).tolist()
    alternate_feasible = arrays.alternate_feasible.tolist()
    # The base rent bill over the horizon: the scale of money figures (what is rounding).
    rent_bills = batch.price * batch.quantity * batch.payments_per_period * (batch.horizon + 1)
    differing_figures = _form_gaps(arrays.summary, rows, batch, rent_bills, other_ok)
    # Each row's kept series, picked in the answer's order around `binding` (one C call a row).
    before_binding = itemgetter(*(position[name] for name in SERIES_NAMES[_BEFORE_BINDING]))
    after_binding = itemgetter(*(position[name] for name in SERIES_NAMES[_AFTER_BINDING]))
    group_series = itemgetter(*(position[name] for name in DISTRIBUTION_GROUPS))
    coverage_plan = _plan(COVERAGE_SERIES, position)
    stock_plan = _plan(STOCK_SERIES, position)
    conversion_plan = _plan(CONVERSION_SERIES, position)
    vs_kept = _plan(VS_FREE_PATH_SERIES.values(), position)
    vs_plan = (
        tuple((key, j) for key, (_, j) in zip(VS_FREE_PATH_SERIES, vs_kept, strict=True)) if vs_kept else ()
    )
    at = SUMMARY_AT
    vs_totals_plan = tuple((key, SUMMARY_INDEX[name]) for key, name in VS_FREE_PATH_TOTALS.items())
    # Per-row flags as Python values, read once each below (a numpy scalar costs more to index).
    is_ceiling_row, partial_row, exempt_row = ceiling.tolist(), partial.tolist(), exempt.tolist()
    covers_part = (rows.coverage < 1.0).tolist()
    other_ok_row = other_ok.tolist()
    results: list[ScenarioResult | EngineError] = []
    for i, scenario in enumerate(scenarios):
        row_index = range(int(starts[i]), int(starts[i + 1]))
        if failed[i]:
            results.append(_scenario_error(i, scenario, arrays, np.asarray(row_index)))
            continue
        end = int(batch.horizon[i]) + 1
        paths = []
        summaries = []
        differing: dict[str, dict[str, tuple[float, float]] | None] = {}
        ceiling_binds = partial_binds = exempt_binds = False
        inflated = bool(batch.has_inflation[i])
        stock = bool(batch.stock[i])
        converting = stock and bool(conversion[i] > 0.0)
        random = bool(batch.random_rationing[i])
        other_form = "linear" if scenario.market.form == "constant_elasticity" else "constant_elasticity"
        for local, r in enumerate(row_index):
            policy = scenario.policies[local]
            kept = list(_first_periods(block[r], end))  # one view (or list) per kept series
            path = dict(
                zip(SERIES, (*before_binding(kept), binding[r][:end], *after_binding(kept)), strict=True)
            )
            if inflated:
                path["nominal_consumer_price"] = nominal[r][0][:end]
                path["nominal_producer_price"] = nominal[r][1][:end]
            if partial_row[r]:
                for name, j in coverage_plan:
                    path[name] = kept[j]
            vs_free_path = None
            if stock:
                for name, j in stock_plan + conversion_plan if converting else stock_plan:
                    path[name] = kept[j]
                vs_free_path = {key: kept[j] for key, j in vs_plan}
            groups = None if random else dict(zip(DISTRIBUTION_GROUPS, group_series(kept), strict=True))
            paths.append(PolicyPath(policy.name, policy.kind, path, groups, vs_free_path))
            f = figures[r]
            peak_period = int(f[at.peak_shortage_period])
            binding_periods = int(f[at.binding_periods])
            if binding_periods > 0:
                ceiling_binds = ceiling_binds or is_ceiling_row[r]
                partial_binds = partial_binds or (partial_row[r] and covers_part[r])
                exempt_binds = exempt_binds or exempt_row[r]
            if other_ok_row[r]:
                differing[policy.name] = {
                    key: (f[here], f[there]) for key, here, there in differing_figures[r]
                }
            else:
                differing[policy.name] = None
            summaries.append(
                PolicySummary(
                    name=policy.name,
                    kind=policy.kind,
                    total_deadweight_loss=f[at.total_deadweight_loss],
                    discounted_deadweight_loss=f[at.discounted_deadweight_loss],
                    peak_shortage=f[at.peak_shortage],
                    peak_shortage_period=peak_period if peak_period >= 0 else None,
                    binding_periods=binding_periods,
                    final_consumer_price=f[at.final_consumer_price],
                    final_quantity=f[at.final_quantity],
                    total_consumer_surplus_change=f[at.total_consumer_surplus_change],
                    total_producer_surplus_change=f[at.total_producer_surplus_change],
                    total_government_revenue=f[at.total_government_revenue],
                    distribution_totals=None
                    if random
                    else dict(zip(GROUP_NAMES, f[_GROUP_TOTALS], strict=True)),
                    final_homes_below_free_path=f[at.final_homes_below_free_path] if stock else None,
                    peak_homes_below_free_path=f[at.peak_homes_below_free_path] if stock else None,
                    vs_free_path_totals={key: f[k] for key, k in vs_totals_plan} if stock else None,
                    final_vacant_homes=f[at.final_vacant_homes] if stock else None,
                    total_converted_homes=f[at.total_converted_homes] if converting else None,
                    other_form={
                        "form": other_form,
                        "discounted_deadweight_loss": f[at.other_discounted_deadweight_loss],
                        "final_consumer_price": f[at.other_final_consumer_price],
                        "peak_shortage": f[at.other_peak_shortage],
                    }
                    if other_ok_row[r]
                    else None,
                    distribution_totals_discounted=None
                    if random
                    else dict(zip(GROUP_NAMES, f[_GROUP_DISCOUNTED], strict=True)),
                )
            )
        rf = {
            name: {
                "short_run": {"price": float(sr_price[i, j]), "quantity": float(sr_quantity[i, j])},
                "long_run": {"price": float(lr_price[i, j]), "quantity": float(lr_quantity[i, j])},
            }
            for j, name in enumerate(scenario.market.shifter_names)
        }
        more_homes, unbound_changed = (
            _ceilings_off_the_free_path(
                scenario,
                summaries,
                arrays.named("homes_below_free_path")[row_index.start : row_index.stop, :end],
                NEGLIGIBLE * float(batch.quantity[i]),
            )
            if stock
            else ({}, [])
        )
        unlike_free_path = set(more_homes) | set(unbound_changed)
        rent_bill = float(rent_bills[i])
        cautions = scenario_cautions(
            form=scenario.market.form,
            ceiling_binds=ceiling_binds,
            random_rationing=random,
            never_binding=[
                s.name
                for s in summaries
                if s.kind != "none" and s.binding_periods == 0 and s.name not in unlike_free_path
            ],
            inflation=inflated,
            stock=stock,
            partial_binds=partial_binds,
            other_form=differing,
            shortage=any(s.peak_shortage > 0.0 for s in summaries),
            lifted_ceilings=[
                p.name
                for p, s in zip(scenario.policies, summaries, strict=True)
                if p.kind == "price_ceiling"
                and s.binding_periods > 0
                and p.end is not None
                and p.end < end - 1
            ],
            misallocation_shares=misallocation_shares(
                [p.name for p in scenario.policies],
                *(arrays.named(name)[row_index.start : row_index.stop, :end] for name in _MISALLOCATION),
                float(batch.payments_per_period[i]),
            )
            if random
            else None,
            exempt_binds=exempt_binds,
            other_form_refused=bool(other_refused[i]),
            other_form_refusing=[
                p.name
                for p, r in zip(scenario.policies, row_index, strict=True)
                if other_row_failed[r] and alternate_feasible[i]
            ],
            large_losses={
                s.name: s.total_deadweight_loss / rent_bill
                for s in summaries
                if rent_bill > 0.0 and s.total_deadweight_loss > LARGE_LOSS * rent_bill
            },
            caps_below_stock={
                p.name: (float(p.level), float(batch.quantity[i]))
                for p in scenario.policies
                if stock and p.kind == "quantity_cap" and p.level is not None and p.level < batch.quantity[i]
            },
            held_to_horizon={
                p.name: _homes_not_standing(s)
                for p, s in zip(scenario.policies, summaries, strict=True)
                if stock
                and p.kind != "none"
                and p.start <= end - 1
                and (p.end is None or p.end >= end - 1)
                and _homes_not_standing(s) > NEGLIGIBLE * float(batch.quantity[i])
            },
            more_homes=more_homes,
            unbound_changed=unbound_changed,
            lossless_ceilings=[
                s.name
                for s in summaries
                if stock
                and s.kind == "price_ceiling"
                and s.binding_periods > 0
                and abs(s.total_deadweight_loss) <= NEGLIGIBLE * rent_bill
            ],
            unlet_homes_removed=stock
            and scenario.adjustment.depreciation is None
            and any(s.kind in ("price_floor", "quantity_cap") and s.binding_periods > 0 for s in summaries),
            conversion=converting and any((s.total_converted_homes or 0.0) > 0.0 for s in summaries),
            conversion_rate=float(conversion[i]),
            demand_elasticity=scenario.market.demand_elasticity,
            short_run_elasticity=float(batch.short_run_elasticity[i]),
            impact_elasticity=float(batch.impact_elasticity[i]),
        )
        results.append(
            ScenarioResult(
                horizon=end - 1,
                supply_elasticity=(
                    arrays.supply_elasticity[i, :end].tolist()
                    if as_lists
                    else arrays.supply_elasticity[i, :end]
                ),
                reduced_form=rf,
                paths=tuple(paths),
                summary=tuple(summaries),
                cautions=tuple(cautions),
                price_index=(index[i][:end] if inflated else None),
            )
        )
    return results
