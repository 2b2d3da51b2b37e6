"""Transition paths: every policy of every scenario, period by period, in one pass.

For each period t = 0..T: the supply elasticity eps_t of the adjustment schedule, the
period's curves (shifted by the shocks), the free-market equilibrium, each policy's outcome
against it, and its welfare change. Period 0 is the base point. Cumulative deadweight loss
is sum_(s<=t) DWL_s; discounted, sum_(s<=t) DWL_s prod_(u<=s) 1/(1+r_u).

Arrays are (scenarios, periods) and (policy rows, periods). The work runs in the compiled
pass of kernel.py (its inputs prepared there too: shock paths, schedules, discounting); this
module packs its inputs, reads its outputs and turns its flags into problem masks. Problems are
returned as masks, not raised, so that one bad scenario in a batch, or one bad draw in a band,
does not stop the others.

Sources: each period's equilibrium is the displacement model of Muth (1964), Gardner (1987) and
Alston, Norton & Pardey (1995), *Science Under Scarcity*, ch. 4-5; the discount factor is the
ordinary present value (as numpy_financial.npv for a constant rate).
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from ..limits import MAX_SHIFTER_CHANGE
from . import kernel
from .batch import PolicyRows, ScenarioBatch
from .policies import Outcome, is_ceiling
from .welfare import WelfareChange

__all__ = ["PathArrays", "price_index", "solve"]


@dataclass(frozen=True)
class PathArrays:
    """Every path of a batch; (n, T+1) per scenario, (R, T+1) per policy row."""

    valid: np.ndarray  # (n, T+1) bool: period <= the scenario's horizon
    supply_elasticity: np.ndarray  # (n, T+1)
    free_price: np.ndarray  # (n, T+1)
    free_quantity: np.ndarray  # (n, T+1)
    alternate_price: np.ndarray  # (n, T+1): free-market price in the other curve form
    alternate_quantity: np.ndarray  # (n, T+1)
    alternate_feasible: np.ndarray  # (n,) bool: the other form has P*, Q* > 0 throughout
    outcome: Outcome | None  # (R, T+1) each; None when solve kept only some series
    welfare: WelfareChange | None  # (R, T+1) each; likewise
    discount_factor: np.ndarray  # (n, T+1)
    # Problems, as masks
    shift_out_of_range: np.ndarray  # (n, m): summed change <= -1 or above MAX_SHIFTER_CHANGE
    schedule_undefined: np.ndarray  # (n,): Nerlove default needed but not applicable
    linear_out_of_range: np.ndarray  # (n, T+1): linear-form P* <= 0 or Q* <= 0
    policy_infeasible: np.ndarray  # (R, T+1): Q, Pc or Pp <= 0 where the policy binds
    unbounded_willingness: np.ndarray  # (R,): random rationing, ceiling, CE with |eta| <= 1
    non_finite: np.ndarray  # (R,): a reported value is not finite
    summary: np.ndarray  # (R, len(kernel.SUMMARY_INDEX)): headline figures over the horizon
    series: np.ndarray  # (R, len(series_names), T+1): the kept series of every row
    series_names: tuple[str, ...]
    binding: np.ndarray  # (R, T+1) bool

    def named(self, name: str) -> np.ndarray:
        """One kept series of every row, (R, T+1)."""
        return self.series[:, self.series_names.index(name)]

    def scenario_inputs_failed(self) -> np.ndarray:
        """(n,) True where a scenario-level problem (shocks, schedule, linear range) stops it."""
        return _inputs_failed(self.shift_out_of_range, self.schedule_undefined, self.linear_out_of_range)

    def row_failed(self, rows: PolicyRows) -> np.ndarray:
        """(R,) True where a policy row has no answer: its own problem or its scenario's."""
        own = self.policy_infeasible.any(axis=1) | self.unbounded_willingness | self.non_finite
        return own | self.scenario_inputs_failed()[rows.scenario]

    def scenario_failed(self, rows: PolicyRows) -> np.ndarray:
        """(n,) True where any problem makes the scenario's answer unusable (any of its rows)."""
        failed = self.scenario_inputs_failed()
        row_failed = np.zeros_like(failed)
        np.logical_or.at(row_failed, rows.scenario, self.row_failed(rows))
        return failed | row_failed


