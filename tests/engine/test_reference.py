"""The vectorised engine against the scalar reference (brentq roots, quad integrals).

Random valid markets of both forms, every policy kind, random shocks, schedules and
rationing rules: every reported number must agree with tests/reference.py.
"""

from __future__ import annotations

import pytest
from hypothesis import given

from service import ProblemError, simulate

from .. import reference
from ..strategies import requests

FIELDS = {
    "consumer_price": "pc",
    "producer_price": "pp",
    "quantity": "q",
    "quantity_demanded": "qd",
    "quantity_supplied": "qs",
    "shortage": "shortage",
    "excess_supply": "excess",
}
MONEY = {
    "consumer_surplus_change": "dcs",
    "producer_surplus_change": "dps",
    "government_revenue": "g",
    "deadweight_loss": "dwl",
    "misallocation_loss": "mis",
}


def _reference_infeasible(request) -> bool:
    """True where the reference finds Q, Pc or Pp <= 0, or a linear P*, Q* <= 0."""
    try:
        rows = reference.paths(request)
    except (ValueError, ZeroDivisionError, OverflowError):
        return True
    for t in range(1, request["horizon"] + 1):
        p, q = reference.free_market(reference.Period.of(request, t))
        if p <= 0 or q <= 0:
            return True
    return any(
        r.q <= 1e-9 * request["market"]["quantity"] or r.pc <= 0 or r.pp <= 0
        for v in rows.values()
        for r in v
    )


def compare(request) -> None:
    try:
        body = simulate(request)
    except ProblemError as error:
        assert error.status == 422
        assert _reference_infeasible(request), error.problem
        return
    expected = reference.paths(request)
    p0, q0 = request["market"]["price"], request["market"]["quantity"]
    k = request["market"].get("payments_per_period", 1)
    scale = {"price": p0, "quantity": q0, "money": k * p0 * q0}
    for path in body["paths"]:
        rows = expected[path["name"]]
        for t, row in enumerate(rows):
            where = f"{path['name']} t={t}"
            if path["binding"][t] != row.binding:
                # A tie (policy parameter at the free-market value to rounding): both answers
                # are the free market, so only the flag may differ.
                free = expected["free"][t]
                assert abs(row.pc - free.pc) <= 1e-9 * p0 and abs(row.q - free.q) <= 1e-9 * q0, where
            for name, attr in FIELDS.items():
                unit = scale["price"] if "price" in name else scale["quantity"]
                assert path[name][t] == pytest.approx(getattr(row, attr), rel=1e-8, abs=1e-9 * unit), (
                    where,
                    name,
                )
            for name, attr in MONEY.items():
                assert path[name][t] == pytest.approx(
                    k * getattr(row, attr), rel=1e-7, abs=1e-9 * scale["money"]
                ), (
                    where,
                    name,
                )
        discounted = sum(k * r.dwl * reference.discount_factor(request, s) for s, r in enumerate(rows))
        assert path["discounted_deadweight_loss"][-1] == pytest.approx(
            discounted, rel=1e-7, abs=1e-9 * scale["money"]
        )


@given(requests(form="linear"))
def test_linear_form_matches_the_scalar_reference(request):
    compare(request)


@given(requests(form="constant_elasticity"))
def test_constant_elasticity_form_matches_the_scalar_reference(request):
    compare(request)


@given(requests(rationing="random"))
def test_random_rationing_misallocation_matches_quadrature(request):
    compare(request)


def test_every_demo_scenario_matches_the_scalar_reference():
    from service.examples import examples

    compared = 0
    for entry in examples().values():
        if entry.get("endpoint", "/v1/paths") == "/v1/paths":
            compare(entry["request"])
            compared += 1
    assert compared >= 4
