"""The compiled period pass on the additions of MODEL.md sections 12-15 (inflation, a durable
stock, partial coverage, who gains and who loses), driven directly (the request schemas do not
take these fields yet) and judged by the scalar reference (tests/reference.py: brentq, quad)."""

from __future__ import annotations

import copy

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from service.engine import kernel
from service.engine.batch import pack
from service.engine.paths import _kernel_inputs
from service.limits import MAX_SHIFTER_CHANGE
from service.simulation import load_scenario

from .. import reference

GROUPS = reference.GROUPS


def _strip(request: dict) -> dict:
    """The request without the additions, for today's schemas."""
    plain = copy.deepcopy(request)
    plain["market"].pop("inflation", None)
    if plain.get("adjustment", {}).get("schedule") == "stock":
        plain["adjustment"] = {"schedule": "linear", "periods": 0}
    for p in plain["policies"]:
        p.pop("coverage", None)
        p.pop("indexed", None)
    return plain


def run_kernel(request: dict):
    """Series (R, S, T+1), flags and summary of the kernel on `request`, additions included."""
    scenario = load_scenario(_strip(request))
    batch, rows = pack([scenario])
    eps, linear, constant, _, _, factor = kernel.prepare(batch, MAX_SHIFTER_CHANGE)
    ce = request["market"].get("form") == "constant_elasticity"
    arrays, policy = _kernel_inputs(batch, rows, eps, constant if ce else linear, factor)
    arrays["constant_elasticity"] = np.array([ce])
    index = np.array(reference.price_index(request))
    arrays["price_index"] = index[None, :]
    arrays["inflation"] = np.concatenate([[0.0], index[1:] / index[:-1] - 1.0])[None, :]
    adjustment = request.get("adjustment", {})
    if adjustment.get("schedule") == "stock":
        arrays["stock"] = np.array([True])
        arrays["stock_rate"] = np.array([reference.stock_rate(request)])
        delta = adjustment.get("depreciation")
        arrays["floor_share"] = np.array([0.0 if delta is None else 1.0 - delta])
    policy["indexed"] = np.array([bool(p.get("indexed", False)) for p in request["policies"]])
    policy["coverage"] = np.array([float(p.get("coverage", 1.0)) for p in request["policies"]])
    free = kernel.free_paths(arrays)
    return kernel.policy_paths(arrays, policy, np.ascontiguousarray(free[:, :2])), free


def market(form, eta=-0.6, sr=0.2, lr=1.8):
    return {
        "price": 1200.0,
        "quantity": 40000.0,
        "payments_per_period": 12,
        "form": form,
        "demand": {"price_elasticity": eta, "shifters": {"income": 1.0}},
        "supply": {"short_run_elasticity": sr, "long_run_elasticity": lr, "shifters": {"cost": -0.5}},
    }


def request_of(form, policies, adjustment=None, inflation=None, horizon=12, eta=-0.6, lr=1.8, shocks=None):
    m = market(form, eta=eta, lr=lr)
    if inflation is not None:
        m["inflation"] = inflation
    return {
        "market": m,
        "shocks": shocks
        if shocks is not None
        else [
            {"shifter": "income", "profile": "ramp", "change": 0.1, "periods": 4},
            {"shifter": "cost", "profile": "step", "change": 0.04, "start": 3},
        ],
        "adjustment": adjustment or {"schedule": "linear", "periods": 0},
        "horizon": horizon,
        "policies": policies,
    }


POLICIES = [
    {"name": "free", "kind": "none"},
    {"name": "freeze", "kind": "price_ceiling", "level": "base", "end": 6},
    {"name": "cap", "kind": "price_ceiling", "growth": 0.02, "coverage": 0.6},
    {"name": "cap+", "kind": "price_ceiling", "growth": 0.01, "indexed": True},
    {"name": "partial", "kind": "price_ceiling", "level": 1150.0, "coverage": 0.35, "start": 2},
    {"name": "levy", "kind": "unit_tax", "amount": 40.0},
    {"name": "voucher", "kind": "unit_subsidy", "amount": 60.0, "indexed": True},
    {"name": "floor", "kind": "price_floor", "level": 1500.0},
    {"name": "permits", "kind": "quantity_cap", "level": 40500.0},
]