def _inputs_failed(shift_out_of_range, schedule_undefined, linear_out_of_range) -> np.ndarray:
    """(n,) the scenario-level failure mask, from the masks (n, m), (n,) and (n, T+1)."""
    return shift_out_of_range.any(axis=1) | schedule_undefined | linear_out_of_range.any(axis=1)


#: Floating-point handling inside solve. Valid but extreme inputs can overflow; such rows are
#: caught by the isfinite checks and reported in the masks, so warnings are silenced. The test
#: suite sets this to {} (tests/conftest.py) so that any warning there fails a test.
FLOATING_POINT: dict[str, str] = {"all": "ignore"}


def solve(
    batch: ScenarioBatch,
    rows: PolicyRows,
    series: tuple[str, ...] | None = None,
    alternate: bool = True,
    band: tuple | None = None,
) -> PathArrays:
    """Compute every path of every policy row of the batch.

    `series` names the only series to keep (`outcome` and `welfare` are None unless it holds
    all of theirs; read the series with `named`); `alternate=False` skips the other curve form's free path
    (used only by the cautions); `band` is passed to kernel.policy_paths (bands write their
    series straight into the percentile buffer).
    """
    with np.errstate(**FLOATING_POINT):
        return _solve(batch, rows, series, alternate, band)


def _kernel_inputs(batch: ScenarioBatch, rows: PolicyRows, eps, shifts, factor):
    """The kernel's input arrays, with inflation (a price index), the durable stock and
    partial coverage (MODEL.md sections 12-14)."""
    n, periods = batch.size, batch.periods
    inflation = batch.inflation
    if inflation.shape != (n, periods):
        inflation = np.ascontiguousarray(np.broadcast_to(inflation, (n, periods)))
    index = price_index(inflation) if batch.has_inflation.any() else np.ones((n, periods))
    sr, lr = batch.short_run_elasticity, batch.long_run_elasticity
    # The Nerlove default eps_SR = lambda eps_LR where the schedule gives no rate (else 1: the
    # request is refused, see prepare's undefined mask).
    nerlove = np.divide(sr, lr, out=np.ones(n), where=(sr > 0.0) & (sr <= lr))
    arrays = {
        "price": batch.price,
        "quantity": batch.quantity,
        "demand_elasticity": batch.demand_elasticity,
        "payments_per_period": batch.payments_per_period,
        "eps": eps,
        "shifts": shifts,
        "horizon": batch.horizon,
        "stock": batch.stock,
        "stock_rate": np.where(batch.schedule_rate > 0.0, batch.schedule_rate, nerlove),
        "floor_share": batch.floor_share,
        "long_run_elasticity": lr,
        "random_rationing": batch.random_rationing,
        "discount_factor": factor,
        "price_index": index,
        "inflation": inflation,
    }
    policy = {
        "scenario": rows.scenario,
        "kind": rows.kind,
        "value": rows.value,
        "start": rows.start,
        "end": rows.end,
        "indexed": rows.indexed,
        "coverage": rows.coverage,
    }
    return arrays, policy


def price_index(inflation: np.ndarray) -> np.ndarray:
    """I_0 = 1, I_t = prod_(u<=t) (1 + pi_u) (MODEL.md 12), from rates (n, T+1) with column 0
    unused; the running product in period order, as the scalar reference computes it."""
    factors = 1.0 + inflation
    factors[:, 0] = 1.0
    return np.cumprod(factors, axis=1)


