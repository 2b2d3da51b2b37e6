"""Facts about the scalar reference itself (tests/reference.py), MODEL.md sections 12-15.

Nothing here calls the engine (tests/engine/test_reference.py, test_additions.py and
test_buildings.py compare it with the reference through tests/engine/harness.py): these tests
check the reference against exact identities of the model, so that it can judge the engine.
Sections 16-20 have their own file, tests/test_reference_buildings.py. The source of each
check is named beside it; "derived" means it follows from the definitions in MODEL.md by
algebra (worked out here, not taken from a publication).
"""

from __future__ import annotations

import copy
import itertools

import pytest
from hypothesis import assume, given
from hypothesis import strategies as st
from scipy.integrate import quad

from . import reference
from .engine.additions import EVERY_KIND, FORMS, POLICIES_WITH_MONEY
from .strategies import extended_requests, floats, requests

CORE = ("pc", "pp", "q", "qd", "qs", "shortage", "excess")
MONEY = ("dcs", "dps", "g", "dwl", "mis")


def market(form="linear", eta=-0.5, sr=0.3, lr=1.5, k=1, p0=1000.0, q0=10000.0, inflation=None):
    m = {
        "price": p0,
        "quantity": q0,
        "payments_per_period": k,
        "form": form,
        "demand": {"price_elasticity": eta, "shifters": {"income": 1.0}},
        "supply": {"short_run_elasticity": sr, "long_run_elasticity": lr, "shifters": {"cost": -0.5}},
    }
    if inflation is not None:
        m["inflation"] = inflation
    return m


def scenario(policies, form="linear", horizon=8, change=0.12, adjustment=None, shocks=None, **kw):
    """A demand step from period 1 (rents rise, so ceilings bind), plus the free market."""
    request = {
        "market": market(form, **kw),
        "shocks": [{"shifter": "income", "profile": "step", "change": change}] if shocks is None else shocks,
        "horizon": horizon,
        "adjustment": adjustment or {"schedule": "geometric", "rate": 0.3},
        "policies": [{"name": "free", "kind": "none"}, *policies],
    }
    return request


def assert_same_rows(a, b, rel=0.0, rel_money=0.0):
    """Two lists of rows agree field by field (rel = 0: bit for bit).

    With rel > 0 a tie (a policy parameter at the free-market value to rounding) may flip the
    binding flag: both rows are then the free market, so they must agree to 1e-9 of scale."""
    assert len(a) == len(b)
    for t, (x, y) in enumerate(zip(a, b, strict=True)):
        tie = rel > 0 and x.binding != y.binding
        assert tie or x.binding == y.binding, t
        row_rel = max(rel, 1e-9) if tie else rel
        for name in CORE:
            expected = pytest.approx(getattr(y, name), rel=row_rel, abs=(1e-9 if tie else 1e-12) * abs(x.q))
            assert getattr(x, name) == expected, (t, name)
        scale = abs(x.pc * x.q) * (1e2 if tie else 1.0)
        for name in MONEY:
            assert getattr(x, name) == pytest.approx(getattr(y, name), rel=rel_money, abs=1e-11 * scale), (
                t,
                name,
            )


def own_free_market(request, rows, t):
    """P*, Q* of the free market of a path's own period-t curves (its own stock under stock)."""
    return reference.free_market(reference.own_curves(request, rows, t))


curves = reference.own_curves
#: The reference's paths, or None where the scenario is an input error (MODEL.md 4, 11).
feasible = reference.answers


# --- Section 12: inflation, nominal rules in real money ---------------------------------------


