"""The compiled period pass: every period of every path, one cell at a time.

One loop over scenarios computes the free-market path of both curve forms; one loop over
policy rows walks each row's periods in order and computes, in the same pass, the period's
curves, the row's own free-market point, the policy outcome, the welfare change, its split
between groups, and the running (cumulative and discounted) sums. Compiled with numba
(`nogil`, cached on disk); the numpy layer around it (paths.py) packs inputs and reads the
output arrays. No scipy and no Python objects inside: problems come back as flags.

Curves of period t (shifts D, S in the linear form; ln A, ln B in constant elasticity):

    demand      Qd(P) = Q0 max(1 + eta p + D, 0)          or  Q0 (P/P0)^eta A,    p = (P-P0)/P0
    base supply K(P)  = Q0 max(1 + e p + S, 0)            or  Q0 (P/P0)^e B
    supply      Qs(P) = max(a + b K(P), f)

Without a durable stock a = 0, b = 1, f = 0 and e = eps_t (so Qs = K). With the stock
schedule (Nerlove 1958, *The Dynamics of Supply*: a share lambda of the gap between the
stock and its desired level closes each period) e = eps_LR, a = (1 - lambda) K_(t-1),
b = lambda and f = (1 - delta) K_(t-1): the stock shrinks by at most the share delta per
period, supply being elastic upward and inelastic downward (Glaeser & Gyourko 2005, *JPE*
113(2)). Each path carries its own stock K_t = Q_t.

Clearing with a wedge or a second segment: Qd(Pc) = alpha Qs(scale Pc - gap) + beta, with
(alpha, beta, scale, gap) = (1, 0, 1, tau) for a unit tax, (1, 0, 1 - r, 0) ad valorem,
(1, 0, 1, -s) a subsidy, and (1 - s, Qc, 1, 0) for the uncovered rent under a ceiling that
covers the share s of homes (Fallis & Smith 1984, *AER* 74(1)). Linear curves solve in closed
form; constant elasticity in closed form where it exists, else by Newton's method in log
price, safeguarded by bisection on a bracket whose signs are checked, converged on the price
scale. A kinked (floored) supply is solved on its upper branch and then checked.

Welfare against the same path's free market of the period (P*, Q*): DWL = int_Q^Q* Qd^-1 -
int_Q^Q* Qs^-1 (per segment under partial coverage); the integrals are closed forms
(trapezoids, and power laws through expm1 so that they stay exact as m -> 0).
"""

from __future__ import annotations

import math

import numpy as np

try:  # numba is a dependency; the guard only keeps `import service.engine` explaining itself.
    from numba import njit
except ImportError as error:  # pragma: no cover
    raise ImportError("shockpath's engine needs numba (pip install numba)") from error

__all__ = [
    "FLAG_NAMES",
    "SERIES_INDEX",
    "SUMMARY_INDEX",
    "free_paths",
    "percentiles",
    "policy_paths",
    "prepare",
    "shock_paths",
    "warm_up",
]

_JIT = {"cache": True, "nogil": True, "error_model": "numpy", "fastmath": False}

#: Per-period output series of a policy row, by name: index into the second axis.
SERIES_INDEX = {
    name: i
    for i, name in enumerate(
        (
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
            "tenants_in_controlled_homes",
            "tenants_in_uncontrolled_homes",
            "households_priced_out",
            "owners_of_controlled_homes",
            "owners_of_uncontrolled_homes",
            "government",
            "free_price",
            "free_quantity",
            "homes_below_free_path",
            "rent_above_free_path",
            "nominal_consumer_price",
        )
    )
}
FLAG_NAMES = ("binding", "rationed", "infeasible")
#: Summary figures of a policy row over its horizon (money summed in period order).
SUMMARY_INDEX = {
    name: i
    for i, name in enumerate(
        (
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
            "total_tenants_in_controlled_homes",
            "total_tenants_in_uncontrolled_homes",
            "total_households_priced_out",
            "total_owners_of_controlled_homes",
            "total_owners_of_uncontrolled_homes",
            "total_government",
            "non_finite",
            "final_homes_below_free_path",
            "peak_homes_below_free_path",
        )
    )
}

# Policy kind codes (policies.KIND_CODES holds the same numbers).
_NONE, _CEILING, _GROWTH_CAP, _FLOOR, _UNIT_TAX, _AD_VALOREM, _SUBSIDY, _QUANTITY_CAP = range(8)

_TINY = 2.2250738585072014e-308
_ULP = 2.220446049250313e-16


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
def _demand(ce, p0, q0, eta, d, price):
    """Qd(P), truncated at zero."""
    return _curve(ce, p0, q0, eta, d, price)


@njit(**_JIT)
def _inverse_demand(ce, p0, q0, eta, d, quantity):
    """Qd^-1(Q): the marginal buyer's value of the quantity-th unit."""
    return _curve_price(ce, p0, q0, eta, d, quantity)


@njit(**_JIT)
def _base_supply(ce, p0, q0, e, s, price):
    """K(P): the period's supply curve (desired stock under the stock schedule)."""
    return _curve(ce, p0, q0, e, s, price)


