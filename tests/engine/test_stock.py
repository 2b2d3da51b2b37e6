"""A durable stock through the public API (MODEL.md section 13): `"adjustment": {"schedule":
"stock", "rate" | "half_life", "depreciation"}`.

Sources: Nerlove (1958), *The Dynamics of Supply*, for the partial adjustment of a stock toward
its desired level (a share lambda of the gap closes each period; half-life h: lambda =
1 - 0.5^(1/h); short-run elasticity = lambda x long-run); Glaeser & Gyourko (2005), *Journal of
Political Economy* 113(2), for the kinked supply of durable housing (homes are lost only
slowly when rents fall: the depreciation floor). Checks marked "derived" follow from MODEL.md's
two curves by algebra (worked out here, not published).
"""

from __future__ import annotations

import itertools
import math

import pytest
from hypothesis import assume, given
from hypothesis import strategies as st

from service import simulate

from ..strategies import extended_requests, floats, markets
from .additions import FORMS, path, scales, scenario, solved_or_none, summary

ETA, SR, LR, LAM = -0.5, 0.2, 1.5, 0.3
RHO = (1 - LAM) * abs(ETA) / (abs(ETA) + LAM * LR)
STEP = [{"shifter": "income", "profile": "step", "change": 0.12}]


def long_run_quantity(d, s, eta=ETA, lr=LR, q0=10000.0):
    """MODEL.md section 4, linear form at eps_LR: Q = Q0 (1 + eps EP + S), EP = (D - S)/(eps - eta)."""
    ep = (d - s) / (lr - eta)
    return q0 * (1 + lr * ep + s)


def test_the_free_paths_gap_to_its_long_run_shrinks_by_rho_each_period():
    """Derived from the two curves, Nerlove (1958) for the rule (MODEL.md section 13): linear
    form, no floor binding, shocks constant from period 1: Q_t - Q_LR = rho (Q_(t-1) - Q_LR),
    rho = (1-lambda)|eta| / (|eta| + lambda eps_LR)."""
    request = scenario([], horizon=12, shocks=STEP, adjustment={"schedule": "stock", "rate": LAM}, eta=ETA)
    q = path(simulate(request), "free")["quantity"]
    q_lr = long_run_quantity(0.12, 0.0)
    for t in range(1, 13):
        assert (q[t] - q_lr) / (q[t - 1] - q_lr) == pytest.approx(RHO, rel=1e-9), t
    assert q[0] < q[1] < q[12] < q_lr


@pytest.mark.parametrize("ceiling", [{"level": "base"}, {"growth": 0.01}, {"level": "base", "coverage": 0.5}])
def test_after_a_ceiling_is_lifted_the_homes_it_kept_from_being_built_return_at_rho(ceiling):
    """Derived (MODEL.md section 13; Nerlove 1958 for the rule): once the ceiling ends, its
    path is a free market on a smaller stock; both paths face the same linear curves, so the
    gap between them (homes_below_free_path) shrinks by the same rho each period. Whatever the
    kind of ceiling: a freeze, a growth cap, a partial freeze."""
    policy = {"name": "ceiling", "kind": "price_ceiling", "end": 4, **ceiling}
    request = scenario([policy], horizon=14, shocks=STEP, adjustment={"schedule": "stock", "rate": LAM})
    body = simulate(request)
    lifted, free = path(body, "ceiling"), path(body, "free")
    assert all(lifted["binding"][1:5]) and not any(lifted["binding"][5:])
    gap = lifted["homes_below_free_path"]
    for t in range(15):
        assert gap[t] == free["quantity"][t] - lifted["quantity"][t]
        assert lifted["rent_above_free_path"][t] == lifted["consumer_price"][t] - free["consumer_price"][t]
    assert gap[4] > 0.01 * 10000.0  # more than 1 % of the homes are missing when it ends
    for t in range(5, 15):
        assert gap[t] / gap[t - 1] == pytest.approx(RHO, rel=1e-8), t
    s = summary(body, "ceiling")
    assert s["final_homes_below_free_path"] == gap[-1]
    assert s["peak_homes_below_free_path"] == max(gap)
    assert free["homes_below_free_path"] == [0.0] * 15 and free["rent_above_free_path"] == [0.0] * 15


