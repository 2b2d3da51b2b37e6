"""Strict marshmallow fields and the base of every request schema, and how each field appears
in the OpenAPI document.

JSON numbers only (never true/false or "12"), finite only, integers written 12 or 12.0;
unions (a number or "base"; a number or a step list) and tagged unions (a policy by its
`kind`) that load to one value and document themselves as JSON Schema `oneOf`.
"""

from __future__ import annotations

import math
from typing import Any

from marshmallow import Schema, ValidationError, fields, validate

__all__ = [
    "AnyItem",
    "AnyObject",
    "Either",
    "Flag",
    "NumberOrConstant",
    "NumberOrList",
    "Printable",
    "Real",
    "StrictSchema",
    "Tagged",
    "WholeNumber",
    "in_range",
    "label",
    "openapi_attributes",
]


class StrictSchema(Schema):
    """Base of the request schemas: fields in declaration order; unknown fields are rejected
    (marshmallow's default, RAISE)."""

    class Meta:
        ordered = True


class Printable(validate.Validator):
    """Printable characters only (str.isprintable: no control characters, line or paragraph
    separators, unassigned or private code points): names end up in spreadsheets, XML (SVG
    charts, workbooks), CSV rows and page titles, where such characters break the file."""

    error = "Must hold printable characters only."

    def __call__(self, value: str) -> str:
        if not value.isprintable():
            raise ValidationError(self.error)
        return value


def label(max_length: int, **kwargs) -> fields.String:
    """A name or title a person gives: 1 to max_length printable characters."""
    return fields.String(validate=[validate.Length(1, max_length), Printable()], **kwargs)


def in_range(low=None, high=None, low_ok=True, high_ok=True, error: str | None = None) -> validate.Range:
    """A Range validator; low_ok / high_ok say whether each end itself is allowed; `error`, a
    message in the analyst's words where the plain one (range_words) says too little about the
    usual mistake."""
    return validate.Range(
        min=low,
        max=high,
        min_inclusive=low_ok,
        max_inclusive=high_ok,
        error=error or range_words(low, high, low_ok, high_ok),
    )


def range_words(low=None, high=None, low_ok=True, high_ok=True) -> str:
    """What a range allows, in words and plain numbers: "Must be above 0 and at most
    1,000,000,000,000." (marshmallow's own reads "greater than 0.0 and less than or equal to
    1000000000000.0")."""
    parts = []
    if low is not None:
        parts.append(f"{'at least' if low_ok else 'above'} {plain_number(low)}")
    if high is not None:
        parts.append(f"{'at most' if high_ok else 'below'} {plain_number(high)}")
    return f"Must be {' and '.join(parts)}." if parts else "Must be a number."


def plain_number(x: float) -> str:
    """1,000,000, 0.25, -100, 1e-300: whole numbers with thousands separators up to 10**15,
    others as Python's shortest form."""
    if float(x).is_integer() and abs(x) < 1e15:
        return f"{int(x):,}"
    return f"{x:g}"


class Real(fields.Float):
    """A finite JSON number; booleans and strings are rejected."""

    default_error_messages = {
        "invalid": "Must be a number.",
        "special": "Must be a finite number.",
        "too_large": "Number too large.",
    }

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise self.make_error("invalid")
        try:
            number = float(value)
        except OverflowError as error:
            raise self.make_error("too_large") from error
        if not math.isfinite(number):
            raise self.make_error("special")
        return number


class Flag(fields.Boolean):
    """A JSON true or false; never 1, 0 or a string."""

    default_error_messages = {"invalid": "Must be true or false."}

    def _deserialize(self, value, attr, data, **kwargs):
        if value is True or value is False:
            return value
        raise self.make_error("invalid")


class WholeNumber(fields.Integer):
    """A JSON integer, also written with a zero fraction (12.0); never a boolean or string."""

    default_error_messages = {"invalid": "Must be a whole number.", "too_large": "Number too large."}

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, bool):
            raise self.make_error("invalid")
        if isinstance(value, float):
            if not math.isfinite(value) or not value.is_integer():
                raise self.make_error("invalid")
            value = int(value)
        if not isinstance(value, int):
            raise self.make_error("invalid")
        if abs(value) > 2**53:
            raise self.make_error("too_large")
        return value


class NumberOrConstant(fields.Field):
    """A number in a range, or one fixed string (e.g. "base"); loads to float or the string."""

    def __init__(self, constant: str, number: Real, **kwargs):
        super().__init__(**kwargs)
        self.constant = constant
        self.number = number

    def _deserialize(self, value, attr, data, **kwargs):
        if value == self.constant and isinstance(value, str):
            return value
        if isinstance(value, str):
            raise ValidationError(f'Must be a number or "{self.constant}".')
        return self.number.deserialize(value)


class NumberOrList(fields.Field):
    """A number, or a non-empty list of objects (loads to float or list)."""

    def __init__(self, number: Real, items: fields.List, **kwargs):
        super().__init__(**kwargs)
        self.number = number
        self.items = items

    def _bind_to_schema(self, field_name, parent):
        super()._bind_to_schema(field_name, parent)
        self.items._bind_to_schema(field_name, parent)

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, list):
            return self.items.deserialize(value)
        return self.number.deserialize(value)