def test_price_index_compounds_the_rates_and_the_last_one_holds():
    """Section 12: I_0 = 1, I_t = prod (1 + pi_u); a list's last rate holds."""
    request = scenario([], horizon=4, inflation=[0.02, 0.05])
    index = reference.price_index(request)
    assert index == [1.0, 1.02, 1.02 * 1.05, 1.02 * 1.05 * 1.05, 1.02 * 1.05 * 1.05 * 1.05]
    rows = reference.paths(request)["free"]
    for t, r in enumerate(rows):
        assert r.price_index == index[t]
        assert r.nominal_consumer_price == r.pc * index[t]
        assert r.nominal_producer_price == r.pp * index[t]


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("variant", ["plain", "stock", "partial"])
@pytest.mark.parametrize(("g", "pi"), [(0.02, 0.03), (0.05, 0.03), (-0.01, 0.06), (0.04, -0.02)])
def test_nominal_growth_cap_is_the_real_cap_deflated(form, variant, g, pi):
    """Derived (MODEL.md section 12): a nominal cap g under inflation pi gives the real paths of
    a cap (1+g)/(1+pi) - 1 without inflation; an indexed cap g those of (1+pi+g)/(1+pi) - 1."""
    adjustment = {"schedule": "stock", "rate": 0.3, "depreciation": 0.02} if variant == "stock" else None
    extra = {"coverage": 0.6} if variant == "partial" else {}

    shocks = [
        {"shifter": "income", "profile": "step", "change": 0.12, "start": 2},
        {"shifter": "income", "profile": "growth", "rate": 0.03},
    ]

    def run(policy, inflation):
        return reference.paths(
            scenario([dict(policy, **extra)], form, adjustment=adjustment, inflation=inflation, shocks=shocks)
        )["cap"]

    for indexed, real in ((False, (1 + g) / (1 + pi) - 1), (True, (1 + pi + g) / (1 + pi) - 1)):
        cap = {"name": "cap", "kind": "price_ceiling", "growth": g, "start": 2}
        if indexed:
            cap["indexed"] = True
        nominal = run(cap, pi)
        deflated = run({"name": "cap", "kind": "price_ceiling", "growth": real, "start": 2}, None)
        assert any(r.binding for r in nominal)
        assert_same_rows(nominal, deflated, rel=1e-12, rel_money=1e-9)
        index = reference.price_index(scenario([], horizon=8, inflation=pi))
        for t, r in enumerate(nominal):
            assert r.nominal_consumer_price == pytest.approx(r.pc * index[t], rel=1e-15)


@given(requests(rationing="efficient"), floats(-0.05, 0.1), st.booleans())
def test_nominal_growth_cap_identity_on_random_markets(request, pi, indexed):
    """Derived (MODEL.md section 12), as above, on random markets, shocks and schedules."""
    caps = [p for p in request["policies"] if "growth" in p]
    base = dict(request, policies=caps)
    nominal = copy.deepcopy(base)
    nominal["market"]["inflation"] = pi
    deflated = copy.deepcopy(base)
    for p in nominal["policies"]:
        p["indexed"] = indexed
    for p in deflated["policies"]:
        p["growth"] = ((1 + pi + p["growth"]) if indexed else (1 + p["growth"])) / (1 + pi) - 1
    a, b = feasible(nominal), feasible(deflated)
    assume(a is not None and b is not None)
    for name in a:
        assert_same_rows(a[name], b[name], rel=1e-11, rel_money=1e-8)


@pytest.mark.parametrize("form", FORMS)
def test_indexed_levels_and_amounts_equal_them_without_inflation(form):
    """MODEL.md section 12 (exact identity stated there): an indexed level (and an indexed tax
    or subsidy) gives the paths of the same level without inflation, bit for bit."""
    with_inflation = reference.paths(scenario(POLICIES_WITH_MONEY, form, inflation=[0.04, 0.02, 0.07]))
    without = reference.paths(scenario(POLICIES_WITH_MONEY, form))
    for name, rows in without.items():
        assert_same_rows(with_inflation[name], rows)
    assert any(r.binding for r in without["ceiling"]) and any(r.binding for r in without["floor"])


