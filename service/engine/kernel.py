"""The compiled period pass: every period of every path, one cell at a time.

All compiled code of the engine lives in this file, in sections (numba's on-disk cache is
invalidated only by changes to a function's own file, so a compiled function calling one in
another module could run stale code after an edit). The concept modules around it (shocks,
schedules, policies, welfare, ...) hold the docstrings and the Python-side helpers; the codes
they use are defined here, once.

One loop over scenarios computes each scenario's free-market path; one loop over policy rows
walks each row's periods in order (`_walk_row`) and computes, per period: the period's curves
(`_period_curves`), the row's own free-market point, the policy's outcome (one small function
per kind: `_ceiling`, `_floor`, `_wedge`, `_quantity_cap`, and `_controlled_groups` for a
ceiling whose controlled homes keep their own stock), the welfare change and who gains and
who loses (`_welfare`, `_group_welfare`) and renters against the free path (`_vs_free_path`),
and writes each period's cell into a buffer of the row (periods x series). Then the row's
summary is summed over that buffer in period order (`_row_totals`, with the finite check) and
its kept and banded series are copied out (`_emit`). No scipy and no Python objects inside:
problems come back as flags.

Curves of period t (MODEL.md sections 3 and 16; shifts D, S in the linear form, ln A, ln B in
constant elasticity; p = (P - P0)/P0):

    demand      Qd(P) = Q0 max(1 + eta p + D, 0)          or  Q0 (P/P0)^eta A
    base supply K(P)  = Q0 max(1 + e p + S, 0)            or  Q0 (P/P0)^e B
    supply      Qs(P) = min(max(a + b K(P), f), h)

Without a durable stock a = 0, b = 1, f = 0, h = inf and e = eps_t (so Qs = K). With the stock
schedule (Nerlove 1958, *The Dynamics of Supply*: a share lambda of the gap between the stock
and its desired level closes each period) e = eps_LR, a = (1 - lambda) K_(t-1), b = lambda,
f = (1 - delta) K_(t-1) (the stock shrinks by at most the share delta per period: supply is
elastic upward and inelastic downward, Glaeser & Gyourko 2005, *JPE* 113(2)) and
h = (1 + b_build) K_(t-1) (completions are limited). Homes standing after the period:
K_t = max(Q_t, f); homes not let stand empty and are offered again the period after.

Clearing with a wedge or a second segment: Qd(Pc) = alpha Qs(scale Pc - gap) + beta, with
(alpha, beta, scale, gap) = (1, 0, 1, tau) for a unit tax, (1, 0, 1 - r, 0) ad valorem,
(1, 0, 1, -s) a subsidy, and (1 - s, Qc, 1, 0) for the uncovered rent under a ceiling that
covers the share s of homes (Fallis & Smith 1984, *AER* 74(1)). Linear curves solve in closed
form; constant elasticity in closed form where it exists, else by Newton's method in log
price, safeguarded by bisection on a bracket whose signs are checked, converged on the price
scale. A kinked supply is solved on its sloped branch and then checked against each bound.

A ceiling whose controlled homes are a group of their own (MODEL.md 17-18: under the stock
schedule with partial coverage, exempt new homes or conversion; vacancy decontrol under any
schedule) clears the market rent M from Qd(M) = Sc(Rc(M)) + Su(M) with Brent's method
(Brent 1973, *Algorithms for Minimization without Derivatives*, ch. 4), and measures welfare by
price integrals of the groups' supply curves against the same period without the rule.

Welfare against the same path's free market of the period (P*, Q*): DWL = int_Q^Q* Qd^-1 -
int_Q^Q* Qs^-1 (per segment under partial coverage); the integrals are closed forms
(trapezoids, and power laws through expm1 so that they stay exact as m -> 0).
"""

from __future__ import annotations

import functools
import math
from collections import namedtuple

import numpy as np

try:  # numba is a dependency; the guard only keeps `import service.engine` explaining itself.
    from numba import njit
except ImportError as error:  # pragma: no cover
    raise ImportError("shockpath's engine needs numba (pip install numba)") from error

__all__ = [
    "FLAG_NAMES",
    "KIND_CODES",
    "PROFILE_CODES",
    "SCHEDULE_CODES",
    "SERIES_INDEX",
    "SERIES_NAMES",
    "SUMMARY_AT",
    "SUMMARY_INDEX",
    "SUMMARY_NAMES",
    "MarketInputs",
    "RowInputs",
    "free_paths",
    "percentiles",
    "policy_paths",
    "prepare",
    "shock_paths",
    "warm_up",
]

_JIT = {"cache": True, "nogil": True, "error_model": "numpy", "fastmath": False}

# --- codes: the one home of every code the Python side packs --------------------------------

#: Policy kinds; a price ceiling with a growth rate is its own code (policies.py).
KIND_CODES = {
    "none": 0,
    "price_ceiling": 1,
    "price_ceiling_growth": 2,
    "price_floor": 3,
    "unit_tax": 4,
    "ad_valorem_tax": 5,
    "unit_subsidy": 6,
    "quantity_cap": 7,
}
#: Shock profiles (shocks.py).
PROFILE_CODES = {"step": 0, "ramp": 1, "growth": 2, "path": 3}
#: Supply adjustment schedules (schedules.py); "constant" means no schedule.
SCHEDULE_CODES = {"constant": 0, "linear": 1, "geometric": 2, "explicit": 3, "stock": 4}

_NONE = KIND_CODES["none"]
_CEILING = KIND_CODES["price_ceiling"]
_GROWTH_CAP = KIND_CODES["price_ceiling_growth"]
_FLOOR = KIND_CODES["price_floor"]
_UNIT_TAX = KIND_CODES["unit_tax"]
_AD_VALOREM = KIND_CODES["ad_valorem_tax"]
_SUBSIDY = KIND_CODES["unit_subsidy"]
_QUANTITY_CAP = KIND_CODES["quantity_cap"]
_STEP = PROFILE_CODES["step"]
_RAMP = PROFILE_CODES["ramp"]
_GROWTH = PROFILE_CODES["growth"]
_LINEAR_SCHEDULE = SCHEDULE_CODES["linear"]
_GEOMETRIC = SCHEDULE_CODES["geometric"]
_EXPLICIT = SCHEDULE_CODES["explicit"]
_STOCK = SCHEDULE_CODES["stock"]

# --- names of the outputs: one tuple each, indices generated from it ------------------------

#: Who gains and who loses (MODEL.md 15, 17, 20): series and their totals, in this order.
GROUP_NAMES = (
    "tenants_in_controlled_homes",
    "tenants_in_uncontrolled_homes",
    "households_priced_out",
    "owners_of_controlled_homes",
    "owners_of_uncontrolled_homes",
    "government",
    "households_drawn_in",
)

#: Per-period output series of a policy row, in the order of the second axis of its output.
SERIES_NAMES = (
    "consumer_price",
    "producer_price",
    "quantity",
    "quantity_demanded",
    "quantity_supplied",
    "shortage",
    "excess_supply",
    "marginal_value",
    "marginal_cost",
    "consumer_surplus_change",
    "producer_surplus_change",
    "government_revenue",
    "deadweight_loss",
    "misallocation_loss",
    "cumulative_deadweight_loss",
    "discounted_deadweight_loss",
    "covered_price",
    "uncovered_price",
    "covered_quantity",
    "uncovered_quantity",
    *GROUP_NAMES[:6],
    "free_price",
    "free_quantity",
    "homes_below_free_path",
    "rent_above_free_path",
    "nominal_consumer_price",
    "vacant_homes",
    "converted_homes",
    "renters_vs_free_path",
    "extra_rent_vs_free_path",
    "households_drawn_in",
    "homes_standing",
)


def _positions(typename: str, names: tuple[str, ...]):
    """{name: position} of a tuple of names, and the same positions as a named tuple: named
    constants for the compiled code (`_S.quantity`, `_T.peak_shortage`), never bare numbers."""
    return {name: i for i, name in enumerate(names)}, namedtuple(typename, names)(*range(len(names)))


SERIES_INDEX, _S = _positions("SeriesIndex", SERIES_NAMES)

#: The series each field of a period's Welfare goes to, in the order of its fields.
WELFARE_SERIES = (
    "consumer_surplus_change",
    "producer_surplus_change",
    "government_revenue",
    "deadweight_loss",
    "misallocation_loss",
    *GROUP_NAMES,
)
_WELFARE_CELLS = np.array([SERIES_INDEX[name] for name in WELFARE_SERIES], dtype=np.int64)

#: Per-period flags of a policy row, in the order of the first axis of its flags.
FLAG_NAMES = ("binding", "rationed", "infeasible")
FLAG_INDEX, _F = _positions("FlagIndex", FLAG_NAMES)

#: The free path of a scenario (free_paths), in the order of its second axis.
FREE_PATH_NAMES = ("price", "quantity", "supply_elasticity")
FREE_PATH_INDEX, _FP = _positions("FreePathIndex", FREE_PATH_NAMES)

#: A path's inputs per period, gathered once per walk into one block (T+1, these) in this order:
#: the shifts of the walk's form, the schedule's supply elasticity, the price index and
#: inflation, the discount factor, and the free path of the walk's form.
PERIOD_INPUT_NAMES = (
    "demand_shift",
    "supply_shift",
    "supply_elasticity",
    "price_index",
    "inflation",
    "discount_factor",
    "free_price",
    "free_quantity",
)
PERIOD_INPUT_INDEX, _PI = _positions("PeriodInputIndex", PERIOD_INPUT_NAMES)

#: The two curves a shifter moves, in the order of the shift arrays' second axis.
SHIFTED_CURVES = ("demand", "supply")
_, _SC = _positions("ShiftedCurve", SHIFTED_CURVES)

#: Summary figures of a policy row over its horizon (money summed in period order).
SUMMARY_NAMES = (
    "total_deadweight_loss",
    "discounted_deadweight_loss",
    "peak_shortage",
    "peak_shortage_period",
    "binding_periods",
    "final_consumer_price",
    "final_quantity",
    "total_consumer_surplus_change",
    "total_producer_surplus_change",
    "total_government_revenue",
    *("total_" + name for name in GROUP_NAMES),
    "non_finite",
    "final_homes_below_free_path",
    "peak_homes_below_free_path",
    "vs_free_path_renters",
    "vs_free_path_renters_discounted",
    "vs_free_path_renters_after_end",
    "vs_free_path_extra_rent",
    "vs_free_path_extra_rent_after_end",
    "final_vacant_homes",
    "total_converted_homes",
    "other_discounted_deadweight_loss",
    "other_final_consumer_price",
    "other_peak_shortage",
    "other_feasible",
    *("discounted_" + name for name in GROUP_NAMES),
)
SUMMARY_INDEX, _T = _positions("SummaryIndex", SUMMARY_NAMES)
#: The same positions as attributes (SUMMARY_AT.peak_shortage), for the Python that reads them.
SUMMARY_AT = _T
_GROUP_SERIES = np.array([SERIES_INDEX[name] for name in GROUP_NAMES], dtype=np.int64)
_GROUP_TOTALS = np.array([SUMMARY_INDEX["total_" + name] for name in GROUP_NAMES], dtype=np.int64)
_GROUP_DISCOUNTED = np.array([SUMMARY_INDEX["discounted_" + name] for name in GROUP_NAMES], dtype=np.int64)

# --- inputs, as named tuples of arrays ------------------------------------------------------

#: Scenario-level inputs of the period pass; n scenarios, T + 1 periods.
MarketInputs = namedtuple(
    "MarketInputs",
    (
        "constant_elasticity",  # (n,) bool: the scenario's own form
        "price",  # (n,) P0
        "quantity",  # (n,) Q0
        "demand_elasticity",  # (n,) eta < 0
        "payments_per_period",  # (n,) k
        "eps",  # (n, T+1) supply elasticity of the schedule
        "linear_shifts",  # (n, 2, T+1) D, S of the linear form
        "constant_shifts",  # (n, 2, T+1) ln A, ln B of the constant-elasticity form
        "horizon",  # (n,) int T
        "stock",  # (n,) bool: the stock schedule
        "stock_rate",  # (n,) lambda
        "floor_share",  # (n,) 1 - delta; 0 = no depreciation bound
        "build_limit",  # (n,) b; 0 = no build limit
        "conversion",  # (n,) kappa; 0 = none
        "long_run_elasticity",  # (n,) eps_LR
        "random_rationing",  # (n,) bool
        "discount_factor",  # (n, T+1)
        "price_index",  # (n, T+1) I_t
        "inflation",  # (n, T+1) pi_t, column 0 unused
    ),
)
#: One row per (scenario, policy).
RowInputs = namedtuple(
    "RowInputs",
    (
        "scenario",  # (R,) int
        "kind",  # (R,) KIND_CODES
        "value",  # (R,) level, growth, amount or rate
        "start",  # (R,) int
        "end",  # (R,) int
        "indexed",  # (R,) bool
        "coverage",  # (R,) s
        "exempt_new",  # (R,) bool: new homes exempt from a ceiling
        "decontrol",  # (R,) tau; 0 = no vacancy decontrol
    ),
)

