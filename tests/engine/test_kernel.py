"""service/engine/kernel.py: the compiled curves, roots and order statistics against scipy
(quad, brentq) and numpy, corners included. The period pass as a whole is judged against the
scalar reference in test_reference.py."""

from __future__ import annotations

import functools
import math
import operator

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

from service.engine import kernel

P0, Q0 = 100.0, 1000.0
PLAIN = (0.0, 1.0, 0.0)  # a, b, f: no stock


def curves(ce, eta=-0.7, d=0.0, e=1.0, s=0.0, a=0.0, b=1.0, f=0.0, h=math.inf):
    """The period's curves as the kernel takes them (kernel.Curves)."""
    return kernel.Curves(ce, P0, Q0, eta, d, e, s, a, b, f, h)


def inverse_demand(ce, eta, d=0.0):
    return lambda q: kernel._inverse_demand(curves(ce, eta, d), q)


def inverse_supply(ce, e, s=0.0, stock=PLAIN):
    return lambda q: kernel._inverse_supply(curves(ce, e=e, s=s, a=stock[0], b=stock[1], f=stock[2]), q)


@pytest.mark.parametrize("eta", [-0.3, -0.999999, -1.0, -1.000001, -2.5])
@pytest.mark.parametrize(("lower", "upper"), [(600.0, 1000.0), (1000.0, 1300.0), (1200.0, 700.0)])
def test_constant_elasticity_demand_integral_equals_quadrature(eta, lower, upper):
    exact = quad(inverse_demand(True, eta, 0.05), lower, upper, epsrel=1e-12)[0]  # scipy.integrate.quad
    assert kernel._demand_integral(curves(True, eta, 0.05), lower, upper) == pytest.approx(exact, rel=1e-10)


@pytest.mark.parametrize("eps", [0.02, 0.3, 1.0, 4.0])
def test_constant_elasticity_supply_integral_equals_quadrature(eps):
    exact = quad(inverse_supply(True, eps, -0.03), 900.0, 1000.0, epsrel=1e-12)[0]  # scipy.integrate.quad
    got = kernel._supply_integral(curves(True, e=eps, s=-0.03), 900.0, 1000.0)
    assert got == pytest.approx(exact, rel=1e-10)


@pytest.mark.parametrize("ce", [False, True])
@pytest.mark.parametrize(("rate", "depreciation"), [(0.3, None), (0.3, 0.02), (1.0, None)])
def test_a_stock_supply_curve_integrates_like_quadrature(ce, rate, depreciation):
    """Qs = max((1-lambda) K + lambda K*(P), (1-delta) K) with K = 1.1 Q0: the integral of its
    inverse, kink and floor included, matches quad (scipy.integrate.quad)."""
    k_prev = 1.1 * Q0
    floor = 0.0 if depreciation is None else (1.0 - depreciation) * k_prev
    stock = ((1.0 - rate) * k_prev, rate, floor)
    f = inverse_supply(ce, 1.5, 0.02, stock)
    lower, upper = 900.0, 1250.0
    kinks = [x for x in (floor, stock[0]) if lower < x < upper]
    exact = quad(f, lower, upper, points=kinks or None, epsrel=1e-12, limit=200)[0]
    got = kernel._supply_integral(curves(ce, e=1.5, s=0.02, a=stock[0], b=stock[1], f=stock[2]), lower, upper)
    assert got == pytest.approx(exact, rel=1e-9)


def test_linear_supply_integral_floors_marginal_cost_at_zero():
    """Units that would be offered at a negative price are offered at zero (kernel docstring)."""
    f = inverse_supply(False, 0.5, 0.2)  # zero-price quantity Q0 (1 + 0.2 - 0.5) = 700
    exact = quad(f, 300.0, 1000.0, points=[700.0])[0]  # scipy.integrate.quad
    assert f(500.0) == 0.0
    assert kernel._supply_integral(curves(False, e=0.5, s=0.2), 300.0, 1000.0) == pytest.approx(
        exact, rel=1e-12
    )


@pytest.mark.parametrize("ce", [False, True])
def test_vertical_supply_has_zero_marginal_cost_below_capacity(ce):
    assert inverse_supply(ce, 0.0)(900.0) == 0.0
    assert kernel._supply_integral(curves(ce, e=0.0), 800.0, 1000.0) == 0.0
    assert [kernel._supply(curves(ce, e=0.0), p) for p in (50.0, 500.0)] == [1000.0, 1000.0]


