"""Requests of /v1/bands and /v1/sensitivity: a /v1/paths request in which any elasticity may
be a distribution object, plus draws, seed, percentiles and an optional correlation.

A distribution is checked against its elasticity's sign rule: a normal's mean must obey it
(the draws are truncated to it), a uniform's or triangular's whole range must.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

from marshmallow import ValidationError, fields, post_load, validate, validates_schema

from .. import limits
from ..engine.scenario import Adjustment, Market, Scenario
from ..engine.uncertainty import (
    PARAMETERS,
    VACANCY_DECONTROL,
    Distribution,
    UncertainInput,
    banded_values,
)
from .fields import NumberOrList, Real, StrictSchema, Tagged, WholeNumber
from .fields import in_range as _range
from .paths import (
    POLICY_SCHEMAS,
    SCHEDULE_SCHEMAS,
    DemandSchema,
    GeometricScheduleSchema,
    MarketSchema,
    PathsRequestSchema,
    PriceCeilingSchema,
    StockScheduleSchema,
    SupplySchema,
    build_market,
    full_output,
    shifter_map,
)
from .pointers import escape

__all__ = ["BandsRequestSchema", "SensitivityRequestSchema", "UncertainRequest"]


class NormalSchema(StrictSchema):
    distribution = fields.String(required=True, validate=validate.OneOf(["normal"]))
    mean = Real(required=True)
    sd = Real(
        required=True,
        validate=_range(0.0, limits.MAX_ELASTICITY),
        metadata={"description": "Standard deviation >= 0."},
    )


class UniformSchema(StrictSchema):
    distribution = fields.String(required=True, validate=validate.OneOf(["uniform"]))
    low = Real(required=True)
    high = Real(required=True)

    @validates_schema
    def _order(self, data, **kwargs):
        if data["high"] < data["low"]:
            raise ValidationError("Must not be below low.", "high")


class TriangularSchema(StrictSchema):
    distribution = fields.String(required=True, validate=validate.OneOf(["triangular"]))
    low = Real(required=True)
    mode = Real(required=True)
    high = Real(required=True)

    @validates_schema
    def _order(self, data, **kwargs):
        if not data["low"] <= data["mode"] <= data["high"]:
            raise ValidationError("Must satisfy low <= mode <= high.", "mode")


DISTRIBUTIONS = {"normal": NormalSchema, "uniform": UniformSchema, "triangular": TriangularSchema}


class UncertainElasticity(fields.Field):
    """A number, or a distribution whose support obeys the elasticity's sign rule."""

    def __init__(
        self, lower: float, upper: float, upper_open: bool = False, lower_open: bool = False, **kwargs
    ):
        super().__init__(**kwargs)
        self.lower, self.upper, self.upper_open, self.lower_open = lower, upper, upper_open, lower_open
        self.number = Real(validate=_range(lower, upper, low_ok=not lower_open, high_ok=not upper_open))
        self.tagged = Tagged("distribution", DISTRIBUTIONS)

    def openapi_alternatives(self):
        """For the OpenAPI document: a number or one of the distributions."""
        return [self.number, self.tagged]

    def _inside(self, x: float) -> bool:
        above = self.lower < x if self.lower_open else self.lower <= x
        below = x < self.upper if self.upper_open else x <= self.upper
        return above and below

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, dict):
            return self.number.deserialize(value)
        d = self.tagged.deserialize(value)
        kind = d["distribution"]
        rule = f"{'(' if self.lower_open else '['}{self.lower}, {self.upper}{')' if self.upper_open else ']'}"
        # The sign rule bounds every location parameter; a normal's sd is a spread.
        located = [k for k in PARAMETERS[kind] if k != "sd"]
        bad = {k: [f"Must lie in {rule}."] for k in located if not self._inside(d[k])}
        if bad:
            raise ValidationError(bad)
        parameters = {k: d[k] for k in PARAMETERS[kind]}
        return Distribution(
            kind,
            **parameters,
            lower=self.lower,
            upper=self.upper,
            upper_open=self.upper_open,
            lower_open=self.lower_open,
        )


