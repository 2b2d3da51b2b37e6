"""Inflation through the public API (MODEL.md section 12): rent rules are nominal, curves and
welfare real. Every check goes through `service.simulate` (schemas, packing, kernel, response).

Sources: the table of MODEL.md section 12 (nominal rule -> real value), and identities derived
from it by algebra (marked "derived": worked out here, not taken from a publication). The
scalar reference is tests/reference.py (brentq roots, quad integrals).
"""

from __future__ import annotations

import copy

import pytest
from hypothesis import assume, given
from hypothesis import strategies as st

from service import ProblemError, simulate

from .. import reference
from ..strategies import floats, requests
from .additions import (
    FORMS,
    NOMINAL,
    POLICIES_WITH_MONEY,
    assert_same_paths,
    path,
    scales,
    scenario,
    solved_or_none,
)

SHOCKS = [
    {"shifter": "income", "profile": "step", "change": 0.12, "start": 2},
    {"shifter": "income", "profile": "growth", "rate": 0.03},
]
VARIANTS = {
    "plain": ({"schedule": "geometric", "rate": 0.3}, {}),
    "stock": ({"schedule": "stock", "rate": 0.3, "depreciation": 0.02}, {}),
    "partial": ({"schedule": "geometric", "rate": 0.3}, {"coverage": 0.6}),
}


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("variant", list(VARIANTS))
@pytest.mark.parametrize(("g", "pi"), [(0.02, 0.03), (0.05, 0.03), (-0.01, 0.06), (0.04, -0.02)])
def test_a_nominal_growth_cap_is_the_deflated_cap_without_inflation(form, variant, g, pi):
    """Derived (MODEL.md section 12): c_t = (1+g) Pc_(t-1) I_(t-1) in money is, in real money,
    (1+g)/(1+pi) Pc_(t-1): the real paths of a cap (1+g)/(1+pi) - 1 without inflation. An
    indexed cap ("inflation plus g") gives those of (1+pi+g)/(1+pi) - 1."""
    adjustment, extra = VARIANTS[variant]

    def body(cap, inflation):
        request = scenario([dict(cap, **extra)], form=form, adjustment=adjustment, shocks=SHOCKS)
        if inflation is not None:
            request["market"]["inflation"] = inflation
        return request, simulate(request)

    for indexed, real in ((False, (1 + g) / (1 + pi) - 1), (True, (1 + pi + g) / (1 + pi) - 1)):
        cap = {"name": "cap", "kind": "price_ceiling", "growth": g, "start": 2}
        if indexed:
            cap["indexed"] = True
        request, nominal = body(cap, pi)
        _, deflated = body({"name": "cap", "kind": "price_ceiling", "growth": real, "start": 2}, None)
        assert any(path(nominal, "cap")["binding"])
        assert_same_paths(nominal, deflated, *scales(request), rel=1e-10)


@given(requests(rationing="efficient"), floats(-0.05, 0.1), st.booleans())
def test_the_growth_cap_identity_holds_on_random_markets(request, pi, indexed):
    """Derived (MODEL.md section 12), as above, on random markets of both forms, random shocks
    and schedules, through the whole request path."""
    caps = [p for p in request["policies"] if "growth" in p]
    nominal = copy.deepcopy(dict(request, policies=caps))
    nominal["market"]["inflation"] = pi
    deflated = copy.deepcopy(dict(request, policies=caps))
    for p in nominal["policies"]:
        p["indexed"] = indexed
    for p in deflated["policies"]:
        p["growth"] = ((1 + pi + p["growth"]) if indexed else (1 + p["growth"])) / (1 + pi) - 1
    a, b = solved_or_none(nominal), solved_or_none(deflated)
    assume(a is not None and b is not None)
    assert_same_paths(a, b, *scales(request), rel=1e-8)


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("adjustment", [None, {"schedule": "stock", "rate": 0.3, "depreciation": 0.02}])
def test_indexed_rules_give_the_paths_without_inflation_bit_for_bit(form, adjustment):
    """MODEL.md section 12 (an identity stated there): an indexed level gives the paths of the
    same level without inflation; so do an indexed tax or subsidy (real tau), and the ad valorem
    rate and the quantity cap, which have no money in them. Bit for bit, real series only."""
    with_inflation = scenario(
        POLICIES_WITH_MONEY, form=form, adjustment=adjustment, inflation=[0.04, 0.02, 0.07]
    )
    without = scenario(POLICIES_WITH_MONEY, form=form, adjustment=adjustment)
    a, b = simulate(with_inflation), simulate(without)
    assert_same_paths(a, b, *scales(without))
    for name in ("ceiling", "freeze", "floor", "tax", "subsidy", "vat", "permits"):
        assert any(path(b, name)["binding"]), name
    assert "price_index" in a and "price_index" not in b


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize("pi", [0.03, [0.02, 0.05, 0.1]])
def test_a_nominal_freeze_has_the_real_rent_p0_over_the_price_index(form, pi):
    """MODEL.md section 12 table: a freeze holds the nominal rent at P0, so where it binds its
    real rent is P0 / I_t exactly and its nominal rent P0; nominal series are the real ones
    times the price index (exactly: one multiplication)."""
    request = scenario(
        [{"name": "freeze", "kind": "price_ceiling", "level": "base", "end": 6}], form=form, inflation=pi
    )
    body = simulate(request)
    index = body["price_index"]
    assert index == reference.price_index(request)  # I_t = prod (1 + pi_u), the last rate holds
    freeze = path(body, "freeze")
    assert freeze["binding"] == [False] + [True] * 6 + [False] * 2
    for t, binds in enumerate(freeze["binding"]):
        if binds:
            assert freeze["consumer_price"][t] == 1000.0 / index[t]
            assert freeze["nominal_consumer_price"][t] == pytest.approx(1000.0, rel=1e-15)
    for p in body["paths"]:
        for real, nominal in (("consumer_price", NOMINAL[0]), ("producer_price", NOMINAL[1])):
            assert p[nominal] == [x * i for x, i in zip(p[real], index, strict=True)]


