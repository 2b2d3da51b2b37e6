"""Requests of /v1/paths and /v1/paths/batch: the single source of their validation and of
their OpenAPI request bodies.

Each schema checks its own fields (types, signs, ranges, limits from service.limits);
cross-field rules (shocks name declared shifters, an adjustment schedule where the supply
elasticities differ, unique policy names, a batch's total work) live in `@validates_schema`;
`@post_load` builds the engine's frozen dataclasses. Unknown fields are rejected everywhere
(marshmallow's RAISE).
"""

from __future__ import annotations

import dataclasses
import functools
from typing import Any

from marshmallow import ValidationError, fields, post_load, validate, validates_schema

from .. import limits
from ..engine.scenario import (
    FORMS,
    NEW_HOMES,
    RATIONING_RULES,
    Adjustment,
    DiscountStep,
    Market,
    Policy,
    Scenario,
    Shock,
    Welfare,
)
from .fields import (
    AnyItem,
    Flag,
    NumberOrConstant,
    NumberOrList,
    Real,
    StrictSchema,
    Tagged,
    WholeNumber,
    label,
)
from .fields import in_range as _range

__all__ = [
    "FULL_ONLY",
    "OUTPUTS",
    "POLICY_SCHEMAS",
    "BatchRequestSchema",
    "BatchScenarioSchema",
    "DemandSchema",
    "MarketSchema",
    "PathsRequestSchema",
    "SupplySchema",
    "build_market",
    "policy_periods",
    "shifter_map",
]


def _period(**kwargs):
    return WholeNumber(validate=_range(1, limits.MAX_PERIOD), **kwargs)


def _shifter_name(**kwargs) -> fields.String:
    return label(limits.MAX_SHIFTER_NAME_LENGTH, **kwargs)


# --- market -------------------------------------------------------------------------------


def shifter_map(description: str, values: fields.Field | None = None) -> fields.Dict:
    """Elasticity per named shifter; each value a number by default, or `values`."""
    return fields.Dict(
        keys=_shifter_name(),
        values=values or Real(validate=_range(-limits.MAX_ELASTICITY, limits.MAX_ELASTICITY)),
        validate=validate.Length(max=limits.MAX_SHIFTERS_PER_CURVE),
        load_default=dict,
        metadata={"description": description},
    )


class DemandSchema(StrictSchema):
    price_elasticity = Real(
        required=True,
        validate=_range(
            -limits.MAX_ELASTICITY,
            0.0,
            high_ok=False,
            error="Demand falls as rent rises, so its elasticity is negative (for example -0.5): "
            f"from -{limits.MAX_ELASTICITY:g} up to, but not including, 0.",
        ),
        metadata={"description": "Own-price elasticity of demand, eta < 0."},
    )
    shifters = shifter_map("Elasticity of quantity demanded with respect to each named shifter (any sign).")


class SupplySchema(StrictSchema):
    short_run_elasticity = Real(
        required=True,
        validate=_range(0.0, limits.MAX_ELASTICITY),
        metadata={"description": "Supply elasticity in the impact period, >= 0."},
    )
    long_run_elasticity = Real(
        required=True,
        validate=_range(0.0, limits.MAX_ELASTICITY),
        metadata={"description": "Supply elasticity once building has caught up, >= 0."},
    )
    shifters = shifter_map(
        "Elasticity of quantity supplied at a given price with respect to each named shifter."
    )


def _inflation_rate() -> Real:
    return Real(validate=_range(-1.0, limits.MAX_RATE, low_ok=False))


