"""Who gains and who loses, through the public API (MODEL.md section 15): `distribution` per
path (six per-period series) and `distribution_totals` in each summary.

Sources: the groups are the split of section 6's surplus changes (derived identities, worked
out from MODEL.md: tenants' groups sum to the change in consumer surplus, owners' to the change
in producer surplus, all six to minus the deadweight loss); partial coverage as in Fallis &
Smith (1984), *American Economic Review* 74(1).
"""

from __future__ import annotations

import pytest
from hypothesis import assume, given

from service import simulate

from ..strategies import extended_requests, requests
from .additions import (
    EVERY_KIND,
    FORMS,
    GROUPS,
    OWNERS,
    TENANTS,
    path,
    scales,
    scenario,
    solved_or_none,
    summary,
)


def assert_groups_add_up(body, request):
    """Derived identities of MODEL.md section 15, per period and summed in the summary."""
    money = scales(request)[2]
    tol = {"rel": 1e-9, "abs": 1e-9 * money}
    for p, s in zip(body["paths"], body["summary"], strict=True):
        d = p["distribution"]
        assert set(d) == set(GROUPS)
        for t in range(len(p["quantity"])):
            where = (p["name"], t)
            tenants = sum(d[g][t] for g in TENANTS)
            owners = sum(d[g][t] for g in OWNERS)
            assert tenants == pytest.approx(p["consumer_surplus_change"][t], **tol), where
            assert owners == pytest.approx(p["producer_surplus_change"][t], **tol), where
            assert d["government"][t] == pytest.approx(p["government_revenue"][t], **tol), where
            assert sum(d[g][t] for g in GROUPS) == pytest.approx(-p["deadweight_loss"][t], **tol), where
            assert p["deadweight_loss"][t] >= -1e-9 * money, where
            if not p["binding"][t]:
                assert all(d[g][t] == 0.0 for g in GROUPS), where
        totals = s["distribution_totals"]
        n = len(p["quantity"])
        for g in GROUPS:
            assert totals[g] == pytest.approx(sum(d[g]), rel=1e-12, abs=1e-9 * money * n), (p["name"], g)
        total_tol = {"rel": 1e-9, "abs": 1e-9 * money * n}
        assert sum(totals[g] for g in TENANTS) == pytest.approx(
            s["total_consumer_surplus_change"], **total_tol
        )
        assert sum(totals[g] for g in OWNERS) == pytest.approx(
            s["total_producer_surplus_change"], **total_tol
        )
        assert totals["government"] == pytest.approx(s["total_government_revenue"], **total_tol)
        assert sum(totals.values()) == pytest.approx(-s["total_deadweight_loss"], **total_tol)


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("adjustment", [None, {"schedule": "stock", "rate": 0.3, "depreciation": 0.02}])
@pytest.mark.parametrize("eta", [-0.5, -1.6])
def test_every_policy_kinds_groups_add_up_to_the_surplus_changes(form, adjustment, eta):
    """Derived (MODEL.md section 15): for every policy kind, both forms, full and partial
    ceilings, with and without the stock, under inflation, monthly rents in yearly periods."""
    request = scenario(EVERY_KIND, form=form, adjustment=adjustment, eta=eta, inflation=0.02)
    body = simulate(request)
    for p in body["paths"][1:]:
        assert any(p["binding"]), p["name"]
    assert_groups_add_up(body, request)


def test_each_group_is_where_the_model_puts_it():
    """MODEL.md section 15 table: under a full ceiling there are no uncontrolled homes and no
    government; under a tax, subsidy, floor or quantity cap nothing is controlled and every
    tenant is in the "uncontrolled" group; a partial ceiling has all of them but government.
    Controlled tenants gain (P* - c) Qc, uncontrolled tenants lose (Pu - P*) Qu (x k)."""
    body = simulate(scenario(EVERY_KIND, k=12))
    free = path(body, "free")
    for policy in EVERY_KIND:
        d = path(body, policy["name"])["distribution"]
        if policy["kind"] == "price_ceiling" and "coverage" not in policy:
            zero = ("tenants_in_uncontrolled_homes", "owners_of_uncontrolled_homes", "government")
        elif policy["kind"] == "price_ceiling":
            zero = ("government",)
        else:
            zero = ("tenants_in_controlled_homes", "owners_of_controlled_homes")
        for g in zero:
            assert d[g] == [0.0] * 9, (policy["name"], g)
    partial = path(body, "partial")
    for t in range(1, 9):
        if partial["binding"][t]:
            p_star = free["consumer_price"][t]
            gain = 12 * (p_star - partial["covered_price"][t]) * partial["covered_quantity"][t]
            loss = 12 * (partial["uncovered_price"][t] - p_star) * partial["uncovered_quantity"][t]
            d = partial["distribution"]
            assert d["tenants_in_controlled_homes"][t] == pytest.approx(gain, rel=1e-12)
            assert d["tenants_in_uncontrolled_homes"][t] == pytest.approx(-loss, rel=1e-12)
            assert d["tenants_in_controlled_homes"][t] > 0 > d["tenants_in_uncontrolled_homes"][t]
            assert d["owners_of_uncontrolled_homes"][t] > 0 > d["owners_of_controlled_homes"][t]
    tax = path(body, "tax")
    for t in range(1, 9):  # the revenue of a unit tax: tau Q per price interval, x 12
        assert tax["distribution"]["government"][t] == pytest.approx(
            12 * 60.0 * tax["quantity"][t], rel=1e-12
        )


@given(extended_requests())
def test_groups_add_up_on_random_markets_of_both_forms(request):
    """Derived (MODEL.md section 15) on random markets of both forms, every policy kind, random
    shocks, schedules (the stock among them), inflation, coverage and indexing."""
    body = solved_or_none(request)
    assume(body is not None)
    assert_groups_add_up(body, request)


@given(requests(rationing="random"))
def test_under_random_rationing_there_is_no_distribution_and_a_caution_says_why(request):
    """MODEL.md section 15: under random rationing only the aggregates are reported: every
    path's distribution and every summary's distribution_totals are null, and a caution says
    why."""
    body = solved_or_none(request)
    assume(body is not None)
    assert all(p["distribution"] is None for p in body["paths"])
    assert all(s["distribution_totals"] is None for s in body["summary"])
    assert any("distribution" in c and "random rationing" in c for c in body["cautions"])


def test_efficient_rationing_has_no_such_caution_and_groups_scale_with_payments_per_period():
    """MODEL.md section 15: groups are money per model period, so k = 12 gives 12 times k = 1."""
    policies = [{"name": "freeze", "kind": "price_ceiling", "level": "base"}, *EVERY_KIND[5:]]
    yearly, monthly = simulate(scenario(policies, k=12)), simulate(scenario(policies, k=1))
    assert not any("random rationing" in c for c in yearly["cautions"])
    for a, b in zip(yearly["paths"], monthly["paths"], strict=True):
        for g in GROUPS:
            assert a["distribution"][g] == pytest.approx([12 * x for x in b["distribution"][g]], rel=1e-12)
    assert summary(yearly, "freeze")["distribution_totals"]["tenants_in_controlled_homes"] > 0
