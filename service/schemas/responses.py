"""Response schemas: they document the bodies in the OpenAPI document and test them.

Bodies of a few thousand floats are written directly with orjson (a marshmallow dump
costs more than the model); the tests validate every response against these schemas
through the generated document instead.
"""

from __future__ import annotations

from marshmallow import Schema, fields

from ..engine.results import (
    CONVERSION_SERIES,
    COVERAGE_SERIES,
    DISTRIBUTION_GROUPS,
    NOMINAL_SERIES,
    SERIES,
    STOCK_SERIES,
    VS_FREE_PATH_SERIES,
    VS_FREE_PATH_TOTALS,
)
from .fields import Either
from .library import ScenarioUnitsSchema
from .paths import PathsRequestSchema
from .uncertainty import BandsRequestSchema

__all__ = [
    "BatchResponseSchema",
    "ExampleListSchema",
    "HealthSchema",
    "PathsResponseSchema",
    "ProblemSchema",
]


def _numbers(description: str) -> fields.List:
    return fields.List(fields.Float(), required=True, metadata={"description": description})


class FieldErrorSchema(Schema):
    pointer = fields.String(
        required=True, metadata={"description": "RFC 6901 JSON Pointer into the request."}
    )
    message = fields.String(required=True)


class ProblemSchema(Schema):
    """RFC 9457 problem details."""

    type = fields.String(required=True, metadata={"description": "URI of the problem type."})
    title = fields.String(required=True)
    status = fields.Integer(required=True)
    detail = fields.String(required=True)
    errors = fields.List(
        fields.Nested(FieldErrorSchema), metadata={"description": "Field errors (422), at most 100 listed."}
    )
    more_errors = fields.Integer(
        metadata={"description": "Field errors found beyond the 100 listed (present only when there are)."}
    )
    offset = fields.Integer(
        metadata={
            "description": "Malformed JSON (400): byte offset (0-based) of the fault in the body as parsed."
        }
    )
    period = fields.Integer(metadata={"description": "Period in which the model found the problem."})
    request_id = fields.String(metadata={"description": "Id to quote when reporting a server error."})
    id = fields.String(metadata={"description": "Batch: the failed scenario's own id, when it had one."})


class ResponseSide(Schema):
    price = fields.Float(required=True, metadata={"description": "d ln P* / d ln shifter."})
    quantity = fields.Float(required=True, metadata={"description": "d ln Q* / d ln shifter."})


class ReducedFormSchema(Schema):
    short_run = fields.Nested(ResponseSide, required=True)
    long_run = fields.Nested(ResponseSide, required=True)


_SERIES_HELP = {
    "consumer_price": "Pc, paid per unit per price interval.",
    "producer_price": "Pp, received per unit per price interval.",
    "quantity": "Units traded per price interval.",
    "quantity_demanded": "Qd(Pc); under a ceiling that covers part of the homes, Qd at the controlled rent.",
    "quantity_supplied": "Qs(Pp); under a partial ceiling, homes supplied in both segments (= quantity).",
    "shortage": "Qd - Q under a binding ceiling (households that would rent at the controlled rent and "
    "rent nothing); 0 elsewhere.",
    "excess_supply": "Qs - Q under a binding floor or quantity cap; 0 elsewhere.",
    "marginal_value": "Qd^-1(Q): what the last unit is worth to buyers.",
    "marginal_cost": "Qs^-1(Q): what the last unit costs sellers; under a partial ceiling the marginal "
    "cost of uncontrolled homes (= uncovered_price; controlled homes are supplied up to the controlled "
    "rent).",
    "binding": "Whether the policy binds in the period.",
    "consumer_surplus_change": "Money per model period, against the period's free market.",
    "producer_surplus_change": "Money per model period.",
    "government_revenue": "Money per model period; negative for a subsidy.",
    "deadweight_loss": "Money per model period, >= 0 (includes misallocation).",
    "misallocation_loss": "Random-rationing loss, money per model period.",
    "cumulative_deadweight_loss": "Sum of deadweight loss through the period.",
    "discounted_deadweight_loss": "Discounted sum of deadweight loss through the period.",
    "nominal_consumer_price": "With market.inflation only: consumer_price x price_index, money of the day.",
    "nominal_producer_price": "With market.inflation only: producer_price x price_index.",
    "covered_price": "Ceilings with coverage below 1, exempt new homes or vacancy decontrol only: the mean "
    "rent of controlled homes (the rule's rent where it binds; with vacancy decontrol new tenancies pay the "
    "market rent), else the market rent.",
    "uncovered_price": "Same ceilings only: the market rent, paid for uncontrolled homes; >= the rent of "
    "the same period without the rule (Fallis & Smith 1984).",
    "covered_quantity": "Same ceilings only: controlled homes let, per price interval (under the stock "
    "schedule the controlled group's own stock).",
    "uncovered_quantity": "Same ceilings only: the other homes let.",
    "vacant_homes": "Stock schedule only: homes standing but not let (a binding floor or quantity cap); "
    "they stand empty, are lost no faster than depreciation and are offered again the period after.",
    "converted_homes": "Stock schedule with conversion only: controlled homes that leave the rental "
    "market for good in the period (MODEL.md 18).",
    "homes_below_free_path": "Stock schedule only: the free path's quantity minus this path's (homes "
    "missing; negative where the path has more homes).",
    "rent_above_free_path": "Stock schedule only: consumer_price minus the free path's price.",
}

