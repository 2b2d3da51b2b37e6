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

from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from ..limits import MAX_SHIFTER_CHANGE
from . import kernel
from .batch import PolicyRows, ScenarioBatch
from .policies import is_ceiling

__all__ = [
    "PathArrays",
    "PendingSolve",
    "finish_solve",
    "kernel_inputs",
    "price_index",
    "run_period_pass",
    "solve",
    "start_solve",
]


@dataclass(frozen=True)
class PathArrays:
    """Every path of a batch; (n, T+1) per scenario, (R, T+1) per policy row."""

    valid: np.ndarray  # (n, T+1) bool: period <= the scenario's horizon
    supply_elasticity: np.ndarray  # (n, T+1)
    free_price: np.ndarray  # (n, T+1)
    free_quantity: np.ndarray  # (n, T+1)
    alternate_feasible: np.ndarray  # (n,) bool: the other form has P*, Q* > 0 throughout
    discount_factor: np.ndarray  # (n, T+1)
    price_index: np.ndarray  # (n, T+1) I_t (ones without inflation)
    # Problems, as masks
    shift_out_of_range: np.ndarray  # (n, m): summed change <= -1 or above MAX_SHIFTER_CHANGE
    schedule_undefined: np.ndarray  # (n,): Nerlove default needed but not applicable
    linear_out_of_range: np.ndarray  # (n, T+1): linear-form P* <= 0 or Q* <= 0
    # (n,): within the horizon I_t overflows or falls below the least normal number, or the
    # nominal prices (real price x I_t) overflow
    price_index_out_of_range: np.ndarray
    # (n,): a discount factor within the horizon overflows (a rate near -100 % compounded)
    discount_out_of_range: np.ndarray
    policy_infeasible: np.ndarray  # (R, T+1): Q, Pc or Pp <= 0 where the policy binds
    unbounded_willingness: np.ndarray  # (R,): random rationing, ceiling, CE with |eta| <= 1
    non_finite: np.ndarray  # (R,): a reported value is not finite
    summary: np.ndarray  # (R, len(kernel.SUMMARY_NAMES)): headline figures over the horizon
    series: np.ndarray  # (R, len(series_names), T+1): the kept series of every row
    series_names: tuple[str, ...]
    binding: np.ndarray  # (R, T+1) bool

    def named(self, name: str) -> np.ndarray:
        """One kept series of every row, (R, T+1)."""
        return self.series[:, self.series_names.index(name)]

    def scenario_inputs_failed(self) -> np.ndarray:
        """(n,) True where a scenario-level problem (shocks, schedule, linear range, the range of
        the price index or of the discount factors) stops it."""
        failed = _inputs_failed(self.shift_out_of_range, self.schedule_undefined, self.linear_out_of_range)
        return failed | self.price_index_out_of_range | self.discount_out_of_range

    def row_failed(self, rows: PolicyRows, scenario_failed: np.ndarray | None = None) -> np.ndarray:
        """(R,) True where a policy row has no answer: its own problem or its scenario's
        (`scenario_failed`: scenario_inputs_failed, where already known)."""
        own = self.policy_infeasible.any(axis=1) | self.unbounded_willingness | self.non_finite
        if scenario_failed is None:
            scenario_failed = self.scenario_inputs_failed()
        return own | scenario_failed[rows.scenario]

    def scenario_failed(self, rows: PolicyRows) -> np.ndarray:
        """(n,) True where any problem makes the scenario's answer unusable (any of its rows)."""
        failed = self.scenario_inputs_failed()
        return failed | any_per_scenario(self.row_failed(rows, failed), rows.scenario, failed.shape[0])


def any_per_scenario(row_mask: np.ndarray, scenario: np.ndarray, n: int) -> np.ndarray:
    """(n,) True where some row of the scenario is True; `scenario` (R,) is each row's."""
    return np.bincount(scenario[row_mask], minlength=n) > 0


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

    `series` names the only series to keep (read them with `named`); `alternate=False` skips
    the other curve form (its free path and every row's other-form summary figures, MODEL.md
    20); `band` is passed to kernel.policy_paths (bands write their series straight into the
    percentile buffer).
    """
    pending = start_solve(batch, rows, series, alternate, band)
    return finish_solve(pending, run_period_pass(pending))


class PendingSolve(NamedTuple):
    """A solve up to its compiled period pass (start_solve): what run_period_pass gives the
    pass, and what finish_solve reads with its output."""

    batch: ScenarioBatch
    rows: PolicyRows
    valid: np.ndarray
    prepared: kernel.Prepared
    market: kernel.MarketInputs
    policy: kernel.RowInputs
    own: np.ndarray
    other: np.ndarray | None
    names: tuple[str, ...]
    band: tuple | None
    supply_elasticity: np.ndarray
    free_price: np.ndarray
    free_quantity: np.ndarray
    alternate_feasible: np.ndarray
    linear_out_of_range: np.ndarray


def start_solve(
    batch: ScenarioBatch,
    rows: PolicyRows,
    series: tuple[str, ...] | None = None,
    alternate: bool = True,
    band: tuple | None = None,
) -> PendingSolve:
    """The first part of solve (same arguments): the kernels' inputs and the free paths."""
    with np.errstate(**FLOATING_POINT):
        return _start(batch, rows, series, alternate, band)


