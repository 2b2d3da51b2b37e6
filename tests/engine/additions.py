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
    return [k for k in p if k not in ("name", "kind", "distribution", "binding", *NOMINAL)]


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
