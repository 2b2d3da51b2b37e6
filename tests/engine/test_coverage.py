"""A price ceiling on part of the homes, through the public API (MODEL.md section 14):
`"coverage": s` in (0, 1] on a price_ceiling.

Sources: Fallis & Smith (1984), *American Economic Review* 74(1), "Uncontrolled Prices in a
Controlled Market: The Case of Rent Controls" (controls on part of a market raise the rents
of the uncontrolled part, since households without a controlled home bid for the rest);
checks marked "derived" follow from MODEL.md's curves by algebra (worked out here).
"""

from __future__ import annotations

import copy
import itertools
import math

import pytest
from hypothesis import assume, given

from service import simulate

from ..strategies import extended_requests
from .additions import COVERAGE, FORMS, path, scales, scenario, solved_or_none

SHOCKS = [
    {"shifter": "income", "profile": "step", "change": 0.12},
    {"shifter": "cost", "profile": "growth", "rate": 0.02},
]


def curves(form, t, eta=-0.5, p0=1000.0, q0=10000.0, d=0.12, cost=-0.5, growth=0.02):
    """Demand and supply of period t of `SHOCKS` at supply elasticity eps (MODEL.md section 3)."""
    h = (1 + growth) ** t - 1

    def qd(p):
        if form == "linear":
            return q0 * (1 + eta * (p - p0) / p0 + d)
        return q0 * (p / p0) ** eta * (1 + d) ** 1.0

    def qs(p, eps):
        if form == "linear":
            return q0 * (1 + eps * (p - p0) / p0 + cost * h)
        return q0 * (p / p0) ** eps * (1 + h) ** cost

    return qd, qs


@pytest.mark.parametrize("s", [0.2, 0.5, 0.9])
def test_the_uncovered_rent_has_the_linear_closed_form(s):
    """Derived from the linear curves (MODEL.md section 14): (1-s) Qs(Pu) = Qd(Pu) - s Qs(c) gives
    pu = (D - S - s eps_t pc) / ((1-s) eps_t - eta), with p = (P - P0)/P0."""
    policies = [
        {"name": "freeze", "kind": "price_ceiling", "level": "base", "coverage": s},
        {"name": "cap", "kind": "price_ceiling", "growth": 0.01, "coverage": s},
    ]
    body = simulate(scenario(policies, shocks=SHOCKS))
    binding = 0
    for name in ("freeze", "cap"):
        p = path(body, name)
        for t in range(1, 9):
            if not p["binding"][t]:
                continue
            binding += 1
            eps = body["supply_elasticity"][t]
            d, big_s = 0.12, -0.5 * (1.02**t - 1)
            pc = p["covered_price"][t] / 1000.0 - 1
            pu = (d - big_s - s * eps * pc) / ((1 - s) * eps - (-0.5))
            assert p["uncovered_price"][t] == pytest.approx(1000.0 * (1 + pu), rel=1e-12), (name, t)
    assert binding >= 12


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("s", [0.3, 0.75])
def test_both_segments_clear_and_uncontrolled_rents_rise(form, s):
    """MODEL.md section 14, with the curves written out here: covered homes s Qs(c), uncovered
    homes (1-s) Qs(Pu), together what households rent at Pu; shortage Qd(c) - Q, which is
    quantity_demanded - quantity; the reported rent is the quantity-weighted mean; Pu >= P*
    (Fallis & Smith 1984: controls raise uncontrolled rents); DWL >= 0 (derived)."""
    request = scenario(
        [{"name": "freeze", "kind": "price_ceiling", "level": "base", "coverage": s, "end": 6}],
        form=form,
        shocks=SHOCKS,
    )
    body = simulate(request)
    p, free = path(body, "freeze"), path(body, "free")
    assert p["binding"] == [False] + [True] * 6 + [False] * 2
    for t in range(1, 9):
        qd, qs = curves(form, t)
        eps = body["supply_elasticity"][t]
        c, pu = p["covered_price"][t], p["uncovered_price"][t]
        qc, qu, q = p["covered_quantity"][t], p["uncovered_quantity"][t], p["quantity"][t]
        p_star = free["consumer_price"][t]
        if not p["binding"][t]:
            assert c == pu == p_star and qc == s * free["quantity"][t] and qu == (1 - s) * free["quantity"][t]
            assert p["shortage"][t] == 0.0 and p["deadweight_loss"][t] == 0.0
            continue
        assert c == 1000.0
        assert qc == pytest.approx(s * qs(c, eps), rel=1e-12)
        assert qu == pytest.approx((1 - s) * qs(pu, eps), rel=1e-10)
        assert q == pytest.approx(qd(pu), rel=1e-10)
        assert q == pytest.approx(qc + qu, rel=1e-15)
        assert p["quantity_demanded"][t] == pytest.approx(qd(c), rel=1e-12)
        assert p["shortage"][t] == pytest.approx(p["quantity_demanded"][t] - q, rel=1e-12)
        assert p["consumer_price"][t] == pytest.approx((c * qc + pu * qu) / q, rel=1e-14)
        assert c < p["consumer_price"][t] < p_star < pu
        assert p["deadweight_loss"][t] > 0


