"""Transition paths: every policy of every scenario, period by period, in one pass.

For each period t = 0..T: the supply elasticity eps_t of the adjustment schedule, the
period's curves (shifted by the shocks), the free-market equilibrium, each policy's outcome
against it, and its welfare change. Period 0 is the base point. Cumulative deadweight loss
is sum_(s<=t) DWL_s; discounted, sum_(s<=t) DWL_s prod_(u<=s) 1/(1+r_u).

Arrays are (scenarios, periods) and (policy rows, periods); scenarios of the two curve forms
are computed in two groups, and policy rows in groups of one kind: no loop runs over
scenarios, draws or periods here (the growth cap's period loop lives in policies.py).
Problems are returned as masks, not raised, so that one bad scenario in a batch, or one bad
draw in a band, does not stop the others.

Sources: each period's equilibrium is the displacement model of Muth (1964), Gardner (1987) and
Alston, Norton & Pardey (1995), *Science Under Scarcity*, ch. 4-5; the discount factor is the
ordinary present value (as numpy_financial.npv for a constant rate).
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from ..limits import MAX_SHIFTER_CHANGE
from ._arrays import as_slice
from .batch import PolicyRows, ScenarioBatch
from .curves import ConstantElasticityCurves, LinearCurves
from .equilibrium import free_market
from .policies import Outcome, free_outcome, is_ceiling, market_outcome
from .schedules import SCHEDULE_CODES, nerlove_rate, supply_elasticity_path
from .welfare import WelfareChange, discount_factors, welfare_change

__all__ = ["PathArrays", "solve"]


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
    outcome: Outcome  # (R, T+1)
    welfare: WelfareChange  # (R, T+1)
    cumulative_deadweight_loss: np.ndarray  # (R, T+1)
    discounted_deadweight_loss: np.ndarray  # (R, T+1)
    discount_factor: np.ndarray  # (n, T+1)
    # Problems, as masks
    shift_out_of_range: np.ndarray  # (n, m): summed change <= -1 or above MAX_SHIFTER_CHANGE
    schedule_undefined: np.ndarray  # (n,): Nerlove default needed but not applicable
    linear_out_of_range: np.ndarray  # (n, T+1): linear-form P* <= 0 or Q* <= 0
    policy_infeasible: np.ndarray  # (R, T+1): Q, Pc or Pp <= 0 where the policy binds
    unbounded_willingness: np.ndarray  # (R,): random rationing, ceiling, CE with |eta| <= 1
    non_finite: np.ndarray  # (R,): a reported value is not finite

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


def _shifts(batch: ScenarioBatch, valid: np.ndarray):
    """Demand and supply shifts (n, T+1) for both forms, and the out-of-range mask (n, m)."""
    g = batch.shifter_change
    bad = ((g <= -1.0) | (g > MAX_SHIFTER_CHANGE)) & valid[:, None, :]
    out_of_range = bad.any(axis=2) | batch.shock_out_of_range
    safe = np.where(g > -1.0, np.minimum(g, MAX_SHIFTER_CHANGE), 0.0)
    log_safe = np.log1p(safe)
    n, periods = valid.shape
    linear = [np.zeros((n, periods)), np.zeros((n, periods))]
    constant = [np.zeros((n, periods)), np.zeros((n, periods))]
    # Summed shifter by shifter in a fixed order (a loop over shifters, not scenarios): a
    # BLAS product would round differently as a batch pads to more shifters, and one
    # scenario must get the same bits alone or in any batch.
    for j in range(g.shape[1]):
        for side, elasticity in enumerate((batch.demand_shifter_elasticity, batch.supply_shifter_elasticity)):
            e = elasticity[:, j : j + 1]
            linear[side] += e * safe[:, j, :]
            constant[side] += e * log_safe[:, j, :]
    return tuple(linear), tuple(constant), out_of_range


def _supply_path(batch: ScenarioBatch):
    nerlove, applies = nerlove_rate(batch.short_run_elasticity, batch.long_run_elasticity)
    geometric = batch.schedule == SCHEDULE_CODES["geometric"]
    needs_default = geometric & (batch.schedule_rate <= 0.0)
    rate = np.where(needs_default, nerlove, batch.schedule_rate)
    eps = supply_elasticity_path(
        batch.short_run_elasticity,
        batch.long_run_elasticity,
        batch.schedule,
        batch.schedule_periods,
        rate,
        np.broadcast_to(batch.explicit_elasticity, (batch.size, batch.periods)),
        batch.periods - 1,
    )
    return eps, needs_default & ~applies


#: Floating-point handling inside solve. Valid but extreme inputs can overflow; such rows are
#: caught by the isfinite checks and reported in the masks, so warnings are silenced. The test
#: suite sets this to {} (tests/conftest.py) so that any warning there fails a test.
FLOATING_POINT: dict[str, str] = {"all": "ignore"}


def solve(batch: ScenarioBatch, rows: PolicyRows) -> PathArrays:
    """Compute every path of every policy row of the batch."""
    with np.errstate(**FLOATING_POINT):
        return _solve(batch, rows)


def _solve(batch: ScenarioBatch, rows: PolicyRows) -> PathArrays:
    n, periods = batch.size, batch.periods
    t = np.arange(periods)
    valid = t[None, :] <= batch.horizon[:, None]
    eps, schedule_undefined = _supply_path(batch)
    (lin_d, lin_s), (ce_d, ce_s), shift_bad = _shifts(batch, valid)
    ce = batch.constant_elasticity[:, None]
    demand_shift = np.where(ce, ce_d, lin_d)
    supply_shift = np.where(ce, ce_s, lin_s)

    p0, q0, eta = batch.price[:, None], batch.quantity[:, None], batch.demand_elasticity[:, None]

    # Free market, both forms computed for all scenarios (closed forms, cheap).
    lin_curves = LinearCurves(p0, q0, eta, eps, lin_d, lin_s)
    lin_price, lin_quantity = free_market(lin_curves)
    linear_failed = valid & ((lin_price <= 0.0) | (lin_quantity <= 0.0))
    lin_feasible = ~linear_failed.any(axis=1)
    ce_curves = ConstantElasticityCurves(p0, q0, eta, eps, ce_d, ce_s)
    ce_price, ce_quantity = free_market(ce_curves)

    linear_out_of_range = linear_failed & ~ce
    scenario_bad = _inputs_failed(shift_bad, schedule_undefined, linear_out_of_range)
    # Sanitise failed scenarios to their base point so that nothing downstream overflows.
    keep = ~scenario_bad[:, None]
    demand_shift = np.where(keep, demand_shift, 0.0)
    supply_shift = np.where(keep, supply_shift, 0.0)
    eps_safe = np.where(keep, eps, batch.short_run_elasticity[:, None])
    free_price = np.where(ce, ce_price, lin_price)
    free_quantity = np.where(ce, ce_quantity, lin_quantity)
    free_price = np.where(keep, free_price, p0)
    free_quantity = np.where(keep, free_quantity, q0)
    alternate_price = np.where(ce, lin_price, ce_price)
    alternate_quantity = np.where(ce, lin_quantity, ce_quantity)
    alternate_feasible = np.where(batch.constant_elasticity, lin_feasible, True) & ~scenario_bad
    alternate_price = np.where(keep & alternate_feasible[:, None], alternate_price, p0)
    alternate_quantity = np.where(keep & alternate_feasible[:, None], alternate_quantity, q0)

    # Policy rows, grouped by form.
    R = rows.size
    s_of = rows.scenario
    active = (t[None, :] >= np.maximum(rows.start, 1)[:, None]) & (t[None, :] <= rows.end[:, None])
    row_valid = valid[s_of]
    flags = ("binding", "rationed")
    outcome_parts = {
        f.name: np.zeros((R, periods), dtype=bool if f.name in flags else float) for f in fields(Outcome)
    }
    welfare_parts = {f.name: np.zeros((R, periods)) for f in fields(WelfareChange)}
    infeasible = np.zeros((R, periods), dtype=bool)
    for form_is_ce, cls in ((False, LinearCurves), (True, ConstantElasticityCurves)):
        r = np.flatnonzero(batch.constant_elasticity[s_of] == form_is_ce)
        if r.size == 0:
            continue
        sc = s_of[r]
        r = as_slice(r)
        curves = cls(p0[sc], q0[sc], eta[sc], eps_safe[sc], demand_shift[sc], supply_shift[sc])
        price, quantity = free_price[sc], free_quantity[sc]
        outcome = market_outcome(curves, price, quantity, rows.kind[r], rows.value[r], active[r])
        bad = outcome.binding & (
            ~(outcome.quantity > 0.0) | ~(outcome.consumer_price > 0.0) | ~(outcome.producer_price > 0.0)
        )
        bad &= row_valid[r]
        infeasible[r] = bad
        if bad.any():
            outcome = outcome.where(~bad, free_outcome(price, quantity))
        welfare = welfare_change(
            curves,
            price,
            quantity,
            outcome,
            batch.payments_per_period[sc, None],
            batch.random_rationing[sc, None],
        )
        for f in fields(Outcome):
            outcome_parts[f.name][r] = getattr(outcome, f.name)
        for f in fields(WelfareChange):
            welfare_parts[f.name][r] = getattr(welfare, f.name)

    outcome = Outcome(**outcome_parts)
    welfare = WelfareChange(**welfare_parts)
    factor = discount_factors(np.broadcast_to(batch.discount_rate, (n, periods)))
    dwl = welfare.deadweight_loss
    cumulative = np.cumsum(dwl, axis=1)
    discounted = np.cumsum(dwl * factor[s_of], axis=1)

    unbounded = is_ceiling(rows.kind) & batch.random_rationing[s_of] & batch.constant_elasticity[s_of]
    unbounded &= batch.demand_elasticity[s_of] >= -1.0

    # One pass: a sum of finite numbers (all far below 1e300) is finite, and NaN or inf in any
    # reported series makes it non-finite.
    reported = [getattr(outcome, f.name) for f in fields(Outcome) if f.name not in flags]
    reported += [getattr(welfare, f.name) for f in fields(WelfareChange)] + [cumulative, discounted]
    total = np.zeros((R, periods))
    for a in reported:
        total += a
    non_finite = ~np.isfinite(np.where(row_valid, total, 0.0)).all(axis=1)

    return PathArrays(
        valid=valid,
        supply_elasticity=eps,
        free_price=free_price,
        free_quantity=free_quantity,
        alternate_price=alternate_price,
        alternate_quantity=alternate_quantity,
        alternate_feasible=alternate_feasible,
        outcome=outcome,
        welfare=welfare,
        cumulative_deadweight_loss=cumulative,
        discounted_deadweight_loss=discounted,
        discount_factor=factor,
        shift_out_of_range=shift_bad,
        schedule_undefined=schedule_undefined,
        linear_out_of_range=linear_out_of_range,
        policy_infeasible=infeasible,
        unbounded_willingness=unbounded,
        non_finite=non_finite,
    )