_GROUP_HELP = {
    "tenants_in_controlled_homes": "(P* - c) Qc: tenants who hold a controlled home.",
    "tenants_in_uncontrolled_homes": "-(Pu - P*) Qu under a partial ceiling; under a tax, subsidy, floor or "
    "quantity cap every tenant, -(Pc - P*) Q.",
    "households_priced_out": "-integral_Q^Q* (Qd^-1 - P*): households priced or rationed out (0 where a "
    "subsidy draws households in).",
    "owners_of_controlled_homes": "Producer surplus change of the controlled homes.",
    "owners_of_uncontrolled_homes": "Producer surplus change of the uncontrolled homes (all owners where "
    "nothing is controlled).",
    "government": "(Pc - Pp) Q: revenue, negative for a subsidy.",
    "households_drawn_in": "integral_Q*^Q (Qd^-1 - Pc) >= 0: households that rent only because a subsidy "
    "lowers the rent (0 wherever Q <= Q*); the tenants' group then counts only those who rent in both.",
}

_VS_FREE_PATH_HELP = {
    "renters": "Renters' surplus against the free path of the same request, x k: -integral_Q^QF "
    "(Qd^-1 - PF) - (Pc - PF) Q - misallocation (MODEL.md 19); counts the years after a rule ends.",
    "extra_rent": "(Pc - PF) Q x k: the rent renters pay above the free path's rent for the homes let.",
}
VsFreePathSchema = Schema.from_dict(
    {
        k: fields.List(fields.Float(), required=True, metadata={"description": h})
        for k, h in _VS_FREE_PATH_HELP.items()
    },
    name="VsFreePathSeries",
)
VsFreePathTotalsSchema = Schema.from_dict(
    {
        "renters": fields.Float(required=True, metadata={"description": "Sum of renters over the horizon."}),
        "renters_discounted": fields.Float(
            required=True, metadata={"description": "Sum of renters x the discount factor of each period."}
        ),
        "renters_after_end": fields.Float(
            required=True,
            metadata={
                "description": "Sum of renters in the periods after the policy's end (not discounted)."
            },
        ),
        "extra_rent": fields.Float(required=True, metadata={"description": "Sum of extra_rent."}),
        "extra_rent_after_end": fields.Float(
            required=True,
            metadata={"description": "Sum of extra_rent after the policy's end (not discounted)."},
        ),
    },
    name="VsFreePathTotals",
)
assert tuple(_VS_FREE_PATH_HELP) == tuple(VS_FREE_PATH_SERIES)
assert tuple(VsFreePathTotalsSchema._declared_fields) == tuple(VS_FREE_PATH_TOTALS)


class OtherFormSchema(Schema):
    form = fields.String(required=True, metadata={"enum": ["linear", "constant_elasticity"]})
    discounted_deadweight_loss = fields.Float(required=True)
    final_consumer_price = fields.Float(required=True)
    peak_shortage = fields.Float(required=True)