@pytest.mark.parametrize("ce", [False, True])
def test_curves_pass_through_the_base_point_when_nothing_shifts(ce):
    assert kernel._demand(curves(ce, -0.7), P0) == pytest.approx(Q0, rel=1e-15)
    assert kernel._supply(curves(ce, e=1.3), P0) == pytest.approx(Q0, rel=1e-15)
    assert kernel._inverse_demand(curves(ce, -0.7), Q0) == pytest.approx(P0, rel=1e-15)


def test_linear_demand_is_truncated_at_zero_quantity():
    assert [kernel._demand(curves(False, -0.5), p) for p in (300.0, 500.0)] == [0.0, 0.0]


@pytest.mark.parametrize("gap", [0.01, 5.0, 60.0, 99.0, -0.01, -30.0])
@pytest.mark.parametrize("eta", [-0.4, -1.0, -2.5])
def test_a_constant_elasticity_wedge_clears_where_brentq_says(gap, eta):
    """Qd(Pc) = Qs(Pc - gap): the safeguarded Newton root against scipy.optimize.brentq."""
    e, d, s = 0.8, 0.05, -0.02
    p_star = P0 * math.exp((d - s) / (e - eta))

    def excess(pc):
        pp = pc - gap
        supplied = Q0 * (pp / P0) ** e * math.exp(s) if pp > 0 else 0.0
        return Q0 * (pc / P0) ** eta * math.exp(d) - supplied

    low, high = (p_star, p_star + gap) if gap > 0 else (1e-9, p_star)
    expected = brentq(excess, max(low, gap + 1e-12), high, xtol=1e-14, rtol=4 * np.finfo(float).eps)
    c = curves(True, eta, d, e, s)
    top = kernel._supply(c, p_star - gap)
    bracket = (p_star, p_star + gap) if gap > 0 else (kernel._inverse_demand(c, top), p_star)
    got = kernel._clear(c, 1.0, 0.0, 1.0, gap, *bracket)
    assert got == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("ce", [False, True])
@pytest.mark.parametrize("share", [0.2, 0.6, 0.95])
def test_the_uncovered_rent_clears_the_uncovered_homes(ce, share):
    """(1-s) Qs(Pu) = Qd(Pu) - s Qs(c) (Fallis & Smith 1984, AER 74(1)): against brentq."""
    eta, e, d = -0.6, 1.2, 0.08
    c = curves(ce, eta, d, e)
    p_star = kernel._free_point(c, P0)[0]
    ceiling = 0.9 * p_star
    covered = share * kernel._supply(c, ceiling)

    def excess(p):
        return kernel._demand(c, p) - covered - (1 - share) * kernel._supply(c, p)

    expected = brentq(excess, p_star, 10 * p_star, xtol=1e-13)
    high = kernel._inverse_demand(c, covered)
    got = kernel._clear(c, 1 - share, covered, 1.0, 0.0, p_star, high)
    assert got == pytest.approx(expected, rel=1e-11)
    assert got >= p_star


@pytest.mark.parametrize("dtype", [np.float32, np.float64])
@pytest.mark.parametrize("rows", [1, 2, 3, 10, 1001, 100_000])
def test_order_statistics_give_numpy_percentiles(rows, dtype):
    """Binned selection equals numpy's 'linear' percentiles, ties and heavy tails included, for
    the float32 band buffer and the float64 summary figures; the values are read, never moved.
    With 100,000 values the heavy tails (a Pareto tail of index 0.3: a few draws a million
    times the median) put nearly every value into the first bin, which is binned again."""
    rng = np.random.default_rng(7)
    values = np.stack(
        [
            rng.standard_normal(rows),
            np.where(rng.random(rows) < 0.6, 0.0, rng.lognormal(0.0, 4.0, rows)),
            np.full(rows, 3.5),
            rng.integers(0, 3, rows).astype(float),
            rng.pareto(0.3, rows),
            -np.where(rng.random(rows) < 0.7, 0.0, rng.pareto(0.5, rows)),
        ]
    ).astype(dtype)
    before = values.copy()
    q = np.array([0.0, 5.0, 25.0, 50.0, 75.0, 95.0, 100.0])
    expected = np.percentile(values.astype(float), q, axis=1).T
    got = kernel.percentiles(values, np.arange(rows), q)
    np.testing.assert_allclose(got, expected, rtol=1e-12, atol=0.0)
    np.testing.assert_array_equal(values, before)
    keep = np.arange(0, rows, 3)
    np.testing.assert_allclose(
        kernel.percentiles(values, keep, q),
        np.percentile(values[:, keep].astype(float), q, axis=1).T,
        rtol=1e-12,
    )


