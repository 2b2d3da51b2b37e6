"""Builders and comparisons shared by the tests of the additions (MODEL.md sections 12-20:
inflation, the durable stock, partial coverage, who gains and who loses, homes as buildings),
all of which go through the public API (`service.simulate`, `service.simulate_many`). The
comparison with the scalar reference is tests/engine/harness.py."""

from __future__ import annotations

import pytest

from service import ProblemError, simulate

from .. import reference

#: Series that hold money per model period (x k); every other series is a price or a quantity.
MONEY = (
    "consumer_surplus_change",
    "producer_surplus_change",
    "government_revenue",
    "deadweight_loss",
    "misallocation_loss",
    "cumulative_deadweight_loss",
    "discounted_deadweight_loss",
)
NOMINAL = ("nominal_consumer_price", "nominal_producer_price")
COVERAGE = ("covered_price", "uncovered_price", "covered_quantity", "uncovered_quantity")
STOCK = ("homes_below_free_path", "rent_above_free_path")
#: Who gains and who loses (MODEL.md 15 and 20): the seven groups, the tenants' groups (they
#: sum to the change in consumer surplus) and the owners' (producer surplus); one home, the
#: scalar reference.
GROUPS, TENANTS, OWNERS = reference.GROUPS, reference.TENANTS, reference.OWNERS
FORMS = ("linear", "constant_elasticity")
#: One policy of every kind (and partial coverage, a freeze, a cap) on the market of scenario()
#: (P0 = 1000, Q0 = 10,000): each binds under scenario()'s demand step.
EVERY_KIND = [
    {"name": "ceiling", "kind": "price_ceiling", "level": 1040.0},
    {"name": "freeze", "kind": "price_ceiling", "level": "base", "end": 5},
    {"name": "cap", "kind": "price_ceiling", "growth": 0.01, "start": 2},
    {"name": "partial", "kind": "price_ceiling", "level": 1040.0, "coverage": 0.6},
    {"name": "partial cap", "kind": "price_ceiling", "growth": 0.0, "coverage": 0.3, "start": 2, "end": 6},
    {"name": "floor", "kind": "price_floor", "level": 1200.0},
    {"name": "tax", "kind": "unit_tax", "amount": 60.0},
    {"name": "vat", "kind": "ad_valorem_tax", "rate": 0.06},
    {"name": "subsidy", "kind": "unit_subsidy", "amount": 60.0, "end": 4},
    {"name": "permits", "kind": "quantity_cap", "level": 10050.0},
]
#: Every rule with money in it, indexed (MODEL.md 12), with the two kinds that have none.
POLICIES_WITH_MONEY = [
    {"name": "ceiling", "kind": "price_ceiling", "level": 1040.0, "indexed": True},
    {"name": "freeze", "kind": "price_ceiling", "level": "base", "indexed": True, "coverage": 0.7},
    {"name": "floor", "kind": "price_floor", "level": 1150.0, "indexed": True},
    {"name": "tax", "kind": "unit_tax", "amount": 60.0, "indexed": True},
    {"name": "subsidy", "kind": "unit_subsidy", "amount": 60.0, "indexed": True},
    {"name": "vat", "kind": "ad_valorem_tax", "rate": 0.08},
    {"name": "permits", "kind": "quantity_cap", "level": 10100.0},
]


def market(
    form="linear",
    eta=-0.5,
    sr=0.2,
    lr=1.5,
    p0=1000.0,
    q0=10000.0,
    k=12,
    inflation=None,
    demand=None,
    supply=None,
):
    """A rental market at (P0, Q0): monthly rents, yearly periods by default."""
    m = {
        "price": p0,
        "quantity": q0,
        "payments_per_period": k,
        "form": form,
        "demand": {"price_elasticity": eta, "shifters": {"income": 1.0} if demand is None else demand},
        "supply": {
            "short_run_elasticity": sr,
            "long_run_elasticity": lr,
            "shifters": {"cost": -0.5} if supply is None else supply,
        },
    }
    if inflation is not None:
        m["inflation"] = inflation
    return m


def scenario(policies, horizon=8, shocks=None, adjustment=None, welfare=None, free=True, **market_kw):
    """A request: incomes up 12 % from period 1 (rents rise, so ceilings bind) unless `shocks`
    says otherwise, the free market first unless free=False."""
    request = {
        "market": market(**market_kw),
        "shocks": [{"shifter": "income", "profile": "step", "change": 0.12}] if shocks is None else shocks,
        "adjustment": adjustment or {"schedule": "geometric", "rate": 0.3},
        "horizon": horizon,
        "policies": ([{"name": "free", "kind": "none"}] if free else []) + list(policies),
    }
    if welfare is not None:
        request["welfare"] = welfare
    return request


def path(body, name):
    """One policy's path of a /v1/paths body, by name."""
    return next(p for p in body["paths"] if p["name"] == name)


def summary(body, name):
    return next(s for s in body["summary"] if s["name"] == name)


def solved_or_none(request):
    """simulate's body, or None where the model refuses the request (a 422 problem)."""
    try:
        return simulate(request)
    except ProblemError as error:
        assert error.status == 422, error.problem
        return None


def real_series(p) -> list[str]:
    """The names of a path's series in real money or quantities (everything but the nominal
    prices, the flags and the distribution)."""
    return [k for k in p if k not in ("name", "kind", "distribution", "binding", "vs_free_path", *NOMINAL)]


def assert_same_paths(a, b, scale_price, scale_quantity, scale_money, rel=0.0, names=None):
    """Every real series and distribution group of the paths in bodies a and b agree: bit for
    bit with rel=0, else to rel (and an absolute floor of rel times the scale, for values near 0).

    A period where only one of them binds is a tie (the policy's value at the free-market
    value to rounding): both are then the free market, so their numbers still agree."""
    for pa in a["paths"]:
        if names is not None and pa["name"] not in names:
            continue
        pb = path(b, pa["name"])
        assert real_series(pa) == real_series(pb), pa["name"]
        if rel == 0.0:
            assert pa["binding"] == pb["binding"], pa["name"]
        for key in real_series(pa):
            scale = scale_money if key in MONEY else scale_price if "price" in key else scale_quantity
            _same(pa[key], pb[key], rel, scale, (pa["name"], key))
        assert ("vs_free_path" in pa) == ("vs_free_path" in pb), pa["name"]
        for key in pa.get("vs_free_path", {}):
            _same(pa["vs_free_path"][key], pb["vs_free_path"][key], rel, scale_money, (pa["name"], key))
        assert (pa["distribution"] is None) == (pb["distribution"] is None)
        for group in GROUPS if pa["distribution"] else ():
            _same(pa["distribution"][group], pb["distribution"][group], rel, scale_money, (pa["name"], group))


def _same(x, y, rel, scale, where):
    if rel == 0.0:
        assert x == y, where
    else:
        assert x == pytest.approx(y, rel=rel, abs=rel * scale), where


def scales(request):
    """Scales of price, quantity and money (per model period) of a request."""
    m = request["market"]
    p0, q0 = m["price"], m["quantity"]
    return p0, q0, m.get("payments_per_period", 1) * p0 * q0