class MarketSchema(StrictSchema):
    price = Real(
        required=True,
        validate=_range(0.0, limits.MAX_MONEY, low_ok=False),
        metadata={"description": "Base price P0 per unit per price interval (e.g. a month's rent)."},
    )
    quantity = Real(
        required=True,
        validate=_range(0.0, limits.MAX_QUANTITY, low_ok=False),
        metadata={"description": "Base quantity Q0 traded per price interval (e.g. occupied homes)."},
    )
    payments_per_period = Real(
        load_default=1.0,
        validate=_range(0.0, limits.MAX_PAYMENTS_PER_PERIOD, low_ok=False),
        metadata={"description": "Price intervals per model period (monthly rents, yearly periods: 12)."},
    )
    form = fields.String(
        load_default="linear",
        validate=validate.OneOf(FORMS),
        metadata={"description": "Curve form: first-order linear displacement or constant elasticity."},
    )
    demand = fields.Nested(DemandSchema, required=True)
    supply = fields.Nested(SupplySchema, required=True)
    inflation = NumberOrList(
        _inflation_rate(),
        fields.List(_inflation_rate(), validate=validate.Length(1, limits.MAX_HORIZON)),
        load_default=0.0,
        metadata={
            "description": "General inflation per model period (0.03 = 3 %), or a list of rates for "
            "periods 1, 2, ... (the last holds to the horizon); each above -1. Price ceilings and "
            "floors, growth caps, unit taxes and subsidies are then nominal rules (see `indexed`); "
            "every price series stays in real money of period 0, and welfare and discounting are "
            "real (the discount rate is a real rate)."
        },
    )

    @validates_schema
    def _shifter_count(self, data, **kwargs):
        demand = data["demand"]["shifters"]
        supply = data["supply"]["shifters"]
        both = set(demand) | set(supply)
        if len(both) > 2 * limits.MAX_SHIFTERS_PER_CURVE:
            raise ValidationError("Too many shifters.", "demand")

    @post_load
    def _build(self, data, **kwargs) -> Market:
        return build_market(data)


def build_market(data: dict[str, Any]) -> Market:
    """The engine's Market from a loaded market object whose elasticities are numbers."""
    return Market(
        price=data["price"],
        quantity=data["quantity"],
        demand_elasticity=data["demand"]["price_elasticity"],
        short_run_elasticity=data["supply"]["short_run_elasticity"],
        long_run_elasticity=data["supply"]["long_run_elasticity"],
        demand_shifters=dict(data["demand"]["shifters"]),
        supply_shifters=dict(data["supply"]["shifters"]),
        payments_per_period=data["payments_per_period"],
        form=data["form"],
        inflation=_inflation_value(data.get("inflation", 0.0)),
    )


def _inflation_value(value: float | list[float]) -> float | tuple[float, ...]:
    """A constant rate, or per-period rates. The last rate holds, so repeats of it at the end
    of a list say nothing and are dropped; what is left of one rate is that constant rate (so
    a list of zeros is no inflation: no price index, and the scenario id of no inflation)."""
    if isinstance(value, list):
        end = len(value)
        while end > 1 and value[end - 2] == value[-1]:
            end -= 1
        return value[0] if end == 1 else tuple(value[:end])
    return value


# --- shocks -------------------------------------------------------------------------------


def _change(description: str, **kwargs):
    return Real(
        validate=_range(-1.0, limits.MAX_SHOCK_CHANGE, low_ok=False),
        metadata={"description": description},
        **kwargs,
    )


class _ShockBase(StrictSchema):
    shifter = _shifter_name(
        required=True,
        metadata={"description": "A shifter declared in market.demand.shifters or market.supply.shifters."},
    )

    @post_load
    def _build(self, data, **kwargs) -> Shock:
        if "values" in data:
            data["values"] = tuple(data["values"])
        return Shock(**data)


class StepShockSchema(_ShockBase):
    profile = fields.String(required=True, validate=validate.OneOf(["step"]))
    change = _change("Fractional change from period `start` on (0.10 = +10 %).", required=True)
    start = _period(load_default=1, metadata={"description": "First period of the change."})


class RampShockSchema(_ShockBase):
    profile = fields.String(required=True, validate=validate.OneOf(["ramp"]))
    change = _change("Full fractional change, reached in period start + periods - 1.", required=True)
    periods = WholeNumber(
        required=True,
        validate=_range(1, limits.MAX_PERIOD),
        metadata={"description": "Periods over which the change builds up linearly (n >= 1)."},
    )
    start = _period(load_default=1, metadata={"description": "Period that reaches change/periods."})


class GrowthShockSchema(_ShockBase):
    profile = fields.String(required=True, validate=validate.OneOf(["growth"]))
    rate = Real(
        required=True,
        validate=_range(-1.0, limits.MAX_RATE, low_ok=False),
        metadata={"description": "Compound rate per period: change (1+rate)^(t-start+1) - 1."},
    )
    start = _period(load_default=1, metadata={"description": "First period of growth."})


