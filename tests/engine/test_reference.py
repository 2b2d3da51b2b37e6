"""The vectorised engine against the scalar reference (brentq roots, quad integrals).

Random valid markets of both forms, every policy kind, random shocks, schedules and
rationing rules: every reported number must agree with tests/reference.py (the comparison
itself is tests/engine/harness.py, shared with the tests of the additions).
"""

from __future__ import annotations

from hypothesis import given

from ..strategies import requests
from .harness import compare, every_demo


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
    assert every_demo() >= 6
