"""Facts about the scalar reference itself (tests/reference.py), MODEL.md sections 16-20: homes
standing and let, build limits, a ceiling's controlled and other homes, exempt new homes,
vacancy decontrol, conversion, renters against the free path, households drawn in, the impact
elasticity and the other curve form.

Nothing here calls the engine (tests/engine/test_buildings.py does): these check the reference
against exact identities and published results, so that it can judge the engine. The source
of each check is named beside it; "derived" means it follows from the definitions in MODEL.md
by algebra (worked out here, not taken from a publication).
"""

from __future__ import annotations

import copy
import math

import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from scipy.integrate import quad
from scipy.optimize import brentq

from . import reference
from .engine.additions import FORMS
from .strategies import building_requests
from .test_reference_model import assert_groups_sum, assert_same_rows, scenario

STOCK = {"schedule": "stock", "rate": 0.3, "depreciation": 0.01}


def stock(**extra):
    return dict(STOCK, **extra)


def tol(request):
    """Scales of price, quantity and money (per price interval) of a request."""
    m = request["market"]
    return m["price"], m["quantity"], m["price"] * m["quantity"]


def ceilings(request):
    return [p for p in request["policies"] if p["kind"] == "price_ceiling"]


# --- Section 16: homes standing and let, the build limit ----------------------------------------


@pytest.mark.parametrize("form", FORMS)
def test_build_limit_holds_and_where_it_binds_rent_is_inverse_demand(form):
    """MODEL.md section 16 (derived from the bounded supply): with build_limit b the free path's
    homes never grow by more than the share b a period, and where the limit binds the rent is
    Qd_t^-1((1+b) K_(t-1)); every other path keeps the same bound."""
    b = 0.02
    request = scenario(
        [
            {"name": "subsidy", "kind": "unit_subsidy", "amount": 80.0},
            {"name": "cap", "kind": "price_ceiling", "growth": 0.04, "coverage": 0.5, "start": 2},
        ],
        form,
        horizon=10,
        change=0.25,
        adjustment={"schedule": "stock", "rate": 0.5, "build_limit": b},
    )
    out = reference.paths(request)
    free = out["free"]
    limited = 0
    for t in range(1, 11):
        hi = (1 + b) * free[t - 1].homes_standing
        assert free[t].q <= hi
        if free[t].q == hi:
            limited += 1
            demand = reference.Period.of(request, t)
            assert free[t].pc == pytest.approx(demand.pd(hi), rel=1e-11), t
            assert reference.StockPeriod.at(request, t, free[t - 1].q).unfloored(free[t].pc) > hi
    assert limited >= 3
    for rows in out.values():
        for t in range(1, 11):
            assert rows[t].homes_standing <= (1 + b) * rows[t - 1].homes_standing * (1 + 1e-14)
    # Without the limit the same market grows faster than b in its first period.
    unlimited = reference.paths(dict(request, adjustment={"schedule": "stock", "rate": 0.5}))["free"]
    assert unlimited[1].q > (1 + b) * unlimited[0].q


