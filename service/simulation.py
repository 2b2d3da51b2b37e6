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
from marshmallow import ValidationError

from . import engine
from .problems import ProblemError, engine_problem, is_problem, load_request, validation_problem
from .schemas.normal import normalised
from .schemas.paths import OUTPUTS, BatchScenarioSchema, PathsRequestSchema

__all__ = [
    "SUMMARY_KEYS",
    "compute",
    "load_scenario",
    "normalised_request",
    "render",
    "requested_output",
    "scenario_id",
    "simulate",
    "simulate_many",
]

_REQUEST = PathsRequestSchema()
_ID = BatchScenarioSchema().fields["id"]


def _check_id(value: Any, prefix: str) -> None:
    """A batch scenario's `id` as BatchScenarioSchema describes it, or ProblemError (422)."""
    try:
        _ID.deserialize(value)
    except ValidationError as error:
        raise ProblemError(validation_problem({"id": error.messages}, prefix)) from None


def _check_unique(value: str, first: int, i: int, prefix: str) -> None:
    """A batch scenario's `id` names it alone (results are matched by id), or ProblemError (422)
    for every scenario after the first that has it."""
    if first != i:
        message = f"Scenario {first} of this batch has the id {value!r} already; give each scenario its own."
        raise ProblemError(validation_problem({"id": [message]}, prefix))


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


def requested_output(request: Any) -> str:
    """The `output` a (validated) request asks for: "full" (default) or "summary"."""
    output = request.get("output", "full") if isinstance(request, dict) else "full"
    return output if output in OUTPUTS else "full"


#: What a summary answer ("output": "summary") keeps of a full one: no series.
SUMMARY_KEYS = ("scenario_id", "model_version", "reduced_form", "summary", "cautions", "request")


def _summary_only(body: dict[str, Any]) -> dict[str, Any]:
    return {k: body[k] for k in SUMMARY_KEYS if k in body}


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
#: Scalars written as they are (a float goes through _canonical: its zero has one sign).
_ATOMS = _SCALARS - {float}
_MISSING = object()
#: Per dataclass type: (field name, the addition default that leaves it out, or _MISSING).
_FIELDS: dict[type, tuple[tuple[str, Any], ...]] = {}


def _canonical(value: Any) -> Any:
    """The value as orjson writes it with OPT_SORT_KEYS (dataclasses field by field in their
    order, dict keys sorted), except that the additions of MODEL.md 12-15 at their defaults
    (engine.ADDITION_DEFAULTS) are left out: ids of requests without them are unchanged."""
    kind = type(value)
    if kind is float:
        return value + 0.0  # -0.0 + 0.0 is 0.0: a zero written -0.0 is the same scenario, one id
    if kind in _SCALARS:
        return value
    if kind is dict:
        return {k: _canonical(value[k]) for k in sorted(value)}
    if kind is list or kind is tuple:
        return [v if type(v) in _ATOMS else _canonical(v) for v in value]
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
        out[name] = v if type(v) in _ATOMS else _canonical(v)
    return out


def render(scenario: engine.Scenario, result: engine.ScenarioResult, sid: str) -> dict[str, Any]:
    """The /v1/paths response body of one computed scenario, its series as the engine gave
    them: Python lists (solve_scenarios(as_lists=True)) or numpy arrays (for orjson's
    OPT_SERIALIZE_NUMPY, which writes the same bytes without building millions of floats)."""
    body: dict[str, Any] = {
        "scenario_id": sid,
        "model_version": engine.MODEL_VERSION,
        "periods": list(range(result.horizon + 1)),
        "supply_elasticity": result.supply_elasticity,
    }
    if result.price_index is not None:
        body["price_index"] = result.price_index
    body["reduced_form"] = result.reduced_form
    body["paths"] = [_path_body(p) for p in result.paths]
    body["summary"] = [_summary_body(s) for s in result.summary]
    body["cautions"] = list(result.cautions)
    return body