@pytest.mark.parametrize("form", FORMS)
def test_nominal_freeze_real_rent_is_p0_over_the_index(form):
    """MODEL.md section 12 table: a freeze holds nominal P0, so its real rent is P0 / I_t while
    it binds (and its nominal rent P0)."""
    request = scenario(
        [{"name": "freeze", "kind": "price_ceiling", "level": "base", "end": 6}], form, inflation=0.03
    )
    rows = reference.paths(request)["freeze"]
    index = reference.price_index(request)
    assert [r.binding for r in rows] == [False] + [True] * 6 + [False] * 2
    for t, r in enumerate(rows):
        if r.binding:
            assert r.pc == 1000.0 / index[t]
            assert r.nominal_consumer_price == pytest.approx(1000.0, rel=1e-15)


@pytest.mark.parametrize("form", FORMS)
def test_money_levels_and_amounts_are_deflated_period_by_period(form):
    """MODEL.md section 12 table: a level L and a tax or subsidy tau written in money are
    L / I_t and tau / I_t in period t (these policies have no memory, so period t of the
    inflation path equals period t of a path without inflation at the deflated value)."""
    policies = {
        "floor": {"kind": "price_floor", "level": 1200.0},
        "ceiling": {"kind": "price_ceiling", "level": 1100.0},
        "tax": {"kind": "unit_tax", "amount": 80.0},
        "subsidy": {"kind": "unit_subsidy", "amount": 80.0},
    }
    request = scenario([dict(p, name=n) for n, p in policies.items()], form, horizon=5, inflation=0.05)
    out = reference.paths(request)
    index = reference.price_index(request)
    for name, policy in policies.items():
        field = "level" if "level" in policy else "amount"
        for t in range(1, 6):
            real = dict(policy, name=name, **{field: policy[field] / index[t]})
            plain = reference.paths(scenario([real], form, horizon=5))[name]
            assert_same_rows([out[name][t]], [plain[t]])


# --- Section 13: a durable stock ----------------------------------------------------------------


ETA, LR, LAM = -0.5, 1.5, 0.3
RHO = (1 - LAM) * abs(ETA) / (abs(ETA) + LAM * LR)


def test_free_path_gap_to_the_long_run_shrinks_by_rho():
    """Derived from the two curves; Nerlove (1958), The Dynamics of Supply, for the adjustment
    rule: linear form, no floor binding, shocks constant from period 1, the free path's gap to
    its long-run quantity shrinks by rho = (1-lambda)|eta| / (|eta| + lambda eps_LR)."""
    request = scenario([], horizon=10, adjustment={"schedule": "stock", "rate": LAM}, eta=ETA, lr=LR)
    rows = reference.paths(request)["free"]
    long_run = reference.free_market(
        reference.Period.of(dict(request, adjustment={"schedule": "linear", "periods": 0}), 1)
    )[1]
    for t in range(1, 11):
        gap, before = rows[t].q - long_run, rows[t - 1].q - long_run
        assert gap / before == pytest.approx(RHO, rel=1e-9), t
    assert rows[0].q < rows[1].q < long_run


@pytest.mark.parametrize("kind", ["freeze", "cap"])
def test_gap_to_the_free_path_after_a_ceiling_is_lifted_shrinks_by_rho(kind):
    """Derived from the two curves; Nerlove (1958) for the adjustment rule: once a ceiling ends
    (period 5 on), the homes it kept from being built return at the rate rho per period."""
    policy = {"name": "ceiling", "kind": "price_ceiling", "end": 4}
    policy.update({"level": "base"} if kind == "freeze" else {"growth": 0.01})
    request = scenario([policy], horizon=12, adjustment={"schedule": "stock", "rate": LAM}, eta=ETA, lr=LR)
    out = reference.paths(request)
    rows = out["ceiling"]
    assert all(r.binding for r in rows[1:5]) and not any(r.binding for r in rows[5:])
    for t in range(5, 13):
        gap = rows[t].homes_below_free_path
        assert gap == pytest.approx(out["free"][t].q - rows[t].q, rel=1e-15)
        assert gap / rows[t - 1].homes_below_free_path == pytest.approx(RHO, rel=1e-8), t
    assert rows[4].homes_below_free_path > 0
    assert all(r.homes_below_free_path == 0 and r.rent_above_free_path == 0 for r in out["free"])
    totals = reference.summary(rows)
    assert totals["final_homes_below_free_path"] == rows[-1].homes_below_free_path
    assert totals["peak_homes_below_free_path"] == max(r.homes_below_free_path for r in rows)