#: One path's market and schedule as scalars, read once per walk (a row in one form). The
#: per-period functions take these and the period's values, never the input arrays: a compiled
#: call that receives a tuple of arrays updates the reference count of each of them, per call.
Path = namedtuple(
    "Path", "ce p0 q0 eta k_pay stock rate floor_share build_limit conversion long_run random horizon"
)
#: One policy row's rule as scalars (see RowInputs).
Rule = namedtuple("Rule", "code value start end indexed share exempt tau")
#: The curves of one period on one path (see the module docstring).
Curves = namedtuple("Curves", "ce p0 q0 eta d e s a b f h")
#: One policy's outcome in a period (prices per price interval, quantities per interval).
Outcome = namedtuple(
    "Outcome",
    (
        "pc pp q qd qs shortage excess mv mc binding rationed level "
        "covered_price uncovered_price covered_q uncovered_q unit_covered unit_uncovered"
    ),
)
#: A group's supply as a function of the rent it receives (MODEL.md 17):
#: G(P) = min(max(A + B K(P) + C max(0, D K(P) - E), lo), hi), K the period's base curve.
Group = namedtuple("Group", "A B C D E lo hi")
#: Welfare of a period, money per model period (x k), and its split between groups: all floats,
#: each written to the series of WELFARE_SERIES in the same order.
Welfare = namedtuple(
    "Welfare", "dcs dps rev dwl mis tenants_c tenants_u priced_out owners_c owners_u government drawn_in"
)

_TINY = 2.2250738585072014e-308
_ULP = 2.220446049250313e-16
#: A deadweight loss this far below zero, relative to the areas it is the difference of and
#: the rent bill, is rounding; beyond it the kernel reports the negative value (a test then fails).
_LOSS_ROUNDING = 1e-12


# --- curves of one period ------------------------------------------------------------------


@njit(**_JIT)
def _curve(ce, p0, q0, elasticity, shift, price):
    """Quantity on a curve through the shifted base point, truncated at zero: demand with
    (eta, D) or (eta, ln A), supply K with (e, S) or (e, ln B)."""
    if ce:
        if price > 0.0:
            return q0 * math.exp(elasticity * math.log(price / p0) + shift)
        return 0.0
    return q0 * max(1.0 + elasticity * ((price - p0) / p0) + shift, 0.0)


@njit(**_JIT)
def _curve_price(ce, p0, q0, elasticity, shift, quantity):
    """The inverse of _curve: the price at which the curve reaches `quantity` (> 0)."""
    if ce:
        ratio = quantity / q0
        log_q = (math.log(ratio) if ratio > 0.0 else 0.0) - shift
        return p0 * math.exp(log_q / elasticity)
    return p0 * (1.0 + (quantity / q0 - 1.0 - shift) / elasticity)


@njit(**_JIT)
def _demand(c, price):
    """Qd(P), truncated at zero."""
    return _curve(c.ce, c.p0, c.q0, c.eta, c.d, price)


@njit(**_JIT)
def _inverse_demand(c, quantity):
    """Qd^-1(Q): the marginal buyer's value of the quantity-th unit."""
    return _curve_price(c.ce, c.p0, c.q0, c.eta, c.d, quantity)


@njit(**_JIT)
def _base_supply(c, price):
    """K(P): the period's supply curve (the desired stock under the stock schedule)."""
    return _curve(c.ce, c.p0, c.q0, c.e, c.s, price)


@njit(**_JIT)
def _supply(c, price):
    """Qs(P) = min(max(a + b K(P), f), h)."""
    return min(max(c.a + c.b * _base_supply(c, price), c.f), c.h)


@njit(**_JIT)
def _supply_line(c, quantity):
    """Price on the sloped branch a + b K(P) = quantity (e > 0; quantity above a)."""
    return _curve_price(c.ce, c.p0, c.q0, c.e, c.s, (quantity - c.a) / c.b)


@njit(**_JIT)
def _inverse_supply(c, quantity):
    """Qs^-1(Q): 0 up to the quantity offered at price zero (and on vertical supply)."""
    if c.e <= 0.0:
        return 0.0
    if quantity <= _supply(c, 0.0):
        return 0.0
    return max(_supply_line(c, quantity), 0.0)


@njit(**_JIT)
def _plain(c):
    """True where supply is the period's curve itself (no stock memory and no bounds)."""
    return c.a == 0.0 and c.b == 1.0 and c.f == 0.0 and c.h == math.inf


# --- areas under the curves -----------------------------------------------------------------


@njit(**_JIT)
def _expm1_over(y):
    if y == 0.0:
        return 1.0
    return math.expm1(y) / y


@njit(**_JIT)
def _power_law_integral(lower, price_lower, upper, price_upper, m):
    """int_lower^upper P(q) dq for P(q) proportional to q^(m-1), signed; lower, upper > 0."""
    log_ratio = math.log(lower / upper)
    z = m * log_ratio
    if z <= 0.0:
        return -upper * price_upper * log_ratio * _expm1_over(z)
    return -lower * price_lower * log_ratio * _expm1_over(-z)


@njit(**_JIT)
def _demand_integral(c, lower, upper):
    """int_lower^upper Qd^-1(q) dq, signed; lower, upper > 0."""
    if c.ce:
        m = 1.0 + 1.0 / c.eta
        return _power_law_integral(lower, _inverse_demand(c, lower), upper, _inverse_demand(c, upper), m)
    return (upper - lower) * 0.5 * (_inverse_demand(c, lower) + _inverse_demand(c, upper))


@njit(**_JIT)
def _supply_integral(c, lower, upper):
    """int_lower^upper Qs^-1(q) dq, signed: only the part above the zero-price quantity."""
    if c.e <= 0.0:
        return 0.0
    zero_price_quantity = _supply(c, 0.0)
    lo = max(lower, zero_price_quantity)
    hi = max(upper, zero_price_quantity)
    if lo == hi:
        return 0.0
    if not c.ce:
        return (hi - lo) * 0.5 * (_supply_line(c, lo) + _supply_line(c, hi))
    # int a+bK = q of K^-1((q - a)/b) dq = b int K^-1(x) dx, x = (q - a)/b: a power law in x.
    x_lo, x_hi = (lo - c.a) / c.b, (hi - c.a) / c.b
    m = 1.0 + 1.0 / c.e
    if x_lo <= 0.0:
        return c.b * x_hi * _supply_line(c, hi) / m
    if x_hi <= 0.0:
        return -c.b * x_lo * _supply_line(c, lo) / m
    return c.b * _power_law_integral(x_lo, _supply_line(c, lo), x_hi, _supply_line(c, hi), m)


@njit(**_JIT)
def _base_supply_price_integral(c, lower, upper):
    """int_lower^upper K(p) dp, signed, for prices lower, upper >= 0: a trapezoid on the
    linear curve's positive part, a power law (through expm1) on the constant-elasticity one."""
    if lower == upper:
        return 0.0
    if upper < lower:
        return -_base_supply_price_integral(c, upper, lower)
    if c.e <= 0.0:
        return (upper - lower) * _base_supply(c, upper)
    if not c.ce:
        zero = c.p0 * (1.0 - (1.0 + c.s) / c.e)  # K(p) = 0 at and below this price
        lo, hi = max(lower, zero), max(upper, zero)
        return (hi - lo) * 0.5 * (_base_supply(c, lo) + _base_supply(c, hi))
    if lower <= 0.0:
        return upper * _base_supply(c, upper) / (c.e + 1.0)
    # int p^e dp = p K(p) / (e + 1): written as upper K(upper) (1 - (lower/upper)^(e+1)) / (e+1).
    z = (c.e + 1.0) * math.log(lower / upper)
    return -upper * _base_supply(c, upper) * math.log(lower / upper) * _expm1_over(z)


# --- clearing -------------------------------------------------------------------------------


@njit(**_JIT)
def _excess_log(x, c, alpha, beta, scale, gap):
    """G(x) = ln Qd(e^x) - ln(alpha (a + b K(scale e^x - gap)) + beta) and dG/dx (CE)."""
    price = math.exp(x)
    producer = scale * price - gap
    left = c.eta * (x - math.log(c.p0)) + c.d
    if c.a == 0.0 and c.b == 1.0 and alpha == 1.0 and beta == 0.0:
        # A single power-law segment: ln Qs(Pp) - ln Q0 = e ln(Pp/P0) + S, no exp needed.
        if not producer > 0.0:
            return math.inf, c.eta
        return left - c.e * math.log(producer / c.p0) - c.s, c.eta - c.e * scale * price / producer
    k = 0.0
    if producer > 0.0:
        k = c.q0 * math.exp(c.e * math.log(producer / c.p0) + c.s)
    right = alpha * (c.a + c.b * k) + beta
    if not right > 0.0:
        return math.inf, c.eta
    slope = c.eta
    if producer > 0.0:
        slope = c.eta - alpha * c.b * c.e * k * scale * price / (producer * right)
    return left + math.log(c.q0) - math.log(right), slope


@njit(**_JIT)
def _narrowed(x, g, lo, hi):
    """The bracket (lo, hi) of the root of a decreasing G, narrowed by G(x) = g != 0."""
    if g > 0.0:
        return x, hi
    return lo, x


@njit(**_JIT)
def _newton_from(x, lo, hi, c, alpha, beta, scale, gap):
    """Newton's method in log price from a good first guess x, kept inside the expected
    bracket (lo, hi) by bisection. Returns NaN unless a Newton step itself converged (a root,
    not merely a collapsed bracket)."""
    for _ in range(60):
        g, slope = _excess_log(x, c, alpha, beta, scale, gap)
        if g == 0.0:
            return x
        lo, hi = _narrowed(x, g, lo, hi)
        step = -g / slope if slope < 0.0 and math.isfinite(g) else math.nan
        candidate = x + step
        tolerance = 4.0 * _ULP * max(1.0, abs(x))
        if abs(step) <= tolerance:
            return candidate
        if not (lo < candidate < hi):
            candidate = 0.5 * (lo + hi)
            if hi - lo <= tolerance:
                return math.nan
        x = candidate
    return math.nan


@njit(**_JIT)
def _log_root(lo, hi, c, alpha, beta, scale, gap):
    """Root of the decreasing G on a bracket [lo, hi] of log prices (widened until signs
    hold); safeguarded Newton: a step that leaves the bracket is replaced by bisection."""
    g_lo, _ = _excess_log(lo, c, alpha, beta, scale, gap)
    width = max(hi - lo, 0.125)
    for _ in range(80):
        if g_lo > 0.0:
            break
        hi = lo
        lo -= width
        width *= 2.0
        g_lo, _ = _excess_log(lo, c, alpha, beta, scale, gap)
    g_hi, _ = _excess_log(hi, c, alpha, beta, scale, gap)
    width = max(hi - lo, 0.125)
    for _ in range(80):
        if g_hi < 0.0:
            break
        lo = hi
        hi += width
        width *= 2.0
        g_hi, _ = _excess_log(hi, c, alpha, beta, scale, gap)
    if not (g_lo > 0.0 and g_hi < 0.0):
        if g_lo == 0.0:
            return lo
        if g_hi == 0.0:
            return hi
        return math.nan
    x = 0.5 * (lo + hi)
    for _ in range(200):
        g, slope = _excess_log(x, c, alpha, beta, scale, gap)
        if g == 0.0:
            return x
        lo, hi = _narrowed(x, g, lo, hi)
        step = -g / slope if slope < 0.0 else math.nan
        candidate = x + step
        if not (lo < candidate < hi):
            candidate = 0.5 * (lo + hi)
        tolerance = 4.0 * _ULP * max(1.0, abs(candidate))
        if abs(candidate - x) <= tolerance or hi - lo <= tolerance:
            return candidate
        x = candidate
    return math.nan