@njit(**_JIT)
def _supply(ce, p0, q0, e, s, a, b, f, price):
    """Qs(P) = max(a + b K(P), f)."""
    return max(a + b * _base_supply(ce, p0, q0, e, s, price), f)


@njit(**_JIT)
def _supply_line(ce, p0, q0, e, s, a, b, quantity):
    """Price on the upper branch a + b K(P) = quantity (e > 0; quantity above a)."""
    return _curve_price(ce, p0, q0, e, s, (quantity - a) / b)


@njit(**_JIT)
def _inverse_supply(ce, p0, q0, e, s, a, b, f, quantity):
    """Qs^-1(Q): 0 up to the quantity offered at price zero (and on vertical supply)."""
    if e <= 0.0:
        return 0.0
    if quantity <= _supply(ce, p0, q0, e, s, a, b, f, 0.0):
        return 0.0
    return max(_supply_line(ce, p0, q0, e, s, a, b, quantity), 0.0)


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
def _demand_integral(ce, p0, q0, eta, d, lower, upper):
    """int_lower^upper Qd^-1(q) dq, signed; lower, upper > 0."""
    if ce:
        m = 1.0 + 1.0 / eta
        return _power_law_integral(
            lower,
            _inverse_demand(ce, p0, q0, eta, d, lower),
            upper,
            _inverse_demand(ce, p0, q0, eta, d, upper),
            m,
        )
    return (
        (upper - lower)
        * 0.5
        * (_inverse_demand(ce, p0, q0, eta, d, lower) + _inverse_demand(ce, p0, q0, eta, d, upper))
    )


@njit(**_JIT)
def _supply_integral(ce, p0, q0, e, s, a, b, f, lower, upper):
    """int_lower^upper Qs^-1(q) dq, signed: only the part above the zero-price quantity."""
    if e <= 0.0:
        return 0.0
    zero_price_quantity = _supply(ce, p0, q0, e, s, a, b, f, 0.0)
    lo = max(lower, zero_price_quantity)
    hi = max(upper, zero_price_quantity)
    if lo == hi:
        return 0.0
    if not ce:
        return (
            (hi - lo)
            * 0.5
            * (_supply_line(ce, p0, q0, e, s, a, b, lo) + _supply_line(ce, p0, q0, e, s, a, b, hi))
        )
    # int a+bK = q of K^-1((q - a)/b) dq = b int K^-1(x) dx, x = (q - a)/b: a power law in x.
    x_lo, x_hi = (lo - a) / b, (hi - a) / b
    m = 1.0 + 1.0 / e
    if x_lo <= 0.0:
        return b * x_hi * _supply_line(ce, p0, q0, e, s, a, b, hi) / m
    if x_hi <= 0.0:
        return -b * x_lo * _supply_line(ce, p0, q0, e, s, a, b, lo) / m
    return b * _power_law_integral(
        x_lo, _supply_line(ce, p0, q0, e, s, a, b, lo), x_hi, _supply_line(ce, p0, q0, e, s, a, b, hi), m
    )


# --- clearing -------------------------------------------------------------------------------


@njit(**_JIT)
def _excess_log(x, p0, q0, eta, d, e, s, a, b, alpha, beta, scale, gap):
    """G(x) = ln Qd(e^x) - ln(alpha (a + b K(scale e^x - gap)) + beta) and dG/dx (CE)."""
    price = math.exp(x)
    producer = scale * price - gap
    left = eta * (x - math.log(p0)) + d
    if a == 0.0 and b == 1.0 and alpha == 1.0 and beta == 0.0:
        # A single power-law segment: ln Qs(Pp) - ln Q0 = e ln(Pp/P0) + S, no exp needed.
        if not producer > 0.0:
            return math.inf, eta
        return left - e * math.log(producer / p0) - s, eta - e * scale * price / producer
    k = 0.0
    if producer > 0.0:
        k = q0 * math.exp(e * math.log(producer / p0) + s)
    right = alpha * (a + b * k) + beta
    if not right > 0.0:
        return math.inf, eta
    slope = eta
    if producer > 0.0:
        slope = eta - alpha * b * e * k * scale * price / (producer * right)
    return left + math.log(q0) - math.log(right), slope