class PathShockSchema(_ShockBase):
    profile = fields.String(required=True, validate=validate.OneOf(["path"]))
    values = fields.List(
        _change("Fractional change in one period."),
        required=True,
        validate=validate.Length(1, limits.MAX_HORIZON),
        metadata={"description": "Change in periods 1, 2, ...; the last value holds to the horizon."},
    )


SHOCK_SCHEMAS = {
    "step": StepShockSchema,
    "ramp": RampShockSchema,
    "growth": GrowthShockSchema,
    "path": PathShockSchema,
}


# --- adjustment ---------------------------------------------------------------------------


class LinearScheduleSchema(StrictSchema):
    schedule = fields.String(required=True, validate=validate.OneOf(["linear"]))
    periods = WholeNumber(
        required=True,
        validate=_range(0, limits.MAX_PERIOD),
        metadata={"description": "K: supply elasticity reaches long run in period K + 1 (0: at once)."},
    )

    @post_load
    def _build(self, data, **kwargs) -> Adjustment:
        return Adjustment(schedule="linear", periods=data["periods"])


class GeometricScheduleSchema(StrictSchema):
    schedule = fields.String(required=True, validate=validate.OneOf(["geometric"]))
    rate = Real(
        validate=_range(0.0, 1.0, low_ok=False),
        metadata={"description": "Nerlove adjustment coefficient lambda in (0, 1]."},
    )
    half_life = Real(
        validate=_range(limits.MIN_HALF_LIFE, float(limits.MAX_PERIOD)),
        metadata={"description": "Periods to close half the gap (lambda = 1 - 0.5^(1/h)), at least 0.001."},
    )

    @validates_schema
    def _one_of(self, data, **kwargs):
        if "rate" in data and "half_life" in data:
            raise ValidationError("Give rate or half_life, not both.", "half_life")

    @post_load
    def _build(self, data, **kwargs) -> Adjustment:
        return Adjustment(schedule="geometric", rate=data.get("rate"), half_life=data.get("half_life"))


class ExplicitScheduleSchema(StrictSchema):
    schedule = fields.String(required=True, validate=validate.OneOf(["explicit"]))
    elasticities = fields.List(
        Real(validate=_range(0.0, limits.MAX_ELASTICITY)),
        required=True,
        validate=validate.Length(1, limits.MAX_HORIZON),
        metadata={"description": "Supply elasticity of periods 1, 2, ...; the last holds to the horizon."},
    )

    @post_load
    def _build(self, data, **kwargs) -> Adjustment:
        return Adjustment(schedule="explicit", elasticities=tuple(data["elasticities"]))


class StockScheduleSchema(StrictSchema):
    """A durable stock (MODEL.md 13; Nerlove 1958): each period a share lambda of the gap
    between the stock and its long-run desired level closes, and the stock shrinks by at most
    the share `depreciation` (supply elastic upward, inelastic downward: Glaeser & Gyourko
    2005, *JPE* 113(2))."""

    schedule = fields.String(required=True, validate=validate.OneOf(["stock"]))
    rate = Real(
        validate=_range(0.0, 1.0, low_ok=False),
        metadata={
            "description": "Share lambda in (0, 1] of the gap to the desired stock closed each period "
            "(default: short_run / long_run elasticity, so the impact elasticity is short-run)."
        },
    )
    half_life = Real(
        validate=_range(limits.MIN_HALF_LIFE, float(limits.MAX_PERIOD)),
        metadata={"description": "Periods to close half the gap (lambda = 1 - 0.5^(1/h)), at least 0.001."},
    )
    depreciation = Real(
        validate=_range(0.0, 1.0),
        metadata={
            "description": "Largest share of the stock lost in one period (demolition, conversion, "
            "decay), in [0, 1]; without it the stock may fall as fast as it rose."
        },
    )
    build_limit = Real(
        validate=_range(0.0, limits.MAX_RATE, low_ok=False),
        metadata={
            "description": "Largest share b > 0 of the standing homes that can be added in one period "
            "(builders, land and permits limit completions; typically 0.01-0.03 a year); without it "
            "building is unlimited (MODEL.md 16)."
        },
    )
    conversion = Real(
        load_default=0.0,
        validate=_range(0.0, limits.MAX_ELASTICITY),
        metadata={
            "description": "kappa >= 0: each period a share min(1, kappa ln(free rent / controlled rent)) "
            "of a binding ceiling's controlled homes leaves the rental market for good (sold to "
            "owner-occupiers or put to other uses; Sims 2007, Journal of Urban Economics 61(1)); "
            "default 0, none (MODEL.md 18)."
        },
    )

    @validates_schema
    def _one_of(self, data, **kwargs):
        if "rate" in data and "half_life" in data:
            raise ValidationError("Give rate or half_life, not both.", "half_life")

    @post_load
    def _build(self, data, **kwargs) -> Adjustment:
        return Adjustment(
            schedule="stock",
            rate=data.get("rate"),
            half_life=data.get("half_life"),
            depreciation=data.get("depreciation"),
            build_limit=data.get("build_limit"),
            conversion=data.get("conversion", 0.0),
        )


