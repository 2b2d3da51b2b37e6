"""The Python API for uncertain inputs: bands(request) and sensitivity(request).

Each returns the body of POST /v1/bands or POST /v1/sensitivity, or raises ProblemError with
the document that endpoint would answer. Both run every draw (or every low/high case)
through the same vectorised engine as /v1/paths.
"""

from __future__ import annotations

import copy
from typing import Any

import numpy as np

from . import engine
from .engine.cautions import INELASTIC_DEMAND
from .engine.uncertainty import (
    default_rate_coupled,
    headlines,
    is_elasticity,
    one_at_a_time,
    percentile_bands,
)
from .problems import Problem, ProblemError, is_problem, load_request, problem
from .schemas.normal import normalised
from .schemas.uncertainty import BandsRequestSchema, SensitivityRequestSchema, UncertainRequest
from .simulation import compute, scenario_id

__all__ = ["BAND_KEYS", "bands", "central_request", "headlines", "is_bands_request", "sensitivity"]

#: The settings only a bands request has.
BAND_KEYS = ("draws", "seed", "percentiles", "supply_correlation")

_BANDS = BandsRequestSchema()
_SENSITIVITY = SensitivityRequestSchema()


def _answer_id(endpoint: str, req: UncertainRequest) -> str:
    """scenario_id of the central scenario with everything else the answer depends on."""
    return scenario_id(
        req.scenario,
        endpoint=endpoint,
        inputs=req.inputs,
        draws=req.draws,
        seed=req.seed,
        percentiles=req.percentiles,
        supply_correlation=req.supply_correlation,
    )


def _has_distribution(value: Any) -> bool:
    if isinstance(value, dict):
        return "distribution" in value or any(_has_distribution(v) for v in value.values())
    if isinstance(value, list):
        return any(_has_distribution(v) for v in value)
    return False


def is_bands_request(request: Any) -> bool:
    """The endpoint rule (the page's, the library's, the briefing's): a request with draws, seed,
    percentiles or supply_correlation, or with a distribution object anywhere, is a /v1/bands
    request; any other is a /v1/paths request."""
    return isinstance(request, dict) and (any(k in request for k in BAND_KEYS) or _has_distribution(request))


def central_request(request: dict[str, Any], uncertain_inputs: list[dict[str, Any]]) -> dict[str, Any]:
    """The /v1/paths request of a (valid) bands request at its central values: every uncertain
    input (the answer's `uncertain_inputs`: JSON Pointer and central value) replaced by its
    central value, the band settings left out. It is the scenario of the answer's `central`."""
    out = copy.deepcopy({k: v for k, v in request.items() if k not in BAND_KEYS})
    for item in uncertain_inputs:
        *parents, leaf = [p.replace("~1", "/").replace("~0", "~") for p in item["pointer"].split("/")[1:]]
        target: Any = out
        for part in parents:
            target = target[int(part)] if isinstance(target, list) else target[part]
        if isinstance(target, list):
            target[int(leaf)] = item["central"]
        else:
            target[leaf] = item["central"]
    return out


def _describe(item) -> dict[str, Any]:
    d = item.distribution
    return {"pointer": item.pointer, "distribution": d.kind, **d.parameters, "central": d.central}


def _central_answer(req: UncertainRequest) -> dict[str, Any]:
    """The /v1/paths answer at the central values (ProblemError if there is none)."""
    (body,) = compute([req.scenario])
    if is_problem(body):
        body = Problem(body, detail="At the central values: " + body["detail"])
        raise ProblemError(body)
    return body


def _coupling_caution(req: UncertainRequest) -> list[str]:
    """MODEL.md 20: under the Nerlove default rate an uncertain long-run elasticity also moves
    the speed of building."""
    if not default_rate_coupled(req.scenario, req.inputs):
        return []
    return [
        "Without a rate or a half-life the speed of building is the short-run elasticity divided by the "
        "long-run elasticity, so in draws with a larger long-run elasticity homes are also built more "
        "slowly: the two move together here. Give the adjustment a rate or a half-life to vary the "
        "long-run elasticity and the speed of building apart."
    ]


#: Bands caution on near-vertical demand where more than this share of the draws has it.
INELASTIC_DRAWS = 0.001


def _inelastic_demand_caution(req: UncertainRequest, sensitivity: bool = False) -> list[str]:
    """The engine cautions on a demand price elasticity closer to zero than INELASTIC_DEMAND at
    the central values only; an uncertain one may reach there in its draws (bands) or at an end
    of its range (sensitivity), where losses become very large (MODEL.md 20)."""
    for item in req.inputs:
        if item.target != "demand_elasticity":
            continue
        words = (
            "With demand that unresponsive, the figures that rest on what households would pay for "
            "homes they cannot get (the deadweight loss, the losses of households priced out) become "
            "very large and very uncertain"
        )
        if sensitivity:
            nearest = max(item.distribution.range())  # eta < 0: the end nearer zero
            if abs(nearest) < INELASTIC_DEMAND:
                return [
                    f"The demand price elasticity's range reaches {nearest:g}, far closer to zero than "
                    f"published estimates for rented homes (most between about -0.2 and -1). {words}: "
                    "the swings toward that end rest on it."
                ]
            return []
        share = item.distribution.share_between(-INELASTIC_DEMAND, 0.0)
        if share > INELASTIC_DRAWS:
            return [
                f"About {100.0 * share:.3g} % of the draws have a demand price elasticity closer to zero "
                f"than -{INELASTIC_DEMAND:g}, far from published estimates for rented homes (most between "
                f"about -0.2 and -1). {words}: the upper percentiles of the losses rest on those draws."
            ]
    return []