@pytest.mark.parametrize("form", FORMS)
def test_floors_and_quantity_caps_leave_homes_empty_and_lose_them_slowly(form):
    """MODEL.md section 16: under a floor Q_t = Qd_t(f) and under a quantity cap Q_t = Qbar;
    homes standing K_t = max(Q_t, (1-delta) K_(t-1)) with depreciation (homes offered but not
    let stand empty, vacant_homes = K_t - Q_t, and are offered again the period after: the next
    supply curve starts from K_t), K_t = Q_t without it. Homes never built are never standing."""
    delta = 0.01
    policies = [
        {"name": "floor", "kind": "price_floor", "level": 1100.0},
        {"name": "permits", "kind": "quantity_cap", "level": 9500.0},
    ]
    request = scenario(policies, form, horizon=10, shocks=[], adjustment=stock(depreciation=delta))
    out = reference.paths(request)
    for name in ("floor", "permits"):
        rows = out[name]
        empty = 0
        for t in range(1, 11):
            r, before = rows[t], rows[t - 1]
            c = reference.StockPeriod.at(request, t, before.homes_standing)
            assert r.binding
            assert r.homes_standing == max(r.q, (1 - delta) * before.homes_standing)
            assert r.vacant_homes == r.homes_standing - r.q >= 0.0
            assert r.qs == pytest.approx(c.qs(r.pp), rel=1e-14)  # offered from K_(t-1)
            empty += r.vacant_homes > 0
            assert r.q <= r.homes_standing <= before.homes_standing
        assert 3 <= empty < 10  # empty homes for a while, lost at delta a year, then none
        assert rows[-1].vacant_homes == 0.0
        assert rows[1].homes_standing == (1 - delta) * 10000.0
    assert all(r.vacant_homes == 0.0 for r in out["free"])
    plain = reference.paths(
        scenario(policies, form, horizon=10, shocks=[], adjustment={"schedule": "stock", "rate": 0.3})
    )
    for rows in plain.values():
        assert all(r.homes_standing == r.q and r.vacant_homes == 0.0 for r in rows)


@given(building_requests())
def test_standing_homes_keep_both_bounds_on_random_markets(request):
    """MODEL.md sections 16 and 18: no path's standing homes fall by more than the share delta
    in a period apart from converted homes, K_t >= (1-delta) (K_(t-1) - converted_t), nor grow
    by more than the share b; vacant homes are never negative and 0 on the free path."""
    out = reference.answers(request)
    assume(out is not None)
    adj = request["adjustment"]
    delta, b = adj.get("depreciation"), adj.get("build_limit")
    for name, rows in out.items():
        for t in range(1, len(rows)):
            k, before, r = rows[t].homes_standing, rows[t - 1].homes_standing, rows[t]
            if delta is not None:
                assert k >= (1 - delta) * (before - r.converted_homes) * (1 - 1e-12), (name, t)
            if b is not None:
                assert k <= (1 + b) * before * (1 + 1e-12), (name, t)
            assert r.vacant_homes >= 0.0 and r.converted_homes >= 0.0
            if name == "free":
                assert r.vacant_homes == 0.0 and r.converted_homes == 0.0


# --- Section 17: the controlled group and the other homes ---------------------------------------


#: Incomes up 10 % from period 2 and then 3 % a year: rents keep rising, so caps bind.
RISING = [
    {"shifter": "income", "profile": "step", "change": 0.1, "start": 2},
    {"shifter": "income", "profile": "growth", "rate": 0.03},
]