SCHEDULE_SCHEMAS = {
    "linear": LinearScheduleSchema,
    "geometric": GeometricScheduleSchema,
    "explicit": ExplicitScheduleSchema,
    "stock": StockScheduleSchema,
}

#: Fields of the stock schedule alone: a misplaced one is answered with where it belongs.
_STOCK_ONLY = ("depreciation", "build_limit", "conversion")
for _name, _schema in SCHEDULE_SCHEMAS.items():
    _misplaced = [f"'{f}'" for f in _STOCK_ONLY if f not in _schema._declared_fields]
    _schema.error_messages = {
        "unknown": f"Unknown field for schedule '{_name}' (it takes {', '.join(_schema._declared_fields)})."
        + (
            f" Note: {', '.join(_misplaced)} belong to the stock schedule "
            '("adjustment": {"schedule": "stock", ...}), the only one with homes that stand, are '
            "built and are lost."
            if _misplaced
            else ""
        )
    }


# --- policies -----------------------------------------------------------------------------


def _money(description: str, low_ok: bool, **kwargs):
    return Real(
        validate=_range(0.0, limits.MAX_MONEY, low_ok=low_ok), metadata={"description": description}, **kwargs
    )


class _PolicyBase(StrictSchema):
    name = label(
        limits.MAX_NAME_LENGTH,
        required=True,
        metadata={"description": "Unique label of the policy in this request."},
    )
    start = _period(load_default=1, metadata={"description": "First active period (default 1)."})
    end = _period(metadata={"description": "Last active period (default: the horizon)."})

    @validates_schema
    def _period_order(self, data, **kwargs):
        if "end" in data and "start" in data and data["end"] < data["start"]:
            raise ValidationError("Must not be before start.", "end")

    @post_load
    def _build(self, data, **kwargs) -> Policy:
        level = data.pop("level", None)
        base = data.pop("base_level", False) or level == "base"  # "base": the older spelling
        return Policy(level=None if base else level, base_level=base, **data)


class NonePolicySchema(_PolicyBase):
    kind = fields.String(required=True, validate=validate.OneOf(["none"]))


def _indexed(what: str) -> Flag:
    return Flag(
        load_default=False,
        metadata={
            "description": f"With market.inflation: true if the {what} moves with the general price "
            "level (a real rule); false (default) if it is fixed in money of the day."
        },
    )