DistributionSchema = Schema.from_dict(
    {
        name: fields.List(fields.Float(), required=True, metadata={"description": help_})
        for name, help_ in _GROUP_HELP.items()
    },
    name="DistributionSeries",
)
DistributionTotalsSchema = Schema.from_dict(
    {
        name: fields.Float(required=True, metadata={"description": help_})
        for name, help_ in _GROUP_HELP.items()
    },
    name="DistributionTotals",
)
assert tuple(_GROUP_HELP) == DISTRIBUTION_GROUPS


def _path_fields() -> dict:
    out: dict = {
        "name": fields.String(required=True),
        "kind": fields.String(required=True),
    }
    for name in SERIES:
        if name == "binding":
            out[name] = fields.List(
                fields.Boolean(), required=True, metadata={"description": _SERIES_HELP[name]}
            )
        else:
            out[name] = _numbers(_SERIES_HELP[name])
    for name in NOMINAL_SERIES + COVERAGE_SERIES + STOCK_SERIES + CONVERSION_SERIES:  # only where they apply
        out[name] = fields.List(fields.Float(), metadata={"description": _SERIES_HELP[name]})
    out["vs_free_path"] = fields.Nested(
        VsFreePathSchema,
        metadata={
            "description": "Stock schedule only: renters against the free path, per period (MODEL.md 19)."
        },
    )
    out["distribution"] = fields.Nested(
        DistributionSchema,
        required=True,
        allow_none=True,
        metadata={
            "description": "Who gains and who loses (service/engine/MODEL.md section 15), per period, "
            "money per model period against the period's free market, efficient allocation: the "
            "tenants' groups sum to consumer_surplus_change, the owners' to producer_surplus_change, "
            "all to minus the deadweight loss. null under random rationing."
        },
    )
    return out


PolicyPathSchema = Schema.from_dict(_path_fields(), name="PolicyPath")


class PolicySummarySchema(Schema):
    name = fields.String(required=True)
    kind = fields.String(required=True)
    total_deadweight_loss = fields.Float(required=True)
    discounted_deadweight_loss = fields.Float(required=True)
    peak_shortage = fields.Float(required=True)
    peak_shortage_period = fields.Integer(required=True, allow_none=True)
    binding_periods = fields.Integer(required=True)
    final_consumer_price = fields.Float(required=True)
    final_quantity = fields.Float(required=True)
    total_consumer_surplus_change = fields.Float(required=True)
    total_producer_surplus_change = fields.Float(required=True)
    total_government_revenue = fields.Float(required=True)
    distribution_totals = fields.Nested(
        DistributionTotalsSchema,
        required=True,
        allow_none=True,
        metadata={"description": "Each group's change summed over the horizon; null under random rationing."},
    )
    final_homes_below_free_path = fields.Float(
        metadata={"description": "Stock schedule only: homes below the free path in the last period."}
    )
    peak_homes_below_free_path = fields.Float(
        metadata={
            "description": "Stock schedule only: the most homes below the free path in any period (>= 0)."
        }
    )
    vs_free_path_totals = fields.Nested(
        VsFreePathTotalsSchema,
        metadata={"description": "Stock schedule only: renters against the free path over the horizon."},
    )
    final_vacant_homes = fields.Float(
        metadata={"description": "Stock schedule only: homes standing empty in the last period."}
    )
    total_converted_homes = fields.Float(
        metadata={"description": "Stock schedule with conversion only: controlled homes converted in all."}
    )
    other_form = fields.Nested(
        OtherFormSchema,
        required=True,
        allow_none=True,
        metadata={
            "description": "The same request solved in the other curve form (MODEL.md 20): its discounted "
            "deadweight loss, final consumer price and peak shortage; null where that form has no answer."
        },
    )
    distribution_totals_discounted = fields.Nested(
        DistributionTotalsSchema,
        required=True,
        allow_none=True,
        metadata={
            "description": "Each group's change discounted with the welfare options' discount factors and "
            "summed over the horizon; null under random rationing."
        },
    )


