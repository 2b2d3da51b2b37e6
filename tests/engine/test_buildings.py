"""Homes as buildings and the full cost of a rule (MODEL.md sections 16-20) through the public
API, judged by the scalar reference (tests/reference.py) through the one comparison of
tests/engine/harness.py: homes standing and empty, the build limit, a ceiling's controlled and
other homes with exempt new homes and vacancy decontrol, conversion, renters against the free
path, households drawn in, the impact elasticity under the stock, and the other curve form.

Series and summary figures read (API.md "Second additions"): per path `vacant_homes`,
`converted_homes`, `vs_free_path.renters`, `vs_free_path.extra_rent`, `covered_price`,
`uncovered_price`, `covered_quantity`, `uncovered_quantity`, `marginal_value`,
`marginal_cost`, `distribution.households_drawn_in` (besides every series of sections 1-15);
per summary `vs_free_path_totals.{renters, renters_discounted, renters_after_end, extra_rent,
extra_rent_after_end}`, `final_vacant_homes`, `total_converted_homes`,
`distribution_totals.households_drawn_in`, `other_form.{form, discounted_deadweight_loss,
final_consumer_price, peak_shortage}`; `supply_elasticity[0]` and `reduced_form`.
"""

from __future__ import annotations

import copy

import pytest
from hypothesis import given
from hypothesis import strategies as st

from service import ProblemError, simulate

from .. import reference
from ..strategies import building_requests
from .additions import FORMS, path, scenario, summary
from .harness import OTHER_FORM, compare

#: Incomes up 12 % in period 1 and 3 % a year after: rents keep rising, so rules bind.
RISING = [
    {"shifter": "income", "profile": "step", "change": 0.12},
    {"shifter": "income", "profile": "growth", "rate": 0.03, "start": 2},
]

POLICIES = [
    {"name": "old buildings frozen", "kind": "price_ceiling", "level": "base", "coverage": 0.4, "end": 6},
    {
        "name": "new homes exempt",
        "kind": "price_ceiling",
        "growth": 0.0,
        "coverage": 0.6,
        "new_homes": "exempt",
    },
    {"name": "cap, exempt", "kind": "price_ceiling", "growth": 0.01, "new_homes": "exempt", "start": 2},
    {
        "name": "cap with decontrol",
        "kind": "price_ceiling",
        "growth": 0.01,
        "vacancy_decontrol": 0.25,
        "coverage": 0.7,
        "start": 2,
    },
    {"name": "freeze", "kind": "price_ceiling", "level": "base", "end": 4},
    {"name": "floor", "kind": "price_floor", "level": 1300.0},
    {"name": "permits", "kind": "quantity_cap", "level": 10300.0},
    {"name": "voucher", "kind": "unit_subsidy", "amount": 60.0},
    {"name": "levy", "kind": "unit_tax", "amount": 40.0, "end": 5},
]

ADJUSTMENTS = [
    {"schedule": "stock", "rate": 0.3, "depreciation": 0.01, "build_limit": 0.02, "conversion": 0.05},
    {"schedule": "stock", "half_life": 3.0, "depreciation": 0.02},
    {"schedule": "stock", "rate": 0.5, "build_limit": 0.01, "conversion": 0.3},
    {"schedule": "stock", "depreciation": 0.0, "build_limit": 0.03},
]


def buildings(form="linear", adjustment=None, policies=None, **kw):
    """A 12-year request under the stock schedule with the policies of POLICIES."""
    return scenario(
        POLICIES if policies is None else policies,
        horizon=12,
        shocks=copy.deepcopy(RISING),
        adjustment=copy.deepcopy(adjustment or ADJUSTMENTS[0]),
        form=form,
        **kw,
    )


# --- Fixed cases ---------------------------------------------------------------------------------


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("adjustment", ADJUSTMENTS, ids=["bounds+conversion", "half-life", "fast", "no-loss"])
def test_every_new_field_matches_the_scalar_reference(form, adjustment):
    """MODEL.md 16-20, every series and summary figure of a request that uses every new field."""
    assert compare(buildings(form, adjustment))


@pytest.mark.parametrize("form", FORMS)
def test_new_fields_under_inflation_and_monthly_rents_match_the_reference(form):
    """Nominal rules (MODEL.md 12) on the groups of section 17, k = 12, discounting."""
    request = buildings(form, inflation=[0.03, 0.02], welfare={"discount_rate": 0.035})
    for policy in request["policies"]:
        if "growth" in policy:
            policy["indexed"] = True
    assert compare(request)


@pytest.mark.parametrize("form", FORMS)
def test_vacancy_decontrol_without_a_stock_matches_the_reference(form):
    """MODEL.md 17: decontrol on any schedule (Sc = s Qs_t, Su = (1-s) Qs_t without a stock)."""
    policies = [
        {"name": "cap", "kind": "price_ceiling", "growth": 0.0, "vacancy_decontrol": 0.2},
        {
            "name": "partial",
            "kind": "price_ceiling",
            "growth": 0.01,
            "coverage": 0.5,
            "vacancy_decontrol": 0.6,
        },
        {"name": "full turnover", "kind": "price_ceiling", "growth": 0.0, "vacancy_decontrol": 1.0},
    ]
    request = scenario(policies, horizon=10, shocks=copy.deepcopy(RISING), form=form)
    assert compare(request)
    body = simulate(request)
    free, full = path(body, "free"), path(body, "full turnover")
    assert not any(full["binding"])  # tau = 1: every tenancy pays the market rent
    assert full["consumer_price"] == pytest.approx(free["consumer_price"], rel=1e-12)
    assert any(path(body, "cap")["binding"])