@pytest.mark.parametrize("n", [1, 3, 4, 5, 1001])
def test_the_range_and_bin_counts_of_a_row_are_numpys(n):
    """The selection's range (four running pairs) is numpy's nanmin and nanmax where the first
    value is a number, and NaN where the first value is NaN (one running pair's rule); its bin
    counts (four histograms summed) are numpy's bincount."""
    rng = np.random.default_rng(n)
    values = rng.standard_normal(n).astype(np.float32)
    values[rng.random(n) < 0.2] = np.nan
    values[0] = 0.25
    low, high = kernel._range_of(values)
    assert (low, high) == (np.nanmin(values), np.nanmax(values))
    values[0] = np.nan
    assert all(math.isnan(x) for x in kernel._range_of(values))
    bins = rng.integers(0, 7, n).astype(np.int32)
    np.testing.assert_array_equal(kernel._bin_counts(bins, n, 7), np.bincount(bins, minlength=7))


@pytest.mark.parametrize("ce", [False, True])
@pytest.mark.parametrize(("build", "depreciation"), [(0.02, None), (0.02, 0.01), (0.5, 0.3)])
def test_a_stock_supply_with_a_build_limit_clears_where_brentq_says(ce, build, depreciation):
    """Qs = min(max((1-lambda) K + lambda K*(P), (1-delta) K), (1+b) K) (MODEL.md 16): the free
    point on the kinked curve against scipy.optimize.brentq, and never above (1+b) K."""
    k_prev = Q0
    floor = 0.0 if depreciation is None else (1.0 - depreciation) * k_prev
    c = curves(ce, -0.5, 0.3, 1.0, 0.0, 0.7 * k_prev, 0.3, floor, (1.0 + build) * k_prev)

    def excess(p):
        return kernel._demand(c, p) - kernel._supply(c, p)

    expected = brentq(excess, 1e-6, 100 * P0, xtol=1e-14, rtol=4 * np.finfo(float).eps)
    price, quantity = kernel._free_point(c, P0)
    assert price == pytest.approx(expected, rel=1e-12)
    assert quantity <= (1.0 + build) * k_prev


@pytest.mark.parametrize("ce", [False, True])
@pytest.mark.parametrize(("lower", "upper"), [(20.0, 180.0), (150.0, 60.0), (0.0, 90.0)])
def test_the_area_under_a_supply_curve_over_price_equals_quadrature(ce, lower, upper):
    """int K(p) dp, the base curve truncated at zero, against scipy.integrate.quad."""
    c = curves(ce, e=1.4, s=-0.1)
    exact = quad(lambda p: kernel._base_supply(c, p), lower, upper, epsrel=1e-12, limit=200)[0]
    assert kernel._base_supply_price_integral(c, lower, upper) == pytest.approx(exact, rel=1e-10)


@pytest.mark.parametrize("ce", [False, True])
@pytest.mark.parametrize(
    "group",
    [
        (300.0, 0.2, 0.0, 0.0, 0.0, 380.0, 520.0),  # both bounds
        (300.0, 0.08, 0.3, 0.4, 420.0, 250.0, 700.0),  # the exempt group's kink, lower bound only
        (0.0, 0.6, 0.0, 0.0, 0.0, 0.0, math.inf),  # a share of the curve (no stock)
    ],
)
def test_a_groups_supply_integrates_over_price_like_quadrature(ce, group):
    """int G(p) dp of a group's clipped, kinked supply (MODEL.md 17), against quad with the
    kinks given as break points (scipy.integrate.quad)."""
    c = curves(ce, e=1.2, s=0.05)
    g = kernel.Group(*group)
    exact = quad(lambda p: kernel._group_supply(c, g, p), 30.0, 240.0, epsrel=1e-12, limit=400)[0]
    assert kernel._group_integral(c, g, 30.0, 240.0) == pytest.approx(exact, rel=1e-9)
    assert kernel._group_integral(c, g, 240.0, 30.0) == pytest.approx(-exact, rel=1e-9)