@pytest.mark.parametrize("form", FORMS)
def test_depreciation_floor_binds_exactly(form):
    """MODEL.md section 13 (derived from the supply rule): where the floor binds the stock
    shrinks by exactly the share delta, K_t = (1-delta) K_(t-1) (Glaeser and Gyourko 2005 for
    the kinked, slowly shrinking supply of durable housing)."""
    delta = 0.02
    request = scenario(
        [
            {"name": "low ceiling", "kind": "price_ceiling", "level": 500.0},
            {"name": "partial", "kind": "price_ceiling", "level": 500.0, "coverage": 0.5},
        ],
        form,
        horizon=10,
        change=-0.4,
        shocks=[{"shifter": "income", "profile": "step", "change": -0.4, "start": 3}],
        adjustment={"schedule": "stock", "rate": 0.6, "depreciation": delta},
        lr=2.0,
    )
    out = reference.paths(request)
    floored = 0
    for name in ("free", "low ceiling"):
        rows = out[name]
        for t in range(1, 11):
            c = curves(request, rows, t)
            if c.unfloored(rows[t].pp) < c.floor():
                assert rows[t].q == (1 - delta) * rows[t - 1].q, (name, t)
                floored += 1
            else:
                assert rows[t].q > (1 - delta) * rows[t - 1].q
    assert floored >= 10
    low = out["low ceiling"]
    assert all(r.q == (1 - delta) * p.q for p, r in itertools.pairwise(low))
    # Partial coverage under the floor (MODEL.md 17: each group carries its own stock from the
    # split s K_0, (1-s) K_0): the controlled group shrinks by exactly delta from its own homes.
    rows = out["partial"]
    assert rows[1].covered_quantity == (1 - delta) * (0.5 * rows[0].q)
    for t in range(2, 11):
        assert rows[t].covered_quantity == (1 - delta) * rows[t - 1].covered_quantity


@pytest.mark.parametrize("form", FORMS)
def test_stock_rate_one_without_depreciation_is_the_long_run_curve(form):
    """Derived (MODEL.md sections 2 and 13): with lambda = 1 and no floor the supply is Kstar_t,
    the period's curve at eps_LR, which is the linear schedule with K = 0 from period 1."""
    policies = [
        {"name": "ceiling", "kind": "price_ceiling", "level": 1030.0},
        {"name": "cap", "kind": "price_ceiling", "growth": 0.01, "start": 2},
        {"name": "partial", "kind": "price_ceiling", "level": 1030.0, "coverage": 0.4},
        {"name": "floor", "kind": "price_floor", "level": 1150.0},
        {"name": "tax", "kind": "unit_tax", "amount": 50.0},
        {"name": "vat", "kind": "ad_valorem_tax", "rate": 0.05},
        {"name": "subsidy", "kind": "unit_subsidy", "amount": 50.0},
        {"name": "permits", "kind": "quantity_cap", "level": 10100.0},
    ]
    stock = reference.paths(scenario(policies, form, adjustment={"schedule": "stock", "rate": 1.0}))
    long_run = reference.paths(scenario(policies, form, adjustment={"schedule": "linear", "periods": 0}))
    for name, rows in long_run.items():
        assert_same_rows(stock[name], rows, rel=1e-12, rel_money=1e-9)
        for a, b in zip(stock[name], rows, strict=True):
            for group in reference.GROUPS:
                assert a.distribution[group] == pytest.approx(b.distribution[group], rel=1e-9, abs=1e-3)