class PriceCeilingSchema(_PolicyBase):
    kind = fields.String(required=True, validate=validate.OneOf(["price_ceiling"]))
    level = NumberOrConstant(
        "base",
        Real(validate=_range(0.0, limits.MAX_MONEY, low_ok=False)),
        metadata={
            "description": "Ceiling price per unit per price interval. (Older requests may send "
            '"base" here for base_level: true; it is still accepted.)'
        },
    )
    base_level = Flag(
        load_default=False,
        metadata={
            "description": "true: the ceiling is the base price P0, a freeze (instead of level or growth)."
        },
    )
    growth = Real(
        validate=_range(-1.0, limits.MAX_RATE, low_ok=False),
        metadata={
            "description": "Cap on growth per period: c_t = (1+growth) Pc_(t-1), Pc_0 = P0 (nominal "
            "under inflation; indexed: inflation plus growth)."
        },
    )
    indexed = _indexed("level (or the growth cap: inflation plus growth)")
    coverage = Real(
        load_default=1.0,
        validate=_range(
            0.0, 1.0, low_ok=False, error="A share of the homes above 0 and at most 1: write 0.4 for 40 %."
        ),
        metadata={
            "description": "Share s in (0, 1] of homes the ceiling covers (e.g. older buildings); "
            "households without a controlled home rent uncontrolled ones, whose rent clears "
            "(Fallis & Smith 1984)."
        },
    )
    new_homes = fields.String(
        load_default="covered",
        validate=validate.OneOf(NEW_HOMES),
        metadata={
            "description": 'Schedule "stock" only (refused under any other schedule, even as "covered"): '
            '"covered" (the default) if homes built after the rule starts fall under it in the share '
            '`coverage`, "exempt" if they are never controlled (as most recent rent laws provide; '
            "MODEL.md 17).",
            # Declared, a generated client would send "covered" on every ceiling, and every
            # ceiling under another schedule would be refused.
            "default_in_words": True,
        },
    )
    vacancy_decontrol = Real(
        validate=_range(0.0, 1.0, low_ok=False),
        metadata={
            "description": "Growth caps only: the share tau in (0, 1] of tenancies that end each period; "
            "a new tenancy starts at the market rent and is then capped, so owners receive on average "
            "(1 - tau) min(cap, M) + tau M (MODEL.md 17). Absent: off."
        },
    )

    @validates_schema
    def _level_or_growth(self, data, **kwargs):
        if ("level" in data) + ("growth" in data) + bool(data.get("base_level")) != 1:
            raise ValidationError("Give exactly one of level, growth or base_level: true.", "level")

    @validates_schema
    def _decontrol_needs_growth(self, data, **kwargs):
        if "vacancy_decontrol" in data and "growth" not in data:
            raise ValidationError(
                "'vacancy_decontrol' belongs to a growth cap (a price ceiling with `growth`): a fixed "
                "level or a freeze has no rent of the period before to reset.",
                "vacancy_decontrol",
            )


class PriceFloorSchema(_PolicyBase):
    kind = fields.String(required=True, validate=validate.OneOf(["price_floor"]))
    level = _money("Floor price per unit per price interval.", low_ok=False, required=True)
    indexed = _indexed("floor")


class UnitTaxSchema(_PolicyBase):
    kind = fields.String(required=True, validate=validate.OneOf(["unit_tax"]))
    amount = _money("Tax per unit per price interval (Pp = Pc - amount).", low_ok=True, required=True)
    indexed = _indexed("tax")


class AdValoremTaxSchema(_PolicyBase):
    kind = fields.String(required=True, validate=validate.OneOf(["ad_valorem_tax"]))
    rate = Real(
        required=True,
        validate=_range(0.0, 1.0, high_ok=False),
        metadata={"description": "Tax as a share of the consumer price (Pp = (1 - rate) Pc)."},
    )


class UnitSubsidySchema(_PolicyBase):
    kind = fields.String(required=True, validate=validate.OneOf(["unit_subsidy"]))
    amount = _money("Subsidy per unit per price interval (Pp = Pc + amount).", low_ok=True, required=True)
    indexed = _indexed("subsidy")


class QuantityCapSchema(_PolicyBase):
    kind = fields.String(required=True, validate=validate.OneOf(["quantity_cap"]))
    level = Real(
        required=True,
        validate=_range(0.0, limits.MAX_QUANTITY, low_ok=False),
        metadata={"description": "Most units that may trade per price interval (e.g. permits)."},
    )


POLICY_SCHEMAS = {
    "none": NonePolicySchema,
    "price_ceiling": PriceCeilingSchema,
    "price_floor": PriceFloorSchema,
    "unit_tax": UnitTaxSchema,
    "ad_valorem_tax": AdValoremTaxSchema,
    "unit_subsidy": UnitSubsidySchema,
    "quantity_cap": QuantityCapSchema,
}

