"""The additions of MODEL.md sections 12-15 through the whole request path (schemas -> pack ->
kernel -> response), judged by the scalar reference (tests/reference.py: brentq roots, quad
integrals, a Python loop over periods that carries each path's stock) through the one
comparison of tests/engine/harness.py.

tests/engine/test_kernel_additions.py drives the kernel directly with the new inputs set by
hand; here the same numbers must come out of `service.simulate` and `service.simulate_many`
from request bodies that use the new fields, and every new response field (price_index,
nominal prices, covered and uncovered series, homes below the free path, distribution and its
totals, the stock's supply elasticity) must agree with the reference.
"""

from __future__ import annotations

import copy

from hypothesis import given
from hypothesis import strategies as st

from service import ProblemError, simulate, simulate_many
from service.schemas.compiled import compile_loader
from service.schemas.paths import PathsRequestSchema

from ..strategies import extended_requests
from .additions import path
from .harness import compare, every_demo


@given(extended_requests(form="linear"))
def test_linear_form_with_the_additions_matches_the_scalar_reference(request):
    compare(request)


@given(extended_requests(form="constant_elasticity"))
def test_constant_elasticity_form_with_the_additions_matches_the_scalar_reference(request):
    compare(request)


@given(extended_requests(stock=True))
def test_the_durable_stock_matches_the_scalar_reference(request):
    compare(request)


def test_every_demo_with_the_additions_matches_the_scalar_reference():
    """The demos that use the fields of MODEL.md 12-15 (test_reference.py compares them all)."""

    def uses(request):
        stock = request.get("adjustment", {}).get("schedule") == "stock"
        return (
            stock
            or "inflation" in request["market"]
            or any("coverage" in p or "indexed" in p for p in request["policies"])
        )

    assert every_demo(uses) >= 2


@given(st.lists(extended_requests(), min_size=2, max_size=5), st.data())
def test_a_scenario_with_the_additions_gives_the_same_bits_alone_and_in_a_batch(batch, data):
    """DEVELOPERS.md, rules of the house: one scenario gives the same bits alone or inside any
    batch, also when its neighbours differ in inflation, the stock and coverage (the batch then
    keeps series some scenarios do not report) and when a request without any of them sits
    beside them."""
    plain = copy.deepcopy(data.draw(st.sampled_from(batch)))
    plain["market"].pop("inflation")
    plain.pop("adjustment", None)
    sr, lr = (
        plain["market"]["supply"]["short_run_elasticity"],
        plain["market"]["supply"]["long_run_elasticity"],
    )
    if sr != lr:
        plain["adjustment"] = {"schedule": "linear", "periods": 3}
    for p in plain["policies"]:
        p.pop("coverage", None)
        p.pop("indexed", None)
    requests = [*batch, plain]
    together = simulate_many(requests)
    for request, body in zip(requests, together, strict=True):
        try:
            alone = simulate(request)
        except ProblemError as error:
            alone = error.problem
        assert body == alone


def test_a_mixed_batch_reports_each_scenarios_additions_only():
    """openapi/API.md "Additions": price_index and nominal prices only with inflation, covered series
    only on ceilings with coverage below 1, homes below the free path only under the stock,
    even inside one batch that has all of them."""
    from .additions import scenario

    partial = [{"name": "partial", "kind": "price_ceiling", "level": "base", "coverage": 0.4}]
    bodies = simulate_many(
        [
            scenario([], inflation=0.03),
            scenario(partial),
            scenario([], adjustment={"schedule": "stock", "rate": 0.2}),
            scenario([]),
        ]
    )
    has = [
        ("price_index" in b, "covered_price" in b["paths"][-1], "homes_below_free_path" in b["paths"][0])
        for b in bodies
    ]
    assert has == [(True, False, False), (False, True, False), (False, False, True), (False, False, False)]
    assert all("covered_price" not in path(b, "free") for b in bodies)


@given(extended_requests())
def test_the_fast_loader_reads_the_additions_as_marshmallow_does(request):
    """schemas/compiled.py: the generated fast path loads every valid request with the new fields
    (inflation lists, indexed flags, coverage, the stock schedule) to the same scenario as
    marshmallow, so it can only make a request cheaper, never change its answer or its id."""
    schema = PathsRequestSchema()
    fast = compile_loader(schema)
    assert fast is not None
    assert fast(copy.deepcopy(request)) == schema.load(request)