def test_stock_rate_defaults_and_impact_elasticity():
    """MODEL.md section 13 (and Nerlove 1958: eps_SR = lambda eps_LR): lambda defaults to
    eps_SR/eps_LR, a half-life h gives 1 - 0.5^(1/h); with no shock the stock stays at Q0 and
    the free path's supply elasticity at its equilibrium is eps_SR in every period."""
    request = scenario([], shocks=[], adjustment={"schedule": "stock"}, sr=0.3, lr=1.5)
    assert reference.stock_rate(request) == 0.3 / 1.5
    half = dict(request, adjustment={"schedule": "stock", "half_life": 2.0})
    assert reference.stock_rate(half) == 1 - 0.5**0.5
    assert reference.supply_elasticities(request) == pytest.approx([0.3] * 9, rel=1e-12)
    for r in reference.paths(request)["free"]:
        assert r.q == pytest.approx(10000.0, rel=1e-12) and r.pc == pytest.approx(1000.0, rel=1e-12)
    with pytest.raises(ValueError, match="Nerlove"):
        reference.stock_rate(scenario([], adjustment={"schedule": "stock"}, sr=0.0))


# --- Section 14: partial coverage ---------------------------------------------------------------


@pytest.mark.parametrize("s", [0.2, 0.5, 0.9])
def test_partial_ceiling_linear_closed_form(s):
    """MODEL.md section 14 (derived from the linear curves): the brentq root of
    (1-s) Qs(Pu) = Qd(Pu) - s Qs(c) equals pu = (D - S - s eps_t pc) / ((1-s) eps_t - eta)."""
    request = scenario(
        [
            {"name": "freeze", "kind": "price_ceiling", "level": "base", "coverage": s},
            {"name": "cap", "kind": "price_ceiling", "growth": 0.01, "coverage": s},
        ],
        shocks=[
            {"shifter": "income", "profile": "step", "change": 0.12},
            {"shifter": "cost", "profile": "growth", "rate": 0.02},
        ],
    )
    binding = 0
    for rows in reference.paths(request).values():
        for t in range(1, 9):
            r = rows[t]
            if not r.binding:
                continue
            binding += 1
            c = reference.Period.of(request, t)
            pc = (r.covered_price - c.p0) / c.p0
            pu = (c.demand - c.supply - s * c.eps * pc) / ((1 - s) * c.eps - c.eta)
            assert r.uncovered_price == pytest.approx(c.p0 * (1 + pu), rel=1e-11), t
    assert binding >= 12


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("s", [0.3, 0.75])
def test_partial_ceiling_both_segments_clear(form, s):
    """MODEL.md section 14 (schedules without a stock; section 17 replaces it under stock):
    covered homes s Qs(c), uncovered homes (1-s) Qs(Pu), and together they are what households
    demand at Pu; shortage Qd(c) - Q; rents averaged by quantity; Pu >= P* (Fallis and Smith
    1984, American Economic Review 74(1): controls raise uncontrolled rents); DWL >= 0 and
    equal to -(dCS + dPS + G) (derived)."""
    request = scenario(
        [{"name": "cap", "kind": "price_ceiling", "growth": 0.0, "coverage": s, "start": 2, "end": 6}],
        form,
        adjustment={"schedule": "geometric", "rate": 0.3},
        shocks=[
            {"shifter": "income", "profile": "step", "change": 0.12, "start": 2},
            {"shifter": "income", "profile": "growth", "rate": 0.02},
        ],
    )
    rows = reference.paths(request)["cap"]
    assert [r.binding for r in rows] == [False, False] + [True] * 5 + [False] * 2
    for t in range(1, 9):
        r = rows[t]
        c = curves(request, rows, t)
        p_star, q_star = own_free_market(request, rows, t)
        if not r.binding:
            assert (r.covered_price, r.uncovered_price) == (p_star, p_star)
            assert r.covered_quantity == s * q_star and r.uncovered_quantity == (1 - s) * q_star
            assert r.shortage == 0 and r.dwl == 0
            continue
        qc, qu, pu = r.covered_quantity, r.uncovered_quantity, r.uncovered_price
        assert qc == s * c.qs(r.covered_price)
        assert qu == pytest.approx((1 - s) * c.qs(pu), rel=1e-15)
        assert qc + qu == pytest.approx(c.qd(pu), rel=1e-11)
        assert r.q == qc + qu
        assert r.pc == r.pp == pytest.approx((r.covered_price * qc + pu * qu) / r.q, rel=1e-15)
        assert r.shortage == pytest.approx(c.qd(r.covered_price) - r.q, rel=1e-15)
        assert r.covered_price < p_star < pu
        assert r.covered_price < r.pc < pu
        assert r.dwl > 0
        assert r.dwl == pytest.approx(-(r.dcs + r.dps + r.g), rel=1e-9)
        # The growth cap grows from the covered rent of the period before (section 14).
        assert r.covered_price == rows[t - 1].covered_price