@pytest.mark.parametrize("form", FORMS)
def test_where_the_depreciation_floor_binds_the_stock_shrinks_by_exactly_delta(form):
    """MODEL.md section 13 (the supply rule; Glaeser & Gyourko 2005 for why homes go slowly):
    Qs_t(P) = max((1-lambda) K_(t-1) + lambda Kstar_t(P), (1-delta) K_(t-1)). After a 40 % fall
    in incomes the free stock would fall faster than delta, so it falls by exactly delta:
    K_t = (1-delta) K_(t-1), and the supply elasticity at the equilibrium is 0 there."""
    delta = 0.02
    request = scenario(
        [
            {"name": "low ceiling", "kind": "price_ceiling", "level": 500.0},
            {"name": "partial", "kind": "price_ceiling", "level": 500.0, "coverage": 0.5},
        ],
        form=form,
        horizon=10,
        shocks=[{"shifter": "income", "profile": "step", "change": -0.4, "start": 3}],
        adjustment={"schedule": "stock", "rate": 0.6, "depreciation": delta},
        lr=2.0,
    )
    body = simulate(request)
    free = path(body, "free")["quantity"]
    on_floor = [t for t in range(1, 11) if body["supply_elasticity"][t] == 0.0]
    assert len(on_floor) >= 3
    for t in range(1, 11):
        if t in on_floor:
            assert free[t] == (1 - delta) * free[t - 1], t
        else:
            assert free[t] > (1 - delta) * free[t - 1], t
    low = path(body, "low ceiling")
    assert low["binding"][1] and low["binding"][2]  # a ceiling at half the rent, then the floor
    assert all(b == (1 - delta) * a for a, b in itertools.pairwise(low["quantity"]))
    partial = path(body, "partial")
    # MODEL.md section 17: the controlled homes are a group with a stock of their own, split off
    # as the share s of the standing homes in the rule's first period; a ceiling at half the
    # rent holds that group on its own depreciation bound, so it shrinks by exactly delta.
    controlled = partial["covered_quantity"]
    assert controlled[0] == 0.5 * partial["quantity"][0]
    assert all(b == (1 - delta) * a for a, b in itertools.pairwise(controlled))


def test_the_nerlove_default_rate_gives_the_short_run_elasticity_on_impact():
    """Nerlove (1958): eps_SR = lambda eps_LR; MODEL.md section 13: lambda defaults to
    eps_SR/eps_LR, so the impact elasticity at the base point is eps_SR. Without shocks the
    stock stays at Q0 and the reported supply elasticity is eps_SR in every period; with a
    demand shock the linear stock supply of period 1 is Q0 (1 + lambda eps_LR p), the very
    curve of any elasticity schedule in its impact period (w_1 = 0), so period 1 is the same
    (derived)."""
    quiet = scenario([], shocks=[], adjustment={"schedule": "stock"}, sr=SR, lr=LR)
    body = simulate(quiet)
    assert body["supply_elasticity"] == pytest.approx([SR] * 9, rel=1e-12)
    assert path(body, "free")["quantity"] == pytest.approx([10000.0] * 9, rel=1e-12)
    policies = [
        {"name": "freeze", "kind": "price_ceiling", "level": "base"},
        {"name": "tax", "kind": "unit_tax", "amount": 50.0},
    ]
    stock = simulate(scenario(policies, shocks=STEP, adjustment={"schedule": "stock"}, supply={}))
    schedule = simulate(
        scenario(policies, shocks=STEP, adjustment={"schedule": "linear", "periods": 8}, supply={})
    )
    for name in ("free", "freeze", "tax"):
        for key in ("consumer_price", "producer_price", "quantity", "shortage", "deadweight_loss"):
            a, b = path(stock, name)[key][1], path(schedule, name)[key][1]
            assert a == pytest.approx(b, rel=1e-12, abs=1e-6), (name, key)
    assert stock["supply_elasticity"][0] == SR