def group_request(form="linear", new_homes="covered", tau=None, s=0.4, adjustment=None, horizon=10, **kw):
    cap = {"name": "cap", "kind": "price_ceiling", "growth": 0.0, "coverage": s, "start": 2, "end": 7}
    freeze = {"name": "freeze", "kind": "price_ceiling", "level": "base", "coverage": s, "start": 2, "end": 7}
    for p in (cap, freeze):
        p["new_homes"] = new_homes
    if tau is not None:
        cap["vacancy_decontrol"] = tau
    return scenario(
        [cap, freeze],
        form,
        horizon=horizon,
        shocks=copy.deepcopy(RISING),
        adjustment=adjustment or stock(build_limit=0.03),
        **kw,
    )


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize(
    ("new_homes", "tau"), [("covered", None), ("exempt", None), ("covered", 0.2), ("exempt", 0.5)]
)
def test_groups_clear_the_market_and_report_as_section_17_says(form, new_homes, tau):
    """MODEL.md section 17: the standing homes split s K, (1-s) K in the rule's first period;
    Q_t = Kc_t + Ku_t = Qd_t(M_t); consumer and producer price the quantity-weighted mean rent;
    quantity_demanded Qd_t(r_t) under a binding rule without decontrol, else Q_t; shortage =
    quantity_demanded - Q_t; marginal value and cost M_t; a growth cap grows from the controlled
    rent Rc_(t-1); with decontrol tau, Rc_t = (1-tau) r_t + tau M_t; exempt groups never grow;
    outside the rule's periods the path splits by share. Rc < P^ <= M (Fallis and Smith 1984,
    American Economic Review 74(1))."""
    s = 0.4
    request = group_request(form, new_homes, tau)
    out = reference.paths(request)
    _, q0, _ = tol(request)
    assert [r.binding for r in out["freeze"]] == [False, False] + [True] * 6 + [False] * 3
    assert out["cap"][2].binding and sum(r.binding for r in out["cap"]) >= 3
    for name in ("cap", "freeze"):
        rows = out[name]
        for t, r in enumerate(rows):
            if not 2 <= t <= 7:
                assert not r.binding
                assert r.covered_price == r.uncovered_price == r.pc
                assert (r.covered_quantity, r.uncovered_quantity) == (s * r.q, (1 - s) * r.q)
                continue
            c = reference.Period.of(request, t)
            m, rc = r.uncovered_price, r.covered_price
            assert r.q == r.covered_quantity + r.uncovered_quantity
            assert r.q == pytest.approx(c.qd(m), rel=1e-11)
            assert (
                r.pc
                == r.pp
                == pytest.approx((rc * r.covered_quantity + m * r.uncovered_quantity) / r.q, rel=1e-15)
            )
            assert r.qs == r.q and r.excess == 0.0
            assert r.marginal_value == r.marginal_cost == m
            if not r.binding:  # the groups exist, at the comparator's rent
                assert rc == m == r.comparator_price and r.shortage == 0.0 and r.dwl == 0.0
                continue
            assert rc < r.comparator_price <= m * (1 + 1e-13)
            previous = rows[t - 1].covered_price
            rule = previous if name == "cap" else 1000.0
            if name == "cap" and tau is not None:
                assert rc == pytest.approx((1 - tau) * rule + tau * m, rel=1e-15)
                assert r.qd == r.q and r.shortage == 0.0
            else:
                assert rc == rule
                assert r.qd == c.qd(rule) and r.shortage == r.qd - r.q > 0
            if new_homes == "exempt" and t > 2:
                assert r.covered_quantity <= rows[t - 1].covered_quantity
        # The split in the rule's first period: the controlled group starts from s K_1.
        k1 = rows[1].homes_standing
        c2 = reference.StockPeriod.at(request, 2, k1)
        lam, ckc = c2.lam, s * k1
        desired = (1 - lam) * ckc + lam * s * c2.desired(rows[2].covered_price)
        expected = max(desired, 0.99 * ckc)
        expected = min(expected, ckc if new_homes == "exempt" else 1.03 * ckc)
        assert rows[2].covered_quantity == pytest.approx(expected, rel=1e-14, abs=1e-12 * q0)


@settings(max_examples=20)  # each example runs the scalar reference (quad, brentq): about a second
@given(building_requests())
def test_fallis_smith_and_the_group_identities_on_random_markets(request):
    """Fallis and Smith (1984), American Economic Review 74(1): controlled rents raise the
    market rent of the other homes, M_t >= P^_t (the same period without the rule on the same
    stocks), and Rc_t < P^_t where the rule binds; derived (MODEL.md 15, 17, 20): tenants'
    groups sum to dCS, owners' to dPS, all to -DWL >= 0."""
    out = reference.answers(request)
    assume(out is not None)
    assert_groups_sum(request, out)
    p0 = request["market"]["price"]
    for rows in out.values():
        for r in rows:
            # Rows with two groups reported (a whole-market rule with conversion has no split).
            if r.comparator_price is not None and r.binding and r.uncovered_price is not None:
                assert r.uncovered_price >= r.comparator_price * (1 - 1e-12) - 1e-12 * p0
                assert r.covered_price < r.comparator_price


