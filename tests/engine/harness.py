"""The one comparison of the engine's answers with the scalar reference (tests/reference.py:
brentq roots, quad integrals, a Python loop over periods that carries each path's stock).

`compare(request)` sends a request through the public API (`service.simulate`) and checks
every number of the answer that the reference computes, MODEL.md sections 1-20: the core
series and welfare, inflation's nominal prices, the covered and uncovered series, the durable
stock's homes below the free path, empty and converted homes, renters against the free path,
who gains and who loses (seven groups), the summary figures, the supply elasticity, the
reduced form and the other curve form. Where the engine refuses a request (a 422) the
reference must find it has no answer. tests/engine/test_reference.py, test_additions.py and
test_buildings.py feed it random and fixed requests.

Tolerances: prices and quantities rel 1e-8 (abs 1e-9 of P0, Q0); money rel 1e-7 (abs 1e-9 of
k P0 Q0); stock figures rel 1e-7 (abs 1e-8 of the scale). A period where only one of the two
binds is a tie (the policy's value at the free-market value to rounding): both are then the
free market there, so only the flag may differ.
"""

from __future__ import annotations

import pytest

from service import ProblemError, simulate

from .. import reference
from .additions import COVERAGE, GROUPS, NOMINAL, STOCK, scales

#: Series of a path and the reference Row attribute that holds them (prices, quantities).
FIELDS = {
    "consumer_price": "pc",
    "producer_price": "pp",
    "quantity": "q",
    "quantity_demanded": "qd",
    "quantity_supplied": "qs",
    "shortage": "shortage",
    "excess_supply": "excess",
}
#: Money series (x k in the answer, per price interval in the reference's Row).
MONEY = {
    "consumer_surplus_change": "dcs",
    "producer_surplus_change": "dps",
    "government_revenue": "g",
    "deadweight_loss": "dwl",
    "misallocation_loss": "mis",
}
#: MODEL.md 17: the market rent M_t is the marginal value (and, off a whole-market rule, the
#: marginal cost) of a ceiling's groups; compared where the reference computes them.
MARGINAL = ("marginal_value", "marginal_cost")
#: MODEL.md 16 and 18: homes per path under `stock` (converted homes only with conversion > 0).
HOMES = ("vacant_homes", "converted_homes")
#: MODEL.md 19: the per-path series in `vs_free_path` and the summary's `vs_free_path_totals`.
VS_FREE_PATH = ("renters", "extra_rent")
VS_FREE_PATH_TOTALS = (
    "renters",
    "renters_discounted",
    "renters_after_end",
    "extra_rent",
    "extra_rent_after_end",
)
#: MODEL.md 20: the figures of a summary's `other_form`.
OTHER_FORM = ("discounted_deadweight_loss", "final_consumer_price", "peak_shortage")


def _near(value, expected, rel, absolute, where):
    assert value == pytest.approx(expected, rel=rel, abs=absolute), where


def assert_supply_elasticity(request, reported) -> None:
    """The reported supply elasticity against the reference (MODEL.md sections 2, 13, 16, 20).
    Under the stock a bound of the supply curve makes a kink, and where the free path sits on
    it (to rounding: a market with no shock and depreciation 0 stays exactly there) the
    elasticity is one-sided: 0 on the bound, that of the ramp off it."""
    expected = reference.supply_elasticities(request)
    kinks = set()
    if reference.is_stock(request):
        free = reference._run(request, reference.FREE, reference.price_index(request))
        for t in range(1, len(free)):
            c = reference.StockPeriod.at(request, t, free[t - 1].homes_standing)
            for bound in (c.floor(), c.ceiling()):
                if bound is not None and abs(free[t].q - bound) <= 1e-9 * free[t].q:
                    kinks.add(t)
    for t, (a, b) in enumerate(zip(reported, expected, strict=True)):
        if t not in kinks:
            _near(a, b, 1e-7, 1e-9, ("supply_elasticity", t))


def assert_reduced_form(request, reported) -> None:
    """MODEL.md sections 7 and 20: every declared shifter, short run at the impact elasticity."""
    expected = reference.reduced_form(request)
    assert set(reported) == set(expected)
    for name, rows in expected.items():
        for run, values in rows.items():
            for key, value in values.items():
                _near(reported[name][run][key], value, 1e-12, 1e-14, (name, run, key))


def assert_other_form(request, body) -> None:
    """MODEL.md section 20: each summary's `other_form` is the same request in the other form."""
    expected = reference.other_form(request)
    p0, q0, money = scales(request)
    for s in body["summary"]:
        want, got = expected[s["name"]], s["other_form"]
        assert (got is None) == (want is None), (s["name"], got, want)
        if want is None:
            continue
        assert got["form"] == want["form"]
        n = request["horizon"] + 1
        _near(
            got["discounted_deadweight_loss"],
            want["discounted_deadweight_loss"],
            1e-7,
            1e-9 * money * n,
            s["name"],
        )
        _near(got["final_consumer_price"], want["final_consumer_price"], 1e-8, 1e-9 * p0, s["name"])
        _near(got["peak_shortage"], want["peak_shortage"], 1e-8, 1e-9 * q0, s["name"])