@pytest.mark.parametrize("form", FORMS)
@pytest.mark.parametrize(
    ("kind", "field", "amount"),
    [
        ("unit_tax", "amount", 80.0),
        ("unit_subsidy", "amount", 80.0),
        ("price_floor", "level", 1300.0),
        ("price_ceiling", "level", 1100.0),
    ],
)
def test_money_rules_are_deflated_period_by_period(form, kind, field, amount):
    """MODEL.md section 12 table: a tax, subsidy, floor or ceiling level fixed in money is
    tau / I_t in real money of period t. Without a stock these policies have no memory, so
    period t under inflation is period t of the request without inflation at tau / I_t (bit for
    bit: the same division), and the scalar reference's period at tau / I_t (brentq, quad)."""
    request = scenario([{"name": "p", "kind": kind, field: amount}], form=form, horizon=5, inflation=0.05)
    body = simulate(request)
    index = body["price_index"]
    money = scales(request)[2]
    k = request["market"]["payments_per_period"]
    inflated = path(body, "p")
    assert any(inflated["binding"][1:])
    for t in range(1, 6):
        real = {"name": "p", "kind": kind, field: amount / index[t]}
        plain = path(simulate(scenario([real], form=form, horizon=5)), "p")
        for key in (
            "consumer_price",
            "producer_price",
            "quantity",
            "shortage",
            "excess_supply",
            "deadweight_loss",
        ):
            assert inflated[key][t] == plain[key][t], (t, key)
        row = reference.policy_period(reference.Period.of(request, t), real, t, 0.0, "efficient")
        assert inflated["consumer_price"][t] == pytest.approx(row.pc, rel=1e-9), t
        assert inflated["producer_price"][t] == pytest.approx(row.pp, rel=1e-9), t
        assert inflated["quantity"][t] == pytest.approx(row.q, rel=1e-9), t
        assert inflated["deadweight_loss"][t] == pytest.approx(k * row.dwl, rel=1e-7, abs=1e-9 * money), t


def test_inflation_erodes_a_nominal_tax_and_an_indexed_one_holds():
    """MODEL.md section 12: the real wedge of a nominal unit tax is tau / I_t, so under 5 %
    inflation it shrinks every period; an indexed tax keeps tau (derived: Pc - Pp is the wedge)."""
    policies = [
        {"name": "nominal", "kind": "unit_tax", "amount": 80.0},
        {"name": "indexed", "kind": "unit_tax", "amount": 80.0, "indexed": True},
    ]
    body = simulate(scenario(policies, horizon=6, inflation=0.05))
    index = body["price_index"]
    for t in range(1, 7):
        nominal, indexed = path(body, "nominal"), path(body, "indexed")
        assert nominal["consumer_price"][t] - nominal["producer_price"][t] == pytest.approx(80.0 / index[t])
        assert indexed["consumer_price"][t] - indexed["producer_price"][t] == pytest.approx(80.0)
        assert nominal["deadweight_loss"][t] < indexed["deadweight_loss"][t]


def test_a_nominal_ceiling_stops_binding_once_inflation_lowers_the_free_rent_below_it():
    """MODEL.md section 12: under deflation (pi < 0) a nominal ceiling's real level rises as
    P0/I_t grows, so a freeze that binds at first stops binding (derived from the table)."""
    request = scenario(
        [{"name": "freeze", "kind": "price_ceiling", "level": "base"}],
        shocks=[{"shifter": "income", "profile": "step", "change": 0.04}],
        horizon=8,
        inflation=-0.02,
    )
    body = simulate(request)
    freeze, free = path(body, "freeze"), path(body, "free")
    for t in range(1, 9):
        real_level = 1000.0 / body["price_index"][t]
        assert freeze["binding"][t] == (real_level < free["consumer_price"][t])
    assert freeze["binding"][1] and not freeze["binding"][-1]