@given(building_requests(), st.data())
def test_exempt_new_homes_never_give_fewer_homes_in_the_rules_first_period(request, data):
    """Derived (MODEL.md section 17): from the same split s K, (1-s) K, exemption leaves more
    of the building at the market rent, so in the rule's first period exempt new homes never
    give fewer homes than covered new homes under the same rule (along a whole path no such
    claim holds)."""
    policy = dict(data.draw(st.sampled_from(ceilings(request))))
    start = policy.get("start", 1)
    assume(start <= request["horizon"])
    results = {}
    for new_homes in ("covered", "exempt"):
        one = dict(request, policies=[dict(policy, name="rule", new_homes=new_homes)])
        out = reference.answers(one)
        assume(out is not None)
        results[new_homes] = out["rule"][start]
    q0 = request["market"]["quantity"]
    assert results["exempt"].q >= results["covered"].q * (1 - 1e-12) - 1e-12 * q0


def freed(request):
    """The request's free path."""
    return reference._run(request, reference.FREE, reference.price_index(request))


def assert_is_free_path(request, rows, rel=1e-11):
    q0 = request["market"]["quantity"]
    for t, (r, f) in enumerate(zip(rows, freed(request), strict=True)):
        assert not r.binding, t
        assert r.pc == pytest.approx(f.pc, rel=rel), t
        assert r.q == pytest.approx(f.q, rel=rel, abs=rel * q0), t
        assert r.homes_standing == pytest.approx(f.homes_standing, rel=rel, abs=rel * q0), t
        assert r.dwl == 0.0 and r.shortage == 0.0


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("new_homes", ["covered", "exempt"])
def test_full_vacancy_decontrol_changes_nothing(form, new_homes):
    """Derived (MODEL.md section 17): with tau = 1 every tenancy pays the market rent, so a rule
    with covered new homes never changes anything (bounds included: the groups stay the shares
    s and 1-s of the pooled stock), and one with exempt new homes nothing while no group's
    depreciation bound binds (here: no depreciation and no build limit)."""
    adjustment = stock(build_limit=0.02) if new_homes == "covered" else {"schedule": "stock", "rate": 0.3}
    request = group_request(form, new_homes, tau=1.0, adjustment=adjustment)
    request["shocks"].append({"shifter": "cost", "profile": "step", "change": -0.3, "start": 5})
    rows = reference.paths(request)["cap"]
    assert_is_free_path(request, rows)
    assert rows[3].covered_quantity != rows[3].uncovered_quantity  # the groups exist
    if new_homes == "exempt":
        assert rows[7].covered_quantity < 0.4 * rows[7].q  # exemption made the groups unequal


@given(building_requests())
def test_full_vacancy_decontrol_changes_nothing_on_random_markets(request):
    """Derived (MODEL.md section 17), as above on random markets: covered new homes, any bounds."""
    caps = [dict(p, vacancy_decontrol=1.0, new_homes="covered") for p in ceilings(request) if "growth" in p]
    request = dict(request, policies=caps)
    out = reference.answers(request)
    assume(out is not None)
    for rows in out.values():
        assert_is_free_path(request, rows, rel=1e-9)


# --- Section 18: conversion ---------------------------------------------------------------------


