"""The additions of MODEL.md sections 12-15 through the whole request path (schemas -> pack ->
kernel -> response), judged by the scalar reference (tests/reference.py: brentq roots, quad
integrals, a Python loop over periods that carries each path's stock).

tests/engine/test_kernel_additions.py drives the kernel directly with the new inputs set by
hand; here the same numbers must come out of `service.simulate` and `service.simulate_many`
from request bodies that use the new fields, and every new response field (price_index,
nominal prices, covered and uncovered series, homes below the free path, distribution and its
totals, the stock's supply elasticity) must agree with the reference.
"""

from __future__ import annotations

import copy

import pytest
from hypothesis import given
from hypothesis import strategies as st

from service import ProblemError, simulate, simulate_many
from service.schemas.compiled import compile_loader
from service.schemas.paths import PathsRequestSchema

from .. import reference
from ..strategies import extended_requests
from .additions import COVERAGE, GROUPS, NOMINAL, STOCK, path, scales

FIELDS = {
    "consumer_price": "pc",
    "producer_price": "pp",
    "quantity": "q",
    "quantity_demanded": "qd",
    "quantity_supplied": "qs",
    "shortage": "shortage",
    "excess_supply": "excess",
}
MONEY = {
    "consumer_surplus_change": "dcs",
    "producer_surplus_change": "dps",
    "government_revenue": "g",
    "deadweight_loss": "dwl",
    "misallocation_loss": "mis",
}


def reference_infeasible(request) -> bool:
    """True where the reference finds Q, Pc or Pp <= 0 on some path, or a free market of a path's
    own curves (its own stock) at or below zero, or raises: the cases the engine refuses."""
    try:
        out = reference.paths(request)
    except (ValueError, ZeroDivisionError, OverflowError):
        return True
    q0 = request["market"]["quantity"]
    stock = reference.is_stock(request)
    for rows in out.values():
        for t, r in enumerate(rows):
            if r.q <= 1e-9 * q0 or r.pc <= 0 or r.pp <= 0:
                return True
            if t:
                c = (
                    reference.StockPeriod.at(request, t, rows[t - 1].q)
                    if stock
                    else reference.Period.of(request, t)
                )
                if min(reference.free_market(c)) <= 0:
                    return True
    return False


def assert_supply_elasticity(request, reported) -> None:
    """The reported supply elasticity against the reference (MODEL.md sections 2 and 13). Under
    the stock with a depreciation floor the supply curve has a kink at the floor, and where the
    free path sits on the kink (to rounding: a market with no shock and depreciation 0 stays
    exactly there) the elasticity is one-sided: 0 below it, that of the upper branch above."""
    expected = reference.supply_elasticities(request)
    kinks = set()
    if reference.is_stock(request) and request["adjustment"].get("depreciation") is not None:
        free = reference._run(request, {"name": "free path", "kind": "none"}, reference.price_index(request))
        for t in range(1, len(free)):
            floor = reference.StockPeriod.at(request, t, free[t - 1].q).floor()
            if abs(free[t].q - floor) <= 1e-9 * free[t].q:
                kinks.add(t)
    for t, (a, b) in enumerate(zip(reported, expected, strict=True)):
        if t not in kinks:
            assert a == pytest.approx(b, rel=1e-7, abs=1e-9), t


def compare(request) -> bool:
    """simulate's answer against the reference, every series; False where both refuse it."""
    try:
        body = simulate(request)
    except ProblemError as error:
        assert error.status == 422
        assert reference_infeasible(request), error.problem
        return False
    expected = reference.paths(request)
    p0, q0, money = scales(request)
    k = request["market"].get("payments_per_period", 1)
    index = reference.price_index(request)
    rates = request["market"].get("inflation", 0.0)
    # "With inflation": the request gives some rate other than 0 (perhaps only past the horizon).
    inflated = any(r != 0.0 for r in (rates if isinstance(rates, list) else [rates]))
    stock = reference.is_stock(request)
    assert ("price_index" in body) == inflated
    if inflated:
        assert body["price_index"] == pytest.approx(index, rel=1e-15)
    assert_supply_elasticity(request, body["supply_elasticity"])
    for p, s in zip(body["paths"], body["summary"], strict=True):
        rows = expected[p["name"]]
        partial = rows[0].covered_price is not None
        assert set(NOMINAL) <= set(p) if inflated else not set(NOMINAL) & set(p)
        assert set(COVERAGE) <= set(p) if partial else not set(COVERAGE) & set(p)
        assert set(STOCK) <= set(p) if stock else not set(STOCK) & set(p)
        for t, row in enumerate(rows):
            where = (p["name"], t)
            if p["binding"][t] != row.binding:
                # A tie (a policy value at the free-market value to rounding): both are the free
                # market there, so only the flag may differ.
                assert p["consumer_price"][t] == pytest.approx(row.pc, rel=1e-8), where
            for name, attr in FIELDS.items():
                unit = p0 if "price" in name else q0
                assert p[name][t] == pytest.approx(getattr(row, attr), rel=1e-8, abs=1e-9 * unit), (
                    where,
                    name,
                )
            for name, attr in MONEY.items():
                value = k * getattr(row, attr)
                assert p[name][t] == pytest.approx(value, rel=1e-7, abs=1e-9 * money), (where, name)
            if inflated:
                assert p["nominal_consumer_price"][t] == pytest.approx(row.nominal_consumer_price, rel=1e-8)
                assert p["nominal_producer_price"][t] == pytest.approx(row.nominal_producer_price, rel=1e-8)
            for name in COVERAGE if partial else ():
                unit = p0 if "price" in name else q0
                assert p[name][t] == pytest.approx(getattr(row, name), rel=1e-8, abs=1e-9 * unit), (
                    where,
                    name,
                )
            for name in STOCK if stock else ():
                unit = q0 if "homes" in name else p0
                assert p[name][t] == pytest.approx(getattr(row, name), rel=1e-7, abs=1e-8 * unit), (
                    where,
                    name,
                )
            for group in GROUPS:
                value = row.distribution[group]
                assert p["distribution"][group][t] == pytest.approx(value, rel=1e-7, abs=1e-9 * money), (
                    where,
                    group,
                )
        extra = reference.summary(rows)
        n = len(rows)
        for group in GROUPS:
            value = extra["distribution_totals"][group]
            assert s["distribution_totals"][group] == pytest.approx(value, rel=1e-7, abs=1e-9 * money * n)
        if stock:
            for name in ("final_homes_below_free_path", "peak_homes_below_free_path"):
                assert s[name] == pytest.approx(extra[name], rel=1e-7, abs=1e-8 * q0), name
        else:
            assert "final_homes_below_free_path" not in s and "peak_homes_below_free_path" not in s
        discounted = sum(k * r.dwl * reference.discount_factor(request, t) for t, r in enumerate(rows))
        assert p["discounted_deadweight_loss"][-1] == pytest.approx(discounted, rel=1e-7, abs=1e-9 * money)
    return True