def test_a_lifted_freeze_shows_renters_losing_after_its_end():
    """MODEL.md 19 (derived): after a freeze ends, homes stay below the free path and renters
    lose against it; the summary's after-end totals say so, with the reference's numbers."""
    freeze = {"name": "freeze", "kind": "price_ceiling", "level": "base", "start": 2, "end": 5}
    request = buildings(
        policies=[freeze], adjustment={"schedule": "stock", "rate": 0.3, "depreciation": 0.01}
    )
    assert compare(request)
    body = simulate(request)
    p, s = path(body, "freeze"), summary(body, "freeze")
    after = [t for t in range(6, 13) if p["homes_below_free_path"][t] > 0]
    assert len(after) >= 5
    assert all(p["vs_free_path"]["renters"][t] < 0 for t in after)
    assert (
        s["vs_free_path_totals"]["renters_after_end"] < 0 < s["vs_free_path_totals"]["extra_rent_after_end"]
    )
    free = path(body, "free")
    assert all(v == 0.0 for v in free["vs_free_path"]["renters"] + free["vs_free_path"]["extra_rent"])


def test_a_whole_market_rule_with_defaults_written_out_is_unchanged():
    """MODEL.md 16-17: new_homes "covered" and conversion 0 written out give the same answer,
    scenario id included, as a request without them (s = 1, no decontrol: sections 13 and 5)."""
    policies = [
        {"name": "freeze", "kind": "price_ceiling", "level": "base", "end": 5},
        {"name": "cap", "kind": "price_ceiling", "growth": 0.01},
    ]
    plain = buildings(policies=policies, adjustment={"schedule": "stock", "rate": 0.3, "depreciation": 0.01})
    written = copy.deepcopy(plain)
    written["adjustment"]["conversion"] = 0.0
    for policy in written["policies"][1:]:
        policy["new_homes"] = "covered"
    assert simulate(written) == simulate(plain)


# --- Random requests -----------------------------------------------------------------------------


@given(building_requests(form="linear"))
def test_linear_form_with_buildings_matches_the_scalar_reference(request):
    compare(request)


@given(building_requests(form="constant_elasticity"))
def test_constant_elasticity_form_with_buildings_matches_the_scalar_reference(request):
    compare(request)


@given(building_requests(stock=False))
def test_vacancy_decontrol_on_random_markets_without_a_stock_matches_the_reference(request):
    compare(request)


# --- The other curve form ------------------------------------------------------------------------


def assert_other_form_is_the_other_request(request) -> None:
    """MODEL.md 20: a summary's other_form holds the figures of the same request sent with the
    other `form` (each policy alone: a path's numbers do not depend on its neighbours), or
    null where that request has no answer."""
    try:
        body = simulate(request)
    except ProblemError:
        return
    other = "constant_elasticity" if request["market"].get("form", "linear") == "linear" else "linear"
    for policy in request["policies"]:
        alone = copy.deepcopy(dict(request, policies=[policy]))
        alone["market"]["form"] = other
        figures = summary(body, policy["name"])["other_form"]
        try:
            direct = summary(simulate(alone), policy["name"])
        except ProblemError as error:
            assert error.status == 422
            assert figures is None, policy["name"]
            continue
        assert figures is not None, policy["name"]
        assert figures["form"] == other
        for name in OTHER_FORM:
            assert figures[name] == pytest.approx(direct[name], rel=1e-12, abs=1e-12), (policy["name"], name)


@pytest.mark.parametrize("form", FORMS)
def test_other_form_is_the_same_request_in_the_other_form(form):
    assert_other_form_is_the_other_request(buildings(form))
    assert_other_form_is_the_other_request(
        scenario([{"name": "tax", "kind": "unit_tax", "amount": 50.0}], form=form)
    )


def test_other_form_is_null_where_the_other_form_has_no_answer():
    """A demand fall the constant-elasticity form absorbs but the linear form prices to zero."""
    request = scenario(
        [{"name": "freeze", "kind": "price_ceiling", "level": "base"}],
        form="constant_elasticity",
        eta=-0.3,
        shocks=[{"shifter": "income", "profile": "step", "change": -0.8}],
    )
    assert reference.other_form(request)["freeze"] is None
    body = simulate(request)
    assert all(s["other_form"] is None for s in body["summary"])
    assert_other_form_is_the_other_request(request)


@given(building_requests(), st.booleans())
def test_other_form_on_random_requests(request, stock):
    if not stock:
        request = copy.deepcopy(request)
        request.pop("adjustment")
        sr = request["market"]["supply"]["short_run_elasticity"]
        if sr != request["market"]["supply"]["long_run_elasticity"]:
            request["adjustment"] = {"schedule": "geometric", "rate": 0.4}
        for policy in request["policies"]:
            policy.pop("new_homes", None)
    assert_other_form_is_the_other_request(request)