@given(building_requests())
def test_conversion_zero_changes_nothing(request):
    """MODEL.md section 18: kappa = 0 is section 17 bit for bit."""
    with_zero = copy.deepcopy(request)
    with_zero["adjustment"]["conversion"] = 0.0
    without = copy.deepcopy(request)
    without["adjustment"].pop("conversion", None)
    a, b = reference.answers(with_zero), reference.answers(without)
    assume(a is not None and b is not None)
    for name in a:
        assert_same_rows(a[name], b[name])
        assert all(r.converted_homes == 0.0 for r in a[name])


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("s", [1.0, 0.4])
def test_conversion_follows_last_periods_gap_to_the_free_rent(form, s):
    """MODEL.md section 18 (Sims 2007, Journal of Urban Economics 61(1); Diamond, McQuade and
    Qian 2019, American Economic Review 109(9), for conversion as the main way control shrinks
    the rental stock): v_t = min(1, kappa max(0, ln(P^F_(t-1) / Rc_(t-1)))) of the controlled
    group leaves from the rule's second period, 0 in its first and after a period in which it
    did not bind; converted homes leave the standing stock; kappa -> 0 tends to no conversion."""
    kappa = 0.4
    request = group_request(form, s=s, adjustment=stock(conversion=kappa))
    out = reference.paths(request)
    free = out["free"]
    converted = 0
    for name in ("cap", "freeze"):
        rows = out[name]
        for t, r in enumerate(rows):
            if not 3 <= t <= 7:
                assert r.converted_homes == 0.0, (name, t)
                continue
            before = rows[t - 1]
            rc = before.pc if s == 1.0 else before.covered_price
            kc = before.q if s == 1.0 else before.covered_quantity
            v = min(1.0, kappa * max(0.0, math.log(free[t - 1].pc / rc))) if before.binding else 0.0
            assert r.converted_homes == pytest.approx(v * kc, rel=1e-14), (name, t)
            converted += r.converted_homes > 0
            # Converted homes leave the standing stock: the depreciation bound counts from what is left.
            assert r.homes_standing >= 0.99 * (before.homes_standing - r.converted_homes) * (1 - 1e-14)
    assert converted >= 6
    none = reference.paths(group_request(form, s=s, adjustment=stock()))
    tiny = reference.paths(group_request(form, s=s, adjustment=stock(conversion=1e-9)))
    for name in ("cap", "freeze"):
        for a, b in zip(tiny[name], none[name], strict=True):
            assert a.q == pytest.approx(b.q, rel=1e-7) and a.pc == pytest.approx(b.pc, rel=1e-7)
        assert out[name][7].homes_standing < none[name][7].homes_standing


# --- Two methods that must agree ------------------------------------------------------------------


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("s", [0.3, 0.8])
def test_section_17_without_a_stock_is_section_14(form, s):
    """Derived (MODEL.md sections 14 and 17): without a stock Sc = s Qs_t and Su = (1-s) Qs_t,
    and the one-root clearing with welfare by price integrals gives section 14's uncovered rent
    and its welfare by quantity integrals."""
    policies = [
        {"name": "cap", "kind": "price_ceiling", "growth": 0.01, "coverage": s, "start": 2},
        {"name": "freeze", "kind": "price_ceiling", "level": "base", "coverage": s, "end": 5},
    ]
    request = scenario(policies, form, shocks=RISING)
    index = reference.price_index(request)
    for policy in policies:
        grouped = reference._run(request, policy, index, grouped=True)
        plain = reference._run(request, policy, index, grouped=False)
        assert sum(r.binding for r in plain) >= 4
        assert_same_rows(grouped, plain, rel=1e-10, rel_money=1e-7)
        for a, b in zip(grouped, plain, strict=True):
            for group in reference.GROUPS:
                assert a.distribution[group] == pytest.approx(b.distribution[group], rel=1e-7, abs=1e-3)


@pytest.mark.parametrize("form", FORMS)
def test_section_17_on_a_whole_market_rule_is_sections_5_and_13(form):
    """MODEL.md section 17: s = 1 with new homes covered, no decontrol and no conversion is
    sections 13 and 5 (bit for bit in the engine; here the two methods agree to rounding)."""
    policies = [
        {"name": "cap", "kind": "price_ceiling", "growth": 0.01, "start": 2, "end": 6},
        {"name": "freeze", "kind": "price_ceiling", "level": "base"},
    ]
    request = scenario(policies, form, horizon=10, shocks=RISING, adjustment=stock(build_limit=0.02))
    index = reference.price_index(request)
    for policy in policies:
        grouped = reference._run(request, policy, index, grouped=True)
        plain = reference._run(request, policy, index)
        assert sum(r.binding for r in plain) >= 5
        assert_same_rows(grouped, plain, rel=1e-10, rel_money=1e-7)


# --- Section 19: renters against the free path -----------------------------------------------