def _key(q: float) -> str:
    return f"{q:g}"


def bands(request: dict[str, Any], threads: int = 1) -> dict[str, Any]:
    """Body of POST /v1/bands; `threads` solves blocks of draws side by side (same answer)."""
    req = load_request(_BANDS, request)
    central = _central_answer(req)
    arrays = percentile_bands(
        req.scenario,
        req.inputs,
        req.draws,
        req.seed,
        req.percentiles,
        req.supply_correlation,
        threads=threads,
    )
    for p, policy in enumerate(req.scenario.policies):
        if arrays.feasible_draws[p] == 0:
            raise ProblemError(
                problem(
                    422,
                    "A policy is infeasible in every draw",
                    f"policy '{policy.name}' leaves zero or negative quantity or price in every draw",
                    "infeasible-in-every-draw",
                    errors=[{"pointer": f"/policies/{p}", "message": "infeasible in every draw"}],
                )
            )
        if not arrays.finite(p):  # e.g. a discount rate near -100 % over many periods
            raise ProblemError(
                problem(
                    422,
                    "The model's numbers leave the representable range",
                    f"policy '{policy.name}' produces band values beyond 3.4e38 in some draw; "
                    "reduce the horizon, the shocks or the size of a negative discount rate",
                    "non-finite-result",
                    errors=[
                        {"pointer": f"/policies/{p}", "message": "band values beyond the representable range"}
                    ],
                )
            )
    keys = [_key(q) for q in req.percentiles]
    out_bands = []
    for p, policy in enumerate(req.scenario.policies):
        out_bands.append(
            {
                "name": policy.name,
                "kind": policy.kind,
                "series": {
                    name: {k: values[i].tolist() for i, k in enumerate(keys)}
                    for name, values in arrays.series[p].items()
                },
                "summary": {
                    name: {k: float(values[i]) for i, k in enumerate(keys)}
                    for name, values in arrays.summary[p].items()
                },
                "binding_share": float(arrays.binding_share[p]),
                "infeasible_draws": int(arrays.infeasible_draws[p]),
            }
        )
    elasticities = all(is_elasticity(i.target) for i in req.inputs)
    cautions = [
        f"Bands are percentiles over {req.draws:,} draws of the uncertain "
        f"{'elasticities' if elasticities else 'inputs'} (seed {req.seed}); "
        "each percentile is taken period by period, so a band is not the path of any one draw.",
    ]
    if req.scenario.welfare.rationing == "random":
        cautions.append(
            "Under random rationing the band summaries carry no totals of who gains and who loses: "
            "the split between groups is defined for efficient allocation only."
        )
    if int(arrays.infeasible_draws.max()) > 0:
        cautions.append(
            "Some draws make a policy infeasible (zero or negative quantity or price); they are counted "
            "for each policy and left out of its percentiles."
        )
    cautions += _coupling_caution(req)
    cautions += _inelastic_demand_caution(req)
    cautions += central["cautions"]
    return {
        "scenario_id": _answer_id("bands", req),
        "model_version": engine.MODEL_VERSION,
        "draws": req.draws,
        "seed": req.seed,
        "percentiles": list(req.percentiles),
        "periods": central["periods"],
        "uncertain_inputs": [_describe(i) for i in req.inputs],
        "central": central,
        "bands": out_bands,
        "cautions": cautions,
        "request": normalised(_BANDS, request),
    }


def sensitivity(request: dict[str, Any]) -> dict[str, Any]:
    """Body of POST /v1/sensitivity: one-at-a-time swings, largest first (a tornado chart)."""
    req = load_request(_SENSITIVITY, request)
    central = _central_answer(req)
    inputs = req.inputs
    swings = one_at_a_time(req.scenario, inputs)
    feasible, figures, ranges = swings.feasible, swings.figures, swings.ranges
    names = tuple(figures)

    entries = []
    for j in swings.ranking():
        lo_row, hi_row = swings.low(j), swings.high(j)
        swing = {f: swings.swing(j, f) for f in names}
        policies = []
        for q, policy in enumerate(req.scenario.policies):
            low = {f: float(figures[f][lo_row, q]) if feasible[lo_row, q] else None for f in names}
            high = {f: float(figures[f][hi_row, q]) if feasible[hi_row, q] else None for f in names}
            each = {f: None if np.isnan(swing[f][q]) else float(swing[f][q]) for f in names}
            policies.append(
                {"name": policy.name, "kind": policy.kind, "low": low, "high": high, "swing": each}
            )
        entries.append(
            {
                **_describe(inputs[j]),
                "low": ranges[j][0],
                "high": ranges[j][1],
                "largest_swing": dict(zip(names, swings.largest_swing(j), strict=True)),
                "policies": policies,
            }
        )
    return {
        "scenario_id": _answer_id("sensitivity", req),
        "model_version": engine.MODEL_VERSION,
        "headlines": list(names),
        "central": central,
        "inputs": entries,
        "cautions": [
            "Each input moves alone to its low and high (the range given, or the 5th and 95th percentile of "
            "its distribution) with every other input at its central value; inputs are sorted by their "
            "largest swing in discounted deadweight loss over all policies, then peak shortage, then "
            "final price, then the other headlines in their order (each group's total, then under the "
            "stock schedule the homes below the free path and renters' discounted gain or loss against "
            "the free path).",
            *_coupling_caution(req),
            *_inelastic_demand_caution(req, sensitivity=True),
            *central["cautions"],
        ],
    }