def run_period_pass(pending: PendingSolve) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The policy rows' compiled period pass (kernel.policy_paths): the bulk of a solve. Its
    kernel releases the GIL, so another thread may run it while this one works on."""
    return kernel.policy_paths(
        pending.market, pending.policy, pending.own, pending.names, pending.band, pending.other
    )


def finish_solve(pending: PendingSolve, period_pass: tuple[np.ndarray, np.ndarray, np.ndarray]) -> PathArrays:
    """The last part of solve: the period pass's output read into PathArrays and problem masks."""
    with np.errstate(**FLOATING_POINT):
        return _finish(pending, *period_pass)


def price_index(inflation: np.ndarray) -> np.ndarray:
    """I_0 = 1, I_t = prod_(u<=t) (1 + pi_u) (MODEL.md 12), from rates (n, T+1) with column 0
    unused; the running product in period order, as the scalar reference computes it."""
    factors = 1.0 + inflation
    factors[:, 0] = 1.0
    with np.errstate(over="ignore", under="ignore"):  # checked: _index_out_of_range
        return np.cumprod(factors, axis=1)


#: The least positive normal float: a price index below it has lost its digits.
_LEAST_NORMAL = float(np.finfo(np.float64).tiny)


def _index_out_of_range(batch, rows, index, valid, values, names) -> np.ndarray:
    """(n,) True where, within the horizon, the price index I_t is not finite or below the least
    normal number, or a nominal consumer or producer price (real price x I_t) is not finite:
    answers would carry infinities or zeros that are not the model's (MODEL.md 12)."""
    failed = (valid & ~(np.isfinite(index) & (index >= _LEAST_NORMAL))).any(axis=1)
    s_of = rows.scenario
    for name in ("consumer_price", "producer_price"):
        if name in names:
            with np.errstate(over="ignore", invalid="ignore"):
                nominal = values[:, names.index(name)] * index[s_of]
            row_failed = (valid[s_of] & ~np.isfinite(nominal)).any(axis=1)
            failed |= any_per_scenario(row_failed, s_of, batch.size)
    return failed & batch.has_inflation


def kernel_inputs(batch: ScenarioBatch, rows: PolicyRows, prepared: kernel.Prepared):
    """The period pass's one input structure: (kernel.MarketInputs, kernel.RowInputs), with the
    price index (MODEL.md 12), the stock's rate (the Nerlove default filled in, 13), its
    bounds (16), conversion (18) and the rows' coverage, exemption and decontrol (14, 17).
    Scenarios whose inputs already failed run at their base point, so nothing overflows."""
    n, periods = batch.size, batch.periods
    eps, linear, constant = prepared.eps, prepared.linear, prepared.constant
    bad = prepared.shift_bad.any(axis=1) | prepared.undefined
    if bad.any():
        eps = np.where(bad[:, None], batch.short_run_elasticity[:, None], eps)
        linear = np.where(bad[:, None, None], 0.0, linear)
        constant = np.where(bad[:, None, None], 0.0, constant)
    inflation = batch.inflation
    if inflation.shape != (n, periods):
        inflation = np.ascontiguousarray(np.broadcast_to(inflation, (n, periods)))
    index = price_index(inflation) if batch.has_inflation.any() else np.ones((n, periods))
    sr, lr = batch.short_run_elasticity, batch.long_run_elasticity
    # The Nerlove default eps_SR = lambda eps_LR where the schedule gives no rate (else 1: the
    # request is refused, see prepare's undefined mask).
    nerlove = np.divide(sr, lr, out=np.ones(n), where=(sr > 0.0) & (sr <= lr))
    market = kernel.MarketInputs(
        constant_elasticity=batch.constant_elasticity,
        price=batch.price,
        quantity=batch.quantity,
        demand_elasticity=batch.demand_elasticity,
        payments_per_period=batch.payments_per_period,
        eps=eps,
        linear_shifts=linear,
        constant_shifts=constant,
        horizon=batch.horizon,
        stock=batch.stock,
        stock_rate=np.where(batch.schedule_rate > 0.0, batch.schedule_rate, nerlove),
        floor_share=batch.floor_share,
        build_limit=batch.build_limit,
        conversion=batch.conversion,
        long_run_elasticity=lr,
        random_rationing=batch.random_rationing,
        discount_factor=prepared.factor,
        price_index=index,
        inflation=inflation,
    )
    policy = kernel.RowInputs(
        scenario=rows.scenario,
        kind=rows.kind,
        value=rows.value,
        start=rows.start,
        end=rows.end,
        indexed=rows.indexed,
        coverage=rows.coverage,
        exempt_new=rows.exempt_new,
        decontrol=rows.decontrol,
    )
    return market, policy