def test_the_nerlove_default_matches_the_short_run_response_of_the_constant_elasticity_form():
    """Nerlove (1958), derived for MODEL.md's constant-elasticity curves: the stock supply
    (1-lambda) Q0 + lambda Q0 (P/P0)^eps_LR has the elasticity lambda eps_LR = eps_SR at the
    base point, so a small demand shock moves the impact rent as under the short-run curve
    (to first order: within 1e-3 of the response for a 0.1 % shock)."""
    shocks = [{"shifter": "income", "profile": "step", "change": 0.001}]
    common = {"shocks": shocks, "form": "constant_elasticity", "supply": {}, "horizon": 2}
    stock = simulate(scenario([], adjustment={"schedule": "stock"}, **common))
    schedule = simulate(scenario([], adjustment={"schedule": "linear", "periods": 8}, **common))
    a = path(stock, "free")["consumer_price"][1] / 1000.0 - 1
    b = path(schedule, "free")["consumer_price"][1] / 1000.0 - 1
    assert a == pytest.approx(b, rel=1e-3)
    assert a == pytest.approx(math.log(1.001) / (SR - ETA), rel=1e-3)  # MODEL.md section 4


@pytest.mark.parametrize("h", [0.5, 2.0, 3.0, 7.5])
def test_a_half_life_is_the_rate_one_minus_half_to_the_one_over_h(h):
    """Nerlove (1958) and MODEL.md sections 2 and 13: a half-life h is lambda = 1 - 0.5^(1/h)."""
    half = simulate(scenario([], shocks=STEP, adjustment={"schedule": "stock", "half_life": h}))
    rate = simulate(scenario([], shocks=STEP, adjustment={"schedule": "stock", "rate": 1 - 0.5 ** (1 / h)}))
    for a, b in zip(path(half, "free")["quantity"], path(rate, "free")["quantity"], strict=True):
        assert a == pytest.approx(b, rel=1e-12)


@pytest.mark.parametrize("form", FORMS)
def test_at_a_fixed_rent_half_the_gap_to_the_desired_stock_closes_in_one_half_life(form):
    """Nerlove (1958): at a constant price the stock closes the share 1 - (1-lambda)^t of its
    gap to the desired stock in t periods, so half of it in one half-life. A binding ceiling
    fixes the rent (indexed level, no inflation: c = 1,050), so here the homes follow that rule
    exactly: Q_t = (1-lambda) Q_(t-1) + lambda Kstar(c)."""
    h = 3.0
    request = scenario(
        [{"name": "ceiling", "kind": "price_ceiling", "level": 1050.0}],
        form=form,
        horizon=9,
        shocks=[{"shifter": "income", "profile": "step", "change": 0.3}],
        adjustment={"schedule": "stock", "half_life": h},
        supply={},
    )
    q = path(simulate(request), "ceiling")["quantity"]
    desired = 10000.0 * (1 + LR * 0.05) if form == "linear" else 10000.0 * 1.05**LR  # Kstar(c), MODEL 3
    for t in (3, 6, 9):
        assert (q[t] - desired) / (q[0] - desired) == pytest.approx(0.5 ** (t / h), rel=1e-10)