@njit(**_JIT)
def _newton_from(x, lo, hi, p0, q0, eta, d, e, s, a, b, alpha, beta, scale, gap):
    """Newton's method in log price from a good first guess x, kept inside the expected
    bracket (lo, hi) by bisection. Returns NaN unless a Newton step itself converged (a root,
    not merely a collapsed bracket)."""
    for _ in range(60):
        g, slope = _excess_log(x, p0, q0, eta, d, e, s, a, b, alpha, beta, scale, gap)
        if g == 0.0:
            return x
        if g > 0.0:
            lo = x
        else:
            hi = x
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
def _log_root(lo, hi, p0, q0, eta, d, e, s, a, b, alpha, beta, scale, gap):
    """Root of the decreasing G on a bracket [lo, hi] of log prices (widened until signs
    hold); safeguarded Newton: a step that leaves the bracket is replaced by bisection."""
    g_lo, _ = _excess_log(lo, p0, q0, eta, d, e, s, a, b, alpha, beta, scale, gap)
    width = max(hi - lo, 0.125)
    for _ in range(80):
        if g_lo > 0.0:
            break
        hi = lo
        lo -= width
        width *= 2.0
        g_lo, _ = _excess_log(lo, p0, q0, eta, d, e, s, a, b, alpha, beta, scale, gap)
    g_hi, _ = _excess_log(hi, p0, q0, eta, d, e, s, a, b, alpha, beta, scale, gap)
    width = max(hi - lo, 0.125)
    for _ in range(80):
        if g_hi < 0.0:
            break
        lo = hi
        hi += width
        width *= 2.0
        g_hi, _ = _excess_log(hi, p0, q0, eta, d, e, s, a, b, alpha, beta, scale, gap)
    if not (g_lo > 0.0 and g_hi < 0.0):
        if g_lo == 0.0:
            return lo
        if g_hi == 0.0:
            return hi
        return math.nan
    x = 0.5 * (lo + hi)
    for _ in range(200):
        g, slope = _excess_log(x, p0, q0, eta, d, e, s, a, b, alpha, beta, scale, gap)
        if g == 0.0:
            return x
        if g > 0.0:
            lo = x
        else:
            hi = x
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
def _clear(ce, p0, q0, eta, d, e, s, a, b, f, alpha, beta, scale, gap, low, high, guess=0.0):
    """Consumer price Pc solving Qd(Pc) = alpha Qs(scale Pc - gap) + beta.

    [low, high] is a price bracket the caller expects (checked and widened for constant
    elasticity). NaN where no root is found; the caller reports it.
    """
    plain = a == 0.0 and b == 1.0 and f == 0.0
    one_segment = alpha == 1.0 and beta == 0.0
    if not ce:
        if plain:
            slope_e, shift = e, s
            floor = 0.0
        else:
            slope_e = b * e
            shift = (a / q0 + b * (1.0 + s)) - 1.0
            floor = max(a, f)
        if one_segment:
            x = (d - shift - slope_e * (scale - 1.0 - gap / p0)) / (slope_e * scale - eta)
        else:
            x = (1.0 + d - alpha * (1.0 + shift + slope_e * (scale - 1.0 - gap / p0)) - beta / q0) / (
                alpha * slope_e * scale - eta
            )
        price = p0 * (1.0 + x)
        producer_rel = (scale * price - gap - p0) / p0
        if q0 * (1.0 + slope_e * producer_rel + shift) < floor:
            price = _inverse_demand(ce, p0, q0, eta, d, alpha * floor + beta)
        return price
    if plain and one_segment and (gap == 0.0 or e <= 0.0):
        # Closed form; on vertical supply the quantity is fixed and buyers pay P*.
        return p0 * math.exp((d - s - e * math.log(scale)) / (e - eta))
    if e <= 0.0:
        fixed = max(a + b * q0 * math.exp(s), f)
        return _inverse_demand(ce, p0, q0, eta, d, alpha * fixed + beta)
    lo = math.log(max(low, _TINY))
    hi = math.log(max(high, low * (1.0 + 1e-12), _TINY))
    x = math.nan
    if guess > 0.0:
        start = min(max(math.log(guess), lo), hi)
        x = _newton_from(start, lo, hi, p0, q0, eta, d, e, s, a, b, alpha, beta, scale, gap)
    if not math.isfinite(x):  # no guess, or the expected bracket was wrong: check and widen it
        x = _log_root(lo, hi, p0, q0, eta, d, e, s, a, b, alpha, beta, scale, gap)
    price = math.exp(x)
    if f > 0.0 and a + b * _base_supply(ce, p0, q0, e, s, scale * price - gap) < f:
        price = _inverse_demand(ce, p0, q0, eta, d, alpha * f + beta)
    return price


@njit(**_JIT)
def _free_point(ce, p0, q0, eta, d, e, s, a, b, f, guess):
    """The period's free-market point (P*, Q*) on these curves."""
    if a == 0.0 and b == 1.0 and f == 0.0:
        if ce:
            log_price = (d - s) / (e - eta)
            return p0 * math.exp(log_price), q0 * math.exp(e * log_price + s)
        relative = (d - s) / (e - eta)
        return p0 * (1.0 + relative), q0 * (1.0 + e * relative + s)
    price = _clear(ce, p0, q0, eta, d, e, s, a, b, f, 1.0, 0.0, 1.0, 0.0, 0.5 * guess, 2.0 * guess, guess)
    return price, _supply(ce, p0, q0, e, s, a, b, f, price)


@njit(**_JIT)
def _stock_curve(stock, k_prev, rate, floor_share):
    """(a, b, f) of the period's supply: the stock's memory, or none."""
    if stock:
        return (1.0 - rate) * k_prev, rate, floor_share * k_prev
    return 0.0, 1.0, 0.0


# --- the free path of each scenario ---------------------------------------------------------