def test_partial_growth_cap_restarts_from_the_free_rent_where_it_did_not_bind():
    """MODEL.md sections 11 and 14: the cap grows from last period's covered rent, which is the
    free-market rent where the ceiling did not bind (or before its start)."""
    cap = {"name": "cap", "kind": "price_ceiling", "growth": 0.03, "coverage": 0.5, "start": 3}
    request = scenario([cap])
    rows = reference.paths(request)["cap"]
    free = reference.paths(request)["free"]
    assert rows[2].covered_price == free[2].pc
    for t in range(3, 9):
        expected = 1.03 * rows[t - 1].covered_price
        if rows[t].binding:
            assert rows[t].covered_price == expected
        else:
            assert rows[t].covered_price == free[t].pc and expected >= free[t].pc


@pytest.mark.parametrize("form", FORMS)
def test_coverage_one_is_the_full_ceiling_bit_for_bit(form):
    """MODEL.md section 14: s = 1 gives today's ceiling bit for bit (and no covered fields)."""
    policies = [
        {"name": "freeze", "kind": "price_ceiling", "level": "base"},
        {"name": "cap", "kind": "price_ceiling", "growth": 0.02, "start": 2},
    ]
    full = reference.paths(scenario([dict(p, coverage=1.0) for p in policies], form))
    plain = reference.paths(scenario(policies, form))
    for name, rows in plain.items():
        assert_same_rows(full[name], rows)
        assert all(r.covered_price is None and r.uncovered_quantity is None for r in full[name])


@pytest.mark.parametrize("form", FORMS)
def test_coverage_near_one_approaches_the_full_ceiling(form):
    """Derived (continuity of section 14 in s): as s -> 1 the partial ceiling's numbers tend to
    the full ceiling's."""
    policy = {"name": "freeze", "kind": "price_ceiling", "level": "base"}
    near = reference.paths(scenario([dict(policy, coverage=1 - 1e-8)], form))["freeze"]
    full = reference.paths(scenario([policy], form))["freeze"]
    for a, b in zip(near[1:], full[1:], strict=True):
        assert a.binding and b.binding
        for name in ("pc", "q", "shortage", "dcs", "dps", "dwl"):
            assert getattr(a, name) == pytest.approx(getattr(b, name), rel=1e-5, abs=1e-6 * 1000.0 * 10000.0)


def test_partial_coverage_with_random_rationing_is_an_error():
    """MODEL.md section 14: random rationing with s < 1 is an input error."""
    request = scenario([{"name": "freeze", "kind": "price_ceiling", "level": "base", "coverage": 0.5}])
    request["welfare"] = {"rationing": "random"}
    with pytest.raises(ValueError, match="coverage"):
        reference.paths(request)