@pytest.mark.parametrize("form", FORMS)
def test_a_building_cost_rise_moves_the_desired_stock_not_the_standing_homes(form):
    """MODEL.md section 13: a cost shifter moves the desired stock Kstar (the long-run curve),
    and only the share lambda of that reaches this year's supply. Building costs up 5 % with a
    cost elasticity of -0.25 would remove 1.25 % of the homes at today's rent if it moved the
    standing stock; with eps_SR = 0.08 (lambda = 0.08 / 0.8 = 0.1) the first year loses far
    less. Checked against the stock rule itself, Q_1 = (1-lambda) Q0 + lambda Kstar_1(P_1),
    and, linear form, against the derived closed form
    dQ/Q0 = lambda S |eta| / (|eta| + lambda eps_LR), S = -0.0125: lambda times the impact of
    the ordinary schedules, where the whole supply curve moves by S."""
    sr, lr, lam, s = 0.08, 0.8, 0.1, -0.0125
    common = {
        "shocks": [{"shifter": "cost", "profile": "step", "change": 0.05}],
        "form": form,
        "sr": sr,
        "lr": lr,
        "supply": {"cost": -0.25},
        "horizon": 10,
    }
    stock = path(simulate(scenario([], adjustment={"schedule": "stock"}, **common)), "free")
    moving = path(simulate(scenario([], adjustment={"schedule": "linear", "periods": 8}, **common)), "free")
    first_year = stock["quantity"][1] / 10000.0 - 1
    assert -0.0125 / 10 < first_year < 0  # a tenth of what the shift "removes" at today's rent
    p1 = stock["consumer_price"][1]
    if form == "linear":
        desired = 10000.0 * (1 + lr * (p1 - 1000.0) / 1000.0 + s)
    else:
        desired = 10000.0 * (p1 / 1000.0) ** lr * 1.05**-0.25
    assert stock["quantity"][1] == pytest.approx((1 - lam) * 10000.0 + lam * desired, rel=1e-12)
    if form == "linear":
        closed = lam * s * abs(ETA) / (abs(ETA) + lam * lr)
        assert first_year == pytest.approx(closed, rel=1e-9)
        assert first_year == pytest.approx(lam * (moving["quantity"][1] / 10000.0 - 1), rel=1e-9)
    # In the long run both reach the same free market (derived: the desired stock is the curve at eps_LR).
    long = simulate(scenario([], adjustment={"schedule": "stock"}, **dict(common, horizon=200)))
    at_once = simulate(scenario([], adjustment={"schedule": "linear", "periods": 0}, **common))
    final = path(at_once, "free")["quantity"][-1]  # the long-run free market (shocks constant)
    assert path(long, "free")["quantity"][-1] == pytest.approx(final, rel=1e-9)


# --- properties on random markets ---------------------------------------------------------------


@given(extended_requests(stock=True), floats(0.0, 0.1))
def test_supply_never_offers_fewer_homes_than_depreciation_leaves(request, depreciation):
    """MODEL.md section 13 (Glaeser & Gyourko 2005: durable homes are lost slowly): on every
    path, quantity_supplied_t >= (1-delta) quantity_(t-1); and the homes let, quantity_t, never
    fall faster than delta where sellers set them (free market, ceilings, taxes, subsidies:
    Q = Qs). A binding floor or permit cap sets Q by demand or by the cap instead, and MODEL.md
    takes the next stock to be the homes let (K_t = Q_t), so there Q_t may fall faster (see
    test_a_binding_floor_lets_fewer_homes_than_depreciation_leaves)."""
    delta = request["adjustment"].setdefault("depreciation", depreciation)
    body = solved_or_none(request)
    assume(body is not None)
    q0 = request["market"]["quantity"]
    for p in body["paths"]:
        q, qs = p["quantity"], p["quantity_supplied"]
        for t in range(1, len(q)):
            floor = (1 - delta) * q[t - 1]
            assert qs[t] >= floor * (1 - 1e-12) - 1e-9 * q0, (p["name"], t)
            if not (p["binding"][t] and p["kind"] in ("price_floor", "quantity_cap")):
                assert q[t] >= floor * (1 - 1e-12) - 1e-9 * q0, (p["name"], t)


def test_a_binding_floor_lets_fewer_homes_than_depreciation_leaves():
    """MODEL.md sections 5 and 13 read together: under a binding floor Q = Qd(f) (unsold homes
    are not let) and the next period's stock is K_t = Q_t, so a high floor drops homes from the
    stock faster than delta. A fact of the model as written (the homes stand empty in the
    market, they are not demolished), recorded here so that a change to it is deliberate."""
    request = scenario(
        [{"name": "floor", "kind": "price_floor", "level": 1300.0}],
        shocks=[],
        adjustment={"schedule": "stock", "rate": 0.3, "depreciation": 0.02},
        horizon=3,
    )
    floor = path(simulate(request), "floor")
    assert all(floor["binding"][1:])
    assert floor["quantity"][1] < 0.98 * floor["quantity"][0]
    assert floor["quantity_supplied"][1] >= 0.98 * floor["quantity"][0]


