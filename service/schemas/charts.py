"""The /v1/charts request: which chart, its format and units, and the scenario to draw."""

from __future__ import annotations

from marshmallow import fields, validate

from .. import limits
from .fields import AnyObject, StrictSchema, label
from .paths import PathsRequestSchema

__all__ = ["MAX_PANELS", "ChartRequestSchema"]

#: The most panels in one chart (a 3 x 3 grid).
MAX_PANELS = 9


def _label(default: str, description: str) -> fields.String:
    return label(limits.MAX_CHART_LABEL_LENGTH, load_default=default, metadata={"description": description})


class UnitsSchema(StrictSchema):
    currency = _label("money", "Currency label for prices and money, e.g. EUR.")
    quantity = _label("units", "Quantity label, e.g. homes.")
    unit = _label("unit", "One unit, as prices are quoted per it, e.g. home.")
    price_interval = _label(
        "price interval",
        "What a price pays for, e.g. month (a month's rent); the price axis reads "
        "'<currency> per <unit> per <price_interval>'.",
    )
    period = _label("period", "Model period label, e.g. year.")


def default_units() -> dict[str, str]:
    """Every unit word at its default: the `units` of a request that sends none (a new dict
    each time, as the caller may fill it)."""
    return UnitsSchema().load({})


class ChartRequestSchema(StrictSchema):
    chart = fields.String(
        required=True,
        validate=validate.OneOf(
            ["paths", "bands", "sensitivity", "gains_and_losses", "renters_vs_free_path"]
        ),
        metadata={
            "description": "paths: lines per policy (under the stock schedule also the homes below the "
            "free path); bands: percentile ribbons; sensitivity: a tornado; gains_and_losses: who gains "
            "and who loses, one panel per policy with one bar per group of the response's `distribution` "
            "(tenants in controlled and in uncontrolled homes, households priced or rationed out, owners "
            "of controlled and of uncontrolled homes, government), summed over the horizon and discounted "
            "with the scenario's discount rate; a /v1/paths scenario with efficient rationing (under "
            "random rationing the split is not reported: 422 pointing at /scenario/welfare/rationing); "
            "renters_vs_free_path: renters' gain or loss against the free path per period (the answer's "
            "`vs_free_path.renters`), one panel per policy, bars coloured before, during and after the "
            "rule (a /v1/paths scenario under the stock schedule; else 422 at /scenario/adjustment)."
        },
    )
    panels = fields.List(
        label(limits.MAX_NAME_LENGTH),
        validate=validate.Length(1, MAX_PANELS),
        metadata={
            "description": "paths and bands: the panels to draw, in order (one is a single chart): any "
            "per-period series of the answer by name (`object.member` inside an object, e.g. "
            "`vs_free_path.renters`), or `controlled_and_uncontrolled_rents` (covered_price solid, "
            "uncovered_price dashed). Default: consumer_price, nominal_consumer_price, "
            "controlled_and_uncontrolled_rents, quantity, homes_below_free_path, shortage, "
            "cumulative_deadweight_loss, each where the answer carries it. A panel the answer does not "
            "carry is a 422 at /panels/i."
        },
    )
    output = fields.String(
        validate=validate.Length(1, limits.MAX_NAME_LENGTH),
        metadata={
            "description": "sensitivity: the headline figure the tornado shows (one of the answer's "
            "`headlines`, e.g. discounted_deadweight_loss, final_consumer_price, "
            "final_homes_below_free_path; default discounted_deadweight_loss); else 422 at /output."
        },
    )
    format = fields.String(
        validate=validate.OneOf(["svg", "png"]),
        metadata={"description": "svg or png; without it the Accept header decides (default svg)."},
    )
    units = fields.Nested(UnitsSchema, load_default=default_units)
    title = label(
        limits.MAX_CHART_TITLE_LENGTH,
        metadata={"description": "Replaces the chart's title (e.g. with the scenario's name)."},
    )
    policy = label(
        limits.MAX_NAME_LENGTH,
        metadata={
            "description": "sensitivity: the policy whose tornado to draw (default: the largest swing)."
        },
    )
    scenario = AnyObject(
        PathsRequestSchema,
        required=True,
        metadata={
            "description": "The body for /v1/paths (paths, gains_and_losses), /v1/bands or "
            "/v1/sensitivity, by chart."
        },
    )