def _caller_id():
    return fields.String(metadata={"description": "Batch: the scenario's own id, when the request gave one."})


class PathsResponseSchema(Schema):
    id = _caller_id()
    scenario_id = fields.String(
        required=True, metadata={"description": "sha-256 of the normalised request and model version."}
    )
    model_version = fields.String(required=True)
    periods = fields.List(fields.Integer(), required=True)
    supply_elasticity = _numbers(
        "eps_t per period, period 0 first; under the stock schedule the elasticity of the free path's "
        "supply curve at its equilibrium point."
    )
    price_index = fields.List(
        fields.Float(),
        metadata={
            "description": "With market.inflation only: I_t = prod_(u<=t) (1 + pi_u), I_0 = 1. Every price "
            "series is in real money of period 0; multiply by I_t for money of the day."
        },
    )
    reduced_form = fields.Dict(keys=fields.String(), values=fields.Nested(ReducedFormSchema), required=True)
    paths = fields.List(fields.Nested(PolicyPathSchema), required=True)
    summary = fields.List(fields.Nested(PolicySummarySchema), required=True)
    cautions = fields.List(fields.String(), required=True)
    request = fields.Nested(
        PathsRequestSchema,
        metadata={
            "description": "The request answered, normalised: every default written out, integers as "
            "integers, fields in the documented order. Posted as it is to /v1/paths it gives this answer "
            "again (same scenario_id and ETag). In every /v1/paths answer and batch result; not in the "
            "`central` answer of bands and sensitivity (their own `request` is at the top)."
        },
    )


class PathsSummarySchema(Schema):
    """The answer to a request with "output": "summary": summaries and cautions, no series."""

    id = _caller_id()
    scenario_id = fields.String(
        required=True, metadata={"description": "sha-256 of the normalised request and model version."}
    )
    model_version = fields.String(required=True)
    reduced_form = fields.Dict(keys=fields.String(), values=fields.Nested(ReducedFormSchema), required=True)
    summary = fields.List(fields.Nested(PolicySummarySchema), required=True)
    cautions = fields.List(fields.String(), required=True)
    request = fields.Nested(
        PathsRequestSchema,
        metadata={"description": "The request answered, normalised, as in PathsResponse."},
    )


class BatchResponseSchema(Schema):
    results = fields.List(
        Either([PathsResponseSchema, PathsSummarySchema, ProblemSchema]),
        required=True,
        metadata={"description": "One result, or one problem document, per scenario, in order."},
    )


class ExampleSchema(Schema):
    name = fields.String(required=True)
    title = fields.String(required=True)
    description = fields.String(required=True)
    endpoint = fields.String(
        required=True, metadata={"description": "Where to post it: /v1/paths or /v1/bands."}
    )
    units = fields.Nested(
        ScenarioUnitsSchema,
        required=True,
        metadata={
            "description": "The display units the demo's numbers are in (as a saved scenario keeps "
            "them); the page labels its charts and tables with them when the demo is loaded."
        },
    )
    href = fields.String(required=True)


class ExampleListSchema(Schema):
    examples = fields.List(fields.Nested(ExampleSchema), required=True)


class HealthSchema(Schema):
    status = fields.String(required=True)
    model_version = fields.String(required=True)


class UncertainInputSchema(Schema):
    pointer = fields.String(
        required=True,
        metadata={
            "description": "JSON Pointer of the uncertain input: an elasticity, /market/inflation, "
            "/adjustment/rate, /adjustment/depreciation, /adjustment/conversion or "
            "/policies/{i}/vacancy_decontrol."
        },
    )
    distribution = fields.String(required=True, metadata={"enum": ["normal", "uniform", "triangular"]})
    mean = fields.Float()
    sd = fields.Float()
    low = fields.Float()
    mode = fields.Float()
    high = fields.Float()
    central = fields.Float(
        required=True, metadata={"description": "Mean, midpoint or mode: the central path uses it."}
    )


def _by_percentile(values) -> fields.Dict:
    return fields.Dict(
        keys=fields.String(), values=values, metadata={"description": 'Keyed by percentile, e.g. "5".'}
    )