@njit(**_JIT)
def _on_bounds(c, price, alpha, beta, scale, gap):
    """The price where supply sits on a bound at the producer price of `price` (a kink:
    vertical supply), else `price` itself (always, without bounds: no supply to evaluate)."""
    if not (c.f > 0.0 or c.h < math.inf):
        return price
    sloped = c.a + c.b * _base_supply(c, scale * price - gap)
    if c.f > 0.0 and sloped < c.f:
        return _inverse_demand(c, alpha * c.f + beta)
    if sloped > c.h:
        return _inverse_demand(c, alpha * c.h + beta)
    return price


@njit(**_JIT)
def _clear(c, alpha, beta, scale, gap, low, high, guess=0.0):
    """Consumer price Pc solving Qd(Pc) = alpha Qs(scale Pc - gap) + beta.

    [low, high] is a price bracket the caller expects (checked and widened for constant
    elasticity). NaN where no root is found; the caller reports it.
    """
    plain = _plain(c)
    one_segment = alpha == 1.0 and beta == 0.0
    if not c.ce:
        if plain:
            slope_e, shift = c.e, c.s
            floor = 0.0
        else:
            slope_e = c.b * c.e
            shift = (c.a / c.q0 + c.b * (1.0 + c.s)) - 1.0
            floor = max(c.a, c.f)
        if one_segment:
            x = (c.d - shift - slope_e * (scale - 1.0 - gap / c.p0)) / (slope_e * scale - c.eta)
        else:
            x = (1.0 + c.d - alpha * (1.0 + shift + slope_e * (scale - 1.0 - gap / c.p0)) - beta / c.q0) / (
                alpha * slope_e * scale - c.eta
            )
        price = c.p0 * (1.0 + x)
        producer_rel = (scale * price - gap - c.p0) / c.p0
        offered = c.q0 * (1.0 + slope_e * producer_rel + shift)
        if offered < floor:
            price = _inverse_demand(c, alpha * floor + beta)
        elif offered > c.h:
            price = _inverse_demand(c, alpha * c.h + beta)
        return price
    if plain and one_segment and (gap == 0.0 or c.e <= 0.0):
        # Closed form; on vertical supply the quantity is fixed and buyers pay P*.
        return c.p0 * math.exp((c.d - c.s - c.e * math.log(scale)) / (c.e - c.eta))
    if c.e <= 0.0:
        fixed = min(max(c.a + c.b * c.q0 * math.exp(c.s), c.f), c.h)
        return _inverse_demand(c, alpha * fixed + beta)
    lo = math.log(max(low, _TINY))
    hi = math.log(max(high, low * (1.0 + 1e-12), _TINY))
    x = math.nan
    if guess > 0.0:
        start = min(max(math.log(guess), lo), hi)
        x = _newton_from(start, lo, hi, c, alpha, beta, scale, gap)
    if not math.isfinite(x):  # no guess, or the expected bracket was wrong: check and widen it
        x = _log_root(lo, hi, c, alpha, beta, scale, gap)
    return _on_bounds(c, math.exp(x), alpha, beta, scale, gap)


@njit(**_JIT)
def _free_point(c, guess):
    """The period's free-market point (P*, Q*) on these curves."""
    if _plain(c):
        if c.ce:
            log_price = (c.d - c.s) / (c.e - c.eta)
            return c.p0 * math.exp(log_price), c.q0 * math.exp(c.e * log_price + c.s)
        relative = (c.d - c.s) / (c.e - c.eta)
        return c.p0 * (1.0 + relative), c.q0 * (1.0 + c.e * relative + c.s)
    price = _clear(c, 1.0, 0.0, 1.0, 0.0, 0.5 * guess, 2.0 * guess, guess)
    return price, _supply(c, price)


# --- the period's curves --------------------------------------------------------------------


@njit(**_JIT)
def _path_of(m, i, ce):
    """Scenario i's market and schedule as scalars, for a walk in the form `ce`."""
    return Path(
        ce,
        m.price[i],
        m.quantity[i],
        m.demand_elasticity[i],
        m.payments_per_period[i],
        m.stock[i],
        m.stock_rate[i],
        m.floor_share[i],
        m.build_limit[i],
        m.conversion[i],
        m.long_run_elasticity[i],
        m.random_rationing[i],
        m.horizon[i],
    )


@njit(**_JIT)
def _period_curves(path, d, s, e, stock_prev):
    """The curves of a period with shifts d, s (of the path's form) and the schedule's supply
    elasticity e, on a path whose homes standing at the end of the period before are
    `stock_prev` (used only under the stock schedule, whose supply has the long-run
    elasticity; MODEL.md 13 and 16)."""
    if path.stock:
        rate = path.rate
        top = (1.0 + path.build_limit) * stock_prev if path.build_limit > 0.0 else math.inf
        return Curves(
            path.ce,
            path.p0,
            path.q0,
            path.eta,
            d,
            path.long_run,
            s,
            (1.0 - rate) * stock_prev,
            rate,
            path.floor_share * stock_prev,
            top,
        )
    return Curves(path.ce, path.p0, path.q0, path.eta, d, e, s, 0.0, 1.0, 0.0, math.inf)


@njit(**_JIT)
def _supply_elasticity_at(c, price, quantity):
    """Elasticity of the period's supply at a point on it: b e K / Q on the sloped branch
    (b e Q0 P / (P0 Q) for the linear form), 0 on a bound."""
    k = _base_supply(c, price)
    sloped = c.a + c.b * k
    if sloped < c.f or sloped > c.h or quantity <= 0.0:
        return 0.0
    if c.ce:
        return c.b * c.e * k / quantity
    return c.b * c.e * c.q0 * price / (c.p0 * quantity)


# --- one policy's outcome in a period, by kind (MODEL.md 5, 12, 14) -------------------------


@njit(**_JIT)
def _uncontrolled_outcome(binding, pc, pp, q, qd, qs, excess, mv, mc, p_star, q_star, share):
    """An outcome that controls no group of homes (the free market; a floor, tax, subsidy or
    quantity cap): the covered and uncovered series are the free market's split by share."""
    return Outcome(
        pc,
        pp,
        q,
        qd,
        qs,
        0.0,
        excess,
        mv,
        mc,
        binding,
        False,
        0.0,
        p_star,
        p_star,
        share * q_star,
        (1.0 - share) * q_star,
        0.0,
        0.0,
    )


@njit(**_JIT)
def _free_outcome(p_star, q_star, share):
    """The free market of the period: what every policy leaves where it does not bind."""
    return _uncontrolled_outcome(
        False, p_star, p_star, q_star, q_star, q_star, 0.0, p_star, p_star, p_star, q_star, share
    )


@njit(**_JIT)
def _rule_rent(code, real, growth, indexed, inflation, previous_rent):
    """A ceiling's real rent in the period: a level (real value), or a growth cap on the
    controlled rent of the period before, (1+g)/(1+pi) or, indexed, (1+pi+g)/(1+pi)."""
    if code == _CEILING:
        return real
    if indexed:
        return (1.0 + inflation + growth) * previous_rent / (1.0 + inflation)
    return (1.0 + growth) * previous_rent / (1.0 + inflation)


@njit(**_JIT)
def _ceiling(c, level, active, p_star, q_star, share):
    """A ceiling on the share s of homes, pooled with the others (no stock of their own).

    Binding where level < P*: covered homes Qc = s Qs(c); with s = 1, Pc = Pp = c, Q = Qs(c),
    shortage Qd(c) - Q; with s < 1 the uncovered rent Pu clears (1-s) Qs(Pu) = Qd(Pu) - Qc
    (Fallis & Smith 1984) and Pc = Pp is the quantity-weighted mean rent."""
    if not (active and level < p_star):
        return _free_outcome(p_star, q_star, share)
    supplied = _supply(c, level)
    demanded = _demand(c, level)
    if share >= 1.0:
        return Outcome(
            level,
            level,
            supplied,
            demanded,
            supplied,
            demanded - supplied,
            0.0,
            _inverse_demand(c, supplied),
            level,
            True,
            True,
            level,
            level,
            level,
            supplied,
            0.0,
            0.0,
            0.0,
        )
    covered_q = share * supplied
    high = _inverse_demand(c, covered_q) if covered_q > 0.0 else 4.0 * p_star
    uncovered_price = _clear(c, 1.0 - share, covered_q, 1.0, 0.0, p_star, high)
    unit_uncovered = _supply(c, uncovered_price)
    uncovered_q = (1.0 - share) * unit_uncovered
    q = covered_q + uncovered_q
    pc = (level * covered_q + uncovered_price * uncovered_q) / q
    return Outcome(
        pc,
        pc,
        q,
        demanded,
        q,
        max(demanded - q, 0.0),
        0.0,
        _inverse_demand(c, q),
        uncovered_price,
        True,
        True,
        level,
        level,
        uncovered_price,
        covered_q,
        uncovered_q,
        supplied,
        unit_uncovered,
    )


@njit(**_JIT)
def _floor(c, level, active, p_star, q_star, share):
    """A price floor f > P*: Pc = Pp = f, Q = Qd(f), excess supply Qs(f) - Q."""
    if not (active and level > p_star):
        return _free_outcome(p_star, q_star, share)
    demanded = _demand(c, level)
    supplied = _supply(c, level)
    mc = _inverse_supply(c, min(demanded, q_star))
    return _uncontrolled_outcome(
        True,
        level,
        level,
        demanded,
        demanded,
        supplied,
        supplied - demanded,
        level,
        mc,
        p_star,
        q_star,
        share,
    )


@njit(**_JIT)
def _wedge(c, code, rate, real, active, p_star, q_star, share):
    """A tax or subsidy between buyers and sellers: Qd(Pc) = Qs(scale Pc - gap) with
    (scale, gap) = (1, tau) for a unit tax, (1 - r, 0) ad valorem, (1, -s) a subsidy."""
    if code == _AD_VALOREM:
        scale, gap = 1.0 - rate, 0.0
        low, high = p_star, p_star / scale
    elif code == _UNIT_TAX:
        scale, gap = 1.0, real
        low, high = p_star, p_star + real
    else:  # _SUBSIDY: _policy_outcome sends only the three wedge codes here
        scale, gap = 1.0, -real
        top = _supply(c, p_star + real)
        low, high = _inverse_demand(c, top), p_star
    if not (active and rate > 0.0):
        return _free_outcome(p_star, q_star, share)
    # First guess: buyers bear the share e/(e - eta) of the wedge (Fullerton & Metcalf 2002,
    # exact for small wedges); Newton then converges in a few steps.
    share_e = c.b * c.e
    wedge = gap + (1.0 - scale) * p_star
    first = p_star + wedge * share_e / (share_e - c.eta) if share_e - c.eta > 0.0 else p_star
    pc = _clear(c, 1.0, 0.0, scale, gap, low, high, first)
    pp = scale * pc - gap
    q = _demand(c, pc)
    return _uncontrolled_outcome(True, pc, pp, q, q, _supply(c, pp), 0.0, pc, pp, p_star, q_star, share)


@njit(**_JIT)
def _quantity_cap(c, cap, active, p_star, q_star, share):
    """A quantity cap Qbar < Q*: Q = Qbar, Pc = Pp = Qd^-1(Qbar), MC = Qs^-1(Qbar); sellers
    without a permit are the excess supply Qs(Pp) - Qbar."""
    if not (active and cap < q_star):
        return _free_outcome(p_star, q_star, share)
    price = _inverse_demand(c, cap)
    supplied = _supply(c, price)
    mc = _inverse_supply(c, min(cap, q_star))
    return _uncontrolled_outcome(
        True, price, price, cap, cap, supplied, supplied - cap, price, mc, p_star, q_star, share
    )


@njit(**_JIT)
def _policy_outcome(c, code, value, real, level, active, p_star, q_star, share):
    """Dispatch to the rule of the policy's kind."""
    if code == _CEILING or code == _GROWTH_CAP:
        return _ceiling(c, level, active, p_star, q_star, share)
    if code == _FLOOR:
        return _floor(c, real, active, p_star, q_star, share)
    if code == _UNIT_TAX or code == _AD_VALOREM or code == _SUBSIDY:
        return _wedge(c, code, value, real, active, p_star, q_star, share)
    if code == _QUANTITY_CAP:
        return _quantity_cap(c, value, active, p_star, q_star, share)
    return _free_outcome(p_star, q_star, share)


# --- a ceiling's controlled homes as a group of their own (MODEL.md 17, 18) ----------------


@njit(**_JIT)
def _group_supply(c, g, price):
    """G(P) = min(max(A + B K(P) + C max(0, D K(P) - E), lo), hi): the homes a group lets at
    the rent it receives, K the period's base (desired-stock) curve."""
    k = _base_supply(c, price)
    return min(max(g.A + g.B * k + g.C * max(0.0, g.D * k - g.E), g.lo), g.hi)