@pytest.mark.parametrize("form", FORMS)
def test_a_lifted_freeze_leaves_renters_worse_off_while_homes_stay_below_the_free_path(form):
    """Derived (MODEL.md section 19): a freeze lifted after period L gives renters_t < 0 for
    t > L while homes are below the free path (fewer homes, higher rents than on it); during
    the freeze renters pay less (extra_rent < 0); zero on the free path and before the rule
    starts; the summary's after-end totals are the sums over t > L, not discounted."""
    freeze = {"name": "freeze", "kind": "price_ceiling", "level": "base", "start": 2, "end": 5}
    request = scenario([freeze], form, horizon=14, k=12, adjustment=stock())
    request["welfare"] = {"discount_rate": 0.03}
    out = reference.paths(request)
    rows = out["freeze"]
    after = 0
    for t, r in enumerate(rows):
        if t < 2:
            assert r.renters == 0.0 and r.extra_rent == 0.0
        elif t <= 5:
            assert r.binding and r.extra_rent < 0
        elif r.homes_below_free_path > 1e-9 * 10000.0:
            assert r.renters < 0 and r.extra_rent > 0, t
            after += 1
    assert after >= 8
    assert all(r.renters == 0.0 and r.extra_rent == 0.0 for r in out["free"])
    totals = reference.summary(rows, request, freeze)["vs_free_path_totals"]
    assert totals["renters_after_end"] == pytest.approx(12 * sum(r.renters for r in rows[6:]), rel=1e-14)
    assert totals["extra_rent_after_end"] == pytest.approx(
        12 * sum(r.extra_rent for r in rows[6:]), rel=1e-14
    )
    assert totals["renters"] == pytest.approx(12 * sum(r.renters for r in rows), rel=1e-14)
    discounted = 12 * sum(r.renters / 1.03**t for t, r in enumerate(rows))
    assert totals["renters_discounted"] == pytest.approx(discounted, rel=1e-12)
    assert totals["renters_after_end"] < 0 < totals["extra_rent_after_end"]
    lasting = dict(freeze, end=99)
    assert (
        reference.summary(
            reference.paths(scenario([lasting], form, adjustment=stock()))["freeze"], request, lasting
        )["vs_free_path_totals"]["renters_after_end"]
        == 0.0
    )


@pytest.mark.parametrize(
    "policy",
    [
        {"name": "p", "kind": "price_ceiling", "level": "base", "end": 4},
        {"name": "p", "kind": "price_ceiling", "growth": 0.0, "coverage": 0.5, "new_homes": "exempt"},
        {"name": "p", "kind": "unit_subsidy", "amount": 60.0},
        {"name": "p", "kind": "price_floor", "level": 1150.0},
    ],
)
def test_renters_are_consumer_surplus_against_the_free_path(policy):
    """Derived (MODEL.md section 19; linear demand, whose integrals from zero are finite): both
    paths share the demand curve, so renters_t = CS_t(path) - CS_t(free path) with
    CS(Pc, Q) = int_0^Q Qd^-1 - Pc Q (quad from zero quantity)."""
    request = scenario([policy], horizon=8, adjustment=stock(build_limit=0.05))
    out = reference.paths(request)
    free = out["free"]
    for t in range(1, 9):
        demand = reference.Period.of(request, t)

        def surplus(r, demand=demand):
            return quad(demand.pd, 0.0, r.q, epsabs=0.0, epsrel=1e-12)[0] - r.pc * r.q

        r = out["p"][t]
        assert r.renters == pytest.approx(surplus(r) - surplus(free[t]), rel=1e-8, abs=1e-6), t