def test_the_less_a_ceiling_covers_the_higher_the_uncontrolled_rent():
    """Derived from the linear closed form of MODEL.md section 14,
    pu = (D - S - s eps pc)/((1-s) eps - eta): where the freeze holds pc < 0 < D - S, the
    numerator rises and the denominator falls with s, so the more homes a ceiling covers, the
    fewer uncontrolled homes are left for the households it turns away and the higher their
    rent; every share gives Pu > P* (Fallis & Smith 1984)."""
    shares = [0.1, 0.3, 0.5, 0.7, 0.9]
    policies = [{"name": f"s={s}", "kind": "price_ceiling", "level": "base", "coverage": s} for s in shares]
    body = simulate(scenario(policies, shocks=SHOCKS))
    free = path(body, "free")["consumer_price"]
    for t in range(1, 9):
        rents = [path(body, f"s={s}")["uncovered_price"][t] for s in shares]
        assert all(a < b for a, b in itertools.pairwise(rents)), t
        assert rents[0] > free[t]


@pytest.mark.parametrize("form", FORMS)
def test_a_partial_growth_cap_grows_from_last_periods_controlled_rent(form):
    """MODEL.md section 14: a growth cap on a partial ceiling grows from the covered rent of the
    period before, which is the free-market rent where it did not bind (before its start)."""
    cap = {"name": "cap", "kind": "price_ceiling", "growth": 0.02, "coverage": 0.5, "start": 3}
    rising = [{"shifter": "income", "profile": "growth", "rate": 0.08}]
    body = simulate(scenario([cap], form=form, shocks=rising))
    p, free = path(body, "cap"), path(body, "free")
    assert p["covered_price"][2] == free["consumer_price"][2]
    assert any(p["binding"])
    for t in range(3, 9):
        expected = 1.02 * p["covered_price"][t - 1]
        if p["binding"][t]:
            assert p["covered_price"][t] == pytest.approx(expected, rel=1e-15)
        else:
            assert (
                p["covered_price"][t] == free["consumer_price"][t] and expected >= free["consumer_price"][t]
            )


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("adjustment", [None, {"schedule": "stock", "rate": 0.3, "depreciation": 0.01}])
def test_coverage_one_is_the_full_ceiling_bit_for_bit(form, adjustment):
    """MODEL.md section 14: s = 1 gives today's ceiling bit for bit: the same body, the same
    scenario id, and no covered or uncovered series."""
    policies = [
        {"name": "freeze", "kind": "price_ceiling", "level": "base"},
        {"name": "cap", "kind": "price_ceiling", "growth": 0.02, "start": 2},
        {"name": "level", "kind": "price_ceiling", "level": 1050.0, "end": 4},
    ]
    plain = scenario(policies, form=form, adjustment=adjustment, shocks=SHOCKS)
    full = copy.deepcopy(plain)
    for p in full["policies"][1:]:
        p["coverage"] = 1
    a, b = simulate(full), simulate(plain)
    assert a == b
    assert not any(key in p for p in a["paths"] for key in COVERAGE)


@pytest.mark.parametrize("form", FORMS)
def test_a_ceiling_that_covers_almost_every_home_is_almost_the_full_ceiling(form):
    """Derived (continuity of section 14 in s): as s -> 1 the partial ceiling tends to the full
    one; the uncovered rent then settles where the last uncovered homes clear, above P*."""
    freeze = {"name": "freeze", "kind": "price_ceiling", "level": "base"}
    near = path(simulate(scenario([dict(freeze, coverage=1 - 1e-9)], form=form)), "freeze")
    full = path(simulate(scenario([freeze], form=form)), "freeze")
    money = 12 * 1000.0 * 10000.0
    for key in ("consumer_price", "quantity", "shortage", "consumer_surplus_change", "deadweight_loss"):
        scale = money if "change" in key or "loss" in key else 1000.0 if "price" in key else 10000.0
        for a, b in zip(near[key], full[key], strict=True):
            assert a == pytest.approx(b, rel=1e-6, abs=1e-7 * scale), key


@given(extended_requests())
def test_uncovered_rents_are_never_below_the_free_rent(request):
    """Fallis & Smith (1984), AER 74(1), and MODEL.md section 14, on random markets of both forms
    with inflation, the stock schedule and random coverage: where a partial ceiling binds,
    covered rent < P* <= uncovered rent (P* of the path's own free market: without the stock,
    the free path's rent), and the deadweight loss is >= 0 (derived)."""
    body = solved_or_none(request)
    assume(body is not None)
    p0, q0, money = scales(request)
    stock = request.get("adjustment", {}).get("schedule") == "stock"
    free = path(body, "free")
    for p in body["paths"]:
        for t, binds in enumerate(p["binding"]):
            assert p["deadweight_loss"][t] >= -1e-9 * money
            if "covered_price" not in p or not binds:
                continue
            assert p["covered_price"][t] <= p["uncovered_price"][t]
            if not stock:
                p_star = free["consumer_price"][t]
                assert p["covered_price"][t] < p_star * (1 + 1e-12)
                assert p["uncovered_price"][t] >= p_star * (1 - 1e-12) - 1e-12 * p0
            q = p["covered_quantity"][t] + p["uncovered_quantity"][t]
            assert p["quantity"][t] == pytest.approx(q, rel=1e-12, abs=1e-12 * q0)
            assert p["shortage"][t] == pytest.approx(
                p["quantity_demanded"][t] - p["quantity"][t], rel=1e-9, abs=1e-9 * q0
            )
            assert math.isfinite(p["uncovered_price"][t])