@njit(**_JIT)
def _group_break(c, g, target, low, high, points, count):
    """Append to `points` the price in (low, high) where the group's sloped part, as a
    function of K, reaches `target` (a bound or the kink of C), if the base curve crosses it."""
    if not (c.e > 0.0 and target > 0.0):
        return count
    price = _curve_price(c.ce, c.p0, c.q0, c.e, c.s, target)
    if low < price < high:
        points[count] = price
        count += 1
    return count


@njit(**_JIT)
def _group_integral(c, g, lower, upper):
    """int_lower^upper G(p) dp, signed, exact: the price axis is cut where G changes branch
    (its bounds and its kink), and each piece is a constant or A' + B' K(p)."""
    if lower == upper:
        return 0.0
    if upper < lower:
        return -_group_integral(c, g, upper, lower)
    points = np.empty(8)
    points[0] = lower
    count = 1
    # In K: the kink of C at K = E/D; the bounds where A + B K (+ C (D K - E)) = lo or hi.
    kink = g.E / g.D if g.C > 0.0 and g.D > 0.0 else -1.0
    count = _group_break(c, g, kink, lower, upper, points, count)
    for bound in (g.lo, g.hi):
        if bound == math.inf:
            continue
        below = (bound - g.A) / g.B if g.B > 0.0 else -1.0
        if kink < 0.0 or below <= kink:
            count = _group_break(c, g, below, lower, upper, points, count)
        if g.C > 0.0 and g.D > 0.0:
            above = (bound - g.A + g.C * g.E) / (g.B + g.C * g.D)
            if above > kink:
                count = _group_break(c, g, above, lower, upper, points, count)
    points[count] = upper
    count += 1
    cuts = np.sort(points[:count])
    total = 0.0
    for j in range(count - 1):
        a, b = cuts[j], cuts[j + 1]
        if b <= a:
            continue
        k_mid = _base_supply(c, 0.5 * (a + b))
        sloped = g.A + g.B * k_mid + g.C * max(0.0, g.D * k_mid - g.E)
        if sloped <= g.lo:
            total += g.lo * (b - a)
        elif sloped >= g.hi:
            total += g.hi * (b - a)
        elif g.C > 0.0 and g.D * k_mid - g.E > 0.0:
            total += (g.A - g.C * g.E) * (b - a) + (g.B + g.C * g.D) * _base_supply_price_integral(c, a, b)
        else:
            total += g.A * (b - a) + g.B * _base_supply_price_integral(c, a, b)
    return total


@njit(**_JIT)
def _received(rule, tau, market_rent):
    """Rc(M) = (1 - tau) min(r, M) + tau M: the controlled group's mean rent where new
    tenancies (the share tau) start at the market rent; Rc = M without a rule."""
    if rule < 0.0:
        return market_rent
    return (1.0 - tau) * min(rule, market_rent) + tau * market_rent


@njit(**_JIT)
def _group_excess(c, controlled, others, rule, tau, price):
    """Qd(M) - Sc(Rc(M)) - Su(M): falls as M rises (rule < 0: no rule)."""
    return (
        _demand(c, price)
        - _group_supply(c, controlled, _received(rule, tau, price))
        - _group_supply(c, others, price)
    )


@njit(**_JIT)
def _market_rent(c, controlled, others, rule, tau, guess):
    """The root M of _group_excess: a bracket from `guess` widened until its signs hold, then
    Brent's method (Brent 1973, ch. 4: inverse quadratic interpolation, secant and bisection,
    as scipy.optimize.brentq), converged to 4 ulp of M. NaN where no bracket is found."""
    lo = hi = guess
    f_lo = f_hi = _group_excess(c, controlled, others, rule, tau, guess)
    if f_lo == 0.0:
        return guess
    for _ in range(200):
        if f_lo > 0.0:
            break
        hi, f_hi = lo, f_lo
        lo *= 0.5
        f_lo = _group_excess(c, controlled, others, rule, tau, lo)
    for _ in range(200):
        if f_hi < 0.0:
            break
        lo, f_lo = hi, f_hi
        hi *= 2.0
        f_hi = _group_excess(c, controlled, others, rule, tau, hi)
    if not (f_lo > 0.0 and f_hi < 0.0):
        return math.nan
    # Brent's zeroin on [lo, hi] (x_pre, x_cur, x_blk as in scipy's brentq).
    x_pre, x_cur, f_pre, f_cur = lo, hi, f_lo, f_hi
    x_blk = f_blk = s_pre = s_cur = 0.0
    for _ in range(200):
        if f_pre != 0.0 and f_cur != 0.0 and (f_pre < 0.0) != (f_cur < 0.0):
            x_blk, f_blk = x_pre, f_pre
            s_pre = s_cur = x_cur - x_pre
        if abs(f_blk) < abs(f_cur):
            x_pre, x_cur, x_blk = x_cur, x_blk, x_cur
            f_pre, f_cur, f_blk = f_cur, f_blk, f_cur
        delta = 2.0 * _ULP * abs(x_cur)
        s_bis = 0.5 * (x_blk - x_cur)
        if f_cur == 0.0 or abs(s_bis) < delta:
            return x_cur
        if abs(s_pre) > delta and abs(f_cur) < abs(f_pre):
            if x_pre == x_blk:
                s_try = -f_cur * (x_cur - x_pre) / (f_cur - f_pre)
            else:
                d_pre = (f_pre - f_cur) / (x_pre - x_cur)
                d_blk = (f_blk - f_cur) / (x_blk - x_cur)
                s_try = -f_cur * (f_blk * d_blk - f_pre * d_pre) / (d_blk * d_pre * (f_blk - f_pre))
            if 2.0 * abs(s_try) < min(abs(s_pre), 3.0 * abs(s_bis) - delta):
                s_pre, s_cur = s_cur, s_try
            else:
                s_pre = s_cur = s_bis
        else:
            s_pre = s_cur = s_bis
        x_pre, f_pre = x_cur, f_cur
        x_cur += s_cur if abs(s_cur) > delta else (delta if s_bis > 0.0 else -delta)
        f_cur = _group_excess(c, controlled, others, rule, tau, x_cur)
    return x_cur


@njit(**_JIT)
def _group_supplies(
    c, stock, share, exempt, controlled_prev, others_prev, converted_share, floor_share, build
):
    """The two groups' supply curves of the period (MODEL.md 17).

    Without a stock: Sc = s Qs_t, Su = (1-s) Qs_t. Under the stock schedule, with
    Kc~ = (1 - v) Kc_(t-1) after conversion and lambda = c.b, each group closes the share lambda
    of the gap to its desired stock, within its bounds: covered new homes
    Sc(R) = clip((1-lambda) Kc~ + lambda s K(R); (1-delta) Kc~, (1+b) Kc~) and
    Su(M) = clip((1-lambda) Ku + lambda (1-s) K(M); (1-delta) Ku, (1+b) Ku); exempt new homes
    cap the controlled group at Kc~ and give all building to the others,
    Su(M) = clip((1-lambda) Ku + lambda [(1-s) K(M) + max(0, s K(M) - Kc~)]; (1-delta) Ku,
    Ku + b (Kc + Ku)), with Kc, Ku the stocks of t-1 before conversion."""
    if not stock:
        return Group(0.0, share, 0.0, 0.0, 0.0, 0.0, math.inf), Group(
            0.0, 1.0 - share, 0.0, 0.0, 0.0, 0.0, math.inf
        )
    rate = c.b
    kept = (1.0 - converted_share) * controlled_prev
    low_c, low_u = floor_share * kept, floor_share * others_prev
    if exempt:
        top_u = others_prev + build * (controlled_prev + others_prev) if build > 0.0 else math.inf
        return Group((1.0 - rate) * kept, rate * share, 0.0, 0.0, 0.0, low_c, kept), Group(
            (1.0 - rate) * others_prev, rate * (1.0 - share), rate, share, kept, low_u, top_u
        )
    top_c = (1.0 + build) * kept if build > 0.0 else math.inf
    top_u = (1.0 + build) * others_prev if build > 0.0 else math.inf
    return Group((1.0 - rate) * kept, rate * share, 0.0, 0.0, 0.0, low_c, top_c), Group(
        (1.0 - rate) * others_prev, rate * (1.0 - share), 0.0, 0.0, 0.0, low_u, top_u
    )


@njit(**_JIT)
def _controlled_groups(c, controlled, others, rule, tau, whole, guess):
    """A ceiling over two groups of homes (MODEL.md 17): the market rent M clears
    Qd(M) = Sc(Rc(M)) + Su(M); the comparator P^ clears the same curves without the rule.
    The rule binds where r < P^ (then r < M: Fallis & Smith 1984) and tau < 1.

    Returns the outcome (covered_price Rc, uncovered_price M, covered_q Kc = Sc(Rc),
    uncovered_q Ku = Su(M), Q = Kc + Ku, Pc = Pp the mean rent, MV = M, quantity demanded
    Qd(r) under a binding rule without decontrol, else Q; MC = Rc for a whole-market rule,
    else M) and the comparator (P^, Q^)."""
    p_hat = _market_rent(c, controlled, others, -1.0, 0.0, guess)
    q_hat = _group_supply(c, controlled, p_hat) + _group_supply(c, others, p_hat)
    binding = rule < p_hat and tau < 1.0
    if binding:
        market = _market_rent(c, controlled, others, rule, tau, p_hat)
        received = _received(rule, tau, market)
    else:
        market = received = p_hat
    kc = _group_supply(c, controlled, received)
    ku = _group_supply(c, others, market)
    q = kc + ku
    pc = (received * kc + market * ku) / q if binding and q > 0.0 else market
    demanded = _demand(c, rule) if binding and tau == 0.0 else q
    return (
        Outcome(
            pc,
            pc,
            q,
            demanded,
            q,
            max(demanded - q, 0.0),
            0.0,
            market,
            received if whole else market,
            binding,
            binding,
            rule,
            received,
            market,
            kc,
            ku,
            0.0,
            0.0,
        ),
        p_hat,
        q_hat,
    )


# --- welfare and who gains and who loses (MODEL.md 6, 15, 17, 20) --------------------------


@njit(**_JIT)
def _no_welfare():
    return Welfare(0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0)


@njit(**_JIT)
def _deadweight(demand_area, supply_area, scale):
    """int_Q^Q* (Qd^-1 - Qs^-1) dq >= 0; a negative value beyond rounding (relative to the
    areas and to the period's rent bill `scale`) is reported as it is."""
    loss = demand_area - supply_area
    if loss < 0.0 and -loss <= _LOSS_ROUNDING * (abs(demand_area) + abs(supply_area) + scale):
        return 0.0
    return loss


@njit(**_JIT)
def _misallocation(c, o, random, m_divisor):
    """Random rationing of a binding ceiling (Glaeser & Luttmer 2003): the Q homes go at
    random among the Qd households that want one, M = Q (Qd^-1(Q) - Pc) / m with m = 2
    (linear demand) or 1 + 1/eta (constant elasticity, |eta| > 1); per price interval."""
    if o.rationed and random and m_divisor > 0.0:
        return max(o.q * (_inverse_demand(c, o.q) - o.pc) / m_divisor, 0.0)
    return 0.0


