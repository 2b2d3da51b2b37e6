"""The /v1/briefing request: a /v1/paths request plus an optional title and units.

`BriefingRequestSchema` documents the whole body (the OpenAPI document); the service loads the
two options with `BriefingOptionsSchema` and the rest as a /v1/paths request, so every error of
the scenario points where it would for /v1/paths.
"""

from __future__ import annotations

from marshmallow import fields, validate

from .. import limits
from .charts import UnitsSchema
from .fields import StrictSchema
from .paths import PathsRequestSchema

__all__ = ["OPTIONS", "BriefingOptionsSchema", "BriefingRequestSchema"]

#: The fields a briefing adds to a /v1/paths request.
OPTIONS = ("title", "units")


class BriefingOptionsSchema(StrictSchema):
    title = fields.String(
        validate=validate.Length(1, limits.MAX_CHART_TITLE_LENGTH),
        metadata={
            "description": "The briefing's heading (e.g. the scenario's name); "
            "its charts' titles start with it."
        },
    )
    units = fields.Nested(UnitsSchema, load_default=lambda: UnitsSchema().load({}))


class BriefingRequestSchema(PathsRequestSchema):
    """Documentation only: a /v1/paths request with `title` and `units`."""

    title = BriefingOptionsSchema._declared_fields["title"]
    units = fields.Nested(
        UnitsSchema, metadata={"description": "Unit words for labels: currency, homes, ..."}
    )