def _path_body(path: engine.PolicyPath) -> dict[str, Any]:
    distribution = path.distribution
    body = {
        "name": path.name,
        "kind": path.kind,
        **path.series,
        "distribution": None if distribution is None else dict(distribution),
    }
    if path.vs_free_path is not None:
        body["vs_free_path"] = dict(path.vs_free_path)
    return body


#: Summary figures that exist only under some options (the stock schedule, conversion):
#: left out of the answer where they do not apply.
_OPTIONAL_FIGURES = (
    "final_homes_below_free_path",
    "peak_homes_below_free_path",
    "vs_free_path_totals",
    "final_vacant_homes",
    "total_converted_homes",
)


def _summary_body(summary: engine.PolicySummary) -> dict[str, Any]:
    body = summary._asdict()
    for name in _OPTIONAL_FIGURES:
        if body[name] is None:
            del body[name]
    return body


def compute(
    scenarios: Sequence[engine.Scenario],
    prefixes: Sequence[str] | None = None,
    lists: bool = True,
    output: str = "full",
    ids: Sequence[str] | None = None,
) -> list[dict[str, Any]]:
    """Bodies (or Problem documents, told apart by is_problem) of valid scenarios, in order;
    output="summary" keeps only SUMMARY_KEYS of each body. `ids`: their scenario_ids where the
    caller has them already (else each is hashed here)."""
    outcomes = engine.solve_scenarios(scenarios, as_lists=lists and output == "full")
    out: list[dict[str, Any]] = []
    for i, (scenario, outcome) in enumerate(zip(scenarios, outcomes, strict=True)):
        if isinstance(outcome, engine.EngineError):
            out.append(engine_problem(outcome, prefixes[i] if prefixes else ""))
        else:
            body = render(scenario, outcome, scenario_id(scenario) if ids is None else ids[i])
            out.append(_summary_only(body) if output == "summary" else body)
    return out


def simulate(request: dict[str, Any]) -> dict[str, Any]:
    """Body of POST /v1/paths for one request; raises ProblemError on invalid input."""
    scenario = load_scenario(request)
    (body,) = compute([scenario], output=requested_output(request))
    if is_problem(body):
        raise ProblemError(body)
    body["request"] = normalised_request(request)
    return body


def simulate_many(
    requests: Sequence[Any], prefix: str = "", lists: bool = True, output: str = "full"
) -> list[dict[str, Any]]:
    """One body or one problem document per request, in order, from one engine call.

    `prefix` formats the pointer prefix of request i (e.g. "/scenarios/{i}"); none by default.
    lists=False keeps series as numpy arrays (see render); output="summary" leaves them out.
    A request's `id` (a batch scenario's own name for itself, BatchScenarioSchema) is
    checked, and unique (a later scenario with an id already given gets a problem at its id),
    left out of the scenario (and its id), and put first in its body or problem.
    """
    loaded: list[engine.Scenario] = []
    where: list[int] = []
    out: list[dict[str, Any] | None] = [None] * len(requests)
    ids: dict[int, Any] = {}
    first_with: dict[str, int] = {}  # each id and the first scenario that has it
    with _no_cyclic_gc():
        for i, request in enumerate(requests):
            try:
                if isinstance(request, dict) and "id" in request:
                    ident = request["id"]
                    request = {k: v for k, v in request.items() if k != "id"}
                    _check_id(ident, prefix.format(i=i))  # an id refused is not echoed back
                    ids[i] = ident
                    _check_unique(ident, first_with.setdefault(ident, i), i, prefix.format(i=i))
                loaded.append(load_scenario(request, prefix.format(i=i)))
                where.append(i)
            except ProblemError as error:
                out[i] = error.problem
        if loaded:
            bodies = compute(loaded, [prefix.format(i=i) for i in where], lists, output)
            for i, body in zip(where, bodies, strict=True):
                if not is_problem(body):
                    # The request as /v1/paths takes it: the batch's own `id` is not part of it.
                    body["request"] = normalised_request({k: v for k, v in requests[i].items() if k != "id"})
                out[i] = body
    for i, ident in ids.items():
        if isinstance(ident, str):
            item = out[i]
            out[i] = type(item)({"id": ident, **item})  # a problem stays a Problem
    return [b for b in out if b is not None]