def _solve(batch: ScenarioBatch, rows: PolicyRows, series, alternate: bool, band) -> PathArrays:
    n, periods = batch.size, batch.periods
    t = np.arange(periods)
    valid = t[None, :] <= batch.horizon[:, None]
    eps, linear_shifts, constant_shifts, shift_bad, schedule_undefined, factor = kernel.prepare(
        batch, MAX_SHIFTER_CHANGE
    )
    scenario_bad = shift_bad.any(axis=1) | schedule_undefined
    ce = batch.constant_elasticity
    if scenario_bad.any():  # failed scenarios run at their base point, so nothing overflows
        bad = scenario_bad[:, None]
        eps = np.where(bad, batch.short_run_elasticity[:, None], eps)
        linear_shifts = np.where(bad[:, :, None], 0.0, linear_shifts)
        constant_shifts = np.where(bad[:, :, None], 0.0, constant_shifts)

    if alternate:
        # Free paths in both forms (the other form feeds the cautions).
        arrays, policy = _kernel_inputs(batch, rows, eps, linear_shifts, factor)
        lin_free = kernel.free_paths(dict(arrays, constant_elasticity=np.zeros(n, dtype=bool)))
        ce_free = kernel.free_paths(
            dict(arrays, constant_elasticity=np.ones(n, dtype=bool), shifts=constant_shifts)
        )
        primary = np.where(ce[:, None, None], ce_free, lin_free)
    else:
        arrays, policy = _kernel_inputs(batch, rows, eps, linear_shifts, factor)
        primary = lin_free = ce_free = None
    arrays["constant_elasticity"] = ce
    if ce.any():
        arrays["shifts"] = (
            constant_shifts if ce.all() else np.where(ce[:, None, None], constant_shifts, linear_shifts)
        )
    if primary is None:
        primary = lin_free = ce_free = kernel.free_paths(arrays)
    lin_price, lin_quantity = lin_free[:, 0], lin_free[:, 1]
    ce_price, ce_quantity = ce_free[:, 0], ce_free[:, 1]
    linear_failed = valid & ~((lin_price > 0.0) & (lin_quantity > 0.0))
    linear_out_of_range = linear_failed & ~ce[:, None]
    scenario_bad = _inputs_failed(shift_bad, schedule_undefined, linear_out_of_range)
    keep = ~scenario_bad[:, None]
    free_price = np.where(keep, primary[:, 0], batch.price[:, None])
    free_quantity = np.where(keep, primary[:, 1], batch.quantity[:, None])
    if alternate:
        lin_feasible = ~linear_failed.any(axis=1)
        alternate_feasible = np.where(ce, lin_feasible, True) & ~scenario_bad
        alternate_ok = keep & alternate_feasible[:, None]
        alternate_price = np.where(
            alternate_ok, np.where(ce[:, None], lin_price, ce_price), batch.price[:, None]
        )
        alternate_quantity = np.where(
            alternate_ok, np.where(ce[:, None], lin_quantity, ce_quantity), batch.quantity[:, None]
        )
    else:
        alternate_feasible = np.zeros(n, dtype=bool)
        alternate_price, alternate_quantity = free_price, free_quantity

    # Policy rows: one kernel call, each scenario in its own form.
    own_free = np.ascontiguousarray(primary[:, :2])
    names = tuple(kernel.SERIES_INDEX) if series is None else series
    values, flags, summary = kernel.policy_paths(arrays, policy, own_free, names, band)
    index = {name: j for j, name in enumerate(names)}
    s_of = rows.scenario
    row_valid = valid[s_of]
    outcome = welfare = None
    if _OUTCOME_SERIES.issubset(index):
        outcome, welfare = _outcome_and_welfare(values, index, flags)
    infeasible = flags[:, 2] & row_valid
    binding = flags[:, 0]

    unbounded = is_ceiling(rows.kind) & batch.random_rationing[s_of] & batch.constant_elasticity[s_of]
    unbounded &= batch.demand_elasticity[s_of] >= -1.0

    # The compiled pass flags a row where any reported value of a valid period is not finite.
    non_finite = summary[:, kernel.SUMMARY_INDEX["non_finite"]] > 0.0

    return PathArrays(
        valid=valid,
        supply_elasticity=np.where(keep, primary[:, 2], eps),
        free_price=free_price,
        free_quantity=free_quantity,
        alternate_price=alternate_price,
        alternate_quantity=alternate_quantity,
        alternate_feasible=alternate_feasible,
        outcome=outcome,
        welfare=welfare,
        discount_factor=factor,
        shift_out_of_range=shift_bad,
        schedule_undefined=schedule_undefined,
        linear_out_of_range=linear_out_of_range,
        policy_infeasible=infeasible,
        unbounded_willingness=unbounded,
        non_finite=non_finite,
        summary=summary,
        series=values,
        series_names=names,
        binding=binding,
    )


_FLAGS = ("binding", "rationed")
_OUTCOME_SERIES = frozenset(
    [f.name for f in fields(Outcome) if f.name not in _FLAGS] + [f.name for f in fields(WelfareChange)]
)


def _outcome_and_welfare(values, index, flags) -> tuple[Outcome, WelfareChange]:
    outcome = Outcome(
        **{
            f.name: values[:, index[f.name]] for f in fields(Outcome) if f.name not in ("binding", "rationed")
        },
        binding=flags[:, 0],
        rationed=flags[:, 1],
    )
    return outcome, WelfareChange(**{f.name: values[:, index[f.name]] for f in fields(WelfareChange)})