@njit(**_JIT)
def _free_path_kernel(
    ce_form, p0s, q0s, etas, eps, shifts, horizon, stock, stock_rate, floor_share, long_run, out
):
    n = p0s.shape[0]
    for i in range(n):
        ce = ce_form[i]
        p0, q0, eta = p0s[i], q0s[i], etas[i]
        out[i, 0, 0] = p0
        out[i, 1, 0] = q0
        out[i, 2, 0] = eps[i, 0]
        k_prev = q0
        guess = p0
        for t in range(1, horizon[i] + 1):
            d, s = shifts[i, 0, t], shifts[i, 1, t]
            a, b, f = _stock_curve(stock[i], k_prev, stock_rate[i], floor_share[i])
            e = long_run[i] if stock[i] else eps[i, t]
            price, quantity = _free_point(ce, p0, q0, eta, d, e, s, a, b, f, guess)
            out[i, 0, t] = price
            out[i, 1, t] = quantity
            if stock[i]:
                # Elasticity of this period's supply at its equilibrium point.
                k = _base_supply(ce, p0, q0, e, s, price)
                on_floor = a + b * k < f
                if ce:
                    out[i, 2, t] = 0.0 if on_floor or quantity <= 0.0 else b * e * k / quantity
                else:
                    out[i, 2, t] = (
                        0.0 if on_floor or quantity <= 0.0 else b * e * q0 * price / (p0 * quantity)
                    )
            else:
                out[i, 2, t] = eps[i, t]
            k_prev = quantity
            if price > 0.0 and math.isfinite(price):
                guess = price
        for t in range(horizon[i] + 1, eps.shape[1]):  # padding of a shorter horizon
            out[i, 0, t] = p0
            out[i, 1, t] = q0
            out[i, 2, t] = eps[i, t]


def free_paths(batch_arrays: dict) -> np.ndarray:
    """(n, 3, T+1): free-market price, quantity and supply elasticity of each scenario in
    the form given by `constant_elasticity` (n,) with the matching `shifts` (n, 2, T+1)."""
    a = batch_arrays
    n, periods = a["eps"].shape
    out = np.zeros((n, 3, periods))
    _free_path_kernel(
        a["constant_elasticity"],
        a["price"],
        a["quantity"],
        a["demand_elasticity"],
        a["eps"],
        a["shifts"],
        a["horizon"],
        a["stock"],
        a["stock_rate"],
        a["floor_share"],
        a["long_run_elasticity"],
        out,
    )
    return out


# --- every policy row -----------------------------------------------------------------------