#: Where a field belongs to other kinds, say so: `indexed` is only for rules with money in
#: them, `coverage`, `new_homes` and `vacancy_decontrol` only for price ceilings.
_ELSEWHERE = {
    "indexed": "rules with money in them: a price ceiling, price floor, unit tax or unit subsidy",
    "coverage": "a price ceiling",
    "new_homes": 'a price ceiling under the stock schedule ("adjustment": {"schedule": "stock"})',
    "vacancy_decontrol": "a growth cap (a price ceiling with `growth`)",
}
for _kind, _schema in POLICY_SCHEMAS.items():
    _takes = ", ".join(_schema._declared_fields)
    _hints = "; ".join(
        f"'{name}' belongs to {where}"
        for name, where in _ELSEWHERE.items()
        if name not in _schema._declared_fields
    )
    _schema.error_messages = {
        "unknown": f"Unknown field for kind '{_kind}' (it takes {_takes})."
        + (f" Note: {_hints}." if _hints else "")
    }


# --- welfare ------------------------------------------------------------------------------


class DiscountStepSchema(StrictSchema):
    through_period = WholeNumber(
        required=True,
        validate=_range(1, limits.MAX_PERIOD),
        metadata={"description": "Last period (inclusive) at this rate."},
    )
    rate = Real(required=True, validate=_range(-1.0, limits.MAX_RATE, low_ok=False))

    @post_load
    def _build(self, data, **kwargs) -> DiscountStep:
        return DiscountStep(**data)


class WelfareSchema(StrictSchema):
    rationing = fields.String(
        load_default="efficient",
        validate=validate.OneOf(RATIONING_RULES),
        metadata={"description": "Who gets the units under a binding ceiling."},
    )
    discount_rate = NumberOrList(
        Real(validate=_range(-1.0, limits.MAX_RATE, low_ok=False)),
        fields.List(
            fields.Nested(DiscountStepSchema), validate=validate.Length(1, limits.MAX_DISCOUNT_STEPS)
        ),
        load_default=0.0,
        metadata={
            "description": "Rate per model period, or steps [{through_period, rate}, ...]. A real rate: "
            "welfare is in real money of period 0, also under market.inflation."
        },
    )

    @validates_schema
    def _steps_increase(self, data, **kwargs):
        steps = data.get("discount_rate")
        if isinstance(steps, list):
            for i in range(1, len(steps)):
                if steps[i].through_period <= steps[i - 1].through_period:
                    raise ValidationError(
                        {"discount_rate": {i: {"through_period": ["Must increase strictly."]}}}
                    )

    @post_load
    def _build(self, data, **kwargs) -> Welfare:
        rate = data["discount_rate"]
        return Welfare(data["rationing"], tuple(rate) if isinstance(rate, list) else rate)


@functools.cache
def _default_welfare() -> Welfare:
    """The welfare of a request that sends none: WelfareSchema's defaults, loaded once.

    Welfare is frozen, so every request shares the one value; loading it per request built a
    marshmallow schema each time (about 30 us a request that leaves welfare out).
    """
    return WelfareSchema().load({})


# --- the scenario -------------------------------------------------------------------------


#: What an answer carries: every series ("full", the default) or only summaries and cautions.
OUTPUTS = ("full", "summary")


def _output(**kwargs) -> fields.String:
    return fields.String(
        load_default=OUTPUTS[0],
        validate=validate.OneOf(OUTPUTS),
        metadata={
            "description": '"full" (default): every series; "summary": only the summaries and cautions '
            "(sweeps; /v1/paths and batches only). Not part of the scenario id. In a batch it goes "
            "at the top level, beside `scenarios`; a scenario may only repeat the batch's value.",
            **kwargs,
        },
    )


#: Why a request without a summary form (bands, sensitivity, the briefing) refuses "summary".
FULL_ONLY = 'Only /v1/paths and batches answer "summary"; here it is "full".'


def full_output() -> fields.String:
    """`output` of a request that has no summary form: "full" alone (the default), so that the
    document does not offer a generated client what the service refuses."""
    return fields.String(
        load_default=OUTPUTS[0],
        validate=validate.OneOf(OUTPUTS[:1], error=FULL_ONLY),
        metadata={"description": '"full" (the default) only: only /v1/paths and batches answer "summary".'},
    )