class PolicyBandSchema(Schema):
    name = fields.String(required=True)
    kind = fields.String(required=True)
    series = fields.Dict(
        keys=fields.String(),
        values=_by_percentile(fields.List(fields.Float())),
        required=True,
        metadata={
            "description": "Per series, per percentile: one number per period, period 0 first. Every "
            "policy: consumer_price, quantity, shortage, deadweight_loss, cumulative_deadweight_loss, "
            "discounted_deadweight_loss; under market.inflation also nominal_consumer_price (with a "
            "fixed index the real band times price_index); under the stock schedule "
            "homes_below_free_path and rent_above_free_path; on a price ceiling with coverage below 1, "
            "exempt new homes or vacancy decontrol covered_price and uncovered_price. Series that do not "
            "apply are absent."
        },
    )
    summary = fields.Dict(
        keys=fields.String(),
        values=_by_percentile(fields.Float()),
        required=True,
        metadata={
            "description": "Percentiles of summary figures: total_deadweight_loss, "
            "discounted_deadweight_loss, peak_shortage, final_consumer_price, final_quantity; unless "
            "rationing is random, each group's total (total_ + a distribution_totals key) and the same "
            "discounted (discounted_ + that key: the spread of distribution_totals_discounted); under the "
            "stock schedule final_homes_below_free_path, peak_homes_below_free_path, "
            "vs_free_path_renters_discounted and the other totals of renters against the free path "
            "(vs_free_path_ + a vs_free_path_totals key), final_vacant_homes and, where controlled homes "
            "may convert, total_converted_homes."
        },
    )
    binding_share = fields.Float(
        required=True, metadata={"description": "Share of feasible draws in which it binds."}
    )
    infeasible_draws = fields.Integer(required=True, metadata={"description": "Draws left out: infeasible."})


class BandsResponseSchema(Schema):
    scenario_id = fields.String(required=True)
    model_version = fields.String(required=True)
    draws = fields.Integer(required=True)
    seed = fields.Integer(required=True)
    percentiles = fields.List(fields.Float(), required=True)
    periods = fields.List(fields.Integer(), required=True)
    uncertain_inputs = fields.List(fields.Nested(UncertainInputSchema), required=True)
    central = fields.Nested(PathsResponseSchema, required=True)
    bands = fields.List(fields.Nested(PolicyBandSchema), required=True)
    cautions = fields.List(fields.String(), required=True)
    request = fields.Nested(
        BandsRequestSchema,
        required=True,
        metadata={
            "description": "The request answered, normalised (draws, seed, percentiles and every other "
            "default written out; distributions as given): posted as it is to /v1/bands it gives this "
            "answer again (same scenario_id and ETag)."
        },
    )


def _figures(**kwargs) -> fields.Dict:
    return fields.Dict(keys=fields.String(), values=fields.Float(allow_none=True), **kwargs)


class PolicySwingSchema(Schema):
    name = fields.String(required=True)
    kind = fields.String(required=True)
    low = _figures(
        required=True,
        metadata={"description": "Headline figures with the input at its low (null: infeasible)."},
    )
    high = _figures(required=True)
    swing = _figures(required=True, metadata={"description": "|high - low| per headline figure."})


class SensitivityInputSchema(UncertainInputSchema):
    largest_swing = _figures(required=True)
    policies = fields.List(fields.Nested(PolicySwingSchema), required=True)


class SensitivityResponseSchema(Schema):
    scenario_id = fields.String(required=True)
    model_version = fields.String(required=True)
    headlines = fields.List(
        fields.String(),
        required=True,
        metadata={
            "description": "The figures of low, high and swing, in ranking order: "
            "discounted_deadweight_loss, peak_shortage, final_consumer_price; unless rationing is "
            "random each group's total (total_ + a distribution_totals key); under the stock schedule "
            "final_homes_below_free_path, peak_homes_below_free_path and vs_free_path_renters_discounted."
        },
    )
    central = fields.Nested(PathsResponseSchema, required=True)
    inputs = fields.List(fields.Nested(SensitivityInputSchema), required=True)
    cautions = fields.List(fields.String(), required=True)
