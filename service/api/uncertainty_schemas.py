"""Requests of /v1/bands and /v1/sensitivity: a /v1/paths request in which any elasticity may
be a distribution object, plus draws, seed, percentiles and an optional correlation.

A distribution is checked against its elasticity's sign rule: a normal's mean must obey it
(the draws are truncated to it), a uniform's or triangular's whole range must.
"""

from __future__ import annotations

from dataclasses import dataclass

from marshmallow import ValidationError, fields, post_load, validate, validates_schema

from ..engine.scenario import Market, Scenario
from ..engine.uncertainty import Distribution, UncertainInput
from .fields import Real, Tagged, WholeNumber
from .schemas import (
    MAX_ELASTICITY,
    DemandSchema,
    MarketSchema,
    PathsRequestSchema,
    SupplySchema,
    _range,
    _Strict,
)

__all__ = ["MAX_DRAWS", "BandsRequestSchema", "SensitivityRequestSchema", "UncertainRequest"]

MAX_DRAWS = 100_000
#: draws x (horizon + 1) x policies of one bands request (100,000 x 41 x 4 fits).
MAX_DRAW_CELLS = 16_400_000


class NormalSchema(_Strict):
    distribution = fields.String(required=True, validate=validate.OneOf(["normal"]))
    mean = Real(required=True)
    sd = Real(
        required=True,
        validate=_range(0.0, MAX_ELASTICITY),
        metadata={"description": "Standard deviation >= 0."},
    )


class UniformSchema(_Strict):
    distribution = fields.String(required=True, validate=validate.OneOf(["uniform"]))
    low = Real(required=True)
    high = Real(required=True)

    @validates_schema
    def _order(self, data, **kwargs):
        if data["high"] < data["low"]:
            raise ValidationError("Must not be below low.", "high")


class TriangularSchema(_Strict):
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

    def __init__(self, lower: float, upper: float, upper_open: bool = False, **kwargs):
        super().__init__(**kwargs)
        self.lower, self.upper, self.upper_open = lower, upper, upper_open
        self.number = Real(validate=_range(lower, upper, high_ok=not upper_open))
        self.tagged = Tagged("distribution", DISTRIBUTIONS)

    def openapi_alternatives(self):
        """For the OpenAPI document: a number or one of the distributions."""
        return [self.number, self.tagged]

    def _inside(self, x: float) -> bool:
        return self.lower <= x < self.upper if self.upper_open else self.lower <= x <= self.upper

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, dict):
            return self.number.deserialize(value)
        d = self.tagged.deserialize(value)
        rule = f"[{self.lower}, {self.upper}{')' if self.upper_open else ']'}"
        names = {"normal": ("mean",), "uniform": ("low", "high"), "triangular": ("low", "mode", "high")}
        bad = {k: [f"Must lie in {rule}."] for k in names[d["distribution"]] if not self._inside(d[k])}
        if bad:
            raise ValidationError(bad)
        kind = d["distribution"]
        first, second, third = {
            "normal": (d.get("mean"), d.get("sd"), 0.0),
            "uniform": (d.get("low"), d.get("high"), 0.0),
            "triangular": (d.get("low"), d.get("mode"), d.get("high")),
        }[kind]
        return Distribution(kind, first, second, third, self.lower, self.upper, self.upper_open)


def _shifters(description: str) -> fields.Dict:
    return fields.Dict(
        keys=fields.String(validate=validate.Length(1, 64)),
        values=UncertainElasticity(-MAX_ELASTICITY, MAX_ELASTICITY),
        validate=validate.Length(max=32),
        load_default=dict,
        metadata={"description": description},
    )


class UncertainDemandSchema(DemandSchema):
    price_elasticity = UncertainElasticity(-MAX_ELASTICITY, 0.0, upper_open=True, required=True)
    shifters = _shifters("Shifter elasticities, each a number or a distribution.")


class UncertainSupplySchema(SupplySchema):
    short_run_elasticity = UncertainElasticity(0.0, MAX_ELASTICITY, required=True)
    long_run_elasticity = UncertainElasticity(0.0, MAX_ELASTICITY, required=True)
    shifters = _shifters("Shifter elasticities, each a number or a distribution.")


def _central(x):
    return x.central if isinstance(x, Distribution) else x


class UncertainMarketSchema(MarketSchema):
    demand = fields.Nested(UncertainDemandSchema, required=True)
    supply = fields.Nested(UncertainSupplySchema, required=True)

    @post_load
    def _build(self, data, **kwargs) -> tuple[Market, list[UncertainInput]]:
        inputs: list[UncertainInput] = []

        def note(target, pointer, value):
            if isinstance(value, Distribution):
                inputs.append(UncertainInput(target, pointer, value))
            return _central(value)

        demand, supply = data["demand"], data["supply"]
        market = Market(
            price=data["price"],
            quantity=data["quantity"],
            demand_elasticity=note(
                "demand_elasticity", "/market/demand/price_elasticity", demand["price_elasticity"]
            ),
            short_run_elasticity=note(
                "short_run_elasticity", "/market/supply/short_run_elasticity", supply["short_run_elasticity"]
            ),
            long_run_elasticity=note(
                "long_run_elasticity", "/market/supply/long_run_elasticity", supply["long_run_elasticity"]
            ),
            demand_shifters={
                n: note(("demand_shifter", n), f"/market/demand/shifters/{_escape(n)}", v)
                for n, v in demand["shifters"].items()
            },
            supply_shifters={
                n: note(("supply_shifter", n), f"/market/supply/shifters/{_escape(n)}", v)
                for n, v in supply["shifters"].items()
            },
            payments_per_period=data["payments_per_period"],
            form=data["form"],
        )
        return market, inputs


def _escape(name: str) -> str:
    return name.replace("~", "~0").replace("/", "~1")


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
    supply_correlation = Real(
        load_default=0.0,
        validate=_range(-1.0, 1.0),
        metadata={
            "description": "Correlation of the short- and long-run supply elasticity draws (Gaussian copula)."
        },
    )

    def _market_of(self, data) -> Market:
        return data["market"][0]

    @post_load
    def _build(self, data, **kwargs) -> UncertainRequest:
        market, inputs = data["market"]
        scenario = PathsRequestSchema._build(self, {**data, "market": market})
        return UncertainRequest(
            scenario=scenario,
            inputs=tuple(inputs),
            draws=data.get("draws", 0),
            seed=data.get("seed", 0),
            percentiles=tuple(data.get("percentiles", ())),
            supply_correlation=data["supply_correlation"],
        )


class BandsRequestSchema(_UncertainRequestSchema):
    draws = WholeNumber(
        load_default=10_000,
        validate=_range(1, MAX_DRAWS),
        metadata={"description": f"Number of draws (at most {MAX_DRAWS:,}); every draw runs the full model."},
    )
    seed = WholeNumber(
        load_default=0, validate=_range(0, 2**63 - 1), metadata={"description": "Same seed, same answer."}
    )
    percentiles = fields.List(
        Real(validate=_range(0.0, 100.0)),
        load_default=lambda: [5.0, 50.0, 95.0],
        validate=validate.Length(1, 21),
        metadata={"description": "Percentiles to report, in [0, 100] (default 5, 50, 95)."},
    )

    @validates_schema
    def _work(self, data, **kwargs):
        cells = data["draws"] * (data["horizon"] + 1) * len(data["policies"])
        if cells > MAX_DRAW_CELLS:
            raise ValidationError(
                f"draws x (horizon + 1) x policies is {cells:,}; the limit is {MAX_DRAW_CELLS:,}.", "draws"
            )


class SensitivityRequestSchema(_UncertainRequestSchema):
    pass