class PathsRequestSchema(StrictSchema):
    market = fields.Nested(MarketSchema, required=True)
    shocks = fields.List(
        Tagged("profile", SHOCK_SCHEMAS),
        load_default=list,
        validate=validate.Length(max=limits.MAX_SHOCKS),
        metadata={"description": "Shocks to named shifters; several on one shifter add."},
    )
    adjustment = Tagged(
        "schedule",
        SCHEDULE_SCHEMAS,
        metadata={"description": "Required unless short- and long-run supply elasticities are equal."},
    )
    horizon = WholeNumber(
        required=True,
        validate=_range(1, limits.MAX_HORIZON),
        metadata={"description": "Number of model periods T (period 0 is the base point)."},
    )
    policies = fields.List(
        Tagged("kind", POLICY_SCHEMAS),
        required=True,
        validate=validate.Length(1, limits.MAX_POLICIES),
    )
    welfare = fields.Nested(WelfareSchema, load_default=_default_welfare)
    output = _output()

    def _market_of(self, data) -> Market:
        return data["market"]

    @validates_schema
    def _consistent(self, data, **kwargs):
        errors: dict = {}
        market: Market = self._market_of(data)
        declared = set(market.shifter_names)
        for i, shock in enumerate(data.get("shocks", [])):
            if shock.shifter not in declared:
                errors.setdefault("shocks", {})[i] = {
                    "shifter": [f"'{shock.shifter}' is not a shifter of market.demand or market.supply."]
                }
        adjustment: Adjustment | None = data.get("adjustment")
        if adjustment is None:
            if market.short_run_elasticity != market.long_run_elasticity:
                errors["adjustment"] = ["Required when short- and long-run supply elasticities differ."]
        elif (
            adjustment.schedule in ("geometric", "stock")
            and adjustment.rate is None
            and adjustment.half_life is None
            and not (0.0 < market.short_run_elasticity <= market.long_run_elasticity)
        ):
            errors["adjustment"] = [
                f"Without rate or half_life the {adjustment.schedule} schedule uses the Nerlove rate "
                "short_run/long_run, which needs 0 < short-run <= long-run elasticity; give a rate "
                "or half_life."
            ]
        seen: dict[str, int] = {}
        for i, policy in enumerate(data["policies"]):
            if policy.name in seen:
                errors.setdefault("policies", {})[i] = {
                    "name": [f"Duplicate policy name (also policy {seen[policy.name]})."]
                }
            seen.setdefault(policy.name, i)
            if policy.coverage < 1.0 and data["welfare"].rationing == "random":
                errors.setdefault("policies", {}).setdefault(i, {})["coverage"] = [
                    "Random rationing is defined for a ceiling on the whole market only; with "
                    "coverage below 1 use efficient rationing (households without a controlled "
                    "home rent uncontrolled ones)."
                ]
            random = data["welfare"].rationing == "random"
            for name, used in (
                ("new_homes", policy.new_homes == "exempt"),
                ("vacancy_decontrol", policy.vacancy_decontrol != 0.0),
            ):
                if random and used:
                    errors.setdefault("policies", {}).setdefault(i, {})[name] = [
                        f"Random rationing is defined for a ceiling on the whole market only; with "
                        f"'{name}' use efficient rationing (controlled homes go to the households who "
                        "value a home at least the market rent)."
                    ]
        if errors:
            raise ValidationError(errors)

    @validates_schema(pass_original=True)
    def _new_homes_need_a_stock(self, data, original, **kwargs):
        """`new_homes` says who owns homes built later: only the stock schedule builds homes.
        Read from the request itself, since "covered" given and left out load alike."""
        adjustment = data.get("adjustment")
        if adjustment is not None and adjustment.schedule == "stock":
            return
        errors = {
            i: {
                "new_homes": [
                    "'new_homes' belongs to a price ceiling under the stock schedule "
                    '("adjustment": {"schedule": "stock", ...}): without a stock no homes are built.'
                ]
            }
            for i, policy in enumerate(original["policies"])
            if "new_homes" in policy
        }
        if errors:
            raise ValidationError({"policies": errors})

    @post_load
    def _build(self, data, **kwargs) -> Scenario:
        horizon = data["horizon"]
        return Scenario(
            market=data["market"],
            horizon=horizon,
            policies=tuple(_within(policy, horizon) for policy in data["policies"]),
            shocks=tuple(data.get("shocks", ())),
            adjustment=data.get("adjustment") or Adjustment(),
            welfare=data["welfare"],
        )