@njit(**_JIT)
def _welfare(c, o, p_star, q_star, k_pay, share, ceiling, subsidy, random, m_divisor):
    """Welfare of a period against the free market (P*, Q*) of the same curves, x k:

        dCS = P* Q* - Pc Q - int_Q^Q* Qd^-1 (- misallocation),  dPS = Pp Q - P* Q* + int_Q^Q* Qs^-1,
        G = (Pc - Pp) Q,  DWL = int_Q^Q* Qd^-1 - int_Q^Q* Qs^-1 (+ misallocation)

    (per segment under partial coverage), split between groups: tenants of controlled homes
    (P* - c) Qc, of uncontrolled homes -(Pu - P*) Qu (every tenant -(Pc - P*) min(Q, Q*) where
    nothing is controlled), households priced out -int_Q^Q* (Qd^-1 - P*) where Q < Q*, drawn in
    int_Q*^Q (Qd^-1 - Pc) where a subsidy lets Q > Q*, owners of each segment, government G. Exactly 0 where
    the policy does not bind."""
    if not o.binding:
        return _no_welfare()
    partial = ceiling and share < 1.0
    q = o.q
    demand_area = _demand_integral(c, q, q_star)
    if partial:
        supply_area = share * _supply_integral(c, o.unit_covered, q_star) + (1.0 - share) * _supply_integral(
            c, o.unit_uncovered, q_star
        )
    else:
        supply_area = _supply_integral(c, q, q_star)
    free_spending = p_star * q_star
    consumer = free_spending - o.pc * q - demand_area
    producer = o.pp * q - free_spending + supply_area
    revenue = (o.pc - o.pp) * q
    deadweight = _deadweight(demand_area, supply_area, free_spending)
    mis = _misallocation(c, o, random, m_divisor)
    dcs = k_pay * (consumer - mis)
    dps = k_pay * producer
    rev = k_pay * revenue
    dwl = k_pay * (deadweight + mis)
    mis = k_pay * mis
    priced_out = -k_pay * (demand_area - p_star * (q_star - q))
    tenants_c = tenants_u = owners_c = owners_u = government = drawn_in = 0.0
    if ceiling:
        tenants_c = k_pay * (p_star - o.level) * o.covered_q
        if partial:
            tenants_u = -k_pay * (o.uncovered_price - p_star) * o.uncovered_q
            owners_c = (
                k_pay
                * share
                * (o.level * o.unit_covered - free_spending + _supply_integral(c, o.unit_covered, q_star))
            )
            owners_u = (
                k_pay
                * (1.0 - share)
                * (
                    o.uncovered_price * o.unit_uncovered
                    - free_spending
                    + _supply_integral(c, o.unit_uncovered, q_star)
                )
            )
        else:
            owners_c = dps
    else:
        if subsidy and q > q_star:  # households drawn in: only those who rent in both pay Pc
            tenants_u = -k_pay * (o.pc - p_star) * q_star
            drawn_in = k_pay * (-demand_area - o.pc * (q - q_star))
            priced_out = 0.0
        else:
            tenants_u = -k_pay * (o.pc - p_star) * q
        owners_u = dps
        government = rev
    return Welfare(
        dcs, dps, rev, dwl, mis, tenants_c, tenants_u, priced_out, owners_c, owners_u, government, drawn_in
    )


@njit(**_JIT)
def _group_welfare(c, o, controlled, others, p_hat, q_hat, k_pay, random, m_divisor):
    """Welfare of a ceiling over two groups (MODEL.md 17) against the same period without the
    rule (P^, Q^), by price integrals of the groups' supply curves, x k:

        tenants of controlled homes (P^ - Rc) Kc,  of the others -(M - P^) Ku,
        priced out -int_Q^Q^ (Qd^-1 - P^),  owners of controlled homes -int_Rc^P^ Sc(p) dp,
        owners of the others int_P^^M Su(p) dp,  government 0,  DWL = -(sum of the groups)

    (derived by parts: DWL = int_Q^Q^ Qd^-1 - int_Kc^Sc(P^) Sc^-1 - int_Ku^Su(P^) Su^-1 >= 0)."""
    if not o.binding:
        return _no_welfare()
    tenants_c = k_pay * (p_hat - o.covered_price) * o.covered_q
    tenants_u = -k_pay * (o.uncovered_price - p_hat) * o.uncovered_q
    priced_out = -k_pay * (_demand_integral(c, o.q, q_hat) - p_hat * (q_hat - o.q))
    owners_c = -k_pay * _group_integral(c, controlled, o.covered_price, p_hat)
    owners_u = k_pay * _group_integral(c, others, p_hat, o.uncovered_price)
    mis = k_pay * _misallocation(c, o, random, m_divisor)
    dcs = tenants_c + tenants_u + priced_out - mis
    dps = owners_c + owners_u
    dwl = -(dcs + dps)
    # The loss is a difference of transfers far larger than it where the rule mostly moves
    # money: within rounding of them (and of the rent bill) it is 0.
    rounding = abs(tenants_c) + abs(tenants_u) + abs(priced_out) + abs(owners_c) + abs(owners_u)
    if abs(dwl) <= _LOSS_ROUNDING * (rounding + k_pay * p_hat * q_hat):
        dwl = 0.0
    return Welfare(dcs, dps, 0.0, dwl, mis, tenants_c, tenants_u, priced_out, owners_c, owners_u, 0.0, 0.0)


@njit(**_JIT)
def _vs_free_path(c, o, free_price, free_quantity, k_pay, misallocation):
    """Renters against the free path of the same request (MODEL.md 19), exact because both
    paths share the demand curve, x k:

        extra_rent = (Pc - P^F) Q,  renters = -int_Q^Q^F (Qd^-1 - P^F) dq - extra_rent - misallocation
    """
    extra = k_pay * (o.pc - free_price) * o.q
    area = _demand_integral(c, o.q, free_quantity) - free_price * (free_quantity - o.q)
    return -k_pay * area - extra - misallocation, extra


# --- the free path of each scenario ---------------------------------------------------------


@njit(**_JIT)
def _free_path_kernel(m, form_ce, out):
    """out[i] = (P*_t, Q*_t, supply elasticity_t) of scenario i in the form form_ce[i]."""
    for i in range(m.price.shape[0]):
        ce = form_ce[i]
        path = _path_of(m, i, ce)
        shifts = m.constant_shifts if ce else m.linear_shifts
        p0, q0 = path.p0, path.q0
        out[i, _FP.price, 0] = p0
        out[i, _FP.quantity, 0] = q0
        out[i, _FP.supply_elasticity, 0] = m.eps[i, 0]
        stock_prev = q0
        guess = p0
        for t in range(1, m.horizon[i] + 1):
            d, s = shifts[i, _SC.demand, t], shifts[i, _SC.supply, t]
            c = _period_curves(path, d, s, m.eps[i, t], stock_prev)
            price, quantity = _free_point(c, guess)
            out[i, _FP.price, t] = price
            out[i, _FP.quantity, t] = quantity
            # Under the stock schedule: the elasticity of this period's supply at its equilibrium.
            out[i, _FP.supply_elasticity, t] = (
                _supply_elasticity_at(c, price, quantity) if m.stock[i] else m.eps[i, t]
            )
            stock_prev = quantity
            if price > 0.0 and math.isfinite(price):
                guess = price
        for t in range(m.horizon[i] + 1, m.eps.shape[1]):  # padding of a shorter horizon
            out[i, _FP.price, t] = p0
            out[i, _FP.quantity, t] = q0
            out[i, _FP.supply_elasticity, t] = m.eps[i, t]


def free_paths(m: MarketInputs, constant_elasticity: np.ndarray | None = None) -> np.ndarray:
    """(n, 3, T+1): free-market price, quantity and supply elasticity of each scenario, in the
    form given by `constant_elasticity` (n,) (default: each scenario's own)."""
    form = m.constant_elasticity if constant_elasticity is None else constant_elasticity
    out = np.zeros((m.price.shape[0], len(FREE_PATH_NAMES), m.eps.shape[1]))
    _free_path_kernel(m, form, out)
    return out


# --- every policy row -----------------------------------------------------------------------


#: Where a row's series go once its periods are walked: out[r] (kept series, T+1) gets the
#: cells `kept`, cell j in column[j]; stage[s, t, row] (float32) gets the s-th of the
#: `counts[policy]` cells banded[policy] (see _flush_band).
Target = namedtuple("Target", "kept column out banded counts stage")

#: Rows of consecutive draws whose banded series are gathered before they go to the band
#: target together: each (slot, period) then gets one run of draws instead of one value per
#: row (a row's values otherwise land on as many cache lines as it has banded values).
BAND_STAGE = 16


@njit(**_JIT)
def _start_row(cells, p0, q0, share):
    """Period 0: the base point, into cells[0]."""
    for j in range(cells.shape[1]):
        cells[0, j] = 0.0
    for name in (_S.consumer_price, _S.producer_price, _S.marginal_value, _S.marginal_cost):
        cells[0, name] = p0
    for name in (_S.quantity, _S.quantity_demanded, _S.quantity_supplied, _S.free_quantity):
        cells[0, name] = q0
    for name in (_S.covered_price, _S.uncovered_price, _S.free_price, _S.nominal_consumer_price):
        cells[0, name] = p0
    cells[0, _S.covered_quantity] = share * q0
    cells[0, _S.uncovered_quantity] = (1.0 - share) * q0
    cells[0, _S.homes_standing] = q0


@njit(**_JIT)
def _fill_cell(cells, t, o, w, p_star, q_star, free_price, free_quantity, index, cumulative, discounted):
    """Period t's outcome and welfare into cells[t] (indexed in place: a view of each period's
    row would update the buffer's reference count twice a period)."""
    cells[t, _S.consumer_price] = o.pc
    cells[t, _S.producer_price] = o.pp
    cells[t, _S.quantity] = o.q
    cells[t, _S.quantity_demanded] = o.qd
    cells[t, _S.quantity_supplied] = o.qs
    cells[t, _S.shortage] = o.shortage
    cells[t, _S.excess_supply] = o.excess
    cells[t, _S.marginal_value] = o.mv
    cells[t, _S.marginal_cost] = o.mc
    for k in range(_WELFARE_CELLS.shape[0]):  # Welfare's fields are all floats: w[k] by index
        cells[t, _WELFARE_CELLS[k]] = w[k]
    cells[t, _S.cumulative_deadweight_loss] = cumulative
    cells[t, _S.discounted_deadweight_loss] = discounted
    cells[t, _S.covered_price] = o.covered_price
    cells[t, _S.uncovered_price] = o.uncovered_price
    cells[t, _S.covered_quantity] = o.covered_q
    cells[t, _S.uncovered_quantity] = o.uncovered_q
    cells[t, _S.free_price] = p_star
    cells[t, _S.free_quantity] = q_star
    # Against the free path (its own stock history), not this path's free point.
    cells[t, _S.homes_below_free_path] = free_quantity - o.q
    cells[t, _S.rent_above_free_path] = o.pc - free_price
    cells[t, _S.nominal_consumer_price] = o.pc * index


@njit(**_JIT)
def _gather_walk(m, rows, r, ce, free, period):
    """Row r's walk in the form `ce` against the free path `free` (n, 3, T+1) of that form: its
    path and rule as scalars, and its inputs per period into `period` (T+1, PERIOD_INPUT_NAMES),
    so that the walk itself reads no input array."""
    i = rows.scenario[r]
    shifts = m.constant_shifts if ce else m.linear_shifts
    for t in range(period.shape[0]):
        period[t, _PI.demand_shift] = shifts[i, _SC.demand, t]
        period[t, _PI.supply_shift] = shifts[i, _SC.supply, t]
        period[t, _PI.supply_elasticity] = m.eps[i, t]
        period[t, _PI.price_index] = m.price_index[i, t]
        period[t, _PI.inflation] = m.inflation[i, t]
        period[t, _PI.discount_factor] = m.discount_factor[i, t]
        period[t, _PI.free_price] = free[i, _FP.price, t]
        period[t, _PI.free_quantity] = free[i, _FP.quantity, t]
    rule = Rule(
        rows.kind[r],
        rows.value[r],
        rows.start[r],
        rows.end[r],
        rows.indexed[r],
        rows.coverage[r],
        rows.exempt_new[r],
        rows.decontrol[r],
    )
    return _path_of(m, i, ce), rule