def _shifters(description: str) -> fields.Dict:
    return shifter_map(description, UncertainElasticity(-limits.MAX_ELASTICITY, limits.MAX_ELASTICITY))


class UncertainDemandSchema(DemandSchema):
    price_elasticity = UncertainElasticity(-limits.MAX_ELASTICITY, 0.0, upper_open=True, required=True)
    shifters = _shifters("Shifter elasticities, each a number or a distribution.")


class UncertainSupplySchema(SupplySchema):
    short_run_elasticity = UncertainElasticity(0.0, limits.MAX_ELASTICITY, required=True)
    long_run_elasticity = UncertainElasticity(0.0, limits.MAX_ELASTICITY, required=True)
    shifters = _shifters("Shifter elasticities, each a number or a distribution.")


class UncertainMarketSchema(MarketSchema):
    demand = fields.Nested(UncertainDemandSchema, required=True)
    supply = fields.Nested(UncertainSupplySchema, required=True)
    inflation = NumberOrList(
        UncertainElasticity(-1.0, limits.MAX_RATE, lower_open=True),
        MarketSchema._declared_fields["inflation"].items,
        load_default=0.0,
        metadata={
            "description": MarketSchema._declared_fields["inflation"].metadata["description"]
            + " A constant rate may be a distribution (each draw a constant rate)."
        },
    )

    @post_load
    def _build(self, data, **kwargs) -> tuple[Market, list[UncertainInput]]:
        """The market at the central values, and the uncertain inputs in a fixed order (demand
        price elasticity, short run, long run, demand shifters, supply shifters, each side's in
        the order of their names): the order of the draws' columns."""
        inputs: list[UncertainInput] = []

        def central(target, pointer, value):
            if isinstance(value, Distribution):
                inputs.append(UncertainInput(target, pointer, value))
                return value.central
            return value

        demand, supply = data["demand"], data["supply"]
        eta = central("demand_elasticity", "/market/demand/price_elasticity", demand["price_elasticity"])
        short_run = central(
            "short_run_elasticity", "/market/supply/short_run_elasticity", supply["short_run_elasticity"]
        )
        long_run = central(
            "long_run_elasticity", "/market/supply/long_run_elasticity", supply["long_run_elasticity"]
        )
        # In the order of the names, as the scenario reads a map (engine.Market.shifter_names) and
        # the answer echoes it: one request, written in any order, draws alike and has one id.
        demand_shifters = {
            n: central(("demand_shifter", n), f"/market/demand/shifters/{escape(n)}", demand["shifters"][n])
            for n in sorted(demand["shifters"])
        }
        supply_shifters = {
            n: central(("supply_shifter", n), f"/market/supply/shifters/{escape(n)}", supply["shifters"][n])
            for n in sorted(supply["shifters"])
        }
        inflation = data.get("inflation", 0.0)
        if not isinstance(inflation, list):
            inflation = central("inflation", "/market/inflation", inflation)
        numbers = {
            **data,
            "inflation": inflation,
            "demand": {"price_elasticity": eta, "shifters": demand_shifters},
            "supply": {
                "short_run_elasticity": short_run,
                "long_run_elasticity": long_run,
                "shifters": supply_shifters,
            },
        }
        return build_market(numbers), inputs


@dataclass(frozen=True)
class _UncertainAdjustment(Adjustment):
    """An Adjustment at its central values that also carries its uncertain inputs (replaced by
    the plain Adjustment when the scenario is built)."""

    inputs: tuple[UncertainInput, ...] = ()