@st.composite
def freeze_requests(draw):
    """Random markets under the stock schedule with a freeze ending in each period 1..T+1."""
    market = draw(markets(form=None))
    market["inflation"] = draw(st.one_of(st.just(0.0), floats(-0.02, 0.08)))
    horizon = draw(st.integers(2, 10))
    coverage = draw(st.one_of(st.just(1.0), floats(0.1, 0.95)))
    adjustment = {"schedule": "stock", "rate": draw(floats(0.05, 1.0))}
    if draw(st.booleans()):
        adjustment["depreciation"] = draw(floats(0.0, 0.1))
    freezes = [
        {"name": f"end {e}", "kind": "price_ceiling", "level": "base", "end": e, "coverage": coverage}
        for e in range(1, horizon + 2)
    ]
    return {
        "market": market,
        "shocks": [
            {"shifter": "income", "profile": "step", "change": draw(floats(0.0, 0.25))},
            {
                "shifter": "cost",
                "profile": "step",
                "change": draw(floats(-0.1, 0.2)),
                "start": draw(st.integers(1, 4)),
            },
        ],
        "adjustment": adjustment,
        "horizon": horizon,
        "policies": [{"name": "free", "kind": "none"}, *freezes],
    }


@given(freeze_requests())
def test_a_later_end_of_a_freeze_never_leaves_fewer_homes_missing(request):
    """Derived (MODEL.md section 13). The exact statement: homes_below_free_path is
    non-decreasing in `end` in EVERY period (so also at the horizon, and summed). Why: two
    freezes ending at E < E' are the same path up to E. The period's quantity is non-decreasing
    in last period's stock K: supply max((1-lambda) K + lambda Kstar(P), (1-delta) K) rises
    with K at every price, so the free quantity Q*(K) rises, and under the freeze (level c_t the
    same on both paths, not path-dependent) Q = min(Qs(c_t; K), Q*(K)) rises too (partial
    coverage: Q = Qd(Pu), Pu falling as supply rises). In E+1..E' the later freeze has
    Q <= Q*(K') <= Q*(K); after E' both are free markets, each Q*(K) of a smaller or equal stock.
    By induction the later freeze's stock is never above the earlier one's."""
    body = solved_or_none(request)
    assume(body is not None)
    q0 = request["market"]["quantity"]
    gaps = [path(body, p["name"])["homes_below_free_path"] for p in request["policies"][1:]]
    for earlier, later in itertools.pairwise(gaps):
        for t, (a, b) in enumerate(zip(earlier, later, strict=True)):
            assert b >= a - 1e-9 * q0, t
        assert sum(later) >= sum(earlier) - 1e-9 * q0 * len(later)
    assert all(g >= -1e-9 * q0 for gap in gaps for g in gap)  # a freeze never adds homes


@given(extended_requests(stock=True))
def test_under_the_stock_schedule_every_path_reports_its_gap_to_the_free_path(request):
    """MODEL.md section 13: homes_below_free_path = the free path's Q_t - this path's Q_t and
    rent_above_free_path = Pc_t - the free path's P*_t, with the summary's final and peak
    (period 0 included, where both are 0)."""
    body = solved_or_none(request)
    assume(body is not None)
    free = path(body, "free")
    p0, q0, _ = scales(request)
    for p, s in zip(body["paths"], body["summary"], strict=True):
        below = [a - b for a, b in zip(free["quantity"], p["quantity"], strict=True)]
        above = [a - b for a, b in zip(p["consumer_price"], free["consumer_price"], strict=True)]
        assert p["homes_below_free_path"] == pytest.approx(below, rel=1e-9, abs=1e-9 * q0)
        assert p["rent_above_free_path"] == pytest.approx(above, rel=1e-9, abs=1e-9 * p0)
        assert s["final_homes_below_free_path"] == p["homes_below_free_path"][-1]
        assert s["peak_homes_below_free_path"] == max(p["homes_below_free_path"])