def compare(request, other_form: bool = True) -> bool:
    """simulate's answer against the reference, every series and summary figure; False where
    both refuse the request. `other_form=False` skips the other-form figures (they solve the
    request a second time in the reference)."""
    try:
        body = simulate(request)
    except ProblemError as error:
        assert error.status == 422
        assert reference.answers(request) is None, error.problem
        return False
    expected = reference.paths(request)
    p0, q0, money = scales(request)
    k = request["market"].get("payments_per_period", 1)
    index = reference.price_index(request)
    rates = request["market"].get("inflation", 0.0)
    # "With inflation": the request gives some rate other than 0 (perhaps only past the horizon).
    inflated = any(r != 0.0 for r in (rates if isinstance(rates, list) else [rates]))
    stock = reference.is_stock(request)
    converting = stock and reference.conversion(request) > 0.0
    assert ("price_index" in body) == inflated
    if inflated:
        assert body["price_index"] == pytest.approx(index, rel=1e-15)
    assert_supply_elasticity(request, body["supply_elasticity"])
    assert_reduced_form(request, body["reduced_form"])
    policies = {p["name"]: p for p in request["policies"]}
    for p, s in zip(body["paths"], body["summary"], strict=True):
        rows = expected[p["name"]]
        split = rows[0].covered_price is not None
        assert set(NOMINAL) <= set(p) if inflated else not set(NOMINAL) & set(p)
        assert set(COVERAGE) <= set(p) if split else not set(COVERAGE) & set(p)
        assert set(STOCK) <= set(p) if stock else not set(STOCK) & set(p)
        assert ("vacant_homes" in p) == stock and ("vs_free_path" in p) == stock
        assert ("converted_homes" in p) == converting
        for t, row in enumerate(rows):
            where = (p["name"], t)
            if p["binding"][t] != row.binding:
                _near(p["consumer_price"][t], row.pc, 1e-8, 0.0, where)
            for name, attr in FIELDS.items():
                unit = p0 if "price" in name else q0
                _near(p[name][t], getattr(row, attr), 1e-8, 1e-9 * unit, (where, name))
            for name, attr in MONEY.items():
                _near(p[name][t], k * getattr(row, attr), 1e-7, 1e-9 * money, (where, name))
            if inflated:
                _near(
                    p["nominal_consumer_price"][t], row.nominal_consumer_price, 1e-8, 0.0, (where, "nominal")
                )
                _near(
                    p["nominal_producer_price"][t], row.nominal_producer_price, 1e-8, 0.0, (where, "nominal")
                )
            for name in COVERAGE if split else ():
                unit = p0 if "price" in name else q0
                _near(p[name][t], getattr(row, name), 1e-8, 1e-9 * unit, (where, name))
            for name in MARGINAL:
                if getattr(row, name) is not None:
                    _near(p[name][t], getattr(row, name), 1e-8, 1e-9 * p0, (where, name))
            for name in STOCK if stock else ():
                unit = q0 if "homes" in name else p0
                _near(p[name][t], getattr(row, name), 1e-7, 1e-8 * unit, (where, name))
            for name in HOMES if stock else ():
                if name in p:
                    _near(p[name][t], getattr(row, name), 1e-7, 1e-8 * q0, (where, name))
            for name in VS_FREE_PATH if stock else ():
                _near(p["vs_free_path"][name][t], k * getattr(row, name), 1e-7, 1e-9 * money, (where, name))
            if row.distribution is None:
                assert p["distribution"] is None, where
                continue
            for group in GROUPS:
                _near(
                    p["distribution"][group][t], row.distribution[group], 1e-7, 1e-9 * money, (where, group)
                )
        extra = reference.summary(rows, request, policies[p["name"]])
        n = len(rows)
        if extra["distribution_totals"] is None:
            assert s["distribution_totals"] is None
        else:
            for group in GROUPS:
                value = extra["distribution_totals"][group]
                _near(s["distribution_totals"][group], value, 1e-7, 1e-9 * money * n, (p["name"], group))
        if stock:
            for name in ("final_homes_below_free_path", "peak_homes_below_free_path", "final_vacant_homes"):
                _near(s[name], extra[name], 1e-7, 1e-8 * q0, (p["name"], name))
            for name in VS_FREE_PATH_TOTALS:
                value = extra["vs_free_path_totals"][name]
                _near(s["vs_free_path_totals"][name], value, 1e-7, 1e-9 * money * n, (p["name"], name))
            assert ("total_converted_homes" in s) == converting
            if converting:
                _near(
                    s["total_converted_homes"], extra["total_converted_homes"], 1e-7, 1e-8 * q0 * n, p["name"]
                )
        else:
            absent = ("final_homes_below_free_path", "peak_homes_below_free_path", "vs_free_path_totals")
            assert not set(absent) & set(s), p["name"]
        discounted = sum(k * r.dwl * reference.discount_factor(request, t) for t, r in enumerate(rows))
        _near(p["discounted_deadweight_loss"][-1], discounted, 1e-7, 1e-9 * money, p["name"])
        assert "other_form" in s
    if other_form:
        assert_other_form(request, body)
    return True


def every_demo(uses=lambda request: True) -> int:
    """compare() on every demo request of /v1/paths that `uses` picks; how many were compared."""
    from service.examples import examples

    compared = 0
    for entry in examples().values():
        if entry.get("endpoint", "/v1/paths") == "/v1/paths" and uses(entry["request"]):
            assert compare(entry["request"])
            compared += 1
    return compared