# --- Section 20: households drawn in, the impact elasticity, the other form -------------------


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("adjustment", [None, STOCK])
def test_a_subsidy_draws_households_in(form, adjustment):
    """MODEL.md section 20: where Q > Q^, households_drawn_in = int_Q^^Q (Qd^-1 - Pc) dq >= 0,
    the tenants' group is -(Pc - P^) min(Q, Q^), nobody is priced out; derived: tenants plus
    drawn in is the change in consumer surplus, -int_P^^Pc Qd(p) dp (quad over price)."""
    request = scenario(
        [{"name": "subsidy", "kind": "unit_subsidy", "amount": 80.0}], form, adjustment=adjustment
    )
    rows = reference.paths(request)["subsidy"]
    for t in range(1, 9):
        r = rows[t]
        c = reference.own_curves(request, rows, t)
        p_hat, q_hat = reference.free_market(c)
        d = r.distribution
        assert r.q > q_hat
        drawn = quad(lambda q, c=c, pc=r.pc: c.pd(q) - pc, q_hat, r.q, epsabs=0.0, epsrel=1e-12)[0]
        assert d["households_drawn_in"] == pytest.approx(drawn, rel=1e-9) and drawn > 0
        assert d["households_priced_out"] == 0.0
        assert d["tenants_in_uncontrolled_homes"] == pytest.approx(-(r.pc - p_hat) * q_hat, rel=1e-13)
        area = -quad(c.qd, p_hat, r.pc, epsabs=0.0, epsrel=1e-12)[0]
        tenants = d["tenants_in_uncontrolled_homes"] + d["households_drawn_in"]
        assert tenants == pytest.approx(area, rel=1e-8)
    assert_groups_sum(request, {"subsidy": rows})
    taxed = reference.paths(scenario([{"name": "tax", "kind": "unit_tax", "amount": 80.0}], form))["tax"]
    assert all(r.distribution["households_drawn_in"] == 0.0 for r in taxed)


@pytest.mark.parametrize(
    ("adjustment", "impact"),
    [
        ({"schedule": "stock", "rate": 0.4}, 0.4 * 1.5),
        ({"schedule": "stock", "half_life": 2.0}, (1 - 0.5**0.5) * 1.5),
        ({"schedule": "stock"}, 0.3),
        ({"schedule": "geometric", "rate": 0.4}, 0.3),
    ],
)
def test_impact_elasticity_under_the_stock_schedule(adjustment, impact):
    """MODEL.md section 20 (Nerlove 1958: short-run = lambda x long-run elasticity): under
    `stock` with an explicit rate or half-life the impact elasticity is lambda eps_LR, used by
    period 0's supply_elasticity and the reduced form's short-run rows (Muth 1964: price
    eta_i/(eps - eta), quantity eps eta_i/(eps - eta) for a demand shifter; -eps_j/(eps - eta)
    and -eta eps_j/(eps - eta) for a supply shifter); the Nerlove default keeps eps_SR."""
    request = scenario([], adjustment=adjustment, sr=0.3, lr=1.5, eta=-0.5)
    assert reference.impact_elasticity(request) == pytest.approx(impact, rel=1e-15)
    assert reference.supply_elasticities(request)[0] == pytest.approx(impact, rel=1e-15)
    form = reference.reduced_form(request)
    assert form["income"]["short_run"]["price"] == pytest.approx(1.0 / (impact + 0.5), rel=1e-14)
    assert form["income"]["short_run"]["quantity"] == pytest.approx(impact / (impact + 0.5), rel=1e-14)
    assert form["cost"]["short_run"]["price"] == pytest.approx(0.5 / (impact + 0.5), rel=1e-14)
    assert form["cost"]["short_run"]["quantity"] == pytest.approx(-0.25 / (impact + 0.5), rel=1e-14)
    assert form["income"]["long_run"]["price"] == pytest.approx(1.0 / 2.0, rel=1e-14)