def _start(batch: ScenarioBatch, rows: PolicyRows, series, alternate: bool, band) -> PendingSolve:
    t = np.arange(batch.periods)
    valid = t[None, :] <= batch.horizon[:, None]
    prepared = kernel.prepare(batch, MAX_SHIFTER_CHANGE)
    market, policy = kernel_inputs(batch, rows, prepared)
    ce = batch.constant_elasticity
    own = kernel.free_paths(market)
    other = kernel.free_paths(market, ~ce) if alternate else None
    lin_free = own if other is None else np.where(ce[:, None, None], other, own)
    # The linear form's range (MODEL.md 4): P* and Q* > 0 in every valid period.
    price_at, quantity_at, elasticity_at = (kernel.FREE_PATH_INDEX[name] for name in kernel.FREE_PATH_NAMES)
    linear_failed = valid & ~((lin_free[:, price_at] > 0.0) & (lin_free[:, quantity_at] > 0.0))
    linear_out_of_range = linear_failed & ~ce[:, None]
    scenario_bad = _inputs_failed(prepared.shift_bad, prepared.undefined, linear_out_of_range)
    keep = ~scenario_bad[:, None]
    free_price = np.where(keep, own[:, price_at], batch.price[:, None])
    free_quantity = np.where(keep, own[:, quantity_at], batch.quantity[:, None])
    if other is not None:
        alternate_feasible = np.where(ce, ~linear_failed.any(axis=1), True) & ~scenario_bad
    else:
        alternate_feasible = np.zeros(batch.size, dtype=bool)

    # The free path's supply elasticity is reported too (checked in _finish).
    supply_elasticity = np.where(keep, own[:, elasticity_at], market.eps)
    # Policy rows (run_period_pass): one kernel call, each scenario in its own form (and in the
    # other one).
    names = kernel.SERIES_NAMES if series is None else series
    return PendingSolve(
        batch=batch,
        rows=rows,
        valid=valid,
        prepared=prepared,
        market=market,
        policy=policy,
        own=own,
        other=other,
        names=names,
        band=band,
        supply_elasticity=supply_elasticity,
        free_price=free_price,
        free_quantity=free_quantity,
        alternate_feasible=alternate_feasible,
        linear_out_of_range=linear_out_of_range,
    )


def _finish(pending: PendingSolve, values: np.ndarray, flags: np.ndarray, summary: np.ndarray) -> PathArrays:
    batch, rows, valid, prepared, names = (
        pending.batch,
        pending.rows,
        pending.valid,
        pending.prepared,
        pending.names,
    )
    s_of = rows.scenario
    infeasible = flags[:, kernel.FLAG_INDEX["infeasible"]] & valid[s_of]
    unbounded = is_ceiling(rows.kind) & batch.random_rationing[s_of] & batch.constant_elasticity[s_of]
    unbounded &= batch.demand_elasticity[s_of] >= -1.0
    # The compiled pass flags a row where any value of a valid period is not finite.
    non_finite = summary[:, kernel.SUMMARY_INDEX["non_finite"]] > 0.0
    # The free path's supply elasticity is reported too: checked here, per scenario.
    non_finite |= (valid & ~np.isfinite(pending.supply_elasticity)).any(axis=1)[s_of]
    if batch.has_inflation.any():
        index_failed = _index_out_of_range(batch, rows, pending.market.price_index, valid, values, names)
    else:
        index_failed = np.zeros(batch.size, dtype=bool)

    return PathArrays(
        valid=valid,
        supply_elasticity=pending.supply_elasticity,
        free_price=pending.free_price,
        free_quantity=pending.free_quantity,
        alternate_feasible=pending.alternate_feasible,
        discount_factor=prepared.factor,
        price_index=pending.market.price_index,
        shift_out_of_range=prepared.shift_bad,
        schedule_undefined=prepared.undefined,
        linear_out_of_range=pending.linear_out_of_range,
        price_index_out_of_range=index_failed,
        discount_out_of_range=(valid & ~np.isfinite(prepared.factor)).any(axis=1),
        policy_infeasible=infeasible,
        unbounded_willingness=unbounded,
        non_finite=non_finite,
        summary=summary,
        series=values,
        series_names=names,
        binding=flags[:, kernel.FLAG_INDEX["binding"]],
    )
