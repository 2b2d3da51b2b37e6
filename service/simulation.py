"""The Python API: request dicts in, response bodies out, exactly as over HTTP.

`simulate(request)` returns the body of POST /v1/paths or raises ProblemError carrying the
problem document that the endpoint would answer. `simulate_many(requests)` validates each
request on its own, computes all valid ones in one vectorised engine call, and returns one
body or one problem document per request, in order.
"""

from __future__ import annotations

import contextlib
import dataclasses
import gc
import hashlib
from collections.abc import Sequence
from typing import Any

import orjson

from . import engine
from .problems import ProblemError, engine_problem, load_request
from .schemas.normal import normalised
from .schemas.paths import PathsRequestSchema

__all__ = [
    "compute",
    "load_scenario",
    "normalised_request",
    "render",
    "scenario_id",
    "simulate",
    "simulate_many",
]

_REQUEST = PathsRequestSchema()


@contextlib.contextmanager
def _no_cyclic_gc():
    """Pause the cyclic garbage collector while a batch builds millions of small objects.

    Nothing here creates reference cycles, and the collector's repeated passes over the
    growing heap otherwise cost more than the model (measured: 1.2 s of 1.6 s for 2,000
    scenarios x 4 policies x 41 periods). Reference counting still frees everything.
    """
    enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if enabled:
            gc.enable()


def load_scenario(request: Any, prefix: str = "") -> engine.Scenario:
    """Validate one request body; raise ProblemError (422) with pointers under `prefix`."""
    return load_request(_REQUEST, request, prefix)


def normalised_request(request: dict[str, Any]) -> dict[str, Any]:
    """The answer's `request`: a valid request with its defaults written out, which re-runs
    as it is to the same answer (schemas.normal)."""
    return normalised(_REQUEST, request)


def scenario_id(scenario: engine.Scenario, **extra: Any) -> str:
    """Hex sha-256 of the normalised scenario (defaults filled in), the model version and
    whatever else the answer depends on (`extra`: for bands, the endpoint, the uncertain
    inputs, draws, seed, ...). The id of every endpoint's answer.

    orjson writes the frozen dataclasses field by field in a fixed order (dict keys sorted),
    so equal scenarios give equal bytes.
    """
    canonical = orjson.dumps(
        _canonical({"model_version": engine.MODEL_VERSION, "scenario": scenario, **extra})
    )
    return hashlib.sha256(canonical).hexdigest()


_SCALARS = frozenset([float, int, str, bool, type(None)])
_MISSING = object()
#: Per dataclass type: (field name, the addition default that leaves it out, or _MISSING).
_FIELDS: dict[type, tuple[tuple[str, Any], ...]] = {}


def _canonical(value: Any) -> Any:
    """The value as orjson writes it with OPT_SORT_KEYS (dataclasses field by field in their
    order, dict keys sorted), except that the additions of MODEL.md 12-15 at their defaults
    (engine.ADDITION_DEFAULTS) are left out: ids of requests without them are unchanged."""
    kind = type(value)
    if kind in _SCALARS:
        return value
    if kind is dict:
        return {k: _canonical(value[k]) for k in sorted(value)}
    if kind is list or kind is tuple:
        return [v if type(v) in _SCALARS else _canonical(v) for v in value]
    names = _FIELDS.get(kind)
    if names is None:
        if not dataclasses.is_dataclass(kind):
            return value  # numbers of numpy and the like: orjson writes them
        defaults = engine.ADDITION_DEFAULTS.get(kind, {})
        names = _FIELDS[kind] = tuple(
            (f.name, defaults.get(f.name, _MISSING)) for f in dataclasses.fields(kind)
        )
    out = {}
    for name, default in names:
        v = getattr(value, name)
        if default is not _MISSING and v == default:
            continue
        out[name] = v if type(v) in _SCALARS else _canonical(v)
    return out


def render(
    scenario: engine.Scenario, result: engine.ScenarioResult, sid: str, lists: bool = True
) -> dict[str, Any]:
    """The /v1/paths response body of one computed scenario.

    With lists=False the series stay numpy arrays (for orjson's OPT_SERIALIZE_NUMPY, which
    writes the same bytes without building millions of Python floats).
    """

    def out(a):
        return a.tolist() if lists and not isinstance(a, list) else a

    body: dict[str, Any] = {
        "scenario_id": sid,
        "model_version": engine.MODEL_VERSION,
        "periods": list(range(result.horizon + 1)),
        "supply_elasticity": out(result.supply_elasticity),
    }
    if result.price_index is not None:
        body["price_index"] = out(result.price_index)
    body["reduced_form"] = result.reduced_form
    body["paths"] = [_path_body(p, out) for p in result.paths]
    body["summary"] = [_summary_body(s) for s in result.summary]
    body["cautions"] = list(result.cautions)
    return body


def _path_body(path: engine.PolicyPath, out) -> dict[str, Any]:
    distribution = path.distribution
    return {
        "name": path.name,
        "kind": path.kind,
        **{k: out(v) for k, v in path.series.items()},
        "distribution": None if distribution is None else {k: out(v) for k, v in distribution.items()},
    }


def _summary_body(summary: engine.PolicySummary) -> dict[str, Any]:
    body = dict(summary.__dict__)
    if body["final_homes_below_free_path"] is None:  # only under the stock schedule
        del body["final_homes_below_free_path"], body["peak_homes_below_free_path"]
    return body


def compute(
    scenarios: Sequence[engine.Scenario], prefixes: Sequence[str] | None = None, lists: bool = True
) -> list[dict[str, Any]]:
    """Bodies (or problem documents, marked by their `status`) of valid scenarios, in order."""
    outcomes = engine.solve_scenarios(scenarios, as_lists=lists)
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
    body["request"] = normalised_request(request)
    return body


def simulate_many(requests: Sequence[Any], prefix: str = "", lists: bool = True) -> list[dict[str, Any]]:
    """One body or one problem document per request, in order, from one engine call.

    `prefix` formats the pointer prefix of request i (e.g. "/scenarios/{i}"); none by default.
    lists=False keeps series as numpy arrays (see render).
    """
    loaded: list[engine.Scenario] = []
    where: list[int] = []
    out: list[dict[str, Any] | None] = [None] * len(requests)
    with _no_cyclic_gc():
        for i, request in enumerate(requests):
            try:
                loaded.append(load_scenario(request, prefix.format(i=i)))
                where.append(i)
            except ProblemError as error:
                out[i] = error.problem
        if loaded:
            bodies = compute(loaded, [prefix.format(i=i) for i in where], lists)
            for i, body in zip(where, bodies, strict=True):
                if "status" not in body:
                    body["request"] = normalised_request(requests[i])
                out[i] = body
    return [b for b in out if b is not None]