@pytest.mark.parametrize("ce", [False, True])
@pytest.mark.parametrize(("rule", "tau"), [(-1.0, 0.0), (80.0, 0.0), (80.0, 0.4), (60.0, 1.0)])
def test_the_market_rent_of_two_groups_clears_where_brentq_says(ce, rule, tau):
    """Qd(M) = Sc(Rc(M)) + Su(M), Rc(M) = (1 - tau) min(r, M) + tau M (MODEL.md 17): Brent's
    method in the kernel against scipy.optimize.brentq."""
    c = curves(ce, -0.6, 0.2, 1.0, 0.0)
    controlled = kernel.Group(360.0, 0.04, 0.0, 0.0, 0.0, 396.0, 400.0)
    others = kernel.Group(540.0, 0.06, 0.1, 0.4, 400.0, 534.6, 700.0)

    def excess(m):
        received = m if rule < 0 else (1 - tau) * min(rule, m) + tau * m
        return (
            kernel._demand(c, m)
            - kernel._group_supply(c, controlled, received)
            - kernel._group_supply(c, others, m)
        )

    expected = brentq(excess, 1.0, 1000.0, xtol=1e-14, rtol=4 * np.finfo(float).eps)
    got = kernel._market_rent(c, controlled, others, rule, tau, P0)
    assert got == pytest.approx(expected, rel=1e-13)


def test_python_and_the_kernel_share_every_code():
    """One home for every code: the concept modules read kernel.py's dictionaries."""
    from service.engine import policies, schedules, shocks

    assert policies.KIND_CODES is kernel.KIND_CODES
    assert schedules.SCHEDULE_CODES is kernel.SCHEDULE_CODES
    assert shocks.PROFILE_CODES is kernel.PROFILE_CODES
    assert kernel._CEILING == kernel.KIND_CODES["price_ceiling"]
    assert kernel._STOCK == kernel.SCHEDULE_CODES["stock"]
    assert kernel._GROWTH == kernel.PROFILE_CODES["growth"]
    assert [getattr(kernel._S, name) for name in kernel.SERIES_NAMES] == list(range(len(kernel.SERIES_NAMES)))
    assert [getattr(kernel._T, name) for name in kernel.SUMMARY_NAMES] == list(
        range(len(kernel.SUMMARY_NAMES))
    )


def test_each_welfare_field_goes_to_its_own_series():
    """The period's Welfare is written to the cells by position (WELFARE_SERIES): field and
    series pair up one to one, in the order written here by hand."""
    pairs = {
        "dcs": "consumer_surplus_change",
        "dps": "producer_surplus_change",
        "rev": "government_revenue",
        "dwl": "deadweight_loss",
        "mis": "misallocation_loss",
        "tenants_c": "tenants_in_controlled_homes",
        "tenants_u": "tenants_in_uncontrolled_homes",
        "priced_out": "households_priced_out",
        "owners_c": "owners_of_controlled_homes",
        "owners_u": "owners_of_uncontrolled_homes",
        "government": "government",
        "drawn_in": "households_drawn_in",
    }
    assert list(kernel.Welfare._fields) == list(pairs)
    assert list(kernel.WELFARE_SERIES) == list(pairs.values())


def _walked_row(seed: int, periods: int = 12) -> np.ndarray:
    """A row's cells as _walk_row leaves them (periods x series), random but finite."""
    rng = np.random.default_rng(seed)
    return rng.normal(size=(periods, len(kernel.SERIES_NAMES))) * 100.0


def _totals(cells, last, end, checked, binding=None):
    """Row 1 of three rows of flags and totals (the kernel's own row index), summed."""
    flags = np.zeros((3, 3, cells.shape[0]), dtype=bool)
    if binding is not None:
        flags[1, kernel.FLAG_INDEX["binding"]] = binding
    factor = 1.0 / 1.035 ** np.arange(cells.shape[0])
    period = np.full((cells.shape[0], len(kernel.PERIOD_INPUT_NAMES)), np.nan)
    period[:, kernel.PERIOD_INPUT_INDEX["discount_factor"]] = factor
    totals = np.full((3, len(kernel.SUMMARY_NAMES)), np.nan)
    kernel._row_totals(cells, period, flags, totals, 1, last, end, np.asarray(checked, dtype=np.int64))
    assert np.isnan(totals[[0, 2]]).all()  # the other rows are not touched
    return dict(zip(kernel.SUMMARY_NAMES, totals[1], strict=True)), factor