def _schedule_inputs(data, schedule: str) -> Adjustment:
    inputs = []

    def central(target, name, value):
        if isinstance(value, Distribution):
            inputs.append(UncertainInput(target, f"/adjustment/{name}", value))
            return value.central
        return value

    rate = central("schedule_rate", "rate", data.get("rate"))
    depreciation = central("depreciation", "depreciation", data.get("depreciation"))
    conversion = central("conversion", "conversion", data.get("conversion", 0.0))
    return _UncertainAdjustment(
        schedule=schedule,
        rate=rate,
        half_life=data.get("half_life"),
        depreciation=depreciation,
        build_limit=data.get("build_limit"),
        conversion=conversion,
        inputs=tuple(inputs),
    )


class UncertainGeometricScheduleSchema(GeometricScheduleSchema):
    rate = UncertainElasticity(
        0.0, 1.0, lower_open=True, metadata=GeometricScheduleSchema._declared_fields["rate"].metadata
    )

    @post_load
    def _build(self, data, **kwargs) -> Adjustment:
        return _schedule_inputs(data, "geometric")


class UncertainStockScheduleSchema(StockScheduleSchema):
    rate = UncertainElasticity(
        0.0, 1.0, lower_open=True, metadata=StockScheduleSchema._declared_fields["rate"].metadata
    )
    depreciation = UncertainElasticity(
        0.0, 1.0, metadata=StockScheduleSchema._declared_fields["depreciation"].metadata
    )
    conversion = UncertainElasticity(
        0.0,
        limits.MAX_ELASTICITY,
        load_default=0.0,
        metadata=StockScheduleSchema._declared_fields["conversion"].metadata,
    )

    @post_load
    def _build(self, data, **kwargs) -> Adjustment:
        return _schedule_inputs(data, "stock")


class UncertainPriceCeilingSchema(PriceCeilingSchema):
    """A price ceiling whose vacancy decontrol tau may be a distribution (drawn inside (0, 1])."""

    vacancy_decontrol = UncertainElasticity(
        0.0,
        1.0,
        lower_open=True,
        metadata=PriceCeilingSchema._declared_fields["vacancy_decontrol"].metadata,
    )


@dataclass(frozen=True)
class UncertainRequest:
    scenario: Scenario
    inputs: tuple[UncertainInput, ...]
    draws: int
    seed: int
    percentiles: tuple[float, ...]
    supply_correlation: float


class _UncertainRequestSchema(PathsRequestSchema):
    market = fields.Nested(UncertainMarketSchema, required=True)
    adjustment = Tagged(
        "schedule",
        {
            **SCHEDULE_SCHEMAS,
            "geometric": UncertainGeometricScheduleSchema,
            "stock": UncertainStockScheduleSchema,
        },
        metadata=PathsRequestSchema._declared_fields["adjustment"].metadata,
    )
    policies = fields.List(
        Tagged("kind", {**POLICY_SCHEMAS, "price_ceiling": UncertainPriceCeilingSchema}),
        required=True,
        validate=validate.Length(1, limits.MAX_POLICIES),
    )
    output = full_output()
    supply_correlation = Real(
        load_default=0.0,
        validate=_range(-1.0, 1.0),
        metadata={
            "description": "Correlation of the short- and long-run supply elasticity draws (Gaussian copula)."
        },
    )

    def _market_of(self, data) -> Market:
        return data["market"][0]

    def _scenario_and_inputs(self, data) -> tuple[Scenario, tuple[UncertainInput, ...]]:
        """The scenario at the central values and the uncertain inputs: the market's, then the
        adjustment's (rate, depreciation, conversion), then each growth cap's vacancy decontrol
        in policy order: the order of the draws' columns."""
        market, inputs = data["market"]
        adjustment = data.get("adjustment")
        if isinstance(adjustment, _UncertainAdjustment):
            inputs = [*inputs, *adjustment.inputs]
            adjustment = Adjustment(
                schedule=adjustment.schedule,
                rate=adjustment.rate,
                half_life=adjustment.half_life,
                depreciation=adjustment.depreciation,
                build_limit=adjustment.build_limit,
                conversion=adjustment.conversion,
            )
        policies = list(data["policies"])
        for i, policy in enumerate(policies):
            tau = policy.vacancy_decontrol
            if isinstance(tau, Distribution):
                pointer = f"/policies/{i}/vacancy_decontrol"
                inputs = [*inputs, UncertainInput((VACANCY_DECONTROL, i), pointer, tau)]
                policies[i] = dataclasses.replace(policy, vacancy_decontrol=tau.central)
        numbers = {**data, "market": market, "adjustment": adjustment, "policies": policies}
        scenario = PathsRequestSchema._build(self, numbers)
        return scenario, tuple(inputs)

    @validates_schema
    def _short_run_changes_something(self, data, **kwargs):
        """Under `stock` with a rate or half-life the impact elasticity is lambda eps_LR and the
        short-run elasticity is unused (MODEL.md 20): drawing it would change nothing."""
        adjustment = data.get("adjustment")
        if adjustment is None or adjustment.schedule != "stock":
            return
        if adjustment.rate is None and adjustment.half_life is None:
            return
        if any(item.target == "short_run_elasticity" for item in data["market"][1]):
            raise ValidationError(
                {
                    "market": {
                        "supply": {
                            "short_run_elasticity": [
                                "Under the stock schedule with a rate or half_life the short-run "
                                "elasticity is not used (building in the first period responds with "
                                "the rate times the long-run elasticity), so drawing it would change "
                                "nothing: give it as a number, or leave out rate and half_life."
                            ]
                        }
                    }
                }
            )

    @post_load
    def _build(self, data, **kwargs) -> UncertainRequest:
        scenario, inputs = self._scenario_and_inputs(data)
        return UncertainRequest(
            scenario=scenario,
            inputs=inputs,
            draws=data.get("draws", 0),
            seed=data.get("seed", 0),
            percentiles=tuple(data.get("percentiles", ())),
            supply_correlation=data["supply_correlation"],
        )