# --- Section 15: who gains and who loses -------------------------------------------------------


def assert_groups_sum(request, out):
    """Derived identities (MODEL.md sections 15, 17 and 20): tenants' groups (households drawn
    in included) sum to dCS, owners' to dPS, all seven to -DWL (money per model period, x k)."""
    k = request["market"].get("payments_per_period", 1)
    scale = k * request["market"]["price"] * request["market"]["quantity"]
    for name, rows in out.items():
        for t, r in enumerate(rows):
            d = r.distribution
            tenants = sum(d[g] for g in reference.TENANTS)
            owners = sum(d[g] for g in reference.OWNERS)
            where = (name, t)
            assert tenants == pytest.approx(k * r.dcs, rel=1e-8, abs=1e-9 * scale), where
            assert owners == pytest.approx(k * r.dps, rel=1e-8, abs=1e-9 * scale), where
            assert d["government"] == pytest.approx(k * r.g, rel=1e-12, abs=1e-12 * scale), where
            assert sum(d.values()) == pytest.approx(-k * r.dwl, rel=1e-7, abs=1e-9 * scale), where
            assert r.dwl >= -1e-9 * scale / k, where
            if not r.binding:
                assert all(v == 0.0 for v in d.values()), where


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("adjustment", [None, {"schedule": "stock", "rate": 0.3, "depreciation": 0.02}])
@pytest.mark.parametrize("eta", [-0.5, -1.6])
def test_groups_sum_to_the_aggregates_for_every_policy(form, adjustment, eta):
    """Derived identities of MODEL.md section 15, for every policy kind, both forms, full and
    partial ceilings, with and without the stock, under inflation, with k = 12."""
    request = scenario(EVERY_KIND, form, adjustment=adjustment, eta=eta, k=12, inflation=0.02)
    out = reference.paths(request)
    assert all(any(r.binding for r in rows) for name, rows in out.items() if name != "free")
    assert_groups_sum(request, out)
    for name, rows in out.items():
        totals = reference.summary(rows)["distribution_totals"]
        for group in reference.GROUPS:
            assert totals[group] == sum(r.distribution[group] for r in rows)
        if rows[0].covered_price is None and name != "free":
            kind = next(p["kind"] for p in EVERY_KIND if p["name"] == name)
            zero = (
                ("tenants_in_uncontrolled_homes", "owners_of_uncontrolled_homes", "government")
                if kind == "price_ceiling"
                else ("tenants_in_controlled_homes", "owners_of_controlled_homes")
            )
            assert all(r.distribution[g] == 0.0 for r in rows for g in zero), name


@pytest.mark.parametrize("form", FORMS)
def test_groups_against_surplus_as_areas_over_price(form):
    """Derived: producer surplus at price P is int_0^P Qs(p) dp, so the owners' change is
    int_P*^Pp Qs dp (where Q = Qs(Pp): taxes, subsidies, full ceilings; by segments s and 1-s
    for a partial ceiling); consumer surplus where Q = Qd(Pc) is int_Pc^inf Qd, so the tenants'
    change is -int_P*^Pc Qd dp (taxes, subsidies, floors). quad over price, not quantity."""
    kinds = [p for p in EVERY_KIND if p["kind"] != "quantity_cap"]
    request = scenario(kinds, form)
    out = reference.paths(request)
    checked = 0
    for policy in kinds:
        rows = out[policy["name"]]
        for t in range(1, 9):
            r = rows[t]
            if not r.binding:
                continue
            c = reference.Period.of(request, t)
            p_star = out["free"][t].pc
            d = r.distribution

            def area(f, a, b):
                return quad(f, a, b, epsabs=0.0, epsrel=1e-12)[0]

            kind = policy["kind"]
            if kind == "price_ceiling" and "coverage" in policy:
                s = policy["coverage"]
                assert d["owners_of_controlled_homes"] == pytest.approx(
                    s * area(c.qs, p_star, r.covered_price), rel=1e-8
                )
                assert d["owners_of_uncontrolled_homes"] == pytest.approx(
                    (1 - s) * area(c.qs, p_star, r.uncovered_price), rel=1e-8
                )
            elif kind == "price_ceiling":
                assert d["owners_of_controlled_homes"] == pytest.approx(area(c.qs, p_star, r.pp), rel=1e-8)
            elif kind != "price_floor":
                assert d["owners_of_uncontrolled_homes"] == pytest.approx(area(c.qs, p_star, r.pp), rel=1e-8)
            if kind != "price_ceiling":
                tenants = (
                    d["tenants_in_uncontrolled_homes"] + d["households_priced_out"] + d["households_drawn_in"]
                )
                assert tenants == pytest.approx(-area(c.qd, p_star, r.pc), rel=1e-8)
            checked += 1
    assert checked >= 40