@njit(**_JIT)
def _row_kernel(
    scenario,
    kind,
    value,
    start,
    end,
    indexed,
    coverage,
    ce_form,
    p0s,
    q0s,
    etas,
    ks,
    eps,
    shifts,
    horizon,
    stock,
    stock_rate,
    floor_share,
    long_run,
    random_rationing,
    factor,
    price_index,
    inflation,
    free,
    column,
    out,
    flags,
    summary,
    band_slot,
    band_out,
    band_rows,
    band_start,
):
    rows = scenario.shape[0]
    banding = band_rows > 0
    cell = np.empty(column.shape[0])
    for r in range(rows):
        i = scenario[r]
        ce = ce_form[i]
        p0, q0, eta, k_pay = p0s[i], q0s[i], etas[i], ks[i]
        code = kind[r]
        v = value[r]
        share = coverage[r]
        ceiling = code == _CEILING or code == _GROWTH_CAP
        partial = ceiling and share < 1.0
        random = random_rationing[i]
        if random and ce:
            m_divisor = 1.0 + 1.0 / eta
        else:
            m_divisor = 2.0
        # Period 0: the base point.
        for j in range(cell.shape[0]):
            cell[j] = 0.0
        cell[0] = p0
        cell[1] = p0
        cell[2] = q0
        cell[3] = q0
        cell[4] = q0
        cell[7] = p0
        cell[8] = p0
        cell[16] = p0
        cell[17] = p0
        cell[18] = share * q0
        cell[19] = (1.0 - share) * q0
        cell[26] = p0
        cell[27] = q0
        cell[30] = p0
        # Bands: this row's policy writes its series into its own slots of band_out.
        slots = band_slot[r // band_rows] if banding else band_slot[0]
        draw = band_start + r % band_rows if banding else 0
        for j in range(cell.shape[0]):
            if column[j] >= 0:
                out[r, column[j], 0] = cell[j]
            if banding and slots[j] >= 0:
                band_out[slots[j], 0, draw] = cell[j]
        for j in range(3):
            flags[r, j, 0] = False
        k_prev = q0
        previous_rent = p0  # the covered (controlled) rent of the period before
        guess = p0
        cumulative = 0.0
        discounted = 0.0
        for j in range(summary.shape[1]):
            summary[r, j] = 0.0
        summary[r, 3] = -1.0
        summary[r, 5] = p0
        summary[r, 6] = q0
        for t in range(1, out.shape[2]):
            if t > horizon[i]:
                for j in range(out.shape[1]):
                    out[r, j, t] = 0.0
                for j in range(3):
                    flags[r, j, t] = False
                continue
            d, s = shifts[i, 0, t], shifts[i, 1, t]
            a, b, f = _stock_curve(stock[i], k_prev, stock_rate[i], floor_share[i])
            e = long_run[i] if stock[i] else eps[i, t]
            if stock[i]:
                p_star, q_star = _free_point(ce, p0, q0, eta, d, e, s, a, b, f, guess)
            else:
                p_star, q_star = free[i, 0, t], free[i, 1, t]
            active = start[r] <= t and t <= end[r]
            # Money rules are nominal: their real value falls with the price index.
            real = v if indexed[r] else v / price_index[i, t]
            pc = pp = p_star
            q = qd = qs = q_star
            shortage = excess = 0.0
            mv = mc = p_star
            covered_price = uncovered_price = p_star
            covered_q = share * q_star
            uncovered_q = (1.0 - share) * q_star
            binding = False
            rationed = False
            level = 0.0
            unit_covered = unit_uncovered = 0.0
            if code == _CEILING or code == _GROWTH_CAP:
                if code == _CEILING:
                    level = real
                elif indexed[r]:
                    level = (1.0 + inflation[i, t] + v) * previous_rent / (1.0 + inflation[i, t])
                else:
                    level = (1.0 + v) * previous_rent / (1.0 + inflation[i, t])
                binding = active and level < p_star
                if binding:
                    rationed = True
                    supplied = _supply(ce, p0, q0, e, s, a, b, f, level)
                    demanded = _demand(ce, p0, q0, eta, d, level)
                    if not partial:
                        pc = pp = level
                        q = qs = supplied
                        qd = demanded
                        shortage = demanded - supplied
                        mv = _inverse_demand(ce, p0, q0, eta, d, supplied)
                        mc = level
                        covered_price = uncovered_price = level
                        covered_q = supplied
                        uncovered_q = 0.0
                    else:
                        unit_covered = supplied
                        covered_q = share * supplied
                        high = (
                            _inverse_demand(ce, p0, q0, eta, d, covered_q)
                            if covered_q > 0.0
                            else 4.0 * p_star
                        )
                        uncovered_price = _clear(
                            ce, p0, q0, eta, d, e, s, a, b, f, 1.0 - share, covered_q, 1.0, 0.0, p_star, high
                        )
                        unit_uncovered = _supply(ce, p0, q0, e, s, a, b, f, uncovered_price)
                        uncovered_q = (1.0 - share) * unit_uncovered
                        covered_price = level
                        q = qs = covered_q + uncovered_q
                        qd = demanded
                        shortage = max(demanded - q, 0.0)
                        pc = pp = (level * covered_q + uncovered_price * uncovered_q) / q
                        mv = _inverse_demand(ce, p0, q0, eta, d, q)
                        mc = uncovered_price
            elif code == _FLOOR:
                level = real
                binding = active and level > p_star
                if binding:
                    pc = pp = mv = level
                    qd = q = _demand(ce, p0, q0, eta, d, level)
                    qs = _supply(ce, p0, q0, e, s, a, b, f, level)
                    excess = qs - qd
                    mc = _inverse_supply(ce, p0, q0, e, s, a, b, f, min(qd, q_star))
            elif code == _UNIT_TAX or code == _AD_VALOREM or code == _SUBSIDY:
                if code == _AD_VALOREM:
                    scale, gap = 1.0 - v, 0.0
                    binding = active and v > 0.0
                    low, high = p_star, p_star / scale
                elif code == _UNIT_TAX:
                    scale, gap = 1.0, real
                    binding = active and v > 0.0
                    low, high = p_star, p_star + real
                else:
                    scale, gap = 1.0, -real
                    binding = active and v > 0.0
                    top = _supply(ce, p0, q0, e, s, a, b, f, p_star + real)
                    low, high = _inverse_demand(ce, p0, q0, eta, d, top), p_star
                if binding:
                    # First guess: buyers bear the share e/(e - eta) of the wedge (Fullerton &
                    # Metcalf 2002, exact for small wedges); Newton then converges in a few steps.
                    share_e = b * e
                    wedge = gap + (1.0 - scale) * p_star
                    first = p_star + wedge * share_e / (share_e - eta) if share_e - eta > 0.0 else p_star
                    pc = _clear(ce, p0, q0, eta, d, e, s, a, b, f, 1.0, 0.0, scale, gap, low, high, first)
                    pp = scale * pc - gap
                    qd = q = _demand(ce, p0, q0, eta, d, pc)
                    qs = _supply(ce, p0, q0, e, s, a, b, f, pp)
                    mv = pc
                    mc = pp
            elif code == _QUANTITY_CAP:
                binding = active and v < q_star
                if binding:
                    q = qd = v
                    pc = pp = mv = _inverse_demand(ce, p0, q0, eta, d, v)
                    qs = _supply(ce, p0, q0, e, s, a, b, f, pc)
                    excess = qs - v
                    mc = _inverse_supply(ce, p0, q0, e, s, a, b, f, min(v, q_star))
            infeasible = False
            if binding and not (q > 0.0 and pc > 0.0 and pp > 0.0):
                infeasible = True
            if stock[i] and not (p_star > 0.0 and q_star > 0.0):
                infeasible = True
            if infeasible:
                binding = rationed = False
                pc = pp = mv = mc = covered_price = uncovered_price = p_star
                q = qd = qs = q_star
                shortage = excess = 0.0
                covered_q = share * q_star
                uncovered_q = (1.0 - share) * q_star
            dcs = dps = rev = dwl = mis = 0.0
            g_tc = g_tu = g_out = g_oc = g_ou = g_gov = 0.0
            if binding:
                demand_area = _demand_integral(ce, p0, q0, eta, d, q, q_star)
                if partial:
                    supply_area = share * _supply_integral(
                        ce, p0, q0, e, s, a, b, f, unit_covered, q_star
                    ) + (1.0 - share) * _supply_integral(ce, p0, q0, e, s, a, b, f, unit_uncovered, q_star)
                else:
                    supply_area = _supply_integral(ce, p0, q0, e, s, a, b, f, q, q_star)
                free_spending = p_star * q_star
                consumer = free_spending - pc * q - demand_area
                producer = pp * q - free_spending + supply_area
                revenue = (pc - pp) * q
                deadweight = max(demand_area - supply_area, 0.0)
                if rationed and random and m_divisor > 0.0:
                    mis = max(q * (_inverse_demand(ce, p0, q0, eta, d, q) - pc) / m_divisor, 0.0)
                dcs = k_pay * (consumer - mis)
                dps = k_pay * producer
                rev = k_pay * revenue
                dwl = k_pay * (deadweight + mis)
                mis = k_pay * mis
                # Who gains and who loses (efficient allocation).
                g_out = -k_pay * (demand_area - p_star * (q_star - q))
                if ceiling:
                    g_tc = k_pay * (p_star - level) * covered_q
                    if partial:
                        g_tu = -k_pay * (uncovered_price - p_star) * uncovered_q
                        g_oc = (
                            k_pay
                            * share
                            * (
                                level * unit_covered
                                - free_spending
                                + _supply_integral(ce, p0, q0, e, s, a, b, f, unit_covered, q_star)
                            )
                        )
                        g_ou = (
                            k_pay
                            * (1.0 - share)
                            * (
                                uncovered_price * unit_uncovered
                                - free_spending
                                + _supply_integral(ce, p0, q0, e, s, a, b, f, unit_uncovered, q_star)
                            )
                        )
                    else:
                        g_oc = dps
                else:
                    g_tu = -k_pay * (pc - p_star) * q
                    g_ou = dps
                    g_gov = rev
            cumulative += dwl
            discounted += dwl * factor[i, t]
            cell[0] = pc
            cell[1] = pp
            cell[2] = q
            cell[3] = qd
            cell[4] = qs
            cell[5] = shortage
            cell[6] = excess
            cell[7] = mv
            cell[8] = mc
            cell[9] = dcs
            cell[10] = dps
            cell[11] = rev
            cell[12] = dwl
            cell[13] = mis
            cell[14] = cumulative
            cell[15] = discounted
            cell[16] = covered_price
            cell[17] = uncovered_price
            cell[18] = covered_q
            cell[19] = uncovered_q
            cell[20] = g_tc
            cell[21] = g_tu
            cell[22] = g_out
            cell[23] = g_oc
            cell[24] = g_ou
            cell[25] = g_gov
            cell[26] = p_star
            cell[27] = q_star
            # Against the free path (its own stock history), not this path's free point.
            cell[28] = free[i, 1, t] - q
            cell[29] = pc - free[i, 0, t]
            cell[30] = pc * price_index[i, t]
            for j in range(cell.shape[0]):
                if column[j] >= 0:
                    out[r, column[j], t] = cell[j]
                if banding and slots[j] >= 0:
                    band_out[slots[j], t, draw] = cell[j]
            flags[r, 0, t] = binding
            flags[r, 1, t] = rationed
            flags[r, 2, t] = infeasible
            total = summary[r]
            checksum = 0.0
            for j in range(16):
                checksum += cell[j]
            if not math.isfinite(checksum):
                total[16] = 1.0
            if shortage > total[2]:
                total[2] = shortage
                total[3] = t
            if binding:
                total[4] += 1.0
            total[7] += dcs
            total[8] += dps
            total[9] += rev
            total[10] += g_tc
            total[11] += g_tu
            total[12] += g_out
            total[13] += g_oc
            total[14] += g_ou
            total[15] += g_gov
            if cell[28] > total[18]:
                total[18] = cell[28]
            if t == horizon[i]:
                total[17] = cell[28]
                total[0] = cumulative
                total[1] = discounted
                total[5] = pc
                total[6] = q
            k_prev = q
            previous_rent = covered_price
            if p_star > 0.0 and math.isfinite(p_star):
                guess = p_star


def policy_paths(
    batch_arrays: dict,
    rows: dict,
    free: np.ndarray,
    series: tuple[str, ...] | None = None,
    band: tuple | None = None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The rows' series (R, len(series), T+1) in the order of `series` (default: all of
    SERIES_INDEX), flags (R, 3, T+1) and summary (R, len(SUMMARY_INDEX)). Asking only for
    the series needed saves memory traffic (bands keep none: they write into `band`).

    `free` is free_paths' output for the scenarios' own forms (used where there is no stock).
    `band` = (layout, target, rows_per_policy, first_draw) also writes series, as float32,
    straight into target[slot, period, draw] (slots, T+1, draws) for rows in policy-major order
    (row = policy * rows_per_policy + draw - first_draw): `layout` names each policy's series,
    and they take the slots one after another (policy 0's first, ...), so each policy bands
    only the series that apply to it.
    """
    a = batch_arrays
    count = rows["scenario"].shape[0]
    periods = a["eps"].shape[1]
    wanted = tuple(SERIES_INDEX) if series is None else series
    column = np.full(len(SERIES_INDEX), -1, dtype=np.int64)
    for j, name in enumerate(wanted):
        column[SERIES_INDEX[name]] = j
    out = np.empty((count, len(wanted), periods))
    flags = np.empty((count, len(FLAG_NAMES), periods), dtype=np.bool_)
    summary = np.empty((count, len(SUMMARY_INDEX)))
    if band is None:
        band_slot = np.full((1, len(SERIES_INDEX)), -1, dtype=np.int64)
        band_out, band_rows, band_start = np.empty((1, 1, 1), dtype=np.float32), 0, 0
    else:
        layout, band_out, band_rows, band_start = band
        band_slot = np.full((len(layout), len(SERIES_INDEX)), -1, dtype=np.int64)
        slot = 0
        for policy, names in enumerate(layout):
            for name in names:
                band_slot[policy, SERIES_INDEX[name]] = slot
                slot += 1
    _row_kernel(
        rows["scenario"],
        rows["kind"],
        rows["value"],
        rows["start"],
        rows["end"],
        rows["indexed"],
        rows["coverage"],
        a["constant_elasticity"],
        a["price"],
        a["quantity"],
        a["demand_elasticity"],
        a["payments_per_period"],
        a["eps"],
        a["shifts"],
        a["horizon"],
        a["stock"],
        a["stock_rate"],
        a["floor_share"],
        a["long_run_elasticity"],
        a["random_rationing"],
        a["discount_factor"],
        a["price_index"],
        a["inflation"],
        free,
        column,
        out,
        flags,
        summary,
        band_slot,
        band_out,
        band_rows,
        band_start,
    )
    return out, flags, summary


# --- inputs of the period pass: shock paths, supply elasticity over time, discounting -------

_STEP, _RAMP, _GROWTH, _PATH = range(4)
_CONSTANT, _LINEAR_SCHEDULE, _GEOMETRIC, _EXPLICIT, _STOCK = range(5)


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


@njit(**_JIT)
def _prepare_kernel(
    sr,
    lr,
    schedule,
    schedule_periods,
    schedule_rate,
    explicit,
    horizon,
    demand_e,
    supply_e,
    change,
    change_too_large,
    max_change,
    discount_rate,
    eps,
    linear,
    constant,
    shift_bad,
    undefined,
    factor,
):
    n, periods = eps.shape
    m = demand_e.shape[1]
    for i in range(n):
        # Supply elasticity over time: eps_t = eps_SR (1 - w_t) + eps_LR w_t, w_1 = 0.
        code = schedule[i]
        rate = schedule_rate[i]
        undefined[i] = False
        if (code == _GEOMETRIC or code == _STOCK) and rate <= 0.0:
            if sr[i] > 0.0 and sr[i] <= lr[i]:
                rate = sr[i] / lr[i]  # Nerlove (1958): eps_SR = lambda eps_LR
            else:
                rate = 1.0
                undefined[i] = True
        eps[i, 0] = sr[i]
        for t in range(1, periods):
            lag = t - 1
            w = 0.0
            if code == _LINEAR_SCHEDULE:
                k = schedule_periods[i]
                w = min(lag / k, 1.0) if k > 0 else 1.0
            elif code == _GEOMETRIC:
                if rate >= 1.0:
                    w = 1.0 if lag > 0 else 0.0
                else:
                    w = -math.expm1(lag * math.log1p(-rate))
            if code == _EXPLICIT:
                eps[i, t] = explicit[min(i, explicit.shape[0] - 1), t]
            else:
                eps[i, t] = sr[i] * (1.0 - w) + lr[i] * w
        # Shifts: D = sum_i eta_i g_i and ln A = sum_i eta_i ln(1 + g_i), shifter by shifter.
        row = min(i, change.shape[0] - 1)
        for j in range(m):
            shift_bad[i, j] = change_too_large[row, j]
        for t in range(periods):
            linear[i, 0, t] = 0.0
            linear[i, 1, t] = 0.0
            constant[i, 0, t] = 0.0
            constant[i, 1, t] = 0.0
        for j in range(m):
            for t in range(periods):
                g = change[row, j, t]
                if t <= horizon[i] and (g <= -1.0 or g > max_change):
                    shift_bad[i, j] = True
                safe = min(g, max_change) if g > -1.0 else 0.0
                log_safe = math.log1p(safe)
                linear[i, 0, t] += demand_e[i, j] * safe
                constant[i, 0, t] += demand_e[i, j] * log_safe
                linear[i, 1, t] += supply_e[i, j] * safe
                constant[i, 1, t] += supply_e[i, j] * log_safe
        # Discount factor of period s: prod_(u<=s) 1 / (1 + r_u).
        rates = discount_rate[min(i, discount_rate.shape[0] - 1)]
        factor[i, 0] = 1.0
        log_factor = 0.0
        for t in range(1, periods):
            log_factor -= math.log1p(rates[t])
            factor[i, t] = math.exp(log_factor)


def prepare(batch, max_change: float):
    """Supply elasticity (n, T+1), shifts of both forms (n, 2, T+1) each (demand, supply), the
    out-of-range mask (n, m), the undefined-schedule mask (n,) and discount factors (n, T+1)."""
    n, periods = batch.size, batch.periods
    m = batch.demand_shifter_elasticity.shape[1]
    eps = np.empty((n, periods))
    linear = np.empty((n, 2, periods))
    constant = np.empty((n, 2, periods))
    shift_bad = np.empty((n, m), dtype=np.bool_)
    undefined = np.empty(n, dtype=np.bool_)
    factor = np.empty((n, periods))
    change = batch.shifter_change
    if change.shape[1] != m:  # no shifters at all
        change = np.zeros((1, m, periods))
    _prepare_kernel(
        batch.short_run_elasticity,
        batch.long_run_elasticity,
        batch.schedule,
        batch.schedule_periods.astype(np.float64),
        batch.schedule_rate,
        np.ascontiguousarray(batch.explicit_elasticity),
        batch.horizon,
        np.ascontiguousarray(batch.demand_shifter_elasticity),
        np.ascontiguousarray(batch.supply_shifter_elasticity),
        np.ascontiguousarray(change),
        np.ascontiguousarray(batch.shock_out_of_range),
        max_change,
        np.ascontiguousarray(batch.discount_rate),
        eps,
        linear,
        constant,
        shift_bad,
        undefined,
        factor,
    )
    return eps, linear, constant, shift_bad, undefined, factor


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


@njit(**_JIT)
def _order_statistics(values, ks, out):
    """out[n] = the ks[n]-th smallest of `values` (ks sorted, unique). One pass counts the
    values into equal-width bins between their minimum and maximum, a second gathers only the
    bins that hold a wanted rank, and those few values are selected exactly."""
    low = high = values[0]
    for x in values:
        if x < low:
            low = x
        if x > high:
            high = x
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
    counts = np.zeros(bins, dtype=np.int64)
    for x in values:
        position = (x - low) * scale
        counts[min(int(position), bins - 1) if position < bins else bins - 1] += 1
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
    for x in values:
        position = (x - low) * scale
        w = slot[min(int(position), bins - 1) if position < bins else bins - 1]
        if w >= 0:
            gathered[fill[w]] = x
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
    for row in range(values.shape[0]):
        if everything:
            for d in range(count):
                scratch[d] = values[row, d]
        else:
            for d in range(count):
                scratch[d] = values[row, keep[d]]
        _order_statistics(scratch, order, stats)
        for i in range(q.shape[0]):
            below, above = stats[rank_of[2 * i]], stats[rank_of[2 * i + 1]]
            out[row, i] = below + (above - below) * fraction[i]


def percentiles(values: np.ndarray, keep: np.ndarray, q: np.ndarray) -> np.ndarray:
    """(rows, len(q)) percentiles of each row of `values` (rows, draws) over the draws `keep`
    (indices, at least one), exactly numpy's 'linear' method; order statistics are selected,
    not sorted (O(draws) per percentile)."""
    out = np.empty((values.shape[0], q.shape[0]))
    _percentile_rows(values, np.ascontiguousarray(keep, dtype=np.int64), np.asarray(q, dtype=float), out)
    return out


def warm_up() -> None:
    """Compile (or load from the on-disk cache) every kernel signature the service uses."""
    n, periods = 2, 3
    arrays = {
        "constant_elasticity": np.array([False, True]),
        "price": np.ones(n),
        "quantity": np.ones(n),
        "demand_elasticity": -np.ones(n),
        "payments_per_period": np.ones(n),
        "eps": np.ones((n, periods)),
        "shifts": np.zeros((n, 2, periods)),
        "horizon": np.full(n, periods - 1, dtype=np.int64),
        "stock": np.array([False, True]),
        "stock_rate": np.full(n, 0.5),
        "floor_share": np.zeros(n),
        "long_run_elasticity": np.ones(n),
        "random_rationing": np.zeros(n, dtype=bool),
        "discount_factor": np.ones((n, periods)),
        "price_index": np.ones((n, periods)),
        "inflation": np.zeros((n, periods)),
    }
    rows = {
        "scenario": np.array([0, 1], dtype=np.int64),
        "kind": np.array([_UNIT_TAX, _CEILING], dtype=np.int64),
        "value": np.array([0.1, 0.9]),
        "start": np.ones(2, dtype=np.int64),
        "end": np.full(2, 10, dtype=np.int64),
        "indexed": np.zeros(2, dtype=bool),
        "coverage": np.array([1.0, 0.5]),
    }
    free = free_paths(arrays)
    policy_paths(arrays, rows, free)
    percentiles(np.ones((2, 3), dtype=np.float32), np.arange(3), np.array([5.0, 50.0]))
    percentiles(np.ones((2, 3)), np.arange(3), np.array([5.0, 50.0]))  # bands' summary figures
    target = np.empty((2, periods, 1), dtype=np.float32)
    policy_paths(arrays, rows, free, (), ((("quantity",), ("quantity",)), target, 1, 0))
