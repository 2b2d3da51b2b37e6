"""Small request builders shared by the engine tests (a base market and one policy on it)."""

from __future__ import annotations

import pytest
from hypothesis import assume

from service import ProblemError, simulate


def market(eta=-0.5, eps=1.0, form="linear", k=1, p0=100.0, q0=1000.0, demand=None, supply=None):
    """A market at (P0, Q0) with equal short- and long-run supply elasticity eps."""
    return {
        "price": p0,
        "quantity": q0,
        "payments_per_period": k,
        "form": form,
        "demand": {"price_elasticity": eta, "shifters": demand or {"income": 1.0}},
        "supply": {"short_run_elasticity": eps, "long_run_elasticity": eps, "shifters": supply or {}},
    }


def one_policy(policy, **kw):
    """Three periods of the free market and `policy` on market(**kw)."""
    return {"market": market(**kw), "horizon": 3, "policies": [{"name": "free", "kind": "none"}, policy]}


def supply_path(sr: float, lr: float, adjustment: dict, horizon: int) -> list[float]:
    """eps_t for t = 0..horizon of a free market with the given schedule."""
    body = simulate(
        {
            "market": {**market(), "supply": {"short_run_elasticity": sr, "long_run_elasticity": lr}},
            "adjustment": adjustment,
            "horizon": horizon,
            "policies": [{"name": "free", "kind": "none"}],
        }
    )
    return body["supply_elasticity"]


def solved(request):
    """The answer to a generated request; requests the model refuses are discarded."""
    try:
        return simulate(request)
    except ProblemError:
        assume(False)


def validation_base(**market_fields):
    """A valid five-period request with a linear schedule; market fields replaced."""
    m = {
        "price": 100.0,
        "quantity": 1000.0,
        "demand": {"price_elasticity": -0.5, "shifters": {"income": 1.0}},
        "supply": {"short_run_elasticity": 0.2, "long_run_elasticity": 1.0, "shifters": {"cost": -0.5}},
    }
    m.update(market_fields)
    return {
        "market": m,
        "adjustment": {"schedule": "linear", "periods": 3},
        "horizon": 5,
        "policies": [{"name": "free", "kind": "none"}],
    }


def problem_of(request) -> dict:
    """The 422 problem document simulate raises for `request`."""
    with pytest.raises(ProblemError) as info:
        simulate(request)
    assert info.value.status == 422
    return info.value.problem


def pointers(problem) -> list[str]:
    return [e["pointer"] for e in problem["errors"]]