def _in_order(values) -> float:
    """0.0 + v1 + v2 + ... left to right, as the kernel adds (Python's own `sum` compensates
    rounding since 3.12, so it is not the reference here)."""
    return functools.reduce(operator.add, values, 0.0)


@pytest.mark.parametrize(
    ("last", "end"), [(11, 4), (9, 9), (11, np.iinfo(np.int64).max), (0, 3), (11, -40), (11, -(10**6))]
)
def test_a_rows_totals_are_its_periods_summed_in_order(last, end):
    """The summary is read off the walked cells: sums from 0 in period order (equal, not just
    close), peaks with the first period that reaches them, the periods bound, the sums after
    the rule's end (every period when `end` is before period 1), and the last period's
    figures; every figure of the row's own form is written."""
    cells = _walked_row(last)
    s = kernel.SERIES_INDEX
    if last >= 4:  # a tie: the first period that reaches the peak is the one reported
        cells[4, s["shortage"]] = cells[2, s["shortage"]] = abs(cells[:, s["shortage"]]).max() + 1.0
    binding = np.arange(cells.shape[0]) % 3 == 1
    total, factor = _totals(cells, last, end, range(16), binding)
    periods = range(1, last + 1)
    after = [t for t in periods if t > end]
    money = ("consumer_surplus_change", "producer_surplus_change", "government_revenue")
    for name in (*money, *kernel.GROUP_NAMES):
        assert total["total_" + name] == _in_order(cells[t, s[name]] for t in periods)
    for name in kernel.GROUP_NAMES:
        assert total["discounted_" + name] == _in_order(cells[t, s[name]] * factor[t] for t in periods)
    renters, extra = s["renters_vs_free_path"], s["extra_rent_vs_free_path"]
    assert total["vs_free_path_renters"] == _in_order(cells[t, renters] for t in periods)
    discounted = _in_order(cells[t, renters] * factor[t] for t in periods)
    assert total["vs_free_path_renters_discounted"] == discounted
    assert total["vs_free_path_extra_rent"] == _in_order(cells[t, extra] for t in periods)
    assert total["vs_free_path_renters_after_end"] == _in_order(cells[t, renters] for t in after)
    assert total["vs_free_path_extra_rent_after_end"] == _in_order(cells[t, extra] for t in after)
    assert total["total_converted_homes"] == _in_order(cells[t, s["converted_homes"]] for t in periods)
    shortages = [cells[t, s["shortage"]] for t in periods]
    peak = max([0.0, *shortages])
    assert total["peak_shortage"] == peak
    assert total["peak_shortage_period"] == (1 + shortages.index(peak) if peak > 0.0 else -1)
    below = [cells[t, s["homes_below_free_path"]] for t in periods]
    assert total["peak_homes_below_free_path"] == max([0.0, *below])
    assert total["binding_periods"] == sum(binding[1 : last + 1])
    final = cells[last]
    assert total["final_consumer_price"] == final[s["consumer_price"]]
    assert total["final_quantity"] == final[s["quantity"]]
    assert total["final_homes_below_free_path"] == final[s["homes_below_free_path"]]
    assert total["final_vacant_homes"] == final[s["vacant_homes"]]
    assert total["total_deadweight_loss"] == final[s["cumulative_deadweight_loss"]]
    assert total["discounted_deadweight_loss"] == final[s["discounted_deadweight_loss"]]
    assert total["non_finite"] == 0.0
    other = {name for name in kernel.SUMMARY_NAMES if name.startswith("other_")}
    assert not any(math.isnan(value) for name, value in total.items() if name not in other)


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf])
def test_a_value_that_is_not_finite_fails_the_row_only_where_it_is_checked(bad):
    """Checked: the cells the row reports (kept or banded) and the sixteen core series, in the
    periods 1..horizon; the base point (period 0) and periods past the horizon are not."""
    checked = [0, 5, 20]
    for period, cell, fails in [
        (3, 5, True),
        (1, 20, True),
        (8, 0, True),
        (3, 6, False),
        (0, 5, False),
        (9, 5, False),
    ]:
        cells = _walked_row(period)
        cells[period, cell] = bad
        total, _ = _totals(cells, 8, 4, checked)
        assert total["non_finite"] == (1.0 if fails else 0.0), (period, cell)
