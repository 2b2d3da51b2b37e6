"""The scenario library's bodies: what POST and PUT /v1/scenarios take, and the records,
pages and computations they answer (documentation and tests; records are written by hand).

A record's `request` is a /v1/paths or /v1/bands request. It is loaded here as any object and
then validated on its own, exactly as those endpoints validate it (service.library.records),
so that its errors point under /request.
"""

from __future__ import annotations

from marshmallow import Schema, ValidationError, fields, post_load, validate

from .. import limits
from .fields import Flag, Printable, StrictSchema
from .paths import PathsRequestSchema
from .uncertainty import BandsRequestSchema

__all__ = ["ScenarioListSchema", "ScenarioRecordSchema", "ScenarioUnitsSchema", "ScenarioWriteSchema"]


class ScenarioRequest(fields.Field):
    """A JSON object validated later as a /v1/paths or /v1/bands request (documented `anyOf`:
    every paths request is also a valid bands request)."""

    openapi_any_of = (PathsRequestSchema, BandsRequestSchema)

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, dict):
            raise ValidationError("Must be an object: a /v1/paths or /v1/bands request.")
        return value


class Text(fields.String):
    """A string with surrounding white space removed; never a number or null."""

    def _deserialize(self, value, attr, data, **kwargs):
        return super()._deserialize(value, attr, data, **kwargs).strip()


class TagText(Text):
    """A tag: trimmed and in lower case, so that "Rent" and "rent " are one tag."""

    def _deserialize(self, value, attr, data, **kwargs):
        return super()._deserialize(value, attr, data, **kwargs).lower()


def _text(value: str) -> None:
    if any(ord(c) < 32 and c not in "\n\r\t" for c in value):
        raise ValidationError("Must not hold control characters other than line breaks and tabs.")


def _unit(description: str) -> Text:
    return Text(
        validate=[validate.Length(max=limits.MAX_SCENARIO_UNIT_LENGTH), Printable()],
        metadata={"description": description},
    )


class ScenarioUnitsSchema(StrictSchema):
    """The display units the analyst typed on the page: they label the charts and tables of
    whoever opens the record. Words only; the numbers never depend on them."""

    currency = _unit('What money is counted in (e.g. "GBP" or "pounds").')
    quantity = _unit('What homes are counted as, plural (e.g. "homes").')
    unit = _unit('One of them (e.g. "home").')
    price_interval = _unit('What a rent pays for (e.g. "month").')
    period = _unit('What one model period is (e.g. "year").')

    @post_load
    def _typed_only(self, data, **kwargs):
        # An empty unit is one not typed: the page leaves those out, and so does the record.
        return {key: value for key, value in data.items() if value}


class ScenarioWriteSchema(StrictSchema):
    """The body of POST /v1/scenarios and PUT /v1/scenarios/{id} (a PUT replaces all of it)."""

    name = Text(
        required=True,
        validate=[validate.Length(1, limits.MAX_SCENARIO_NAME_LENGTH), Printable()],
        metadata={"description": "A name to find the scenario by (searched as a substring, any case)."},
    )
    notes = Text(
        load_default="",
        validate=[validate.Length(max=limits.MAX_SCENARIO_NOTES_LENGTH), _text],
        metadata={"description": "Free text: sources of the inputs, which briefing used it, ..."},
    )
    tags = fields.List(
        TagText(validate=[validate.Length(1, limits.MAX_SCENARIO_TAG_LENGTH), Printable()]),
        load_default=list,
        validate=validate.Length(max=limits.MAX_SCENARIO_TAGS),
        metadata={"description": "Labels to filter by; stored in lower case, each once, in the order given."},
    )
    shared = Flag(
        load_default=False,
        metadata={
            "description": "true: every key of the deployment may read (and run) it; only its owner may "
            "change or delete it."
        },
    )
    units = fields.Nested(
        ScenarioUnitsSchema,
        load_default=dict,
        error_messages={
            "type": "Must be an object of display units: currency, quantity, unit, price_interval, period."
        },
        metadata={
            "description": "The display units the charts and tables are labelled with (the page's "
            "Units fields): any of currency, quantity, unit, price_interval and period, each at most "
            f"{limits.MAX_SCENARIO_UNIT_LENGTH} characters; empty ones are left out. Without it, none "
            "are kept ({}) and the page uses its own words."
        },
    )
    request = ScenarioRequest(
        required=True,
        metadata={
            "description": "A /v1/paths request, or a /v1/bands request (with distributions, draws, seed, "
            "percentiles or supply_correlation), validated exactly as that endpoint validates it."
        },
    )


def _when(description: str) -> fields.String:
    return fields.String(required=True, metadata={"description": description, "format": "date-time"})


class ScenarioLinksSchema(Schema):
    self = fields.String(required=True, metadata={"description": "This record (current revision)."})
    compute = fields.String(
        required=True, metadata={"description": "Its computation: .../paths or .../bands."}
    )
    page = fields.String(required=True, metadata={"description": "The page, opening this scenario."})


class ScenarioSummarySchema(Schema):
    """A record without its request (as listed)."""

    id = fields.String(required=True, metadata={"description": "Random and unguessable (URL-safe)."})
    revision = fields.Integer(required=True, metadata={"description": "This revision's number, from 1."})
    latest_revision = fields.Integer(required=True, metadata={"description": "The newest revision."})
    name = fields.String(required=True)
    notes = fields.String(required=True)
    tags = fields.List(fields.String(), required=True)
    units = fields.Nested(
        ScenarioUnitsSchema,
        required=True,
        metadata={"description": "The display units this revision was saved with; {} when none were."},
    )
    shared = fields.Boolean(required=True)
    mine = fields.Boolean(
        required=True, metadata={"description": "Whether the caller's key owns it (and may change it)."}
    )
    kind = fields.String(
        required=True,
        validate=validate.OneOf(["paths", "bands"]),
        metadata={"description": "Which computation the request is for."},
    )
    scenario_id = fields.String(
        required=True,
        metadata={"description": "The scenario_id of the request's answer (under model_version)."},
    )
    model_version = fields.String(
        required=True, metadata={"description": "The model version when this revision was saved."}
    )
    created_at = _when("When the record was first saved (UTC, RFC 3339).")
    revised_at = _when("When this revision was saved (UTC, RFC 3339).")
    links = fields.Nested(ScenarioLinksSchema, required=True)


class ScenarioRecordSchema(ScenarioSummarySchema):
    """One revision of a record."""

    request = ScenarioRequest(
        required=True,
        metadata={"description": "The validated request, normalised (keys in sorted order)."},
    )


class ScenarioListSchema(Schema):
    scenarios = fields.List(
        fields.Nested(ScenarioSummarySchema),
        required=True,
        metadata={"description": "Newest first: the caller's records and the ones shared with it."},
    )
    next_cursor = fields.String(
        required=True,
        allow_none=True,
        metadata={"description": "Pass as `cursor` for the next page; null on the last page."},
    )