def compare(request):
    (series, flags, _), _free = run_kernel(request)
    expected = reference.paths(request)
    k = request["market"].get("payments_per_period", 1)
    at = kernel.SERIES_INDEX
    scale_p, scale_q = request["market"]["price"], request["market"]["quantity"]
    for r, p in enumerate(request["policies"]):
        rows = expected[p["name"]]
        for t, row in enumerate(rows):

            def close(name, value, scale, r=r, t=t, p=p):
                got = series[r, at[name], t]
                assert got == pytest.approx(value, rel=1e-7, abs=1e-9 * scale), (p["name"], t, name)

            close("consumer_price", row.pc, scale_p)
            close("producer_price", row.pp, scale_p)
            close("quantity", row.q, scale_q)
            close("shortage", row.shortage, scale_q)
            money = scale_p * scale_q * k
            close("consumer_surplus_change", k * row.dcs, money)
            close("producer_surplus_change", k * row.dps, money)
            close("government_revenue", k * row.g, money)
            close("deadweight_loss", k * row.dwl, money)
            if row.covered_price is not None:
                close("covered_price", row.covered_price, scale_p)
                close("uncovered_price", row.uncovered_price, scale_p)
                close("covered_quantity", row.covered_quantity, scale_q)
                close("uncovered_quantity", row.uncovered_quantity, scale_q)
            if row.distribution is not None:
                for group in GROUPS:
                    close(group, row.distribution[group], money)
            assert bool(flags[r, 0, t]) == bool(row.binding), (p["name"], t)


@pytest.mark.parametrize("form", ["linear", "constant_elasticity"])
@pytest.mark.parametrize(
    ("adjustment", "inflation"),
    [
        (None, None),
        (None, 0.03),
        ({"schedule": "stock"}, None),
        ({"schedule": "stock", "half_life": 3.0, "depreciation": 0.01}, [0.04, 0.03, 0.02]),
        ({"schedule": "stock", "rate": 0.25, "depreciation": 0.0}, 0.02),
    ],
)
def test_every_policy_kind_matches_the_reference_with_the_additions(form, adjustment, inflation):
    compare(request_of(form, POLICIES, adjustment, inflation))


def test_a_ceiling_lifted_under_a_durable_stock_leaves_homes_missing_for_years():
    """Derived from the two curves (Nerlove 1958, The Dynamics of Supply, for the rule): after a
    freeze ends its gap to the free path shrinks by rho = (1-lambda)|eta|/(|eta| + lambda eps_LR)."""
    request = request_of(
        "linear",
        [
            {"name": "free", "kind": "none"},
            {"name": "freeze", "kind": "price_ceiling", "level": "base", "end": 5},
        ],
        {"schedule": "stock", "rate": 0.2},
        horizon=20,
        shocks=[{"shifter": "income", "profile": "step", "change": 0.1}],
    )
    (series, _, _), _ = run_kernel(request)
    q = series[:, kernel.SERIES_INDEX["quantity"]]
    gap = q[0] - q[1]
    rho = (1 - 0.2) * 0.6 / (0.6 + 0.2 * 1.8)
    assert gap[5] > 0
    np.testing.assert_allclose(gap[7:] / gap[6:-1], rho, rtol=1e-9)


@settings(max_examples=25, deadline=None)
@given(
    form=st.sampled_from(["linear", "constant_elasticity"]),
    eta=st.floats(-2.0, -0.2),
    lr=st.floats(0.4, 3.0),
    share=st.floats(0.1, 0.9),
    inflation=st.floats(0.0, 0.06),
    rate=st.floats(0.1, 1.0),
    stock=st.booleans(),
)
def test_random_markets_match_the_reference(form, eta, lr, share, inflation, rate, stock):
    policies = [
        {"name": "free", "kind": "none"},
        {"name": "cap", "kind": "price_ceiling", "growth": 0.01, "coverage": round(share, 3)},
        {"name": "levy", "kind": "unit_tax", "amount": 30.0},
    ]
    adjustment = {"schedule": "stock", "rate": round(rate, 3)} if stock else None
    compare(
        request_of(
            form, policies, adjustment, round(inflation, 4), horizon=8, eta=round(eta, 3), lr=round(lr, 3)
        )
    )