# --- no inflation: nothing changes ------------------------------------------------------------


@pytest.mark.parametrize("neutral", [0, 0.0, [0.0], [0.0, 0.0, 0.0]])
def test_no_inflation_is_bit_for_bit_the_request_without_the_field(contract_request, neutral):
    """openapi/API.md "Additions": every answer without the new fields stays bit for bit as it is;
    inflation 0 (a number or a list of zeros) is no inflation: no price_index, no nominal
    series, the same scenario id. Likewise coverage 1 and indexed false."""
    plain = simulate(contract_request)
    assert "price_index" not in plain
    assert not any(key in p for p in plain["paths"] for key in NOMINAL)
    request = copy.deepcopy(contract_request)
    request["market"]["inflation"] = neutral
    for policy in request["policies"]:
        if policy["kind"] == "price_ceiling":
            policy["coverage"] = 1.0
        if policy["kind"] in ("price_ceiling", "price_floor", "unit_tax", "unit_subsidy"):
            policy["indexed"] = False
    assert simulate(request) == plain


def test_every_demo_without_the_new_fields_answers_as_with_them_at_their_defaults():
    """openapi/API.md "Additions" (bit for bit) on every /v1/paths demo that uses none of them."""
    from service.examples import examples

    checked = 0
    for entry in examples().values():
        request = entry["request"]
        if entry.get("endpoint", "/v1/paths") != "/v1/paths" or "inflation" in request["market"]:
            continue
        neutral = copy.deepcopy(request)
        neutral["market"]["inflation"] = 0
        assert simulate(neutral) == simulate(request)
        checked += 1
    assert checked >= 4


def test_indexed_without_inflation_changes_no_number(contract_request):
    """MODEL.md section 12: with I_t = 1 an indexed rule and a nominal one have the same real
    value (tau / 1 = tau), so every number is the same; the scenario id differs, because the
    request says something different."""
    request = copy.deepcopy(contract_request)
    for policy in request["policies"]:
        if policy["kind"] in ("price_ceiling", "price_floor", "unit_tax", "unit_subsidy"):
            policy["indexed"] = True
    a, b = simulate(request), simulate(contract_request)
    assert a["scenario_id"] != b["scenario_id"]
    assert a["paths"] == b["paths"] and a["summary"] == b["summary"]


def test_repeating_the_last_rate_of_an_inflation_list_is_the_same_scenario():
    """MODEL.md section 12: the last rate of the list holds to the horizon, so [0.02, 0.05, 0.05]
    is [0.02, 0.05] and [0.03, 0.03] is 0.03: the same answer and the same scenario id."""
    base = scenario([{"name": "cap", "kind": "price_ceiling", "growth": 0.02}], horizon=5)

    def answer(inflation):
        request = copy.deepcopy(base)
        request["market"]["inflation"] = inflation
        return simulate(request)

    assert answer([0.02, 0.05, 0.05]) == answer([0.02, 0.05])
    assert answer([0.03, 0.03]) == answer(0.03)
    assert answer([0.02, 0.05])["scenario_id"] != answer([0.05, 0.02])["scenario_id"]


@pytest.mark.parametrize(
    ("inflation", "policy"),
    [
        (10.0, {"name": "levy", "kind": "unit_tax", "amount": 10}),  # I_600 = 11^600: overflows
        (-0.99, {"name": "freeze", "kind": "price_ceiling", "level": 1000}),  # 0.01^600: underflows
    ],
)
def test_a_price_index_beyond_the_representable_range_is_refused_at_the_inflation(inflation, policy):
    # Allowed one by one, these rates over 600 periods take I_t past 1e308 or below 1e-308:
    # nominal prices would be infinite (null in JSON) or zero, numbers the model never means.
    request = {
        "market": {
            "price": 1000,
            "quantity": 10000,
            "form": "linear",
            "inflation": inflation,
            "demand": {"price_elasticity": -0.5},
            "supply": {"short_run_elasticity": 0.2, "long_run_elasticity": 1.0},
        },
        "adjustment": {"schedule": "linear", "periods": 3},
        "horizon": 600,
        "policies": [policy],
    }
    with pytest.raises(ProblemError) as refused:
        simulate(request)
    assert refused.value.problem["status"] == 422
    assert [e["pointer"] for e in refused.value.problem["errors"]] == ["/market/inflation"]
    request["horizon"] = 100  # within range: an answer, every nominal price finite and positive
    body = simulate(request)
    for answered in body["paths"]:
        assert all(0.0 < p < float("inf") for p in answered["nominal_consumer_price"])