@given(extended_requests())
def test_groups_identities_and_fallis_smith_on_random_markets(request):
    """Derived identities of section 15 on random markets; DWL >= 0 (derived); Pu >= P*
    (Fallis and Smith 1984, American Economic Review 74(1))."""
    out = feasible(request)
    assume(out is not None)
    assert_groups_sum(request, out)
    p0 = request["market"]["price"]
    for rows in out.values():
        for t, r in enumerate(rows):
            if t and r.covered_price is not None and r.binding:
                # The comparator: the same period without the rule on the same stocks (section 17).
                p_star = r.comparator_price or own_free_market(request, rows, t)[0]
                assert r.uncovered_price >= p_star * (1 - 1e-12) - 1e-12 * p0
                assert r.covered_price < p_star
                assert r.dwl >= -1e-9 * p0 * request["market"]["quantity"]


def test_distribution_is_none_under_random_rationing_and_scales_with_k():
    """MODEL.md section 15: under random rationing only the aggregates (distribution None);
    otherwise every group is money per model period, x k."""
    policies = [
        {"name": "freeze", "kind": "price_ceiling", "level": "base"},
        {"name": "tax", "kind": "unit_tax", "amount": 60.0},
    ]
    request = scenario(policies, eta=-1.5)
    request["welfare"] = {"rationing": "random"}
    out = reference.paths(request)
    assert all(r.distribution is None for rows in out.values() for r in rows)
    assert reference.summary(out["tax"])["distribution_totals"] is None
    yearly = reference.paths(scenario(policies, k=12))
    monthly = reference.paths(scenario(policies, k=1))
    for name, rows in monthly.items():
        for a, b in zip(yearly[name], rows, strict=True):
            assert a.distribution == {g: 12 * v for g, v in b.distribution.items()}


# --- Requests without the new fields ------------------------------------------------------------


@given(requests())
def test_neutral_new_fields_give_the_same_numbers(request):
    """MODEL.md sections 12 and 14: inflation 0 and coverage 1 (and indexed false on a
    ceiling) give bit for bit the numbers of a request without them; the price index is 1
    and nominal prices equal real ones."""
    neutral = copy.deepcopy(request)
    neutral["market"]["inflation"] = [0.0]
    for policy in neutral["policies"]:
        if policy["kind"] == "price_ceiling":
            policy["coverage"] = 1.0
            policy["indexed"] = False
    try:
        plain = reference.paths(request)
    except (ValueError, ZeroDivisionError, OverflowError):
        return
    same = reference.paths(neutral)
    for name, rows in plain.items():
        for a, b in zip(rows, same[name], strict=True):
            for field in (*CORE, *MONEY, "binding", "distribution"):
                x, y = getattr(a, field), getattr(b, field)
                assert x == y or (x != x and y != y), (name, field)
            assert a.price_index == 1.0 and a.nominal_consumer_price == a.pc
            assert a.homes_below_free_path is None and a.covered_price is None
