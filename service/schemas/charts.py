"""The /v1/charts request: which chart, its format and units, and the scenario to draw."""

from __future__ import annotations

from marshmallow import fields, validate

from .. import limits
from .fields import AnyObject, StrictSchema
from .paths import PathsRequestSchema

__all__ = ["ChartRequestSchema"]


def _label(default: str, description: str) -> fields.String:
    return fields.String(
        load_default=default,
        validate=validate.Length(1, limits.MAX_CHART_LABEL_LENGTH),
        metadata={"description": description},
    )


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


class ChartRequestSchema(StrictSchema):
    chart = fields.String(
        required=True,
        validate=validate.OneOf(["paths", "bands", "sensitivity"]),
        metadata={
            "description": "paths: lines per policy; bands: percentile ribbons; sensitivity: a tornado."
        },
    )
    format = fields.String(
        validate=validate.OneOf(["svg", "png"]),
        metadata={"description": "svg or png; without it the Accept header decides (default svg)."},
    )
    units = fields.Nested(UnitsSchema, load_default=lambda: UnitsSchema().load({}))
    title = fields.String(
        validate=validate.Length(1, limits.MAX_CHART_TITLE_LENGTH),
        metadata={"description": "Replaces the chart's title."},
    )
    policy = fields.String(
        validate=validate.Length(1, limits.MAX_NAME_LENGTH),
        metadata={
            "description": "sensitivity: the policy whose tornado to draw (default: the largest swing)."
        },
    )
    scenario = AnyObject(
        PathsRequestSchema,
        required=True,
        metadata={"description": "The body for /v1/paths, /v1/bands or /v1/sensitivity, by chart."},
    )