@njit(**_JIT)
def _walk_row(path, rule, period, cells, flags, r):
    """One policy row's periods in order, on its path (scalars) with its inputs per period
    `period` (_gather_walk): period t's series into cells[t] (T+1, series; 0 after the
    scenario's horizon) and its flags into flags[r] (3, T+1)."""
    p0, q0, eta, k_pay = path.p0, path.q0, path.eta, path.k_pay
    code, v, share = rule.code, rule.value, rule.share
    start, end = rule.start, rule.end
    ceiling = code == _CEILING or code == _GROWTH_CAP
    stock = path.stock
    exempt = ceiling and rule.exempt
    tau = rule.tau if ceiling else 0.0
    kappa = path.conversion if ceiling and stock else 0.0
    # A ceiling whose controlled homes are a group of their own (MODEL.md 17, 18).
    grouped = ceiling and ((stock and (share < 1.0 or exempt or kappa > 0.0)) or tau > 0.0)
    whole = share >= 1.0 and not exempt and tau == 0.0
    vacancies = stock and (code == _FLOOR or code == _QUANTITY_CAP)
    random = path.random
    m_divisor = 1.0 + 1.0 / eta if random and path.ce else 2.0

    _start_row(cells, p0, q0, share)
    for j in range(len(FLAG_NAMES)):
        flags[r, j, 0] = False
    stock_prev = q0  # homes standing at the end of the period before
    previous_rent = p0  # the controlled rent of the period before
    guess = p0
    cumulative = discounted = 0.0
    controlled_prev = others_prev = 0.0
    in_groups = prev_bound = False
    controlled = others = Group(0.0, 0.0, 0.0, 0.0, 0.0, 0.0, math.inf)
    for t in range(1, cells.shape[0]):
        if t > path.horizon:
            for j in range(cells.shape[1]):
                cells[t, j] = 0.0
            for j in range(len(FLAG_NAMES)):
                flags[r, j, t] = False
            continue
        free_price, free_quantity = period[t, _PI.free_price], period[t, _PI.free_quantity]
        index = period[t, _PI.price_index]
        c = _period_curves(
            path,
            period[t, _PI.demand_shift],
            period[t, _PI.supply_shift],
            period[t, _PI.supply_elasticity],
            stock_prev,
        )
        active = start <= t and t <= end
        # Money rules are nominal: their real value falls with the price index.
        real = v if rule.indexed else v / index
        level = _rule_rent(code, real, v, rule.indexed, period[t, _PI.inflation], previous_rent)
        converted = 0.0
        if grouped and active:
            conversion_share = 0.0
            if not in_groups:  # the rule's first period: the standing homes split by share
                controlled_prev, others_prev = share * stock_prev, (1.0 - share) * stock_prev
                in_groups = True
            elif kappa > 0.0 and prev_bound:
                gap = math.log(period[t - 1, _PI.free_price] / previous_rent)
                conversion_share = min(1.0, kappa * max(0.0, gap))
            converted = conversion_share * controlled_prev
            controlled, others = _group_supplies(
                c,
                stock,
                share,
                exempt,
                controlled_prev,
                others_prev,
                conversion_share,
                path.floor_share,
                path.build_limit,
            )
            o, p_star, q_star = _controlled_groups(c, controlled, others, level, tau, whole, guess)
        else:
            in_groups = False
            if stock:
                p_star, q_star = _free_point(c, guess)
            else:
                p_star, q_star = free_price, free_quantity
            o = _policy_outcome(c, code, v, real, level, active, p_star, q_star, share)
        infeasible = o.binding and not (o.q > 0.0 and o.pc > 0.0 and o.pp > 0.0)
        if stock and not (p_star > 0.0 and q_star > 0.0):
            infeasible = True
        if infeasible:
            o = _free_outcome(p_star, q_star, share)
        if grouped and active:
            w = _group_welfare(c, o, controlled, others, p_star, q_star, k_pay, random, m_divisor)
        else:
            w = _welfare(c, o, p_star, q_star, k_pay, share, ceiling, code == _SUBSIDY, random, m_divisor)
        cumulative += w.dwl
        discounted += w.dwl * period[t, _PI.discount_factor]
        _fill_cell(cells, t, o, w, p_star, q_star, free_price, free_quantity, index, cumulative, discounted)
        standing = o.q
        if vacancies and o.binding:  # homes offered and not let stand empty (MODEL.md 16)
            standing = max(o.q, c.f)
        cells[t, _S.homes_standing] = standing
        cells[t, _S.vacant_homes] = standing - o.q
        cells[t, _S.converted_homes] = converted
        if stock and code != _NONE and t >= start:
            renters, extra = _vs_free_path(c, o, free_price, free_quantity, k_pay, w.mis)
            cells[t, _S.renters_vs_free_path] = renters
            cells[t, _S.extra_rent_vs_free_path] = extra
        else:
            cells[t, _S.renters_vs_free_path] = cells[t, _S.extra_rent_vs_free_path] = 0.0
        flags[r, _F.binding, t] = o.binding
        flags[r, _F.rationed, t] = o.rationed
        flags[r, _F.infeasible, t] = infeasible
        stock_prev = standing
        if in_groups:
            controlled_prev, others_prev = o.covered_q, o.uncovered_q
        previous_rent = o.covered_price
        prev_bound = o.binding
        if p_star > 0.0 and math.isfinite(p_star):
            guess = p_star


# --- a walked row's summary and where its series go -----------------------------------------


@njit(**_JIT)
def _all_finite(cells, checked, last):
    """Whether every `checked` cell of periods 1..last is finite: first every cell of those
    periods at once (one contiguous block, a loop the compiler vectorises), and only where
    that finds a value that is not finite, the checked cells one by one."""
    block = cells[1 : last + 1].reshape(-1)
    everything = True
    for k in range(block.shape[0]):
        everything &= math.isfinite(block[k])
    if everything:
        return True
    for t in range(1, last + 1):
        for j in checked:
            if not math.isfinite(cells[t, j]):
                return False
    return True


@njit(**_JIT)
def _sum_over(cells, j, first, last):
    """sum_(t = first..last) cells[t, j], in period order (0 for an empty range)."""
    total = 0.0
    for t in range(first, last + 1):
        total += cells[t, j]
    return total


@njit(**_JIT)
def _discounted_sum(cells, j, period, last):
    """sum_(t = 1..last) cells[t, j] f_t, in period order (f_t: the discount factor, from the
    walk's inputs per period)."""
    total = 0.0
    for t in range(1, last + 1):
        total += cells[t, j] * period[t, _PI.discount_factor]
    return total


@njit(**_JIT)
def _row_totals(cells, period, flags, totals, r, last, end, checked):
    """A walked row's summary over its periods 1..last (the horizon; `end` the rule's last
    active period), money summed in period order: totals of welfare and of each group (plain
    and discounted), peaks, periods bound, renters against the free path (in all and after
    the rule ends), homes converted, whether every checked value is finite, and the figures of
    the last period (for last = 0, the base point); into totals[r], from flags[r] and the walk's
    inputs per period `period` (discount factors)."""
    for k in range(totals.shape[1]):
        totals[r, k] = 0.0
    totals[r, _T.non_finite] = 0.0 if _all_finite(cells, checked, last) else 1.0
    peak, peak_at, peak_below, bound = 0.0, -1.0, 0.0, 0.0
    for t in range(1, last + 1):
        if cells[t, _S.shortage] > peak:
            peak, peak_at = cells[t, _S.shortage], float(t)
        if cells[t, _S.homes_below_free_path] > peak_below:
            peak_below = cells[t, _S.homes_below_free_path]
        if flags[r, _F.binding, t]:
            bound += 1.0
    totals[r, _T.peak_shortage] = peak
    totals[r, _T.peak_shortage_period] = peak_at
    totals[r, _T.peak_homes_below_free_path] = peak_below
    totals[r, _T.binding_periods] = bound
    totals[r, _T.total_consumer_surplus_change] = _sum_over(cells, _S.consumer_surplus_change, 1, last)
    totals[r, _T.total_producer_surplus_change] = _sum_over(cells, _S.producer_surplus_change, 1, last)
    totals[r, _T.total_government_revenue] = _sum_over(cells, _S.government_revenue, 1, last)
    for g in range(_GROUP_SERIES.shape[0]):
        totals[r, _GROUP_TOTALS[g]] = _sum_over(cells, _GROUP_SERIES[g], 1, last)
        totals[r, _GROUP_DISCOUNTED[g]] = _discounted_sum(cells, _GROUP_SERIES[g], period, last)
    after_end = max(min(end, last) + 1, 1)  # the periods t > end of 1..last (end may be any int)
    renters, extra = _S.renters_vs_free_path, _S.extra_rent_vs_free_path
    totals[r, _T.vs_free_path_renters] = _sum_over(cells, renters, 1, last)
    totals[r, _T.vs_free_path_renters_discounted] = _discounted_sum(cells, renters, period, last)
    totals[r, _T.vs_free_path_extra_rent] = _sum_over(cells, extra, 1, last)
    totals[r, _T.vs_free_path_renters_after_end] = _sum_over(cells, renters, after_end, last)
    totals[r, _T.vs_free_path_extra_rent_after_end] = _sum_over(cells, extra, after_end, last)
    totals[r, _T.total_converted_homes] = _sum_over(cells, _S.converted_homes, 1, last)
    totals[r, _T.final_homes_below_free_path] = cells[last, _S.homes_below_free_path]
    totals[r, _T.total_deadweight_loss] = cells[last, _S.cumulative_deadweight_loss]
    totals[r, _T.discounted_deadweight_loss] = cells[last, _S.discounted_deadweight_loss]
    totals[r, _T.final_consumer_price] = cells[last, _S.consumer_price]
    totals[r, _T.final_quantity] = cells[last, _S.quantity]
    totals[r, _T.final_vacant_homes] = cells[last, _S.vacant_homes]


@njit(**_JIT)
def _emit(cells, last, target, r, policy, row):
    """Row r's kept series into target.out[r] (every period) and, for a band `policy` >= 0, its
    banded ones into row `row` of the band stage (periods 0..last), each series one run."""
    out, column, stage, banded = target.out, target.column, target.stage, target.banded
    for j in target.kept:
        for t in range(cells.shape[0]):
            out[r, column[j], t] = cells[t, j]
    if policy < 0:
        return
    for s in range(target.counts[policy]):
        j = banded[policy, s]
        for t in range(last + 1):
            stage[s, t, row] = cells[t, j]


@njit(**_JIT)
def _flush_band(stage, staged, x, policy, first_draw, last):
    """The first `staged` rows of the stage (draws first_draw, first_draw + 1, ...), all of
    `policy`, into the band target of the outputs `x`: band_out[band_slot[policy, j], t,
    first_draw + k] = stage[s, t, k] for the policy's s-th banded cell j, periods 0..last: one
    contiguous run of draws from the stage to the target per series and period."""
    band_out = x.band_out  # indexed in place: a view per period would count references
    for s in range(x.counts[policy]):
        slot = x.band_slot[policy, x.banded[policy, s]]
        for t in range(last + 1):
            for k in range(staged):
                band_out[slot, t, first_draw + k] = stage[s, t, k]


#: The policy pass's outputs: series `out` (R, kept, T+1) with `kept` cell indices and their
#: `column`s, `flags` (R, 3, T+1), `summary` (R, figures); for bands, per policy the `banded`
#: cells (padded, `counts` of them) and their `band_slot`s in `band_out` (slots, T+1, draws),
#: `band_rows` rows per policy from draw `band_start` (band_rows = 0: no bands).
Outputs = namedtuple(
    "Outputs", "kept column out flags summary banded counts band_slot band_out band_rows band_start"
)


#: The series the other form's summary figures rest on (prices, quantities and welfare, up to
#: the discounted deadweight loss): its finite check.
_OTHER_FORM_CHECKED = np.arange(SERIES_INDEX["discounted_deadweight_loss"] + 1)


@njit(**_JIT)
def _policy_rows(m, rows, free, free_other, other, x):
    """Every row in its scenario's form; with `other`, also in the other form (summary figures
    only: discounted deadweight loss, final consumer price, peak shortage; MODEL.md 20)."""
    flags, summary = x.flags, x.summary
    band_rows = x.band_rows
    periods = m.eps.shape[1]
    cells = np.empty((periods, len(SERIES_NAMES)))
    period = np.full((periods, len(PERIOD_INPUT_NAMES)), np.nan)  # an input not gathered shows
    core = _OTHER_FORM_CHECKED
    # The other form's walk: its flags and totals in a one-row scratch (row 0).
    scratch_flags = np.empty((1, len(FLAG_NAMES), periods), dtype=np.bool_)
    scratch_totals = np.empty((1, summary.shape[1]))
    every_banded = x.banded.ravel()
    checked = np.unique(np.concatenate((core, x.kept, every_banded[every_banded >= 0])))
    stage = np.empty((x.banded.shape[1], periods, BAND_STAGE if band_rows > 0 else 1), dtype=np.float32)
    target = Target(x.kept, x.column, x.out, x.banded, x.counts, stage)
    staged = staged_policy = staged_first = staged_last = 0  # the rows in the stage, and theirs
    # No views are made in the loop and the parts of a row take indices and scalars, not the
    # tuples of input arrays: each would update reference counts, atomically, every row. Only
    # _gather_walk reads MarketInputs and RowInputs; the compiler inlines it here, where those
    # counts cancel (LLVM IR: no update left inside this loop).
    for r in range(rows.scenario.shape[0]):
        i = rows.scenario[r]
        ce = m.constant_elasticity[i]
        last, end = m.horizon[i], rows.end[r]
        policy, row = -1, 0  # no bands
        if band_rows > 0:
            policy = r // band_rows
            if staged > 0 and (staged == BAND_STAGE or policy != staged_policy or last != staged_last):
                _flush_band(stage, staged, x, staged_policy, staged_first, staged_last)
                staged = 0
            if staged == 0:
                staged_policy, staged_first, staged_last = policy, x.band_start + r % band_rows, last
            row = staged
            staged += 1
        path, rule = _gather_walk(m, rows, r, ce, free, period)
        _walk_row(path, rule, period, cells, flags, r)
        _row_totals(cells, period, flags, summary, r, last, end, checked)
        _emit(cells, last, target, r, policy, row)
        if other:
            path, rule = _gather_walk(m, rows, r, not ce, free_other, period)
            _walk_row(path, rule, period, cells, scratch_flags, 0)
            _row_totals(cells, period, scratch_flags, scratch_totals, 0, last, end, core)
            feasible = scratch_totals[0, _T.non_finite] == 0.0
            for t in range(last + 1):
                if scratch_flags[0, _F.infeasible, t]:
                    feasible = False
            summary[r, _T.other_discounted_deadweight_loss] = scratch_totals[0, _T.discounted_deadweight_loss]
            summary[r, _T.other_final_consumer_price] = scratch_totals[0, _T.final_consumer_price]
            summary[r, _T.other_peak_shortage] = scratch_totals[0, _T.peak_shortage]
            summary[r, _T.other_feasible] = 1.0 if feasible else 0.0
    if staged > 0:
        _flush_band(stage, staged, x, staged_policy, staged_first, staged_last)