def test_other_form_agrees_to_first_order_and_is_none_without_an_answer():
    """Derived (MODEL.md sections 3 and 20): both forms pass through the base point with the
    same elasticities, so for a small shock their figures differ by second-order terms only;
    where the other form has no answer (a demand fall that the linear form prices to zero),
    other_form is None for that policy."""
    policies = [
        {"name": "freeze", "kind": "price_ceiling", "level": "base"},
        {"name": "tax", "kind": "unit_tax", "amount": 20.0},
    ]
    small = scenario(policies, change=0.005, adjustment=stock())
    other = reference.other_form(small)
    own = reference.paths(small)
    for policy in policies:
        name = policy["name"]
        figures = other[name]
        assert figures["form"] == "constant_elasticity"
        assert figures["final_consumer_price"] == pytest.approx(own[name][-1].pc, rel=1e-4)
        own_dwl = sum(r.dwl for r in own[name])
        assert figures["discounted_deadweight_loss"] == pytest.approx(own_dwl, rel=0.05)
        assert figures["peak_shortage"] == pytest.approx(
            max(r.shortage for r in own[name]), rel=0.05, abs=1e-6
        )
    crash = scenario(policies, form="constant_elasticity", change=-0.8, eta=-0.3)
    assert reference.answers(crash) is not None
    assert reference.other_form(crash) == {"free": None, "freeze": None, "tax": None}
    assert reference.other_form(dict(small, policies=[])) == {}
    # MODEL.md 11: random rationing with constant-elasticity demand and |eta| <= 1 is an input
    # error for a whole request with a ceiling, so a linear request's other form has no answer.
    rationed = dict(small, welfare={"rationing": "random"})
    assert reference.answers(rationed) is not None
    assert reference.other_form(rationed) == {"free": None, "freeze": None, "tax": None}


def inverse(f, q, lo, hi):
    """The price at which the nondecreasing curve f supplies q (brentq on [lo, hi])."""
    return brentq(lambda p: f(p) - q, lo, hi, xtol=1e-12, rtol=1e-15)


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize(("new_homes", "tau"), [("covered", None), ("exempt", None), ("exempt", 0.4)])
def test_deadweight_loss_of_the_groups_by_parts(form, new_homes, tau):
    """MODEL.md section 17 (derived by parts there): the loss from the groups' price integrals,
    -(sum of the groups), equals int_Q^Q^ Qd^-1 - int_Kc^Sc(P^) Sc^-1 - int_Ku^Su(P^) Su^-1, too
    few homes and homes kept at the wrong costs; here computed over quantity with the inverse
    supplies found by brentq, independently of the groups' formulas."""
    request = group_request(form, new_homes, tau, adjustment=stock(build_limit=0.04))
    rows = reference.paths(request)["cap"]
    s = 0.4
    checked = 0
    for t in range(2, 8):
        r, before = rows[t], rows[t - 1]
        if not r.binding:
            continue
        c = reference.StockPeriod.at(request, t, before.homes_standing)
        kc, ku = (
            (s * before.q, (1 - s) * before.q)
            if t == 2
            else (before.covered_quantity, before.uncovered_quantity)
        )
        rule = reference.Rule.of(request, request["policies"][1])
        sc, su = reference.group_supplies(c, rule, kc, ku, kc + ku)
        p_hat = r.comparator_price
        q_hat = c.qd(p_hat)
        assert q_hat == pytest.approx(sc(p_hat) + su(p_hat), rel=1e-12)

        def area(f, a, b):
            return quad(f, a, b, epsabs=0.0, epsrel=1e-11, limit=200)[0] if b != a else 0.0

        top = 10 * p_hat
        demand = area(c.pd, r.q, q_hat)
        controlled = area(lambda q, f=sc, top=top: inverse(f, q, 0.0, top), r.covered_quantity, sc(p_hat))
        other = area(lambda q, f=su, top=top: inverse(f, q, 0.0, top), r.uncovered_quantity, su(p_hat))
        dwl = demand - controlled - other
        assert r.dwl == pytest.approx(dwl, rel=1e-7, abs=1e-9 * 1000.0 * 10000.0), t
        # > 0 with covered new homes; 0 where the exempt group keeps all its homes at r as at P^.
        assert r.dwl > 0.0 if new_homes == "covered" else r.dwl >= 0.0
        checked += 1
    assert checked >= 4