class AnyObject(fields.Field):
    """A JSON object loaded as it is, documented as `schema` (validated later, on its own)."""

    def __init__(self, schema: type[Schema], **kwargs):
        super().__init__(**kwargs)
        self.schema = schema

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, dict):
            raise ValidationError("Must be an object.")
        return value


class AnyItem(fields.Field):
    """Any JSON value, loaded as it is: an item of a list answered item by item (a batch's
    scenarios), meant to be an object of `schema` and validated later on its own, so that an item
    that is not even an object (a string, a number, null) gets its own problem in its place
    instead of failing the whole list."""

    def __init__(self, schema: type[Schema], **kwargs):
        super().__init__(allow_none=True, **kwargs)
        self.schema = schema

    def _deserialize(self, value, attr, data, **kwargs):
        return value


class Either(fields.Field):
    """Documentation only: a value matching exactly one of several schemas (`oneOf`)."""

    def __init__(self, schemas: list[type[Schema]], **kwargs):
        super().__init__(**kwargs)
        self.schemas = schemas


class Tagged(fields.Field):
    """An object whose `tag` member chooses the schema that loads it (a tagged union)."""

    def __init__(self, tag: str, schemas: dict[str, type[Schema]], **kwargs):
        super().__init__(**kwargs)
        self.tag = tag
        self.schemas = {name: cls() for name, cls in schemas.items()}

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, dict):
            raise ValidationError("Must be an object.")
        name = value.get(self.tag)
        if not isinstance(name, str) or name not in self.schemas:
            options = ", ".join(self.schemas)
            raise ValidationError({self.tag: [f"Must be one of: {options}."]})
        return self.schemas[name].load(value)


def _exclusive_range(self, field: fields.Field, ret: dict[str, Any], **kwargs) -> dict[str, Any]:
    """JSON Schema 2020-12 exclusive bounds for Range validators that exclude an end."""
    out: dict[str, Any] = {}
    for v in field.validators:
        if isinstance(v, validate.Range):
            if v.min is not None and not v.min_inclusive:
                ret.pop("minimum", None)
                out["exclusiveMinimum"] = v.min
            if v.max is not None and not v.max_inclusive:
                ret.pop("maximum", None)
                out["exclusiveMaximum"] = v.max
    return out


def _dict_length(self, field: fields.Field, ret: dict[str, Any], **kwargs) -> dict[str, Any]:
    if not isinstance(field, fields.Dict):
        return {}
    ret.pop("maxLength", None)
    ret.pop("minLength", None)
    out: dict[str, Any] = {}
    for v in field.validators:
        if isinstance(v, validate.Length):
            if v.max is not None:
                out["maxProperties"] = v.max
            if v.min is not None:
                out["minProperties"] = v.min
    return out


def _unions(self, field: fields.Field, ret: dict[str, Any], **kwargs) -> dict[str, Any]:
    if isinstance(field, Tagged):
        refs = {name: self.resolve_nested_schema(schema) for name, schema in field.schemas.items()}
        ret.pop("type", None)
        return {
            "oneOf": list(refs.values()),
            "discriminator": {
                "propertyName": field.tag,
                "mapping": {name: ref["$ref"] for name, ref in refs.items()},
            },
        }
    alternatives = getattr(field, "openapi_alternatives", None)
    if alternatives is not None:
        return {"oneOf": [self.field2property(f) for f in alternatives()]}
    any_of = getattr(field, "openapi_any_of", None)
    if any_of is not None:  # a value that may match several schemas at once
        return {"anyOf": [self.resolve_nested_schema(schema) for schema in any_of]}
    if isinstance(field, Either):
        return {"oneOf": [self.resolve_nested_schema(schema) for schema in field.schemas]}
    if isinstance(field, AnyItem):
        # Any value is taken here (so the document does not refuse it): an object is validated
        # later on its own as `schema`, anything else is answered in its place with a problem.
        name = self.resolve_nested_schema(field.schema)["$ref"].rsplit("/", 1)[-1]
        return {
            "description": f"A {name} object, validated on its own; if it is invalid, or is not an "
            "object at all, its result is a problem in its place (the other items are still answered).",
        }
    if isinstance(field, AnyObject):
        # Any object is accepted here; it is validated later on its own (e.g. one batch
        # scenario, whose problems are answered in its place), so the document says so.
        name = self.resolve_nested_schema(field.schema)["$ref"].rsplit("/", 1)[-1]
        return {
            "type": "object",
            "description": f"Validated on its own as {name}; if invalid, its result is a problem.",
        }
    if isinstance(field, NumberOrConstant):
        # Documented as the number alone: a union of a number and a constant string defeats
        # client generators; the constant is an older spelling the loader still accepts.
        return self.field2property(field.number)
    if isinstance(field, NumberOrList):
        return {"oneOf": [self.field2property(field.number), self.field2property(field.items)]}
    return {}


def _default_in_words(self, field: fields.Field, ret: dict[str, Any], **kwargs) -> dict[str, Any]:
    """No declared `default` for a field whose default holds only where the field may be sent
    (metadata `default_in_words`: its description says it instead). Client generators write
    every declared default into every object they build, so a declared default must be a value
    the service takes wherever the object goes."""
    if field.metadata.get("default_in_words"):
        ret.pop("default", None)
    return {}


def openapi_attributes(converter) -> None:
    """Teach an apispec OpenAPIConverter the fields of this module."""
    for func in (_exclusive_range, _dict_length, _unions, _default_in_words):
        converter.add_attribute_function(func)