def _within(policy: Policy, horizon: int) -> Policy:
    """A policy whose `end` is at or past the horizon lasts to the horizon, as one without an
    `end` does: the same scenario (same numbers), so the same scenario id and ETag."""
    if policy.end is not None and policy.end >= horizon:
        return dataclasses.replace(policy, end=None)
    return policy


class BatchScenarioSchema(PathsRequestSchema):
    """One scenario of a batch: a /v1/paths body, with the caller's own `id` if it likes."""

    id = label(
        limits.MAX_NAME_LENGTH,
        metadata={
            "description": "The caller's id of the scenario, echoed in its result and CSV rows; each id "
            "once per batch (a later scenario repeating one gets a problem at its id)."
        },
    )
    # Documentation only (simulate_many loads each scenario with PathsRequestSchema): a scenario
    # without `output` follows the batch's, so it has no default of its own; a declared "full"
    # would be sent by generated clients into summary batches, which refuse it.
    output = fields.String(
        validate=validate.OneOf(OUTPUTS),
        metadata={
            "description": "Leave it out: every scenario follows the batch's top-level `output`. A "
            "scenario may repeat that value but not ask for another (422 for the batch at "
            "/scenarios/i/output)."
        },
    )


class BatchRequestSchema(StrictSchema):
    """Only the envelope and the batch's total work; each scenario is loaded on its own so that
    errors stay per scenario."""

    scenarios = fields.List(
        AnyItem(BatchScenarioSchema),
        required=True,
        validate=validate.Length(1, limits.MAX_BATCH_SCENARIOS),
        metadata={
            "description": "Scenarios, each a /v1/paths request body with an optional id. Each is "
            "answered on its own: one that is invalid, or not a JSON object, gets a problem in its "
            "place in `results` and the others are answered. A scenario may repeat the batch's "
            "`output` but not ask for another (422 for the batch: every result of a batch has one "
            "shape, full or summary, so that its CSV has one set of columns)."
        },
    )
    output = _output(
        description='"full" (default) or "summary", for every scenario of the batch: set here, at the top '
        "level. A scenario's own `output` may repeat it but not ask for another (422 at "
        "/scenarios/i/output): every result of a batch has one shape, so that its CSV has one set "
        "of columns."
    )

    @validates_schema
    def _work(self, data, **kwargs):
        work = policy_periods(data["scenarios"])
        if work > limits.MAX_POLICY_PERIODS:
            raise ValidationError(
                f"The batch asks for {work} policy-periods (policies x (longest horizon + 1)); "
                f"the limit is {limits.MAX_POLICY_PERIODS}.",
                "scenarios",
            )


def policy_periods(scenarios: list[Any]) -> int:
    """Work a batch asks for, read from the raw bodies before any validation or model work.

    Only a scenario that may be solved asks for work: one that is not an object, or whose
    horizon is not a whole number of periods within the limit, or whose policies are not a list
    of 1 to MAX_POLICIES, is answered with its own problem and asks for none (it once counted as
    a horizon of MAX_HORIZON, so one mistyped horizon made the whole batch a 422)."""

    def horizon(s: dict) -> int:
        h = s.get("horizon")
        if isinstance(h, bool) or not isinstance(h, (int, float)) or not 1 <= h <= limits.MAX_HORIZON:
            return 0  # NaN is not within the range either
        return int(h) if h == int(h) else 0

    def policies(s: dict) -> int:
        p = s.get("policies")
        return len(p) if isinstance(p, list) and 1 <= len(p) <= limits.MAX_POLICIES else 0

    asking = [
        (policies(s), horizon(s)) for s in scenarios if isinstance(s, dict) and policies(s) and horizon(s)
    ]
    if not asking:
        return 0
    return sum(p for p, _ in asking) * (1 + max(h for _, h in asking))