@given(extended_requests(form="linear"))
def test_linear_form_with_the_additions_matches_the_scalar_reference(request):
    compare(request)


@given(extended_requests(form="constant_elasticity"))
def test_constant_elasticity_form_with_the_additions_matches_the_scalar_reference(request):
    compare(request)


@given(extended_requests(stock=True))
def test_the_durable_stock_matches_the_scalar_reference(request):
    compare(request)


def test_every_demo_with_the_additions_matches_the_scalar_reference():
    """The demos that use the new fields (tests/engine/test_reference.py covers the rest)."""
    from service.examples import examples

    compared = 0
    for entry in examples().values():
        request = entry["request"]
        if entry.get("endpoint", "/v1/paths") != "/v1/paths":
            continue
        uses = "inflation" in request["market"] or request.get("adjustment", {}).get("schedule") == "stock"
        uses = uses or any("coverage" in p or "indexed" in p for p in request["policies"])
        if uses:
            assert compare(request)
            compared += 1
    assert compared >= 2


@given(st.lists(extended_requests(), min_size=2, max_size=5), st.data())
def test_a_scenario_with_the_additions_gives_the_same_bits_alone_and_in_a_batch(batch, data):
    """DEVELOPERS.md, rules of the house: one scenario gives the same bits alone or inside any
    batch, also when its neighbours differ in inflation, the stock and coverage (the batch then
    keeps series some scenarios do not report) and when a request without any of them sits
    beside them."""
    plain = copy.deepcopy(data.draw(st.sampled_from(batch)))
    plain["market"].pop("inflation")
    plain.pop("adjustment", None)
    sr, lr = (
        plain["market"]["supply"]["short_run_elasticity"],
        plain["market"]["supply"]["long_run_elasticity"],
    )
    if sr != lr:
        plain["adjustment"] = {"schedule": "linear", "periods": 3}
    for p in plain["policies"]:
        p.pop("coverage", None)
        p.pop("indexed", None)
    requests = [*batch, plain]
    together = simulate_many(requests)
    for request, body in zip(requests, together, strict=True):
        try:
            alone = simulate(request)
        except ProblemError as error:
            alone = error.problem
        assert body == alone


def test_a_mixed_batch_reports_each_scenarios_additions_only():
    """openapi/API.md "Additions": price_index and nominal prices only with inflation, covered series
    only on ceilings with coverage below 1, homes below the free path only under the stock,
    even inside one batch that has all of them."""
    from .additions import scenario

    partial = [{"name": "partial", "kind": "price_ceiling", "level": "base", "coverage": 0.4}]
    bodies = simulate_many(
        [
            scenario([], inflation=0.03),
            scenario(partial),
            scenario([], adjustment={"schedule": "stock", "rate": 0.2}),
            scenario([]),
        ]
    )
    has = [
        ("price_index" in b, "covered_price" in b["paths"][-1], "homes_below_free_path" in b["paths"][0])
        for b in bodies
    ]
    assert has == [(True, False, False), (False, True, False), (False, False, True), (False, False, False)]
    assert all("covered_price" not in path(b, "free") for b in bodies)


@given(extended_requests())
def test_the_fast_loader_reads_the_additions_as_marshmallow_does(request):
    """schemas/compiled.py: the generated fast path loads every valid request with the new fields
    (inflation lists, indexed flags, coverage, the stock schedule) to the same scenario as
    marshmallow, so it can only make a request cheaper, never change its answer or its id."""
    schema = PathsRequestSchema()
    fast = compile_loader(schema)
    assert fast is not None
    assert fast(copy.deepcopy(request)) == schema.load(request)
