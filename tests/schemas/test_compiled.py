"""The generated fast loader accepts exactly the valid requests, loading each to the same value
as marshmallow, and hands everything else to marshmallow (which writes the errors)."""

from __future__ import annotations

import copy

import orjson
import pytest
from hypothesis import given
from marshmallow import ValidationError

from service.examples import example_request, examples
from service.schemas.compiled import Rejected, compile_loader
from service.schemas.paths import BatchRequestSchema, PathsRequestSchema

from ..http.test_hostile_corpus import CASES
from ..strategies import requests

SCHEMA = PathsRequestSchema()
FAST = compile_loader(SCHEMA)


def _fast(body):
    try:
        return FAST(body)
    except Rejected:
        return Rejected


def test_the_paths_schema_compiles():
    assert FAST is not None
    assert compile_loader(BatchRequestSchema()) is not None


@given(requests())
def test_a_valid_request_loads_to_the_same_scenario_either_way(request):
    assert _fast(copy.deepcopy(request)) == SCHEMA.load(request)


@pytest.mark.parametrize(
    "name", [n for n, e in examples().items() if e.get("endpoint", "/v1/paths") == "/v1/paths"]
)
def test_every_paths_demo_loads_to_the_same_scenario_either_way(name):
    body = example_request(name)
    assert _fast(copy.deepcopy(body)) == SCHEMA.load(body)


def _decoded(body):
    """The JSON document of a corpus body (malformed JSON never reaches a schema: None)."""
    if isinstance(body, (str, bytes)):
        try:
            return orjson.loads(body)
        except orjson.JSONDecodeError:
            return None
    return body


DOCUMENTS = [(case[0], doc) for case in CASES if (doc := _decoded(case[1])) is not None]


@pytest.mark.parametrize(("name", "body"), DOCUMENTS, ids=[d[0] for d in DOCUMENTS])
def test_a_hostile_body_is_never_accepted_where_marshmallow_refuses_it(name, body):
    try:
        expected = SCHEMA.load(copy.deepcopy(body))
    except ValidationError:
        assert _fast(copy.deepcopy(body)) is Rejected
    else:
        assert _fast(copy.deepcopy(body)) in (expected, Rejected)


@pytest.mark.parametrize(
    "change",
    [
        lambda r: r["market"].update(price=True),
        lambda r: r["market"].update(price=float("nan")),
        lambda r: r["market"].update(price=float("inf")),
        lambda r: r["market"].update(price=0.0),
        lambda r: r["market"].update(extra=1),
        lambda r: r.update(horizon=12.5),
        lambda r: r.update(horizon="12"),
        lambda r: r["policies"].append(dict(r["policies"][0])),
        lambda r: r["policies"][0].update(kind="unknown"),
        lambda r: r["market"]["demand"].update(price_elasticity=0.0),
        lambda r: r["shocks"].append({"shifter": "nowhere", "profile": "step", "change": 0.1}),
    ],
)
def test_each_kind_of_invalid_value_is_rejected_by_the_fast_path(contract_request, change):
    change(contract_request)
    with pytest.raises(ValidationError):
        SCHEMA.load(copy.deepcopy(contract_request))
    assert _fast(contract_request) is Rejected
