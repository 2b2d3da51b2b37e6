"""The /v1/briefing request: a /v1/paths or a /v1/bands request plus an optional title and units.

`BriefingRequestSchema` and `BandsBriefingRequestSchema` document the whole body (the OpenAPI
document: one of the two); the service loads the two options with `BriefingOptionsSchema` and the
rest as the request of its kind (uncertainty.is_bands_request), so every error of the scenario
points where it would for /v1/paths or /v1/bands.
"""

from __future__ import annotations

from marshmallow import fields

from .. import limits
from .charts import UnitsSchema, default_units
from .fields import StrictSchema, label
from .paths import PathsRequestSchema, full_output
from .uncertainty import BandsRequestSchema

__all__ = ["OPTIONS", "BandsBriefingRequestSchema", "BriefingOptionsSchema", "BriefingRequestSchema"]

#: The fields a briefing adds to a /v1/paths request.
OPTIONS = ("title", "units")


class BriefingOptionsSchema(StrictSchema):
    title = label(
        limits.MAX_CHART_TITLE_LENGTH,
        metadata={
            "description": "The briefing's heading (e.g. the scenario's name); "
            "its charts' titles start with it."
        },
    )
    units = fields.Nested(UnitsSchema, load_default=default_units)


class BriefingRequestSchema(PathsRequestSchema):
    """Documentation only: a /v1/paths request with `title` and `units`."""

    title = BriefingOptionsSchema._declared_fields["title"]
    units = fields.Nested(
        UnitsSchema, metadata={"description": "Unit words for labels: currency, homes, ..."}
    )
    output = full_output()  # a briefing is drawn from every series


class BandsBriefingRequestSchema(BandsRequestSchema):
    """Documentation only: a /v1/bands request with `title` and `units` (the briefing of its
    central answer, with how uncertain it is)."""

    title = BriefingRequestSchema._declared_fields["title"]
    units = BriefingRequestSchema._declared_fields["units"]
