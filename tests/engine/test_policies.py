"""Policies (MODEL.md section 5; stated in service/engine/policies.py, applied by the kernel):
what each policy leaves in the market, as facts that must hold in every market (hypothesis over
valid requests, through the public API)."""

from __future__ import annotations

import copy

from hypothesis import given

from service import simulate

from ..strategies import floats, requests
from .builders import solved


@given(requests())
def test_a_policy_that_never_binds_equals_the_free_market_exactly(request):
    body = solved(request)
    free = body["paths"][0]
    for path in body["paths"][1:]:
        if not any(path["binding"]):
            for name, values in path.items():
                if name not in ("name", "kind"):
                    assert values == free[name], (path["name"], name)


@given(requests(), floats(1.5, 5.0))
def test_a_ceiling_above_every_free_market_price_is_the_free_market(request, factor):
    body = solved(request)
    highest = max(body["paths"][0]["consumer_price"])
    request = copy.deepcopy(request)
    request["policies"] = [
        {"name": "free", "kind": "none"},
        {"name": "loose", "kind": "price_ceiling", "level": highest * factor},
    ]
    body = simulate(request)
    free, loose = body["paths"]
    assert not any(loose["binding"])
    assert {k: v for k, v in loose.items() if k not in ("name", "kind")} == {
        k: v for k, v in free.items() if k not in ("name", "kind")
    }


@given(requests(form="linear"), floats(0.85, 1.0), floats(0.0, 0.1))
def test_a_tighter_ceiling_never_lowers_the_shortage(request, level, tighter):
    request = copy.deepcopy(request)
    p0 = request["market"]["price"]
    request["policies"] = [
        {"name": "looser", "kind": "price_ceiling", "level": p0 * level},
        {"name": "tighter", "kind": "price_ceiling", "level": p0 * level * (1.0 - tighter)},
    ]
    body = solved(request)
    looser, tight = body["paths"]
    assert all(
        t >= s - 1e-9 * request["market"]["quantity"]
        for t, s in zip(tight["shortage"], looser["shortage"], strict=True)
    )