def policy_paths(
    m: MarketInputs,
    rows: RowInputs,
    free: np.ndarray,
    series: tuple[str, ...] | None = None,
    band: tuple | None = None,
    free_other: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The rows' series (R, len(series), T+1) in the order of `series` (default: all of
    SERIES_NAMES), flags (R, 3, T+1) and summary (R, len(SUMMARY_NAMES)). Asking only for
    the series needed saves memory traffic (bands keep none: they write into `band`).

    `free` is free_paths' output for the scenarios' own forms; `free_other` (the other
    form's) also solves every row in the other form for the summary's other-form figures.
    `band` = (layout, target, rows_per_policy, first_draw) also writes series, as float32,
    straight into target[slot, period, draw] (slots, T+1, draws) for rows in policy-major order
    (row = policy * rows_per_policy + draw - first_draw): `layout` names each policy's series,
    and they take the slots one after another (policy 0's first, ...), so each policy bands
    only the series that apply to it.
    """
    count = rows.scenario.shape[0]
    periods = m.eps.shape[1]
    wanted = SERIES_NAMES if series is None else series
    kept, column = _kept_cells(wanted)
    out = np.empty((count, len(wanted), periods))
    flags = np.empty((count, len(FLAG_NAMES), periods), dtype=np.bool_)
    summary = np.empty((count, len(SUMMARY_NAMES)))
    if band is None:
        band_out, band_rows, band_start = _NO_BAND_OUT, 0, 0
        banded, counts, band_slot = _band_cells(((),))
    else:
        layout, band_out, band_rows, band_start = band
        banded, counts, band_slot = _band_cells(tuple(tuple(names) for names in layout))
    outputs = Outputs(
        kept, column, out, flags, summary, banded, counts, band_slot, band_out, band_rows, band_start
    )
    _policy_rows(m, rows, free, free if free_other is None else free_other, free_other is not None, outputs)
    return out, flags, summary


#: The band target of a pass without bands (never written: no row has banded cells).
_NO_BAND_OUT = np.empty((1, 1, 1), dtype=np.float32)


@functools.lru_cache(maxsize=64)
def _kept_cells(wanted: tuple[str, ...]) -> tuple[np.ndarray, np.ndarray]:
    """The cells kept as series (ascending) and each cell's column in `out` (-1: not kept),
    worked out once per tuple of series names (the arrays are shared: never written)."""
    column = np.full(len(SERIES_NAMES), -1, dtype=np.int64)
    for j, name in enumerate(wanted):
        column[SERIES_INDEX[name]] = j
    return np.flatnonzero(column >= 0), column


@functools.lru_cache(maxsize=64)
def _band_cells(layout: tuple[tuple[str, ...], ...]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per policy of a band layout: its banded cells (padded with -1), how many, and each
    cell's slot in the band target (-1: not banded); slots run policy after policy. Worked out
    once per layout (the arrays are shared: never written)."""
    band_slot = np.full((len(layout), len(SERIES_NAMES)), -1, dtype=np.int64)
    slot = 0
    for policy, names in enumerate(layout):
        for name in names:
            band_slot[policy, SERIES_INDEX[name]] = slot
            slot += 1
    banded = np.full(band_slot.shape, -1, dtype=np.int64)
    counts = np.zeros(len(layout), dtype=np.int64)
    for policy in range(len(layout)):
        cells = np.flatnonzero(band_slot[policy] >= 0)
        banded[policy, : cells.size] = cells
        counts[policy] = cells.size
    return banded, counts, band_slot


# --- inputs of the period pass: shock paths, supply elasticity over time, discounting -------


@njit(**_JIT)
def _shock_kernel(profile, change, rate, start, ramp, values, counts, max_log_growth, paths, too_large):
    """Each shock's fractional change per period (step, ramp, growth, path), period 0 = 0."""
    for k in range(profile.shape[0]):
        too_large[k] = False
        paths[k, 0] = 0.0
        log_rate = math.log1p(rate[k]) if profile[k] == _GROWTH else 0.0
        for t in range(1, paths.shape[1]):
            since = t - start[k] + 1  # periods since the start, counting the start
            code = profile[k]
            if code == _STEP:
                g = change[k] if since >= 1 else 0.0
            elif code == _RAMP:
                share = since / max(ramp[k], 1)
                g = change[k] * min(max(share, 0.0), 1.0)
            elif code == _GROWTH:
                if since >= 1:
                    log_growth = since * log_rate
                    if log_growth > max_log_growth:
                        too_large[k] = True
                    g = math.expm1(min(log_growth, max_log_growth))
                else:
                    g = 0.0
            else:
                g = values[k, min(t - 1, max(counts[k], 1) - 1)] if values.shape[1] > 0 else 0.0
            paths[k, t] = g


def shock_paths(profile, change, rate, start, ramp, values, counts, horizon: int, max_log_growth: float):
    """(shocks, horizon + 1) fractional changes and a (shocks,) flag for growth past the limit."""
    paths = np.empty((profile.shape[0], horizon + 1))
    too_large = np.empty(profile.shape[0], dtype=np.bool_)
    _shock_kernel(profile, change, rate, start, ramp, values, counts, max_log_growth, paths, too_large)
    return paths, too_large


#: Inputs of the schedule, shift and discount pass; n scenarios, m shifters, T + 1 periods.
ScheduleInputs = namedtuple(
    "ScheduleInputs",
    (
        "short_run",  # (n,) eps_SR
        "long_run",  # (n,) eps_LR
        "impact",  # (n,) the period-0 elasticity (lambda eps_LR under stock with a rate, MODEL.md 20)
        "schedule",  # (n,) SCHEDULE_CODES
        "periods",  # (n,) K of a linear schedule, as float
        "rate",  # (n,) lambda; 0 = the Nerlove default
        "explicit",  # (n or 1, T+1) eps_t of an explicit schedule
        "horizon",  # (n,) T
        "demand_shifter",  # (n, m) eta_i
        "supply_shifter",  # (n, m) eps_j
        "change",  # (n or 1, m, T+1) summed fractional change per shifter
        "change_too_large",  # (n or 1, m) a growth path passed the limit
        "discount_rate",  # (n or 1, T+1) rate per period, column 0 unused
    ),
)
#: What the pass returns: eps (n, T+1), shifts of both forms (n, 2, T+1) each (demand, supply),
#: the out-of-range mask (n, m), the undefined-schedule mask (n,), discount factors (n, T+1).
Prepared = namedtuple("Prepared", "eps linear constant shift_bad undefined factor")


@njit(**_JIT)
def _elasticity_path(x, i, out):
    """eps_t = eps_SR (1 - w_t) + eps_LR w_t, w_1 = 0, of one scenario's schedule (schedules.py;
    Nerlove 1958); returns False where the Nerlove default rate is needed and undefined."""
    code = x.schedule[i]
    rate = x.rate[i]
    sr, lr = x.short_run[i], x.long_run[i]
    defined = True
    if (code == _GEOMETRIC or code == _STOCK) and rate <= 0.0:
        if sr > 0.0 and sr <= lr:
            rate = sr / lr  # Nerlove (1958): eps_SR = lambda eps_LR
        else:
            rate = 1.0
            defined = False
    out.eps[i, 0] = x.impact[i]
    for t in range(1, out.eps.shape[1]):
        lag = t - 1
        w = 0.0
        if code == _LINEAR_SCHEDULE:
            k = x.periods[i]
            w = min(lag / k, 1.0) if k > 0 else 1.0
        elif code == _GEOMETRIC:
            if rate >= 1.0:
                w = 1.0 if lag > 0 else 0.0
            else:
                w = -math.expm1(lag * math.log1p(-rate))
        if code == _EXPLICIT:
            out.eps[i, t] = x.explicit[min(i, x.explicit.shape[0] - 1), t]
        else:
            out.eps[i, t] = sr * (1.0 - w) + lr * w
    return defined


@njit(**_JIT)
def _safe_changes(change, max_change):
    """Each shifter's summed change g kept in range (g, or max_change above it, or 0 at or
    below -1) and ln(1 + g) of that, per row of `change` (n or 1, m, T+1): a row shared by
    every scenario (a batch without shocks of its own, the draws of a band) is done once."""
    safe = np.empty(change.shape)
    log_safe = np.empty(change.shape)
    for row in range(change.shape[0]):
        for j in range(change.shape[1]):
            for t in range(change.shape[2]):
                g = change[row, j, t]
                safe[row, j, t] = min(g, max_change) if g > -1.0 else 0.0
                log_safe[row, j, t] = math.log1p(safe[row, j, t])
    return safe, log_safe


@njit(**_JIT)
def _shifts(x, i, max_change, safe, log_safe, out):
    """D = sum_j eta_j g_j and ln A = sum_j eta_j ln(1 + g_j) (and S, ln B with eps_j), shifter by
    shifter, from the changes kept in range (_safe_changes); a summed change <= -1 or above
    max_change marks the shifter out of range."""
    row = min(i, x.change.shape[0] - 1)
    m = x.demand_shifter.shape[1]
    periods = out.eps.shape[1]
    for j in range(m):
        out.shift_bad[i, j] = x.change_too_large[row, j]
    for t in range(periods):
        out.linear[i, _SC.demand, t] = 0.0
        out.linear[i, _SC.supply, t] = 0.0
        out.constant[i, _SC.demand, t] = 0.0
        out.constant[i, _SC.supply, t] = 0.0
    for j in range(m):
        for t in range(periods):
            g = x.change[row, j, t]
            if t <= x.horizon[i] and (g <= -1.0 or g > max_change):
                out.shift_bad[i, j] = True
            out.linear[i, _SC.demand, t] += x.demand_shifter[i, j] * safe[row, j, t]
            out.constant[i, _SC.demand, t] += x.demand_shifter[i, j] * log_safe[row, j, t]
            out.linear[i, _SC.supply, t] += x.supply_shifter[i, j] * safe[row, j, t]
            out.constant[i, _SC.supply, t] += x.supply_shifter[i, j] * log_safe[row, j, t]


@njit(**_JIT)
def _discount_factors(rates, factor):
    """Discount factors of periods 0..T from the rates per period (column 0 unused):
    f_s = prod_(u<=s) 1 / (1 + r_u), accumulated in logs."""
    factor[0] = 1.0
    log_factor = 0.0
    for t in range(1, factor.shape[0]):
        log_factor -= math.log1p(rates[t])
        factor[t] = math.exp(log_factor)


@njit(**_JIT)
def _prepare_kernel(x, max_change, out):
    safe, log_safe = _safe_changes(x.change, max_change)
    shared = x.discount_rate.shape[0] == 1  # one rate path for every scenario: computed once
    for i in range(out.eps.shape[0]):
        out.undefined[i] = not _elasticity_path(x, i, out)
        _shifts(x, i, max_change, safe, log_safe, out)
        if shared and i > 0:
            out.factor[i] = out.factor[0]
        else:
            _discount_factors(x.discount_rate[min(i, x.discount_rate.shape[0] - 1)], out.factor[i])


def prepare(batch, max_change: float) -> Prepared:
    """Supply elasticity over time, the shifts of both forms, the problem masks and the
    discount factors of a ScenarioBatch (see Prepared)."""
    n, periods = batch.size, batch.periods
    m = batch.demand_shifter_elasticity.shape[1]
    change = batch.shifter_change
    if change.shape[1] != m:  # no shifters at all
        change = np.zeros((1, m, periods))
    inputs = ScheduleInputs(
        batch.short_run_elasticity,
        batch.long_run_elasticity,
        batch.impact_elasticity,
        batch.schedule,
        batch.schedule_periods.astype(np.float64),
        batch.schedule_rate,
        np.ascontiguousarray(batch.explicit_elasticity),
        batch.horizon,
        np.ascontiguousarray(batch.demand_shifter_elasticity),
        np.ascontiguousarray(batch.supply_shifter_elasticity),
        np.ascontiguousarray(change),
        np.ascontiguousarray(batch.shock_out_of_range),
        np.ascontiguousarray(batch.discount_rate),
    )
    out = Prepared(
        np.empty((n, periods)),
        np.empty((n, 2, periods)),
        np.empty((n, 2, periods)),
        np.empty((n, m), dtype=np.bool_),
        np.empty(n, dtype=np.bool_),
        np.empty((n, periods)),
    )
    _prepare_kernel(inputs, max_change, out)
    return out


# --- percentiles over draws -----------------------------------------------------------------


@njit(**_JIT)
def _select_many(a, ks):
    """Reorder `a` so that a[k] is the k-th smallest for every k in the sorted `ks`: Hoare
    partitions with a median-of-three pivot, each part kept only while it holds a wanted k
    (O(n log len(ks)); runs of equal values cannot degrade it)."""
    stack = np.empty((64 + 2 * ks.shape[0], 2), dtype=np.int64)
    stack[0, 0], stack[0, 1] = 0, a.shape[0] - 1
    top = 1
    while top > 0:
        top -= 1
        lo, hi = stack[top, 0], stack[top, 1]
        wanted = False
        for k in ks:
            if lo <= k <= hi:
                wanted = True
                break
        if not wanted or hi <= lo:
            continue
        mid = (lo + hi) // 2
        x, y, z = a[lo], a[mid], a[hi]
        if x > y:
            x, y = y, x
        if y > z:
            y = z
            if x > y:
                y = x
        pivot = y
        i, j = lo, hi
        while i <= j:
            while a[i] < pivot:
                i += 1
            while a[j] > pivot:
                j -= 1
            if i <= j:
                a[i], a[j] = a[j], a[i]
                i += 1
                j -= 1
        # a[lo..j] <= pivot <= a[i..hi]; anything between equals the pivot.
        stack[top, 0], stack[top, 1] = lo, j
        stack[top + 1, 0], stack[top + 1, 1] = i, hi
        top += 2


#: A bin with at most this many values is partitioned (_select_many); a larger one is binned
#: again (a pass over its values costs less than partitioning them).
_SELECT_AT_MOST = 4096


@njit(**_JIT)
def _bin_of_each(values, low, scale, bins, value_bins):
    """value_bins[d] = the equal-width bin of values[d]: floor((x - low) scale), the last bin
    for x at the maximum (and for NaN). Any rounding keeps the bins in value order, which is
    all the selection needs; a loop without branches, which the compiler vectorises."""
    last = bins - 1
    for d in range(values.shape[0]):
        position = (values[d] - low) * scale
        value_bins[d] = int(position) if position < bins else last


@njit(**_JIT)
def _range_of(values):
    """(min, max) of values as float64: four running pairs side by side (no single chain of
    dependent comparisons), each started at values[0], so a NaN there gives NaN as one pair
    would, and NaNs elsewhere are skipped. Where -0.0 and 0.0 tie for the minimum (or maximum)
    either may come back: the bins and the selected values are the same either way."""
    first = np.float64(values[0])
    low0 = low1 = low2 = low3 = high0 = high1 = high2 = high3 = first
    n = values.shape[0]
    whole = n - n % 4
    for d in range(0, whole, 4):
        x0, x1 = np.float64(values[d]), np.float64(values[d + 1])
        x2, x3 = np.float64(values[d + 2]), np.float64(values[d + 3])
        low0, high0 = x0 if x0 < low0 else low0, x0 if x0 > high0 else high0
        low1, high1 = x1 if x1 < low1 else low1, x1 if x1 > high1 else high1
        low2, high2 = x2 if x2 < low2 else low2, x2 if x2 > high2 else high2
        low3, high3 = x3 if x3 < low3 else low3, x3 if x3 > high3 else high3
    for d in range(whole, n):
        x = np.float64(values[d])
        low0, high0 = x if x < low0 else low0, x if x > high0 else high0
    low = low0
    for x in (low1, low2, low3):
        low = x if x < low else low
    high = high0
    for x in (high1, high2, high3):
        high = x if x > high else high
    return low, high


@njit(**_JIT)
def _bin_counts(value_bins, n, bins):
    """How many of value_bins[:n] fall in each bin: four histograms filled in turn and summed
    (one alone chains every increment of a crowded bin to the one before)."""
    parts = np.zeros((4, bins), dtype=np.int64)
    whole = n - n % 4
    for d in range(0, whole, 4):
        parts[0, value_bins[d]] += 1
        parts[1, value_bins[d + 1]] += 1
        parts[2, value_bins[d + 2]] += 1
        parts[3, value_bins[d + 3]] += 1
    for d in range(whole, n):
        parts[0, value_bins[d]] += 1
    counts = np.empty(bins, dtype=np.int64)
    for b in range(bins):
        counts[b] = parts[0, b] + parts[1, b] + parts[2, b] + parts[3, b]
    return counts


@njit(**_JIT)
def _order_statistics(values, ks, out, value_bins):
    """out[n] = the ks[n]-th smallest of `values` (ks sorted, unique). One pass puts the values
    into equal-width bins between their minimum and maximum (their bins kept in `value_bins`,
    at least as long as `values`), the counts find the bins that hold a wanted rank, a second
    pass gathers only their values, and those are selected exactly: by partitioning where a bin
    holds few, else by binning that bin's values again (heavy tails: one far draw stretches
    the bins until nearly all values share the first). `values` is only read (float32 or
    float64); bins are computed in float64 either way."""
    low, high = _range_of(values)
    if low == high:
        for n in range(ks.shape[0]):
            out[n] = low
        return
    bins = 2048
    scale = bins / (high - low)
    if not (math.isfinite(scale) and math.isfinite(low) and math.isfinite(high)):
        ordered = np.sort(values)
        for n in range(ks.shape[0]):
            out[n] = ordered[ks[n]]
        return
    _bin_of_each(values, low, scale, bins, value_bins)
    counts = _bin_counts(value_bins, values.shape[0], bins)
    slot = np.full(bins, -1, dtype=np.int64)
    first = np.empty(ks.shape[0], dtype=np.int64)  # first rank held by each wanted bin
    size = np.empty(ks.shape[0], dtype=np.int64)
    bin_of = np.empty(ks.shape[0], dtype=np.int64)
    wanted = 0
    below = 0
    n = 0
    for b in range(bins):
        while n < ks.shape[0] and ks[n] < below + counts[b]:
            if slot[b] < 0:
                slot[b] = wanted
                first[wanted] = below
                size[wanted] = counts[b]
                wanted += 1
            bin_of[n] = slot[b]
            n += 1
        below += counts[b]
    offset = np.zeros(wanted + 1, dtype=np.int64)
    for w in range(wanted):
        offset[w + 1] = offset[w] + size[w]
    gathered = np.empty(offset[wanted], dtype=values.dtype)
    fill = offset[:wanted].copy()
    for d in range(values.shape[0]):
        w = slot[value_bins[d]]
        if w >= 0:
            gathered[fill[w]] = values[d]
            fill[w] += 1
    for w in range(wanted):
        part = gathered[offset[w] : offset[w + 1]]
        picks = 0
        for n in range(ks.shape[0]):
            if bin_of[n] == w:
                picks += 1
        ranks = np.empty(picks, dtype=np.int64)
        picks = 0
        for n in range(ks.shape[0]):
            if bin_of[n] == w:
                ranks[picks] = ks[n] - first[w]
                picks += 1
        if part.shape[0] > _SELECT_AT_MOST:  # fewer values than `values`: the recursion ends
            picked = np.empty(picks)
            _order_statistics(part, ranks, picked, value_bins)  # value_bins is free again
            p = 0
            for n in range(ks.shape[0]):
                if bin_of[n] == w:
                    out[n] = picked[p]
                    p += 1
        else:
            _select_many(part, ranks)
            for n in range(ks.shape[0]):
                if bin_of[n] == w:
                    out[n] = part[ks[n] - first[w]]


@njit(**_JIT)
def _percentile_rows(values, keep, q, out):
    """out[row, i]: numpy's default ('linear') q[i]-th percentile of values[row, keep]."""
    count = keep.shape[0]
    everything = count == values.shape[1]
    scratch = np.empty(count, dtype=np.float64)
    needed = np.empty(2 * q.shape[0], dtype=np.int64)
    fraction = np.empty(q.shape[0])
    for i in range(q.shape[0]):
        position = (count - 1) * q[i] / 100.0
        low = math.floor(position)
        needed[2 * i] = low
        needed[2 * i + 1] = min(low + 1, count - 1)
        fraction[i] = position - low
    order = np.unique(needed)
    rank_of = np.searchsorted(order, needed)
    stats = np.empty(order.shape[0])
    value_bins = np.empty(count, dtype=np.int32)
    for row in range(values.shape[0]):
        if everything:  # the row itself: _order_statistics only reads it
            _order_statistics(values[row], order, stats, value_bins)
        else:
            for d in range(count):
                scratch[d] = values[row, keep[d]]
            _order_statistics(scratch, order, stats, value_bins)
        for i in range(q.shape[0]):
            below, above = stats[rank_of[2 * i]], stats[rank_of[2 * i + 1]]
            out[row, i] = below + (above - below) * fraction[i]


def percentiles(values: np.ndarray, keep: np.ndarray, q: np.ndarray) -> np.ndarray:
    """(rows, len(q)) percentiles of each row of `values` (rows, draws) over the draws `keep`
    (indices, at least one), by numpy's 'linear' method: the same order statistics, joined as
    below + (above - below) f, which can differ from numpy's own interpolation in the last bit
    (numpy writes above - (above - below)(1 - f) for f >= 0.5). Order statistics are selected,
    not sorted (O(draws) per percentile)."""
    out = np.empty((values.shape[0], q.shape[0]))
    _percentile_rows(values, np.ascontiguousarray(keep, dtype=np.int64), np.asarray(q, dtype=float), out)
    return out


def warm_up() -> None:
    """Compile (or load from the on-disk cache) every kernel signature the service uses."""
    n, periods = 2, 3
    market = MarketInputs(
        constant_elasticity=np.array([False, True]),
        price=np.ones(n),
        quantity=np.ones(n),
        demand_elasticity=-np.ones(n),
        payments_per_period=np.ones(n),
        eps=np.ones((n, periods)),
        linear_shifts=np.zeros((n, 2, periods)),
        constant_shifts=np.zeros((n, 2, periods)),
        horizon=np.full(n, periods - 1, dtype=np.int64),
        stock=np.array([False, True]),
        stock_rate=np.full(n, 0.5),
        floor_share=np.zeros(n),
        build_limit=np.zeros(n),
        conversion=np.zeros(n),
        long_run_elasticity=np.ones(n),
        random_rationing=np.zeros(n, dtype=bool),
        discount_factor=np.ones((n, periods)),
        price_index=np.ones((n, periods)),
        inflation=np.zeros((n, periods)),
    )
    rows = RowInputs(
        scenario=np.array([0, 1], dtype=np.int64),
        kind=np.array([_UNIT_TAX, _CEILING], dtype=np.int64),
        value=np.array([0.1, 0.9]),
        start=np.ones(2, dtype=np.int64),
        end=np.full(2, 10, dtype=np.int64),
        indexed=np.zeros(2, dtype=bool),
        coverage=np.array([1.0, 0.5]),
        exempt_new=np.zeros(2, dtype=bool),
        decontrol=np.zeros(2),
    )
    free = free_paths(market)
    other = free_paths(market, ~market.constant_elasticity)
    policy_paths(market, rows, free, free_other=other)
    percentiles(np.ones((2, 3), dtype=np.float32), np.arange(3), np.array([5.0, 50.0]))
    percentiles(np.ones((2, 3)), np.arange(3), np.array([5.0, 50.0]))  # bands' summary figures
    target = np.empty((2, periods, 1), dtype=np.float32)
    policy_paths(market, rows, free, (), ((("quantity",), ("quantity",)), target, 1, 0))
