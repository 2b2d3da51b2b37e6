"""The Python API: request dicts in, response bodies out, exactly as over HTTP.

`simulate(request)` returns the body of POST /v1/paths or raises ProblemError carrying the
problem document that the endpoint would answer. `simulate_many(requests)` validates each
request on its own, computes all valid ones in one vectorised engine call, and returns one
body or one problem document per request, in order.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
from collections.abc import Sequence
from typing import Any

from marshmallow import ValidationError

from . import engine
from .api.schemas import PathsRequestSchema
from .problems import ProblemError, engine_problem, validation_problem

__all__ = ["compute", "load_scenario", "render", "scenario_id", "simulate", "simulate_many"]

_REQUEST = PathsRequestSchema()


def load_scenario(request: Any, prefix: str = "") -> engine.Scenario:
    """Validate one request body; raise ProblemError (422) with pointers under `prefix`."""
    if not isinstance(request, dict):
        raise ProblemError(validation_problem(["Must be a JSON object."], prefix))
    try:
        return _REQUEST.load(request)
    except ValidationError as error:
        raise ProblemError(validation_problem(error.messages, prefix)) from None


def scenario_id(scenario: engine.Scenario) -> str:
    """Hex sha-256 of the normalised scenario (defaults filled in) and the model version."""
    canonical = json.dumps(
        {"model_version": engine.MODEL_VERSION, "scenario": dataclasses.asdict(scenario)},
        sort_keys=True,
        separators=(",", ":"),
    )
    return hashlib.sha256(canonical.encode()).hexdigest()


def render(
    scenario: engine.Scenario, result: engine.ScenarioResult, sid: str, lists: bool = True
) -> dict[str, Any]:
    """The /v1/paths response body of one computed scenario.

    With lists=False the series stay numpy arrays (for orjson's OPT_SERIALIZE_NUMPY, which
    writes the same bytes without building millions of Python floats).
    """

    def out(a):
        return a.tolist() if lists else a

    return {
        "scenario_id": sid,
        "model_version": engine.MODEL_VERSION,
        "periods": list(range(result.horizon + 1)),
        "supply_elasticity": out(result.supply_elasticity),
        "reduced_form": result.reduced_form,
        "paths": [
            {"name": p.name, "kind": p.kind, **{k: out(v) for k, v in p.series.items()}} for p in result.paths
        ],
        "summary": [dataclasses.asdict(s) for s in result.summary],
        "cautions": list(result.cautions),
    }


def compute(
    scenarios: Sequence[engine.Scenario], prefixes: Sequence[str] | None = None, lists: bool = True
) -> list[dict[str, Any]]:
    """Bodies (or problem documents, marked by their `status`) of valid scenarios, in order."""
    outcomes = engine.simulate(scenarios)
    out: list[dict[str, Any]] = []
    for i, (scenario, outcome) in enumerate(zip(scenarios, outcomes, strict=True)):
        if isinstance(outcome, engine.EngineError):
            out.append(engine_problem(outcome, prefixes[i] if prefixes else ""))
        else:
            out.append(render(scenario, outcome, scenario_id(scenario), lists))
    return out


def simulate(request: dict[str, Any]) -> dict[str, Any]:
    """Body of POST /v1/paths for one request; raises ProblemError on invalid input."""
    scenario = load_scenario(request)
    (body,) = compute([scenario])
    if "status" in body:
        raise ProblemError(body)
    return body


def simulate_many(requests: Sequence[Any], prefix: str = "", lists: bool = True) -> list[dict[str, Any]]:
    """One body or one problem document per request, in order, from one engine call.

    `prefix` formats the pointer prefix of request i (e.g. "/scenarios/{i}"); none by default.
    lists=False keeps series as numpy arrays (see render).
    """
    loaded: list[engine.Scenario] = []
    where: list[int] = []
    out: list[dict[str, Any] | None] = [None] * len(requests)
    for i, request in enumerate(requests):
        try:
            loaded.append(load_scenario(request, prefix.format(i=i)))
            where.append(i)
        except ProblemError as error:
            out[i] = error.problem
    if loaded:
        bodies = compute(loaded, [prefix.format(i=i) for i in where], lists)
        for i, body in zip(where, bodies, strict=True):
            out[i] = body
    return [b for b in out if b is not None]