class BandsRequestSchema(_UncertainRequestSchema):
    draws = WholeNumber(
        load_default=10_000,
        validate=_range(1, limits.MAX_DRAWS),
        metadata={
            "description": f"Number of draws (at most {limits.MAX_DRAWS:,}); every draw runs the full model."
        },
    )
    seed = WholeNumber(
        load_default=0,
        validate=_range(0, limits.MAX_SEED),
        metadata={"description": "Same seed, same answer."},
    )
    percentiles = fields.List(
        Real(validate=_range(0.0, 100.0)),
        load_default=lambda: [5.0, 50.0, 95.0],
        validate=validate.Length(1, limits.MAX_PERCENTILES),
        metadata={"description": "Percentiles to report, in [0, 100] (default 5, 50, 95)."},
    )

    @validates_schema
    def _work(self, data, **kwargs):
        repeated = sorted({q for q in data["percentiles"] if data["percentiles"].count(q) > 1})
        if repeated:  # each percentile is one key of the answer: a repeat would be lost
            raise ValidationError(
                f"Each percentile once: {', '.join(f'{q:g}' for q in repeated)} is given more than once.",
                "percentiles",
            )
        cells = data["draws"] * (data["horizon"] + 1) * len(data["policies"])
        if cells > limits.MAX_DRAW_CELLS:
            raise ValidationError(
                f"draws x (horizon + 1) x policies is {cells:,}; the limit is {limits.MAX_DRAW_CELLS:,}.",
                "draws",
            )
        # Memory: the float32 values the bands keep, one series of one policy per slot.
        kept = banded_values(*self._scenario_and_inputs(data), data["draws"])
        if kept > limits.MAX_BAND_VALUES:
            raise ValidationError(
                f"draws x (horizon + 1) x banded series is {kept:,}; the limit is "
                f"{limits.MAX_BAND_VALUES:,} (each policy bands 6 series; 2 more under the stock "
                "schedule, 2 more on a price ceiling with coverage below 1, exempt new homes or vacancy "
                "decontrol, 1 more with an uncertain "
                "inflation rate): ask for fewer draws, periods or policies.",
                "draws",
            )


class SensitivityRequestSchema(_UncertainRequestSchema):
    pass
