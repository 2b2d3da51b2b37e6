"""The normalised request of an answer: what was sent, with every default written out.

`normalised(schema, body)` walks a request that `schema` has already accepted, field by field
in the schema's declared order, and returns a new dict in which

* every field that was left out and has a default (`load_default`) carries that default
  (a nested object left out, like `welfare`, is normalised from `{}`);
* integers written 12.0 are 12 and numbers are floats, as the schema reads them;
* tagged unions (a policy by its `kind`, a shock by its `profile`, a schedule, a distribution)
  are normalised by the schema their tag names; unknown structure is copied as it is.

Defaults of `None` ("absent") are not written out: such a field means something only when
given. Inflation is written as the market reads it (a list that repeats its last rate is cut,
a list of zeros is 0.0). The result loads to the same scenario, so re-running it gives the
same `scenario_id` (and ETag): tests/schemas/test_normal.py checks every demo.
"""

from __future__ import annotations

from typing import Any

from marshmallow import Schema, fields
from marshmallow.utils import missing

from .fields import NumberOrConstant, NumberOrList, Real, Tagged, WholeNumber
from .paths import _inflation_value as inflation_value

__all__ = ["normalised"]


def normalised(schema: Schema, body: dict[str, Any]) -> dict[str, Any]:
    """`body` (accepted by `schema`) with the defaults filled in, in the schema's field order."""
    out: dict[str, Any] = {}
    for name, field in schema.fields.items():
        if name in body:
            out[name] = _value(field, body[name])
            continue
        default = field.load_default
        if default is missing or default is None:
            continue
        if isinstance(field, fields.Nested):
            out[name] = normalised(_nested(field), {})
            continue
        value = default() if callable(default) else default
        if value is not None:
            out[name] = value
    for name, value in body.items():  # nothing should be left, but never drop a field
        out.setdefault(name, value)
    rates = out.get("inflation")
    if isinstance(schema.fields.get("inflation"), NumberOrList) and not isinstance(rates, dict):
        # The market's rule: repeats of the last rate dropped, a list of zeros is 0.0 (the same
        # scenario, so the same request: answers of one scenario id carry one request).
        value = inflation_value(rates)
        out["inflation"] = list(value) if isinstance(value, tuple) else value
    if "policies" in schema.fields:
        _drop_inapplicable_defaults(out, body)
    return out


#: Defaults that belong to the stock schedule only: written out there, and left out (as the
#: schema refuses them, MODEL.md 17-18) where the adjustment is another schedule.
_STOCK_ONLY = {"policies": ("new_homes",), "adjustment": ("conversion",)}


def _drop_inapplicable_defaults(out: dict[str, Any], body: dict[str, Any]) -> None:
    # A freeze is written as the document spells it: base_level, not the older level "base".
    for policy in out.get("policies") or []:
        if isinstance(policy, dict) and policy.get("level") == "base":
            del policy["level"]
            policy["base_level"] = True
    adjustment = out.get("adjustment")
    if isinstance(adjustment, dict) and adjustment.get("schedule") == "stock":
        return
    sent = body.get("adjustment") if isinstance(body.get("adjustment"), dict) else {}
    for name in _STOCK_ONLY["adjustment"]:
        if isinstance(adjustment, dict) and name not in sent:
            adjustment.pop(name, None)
    given = body.get("policies") if isinstance(body.get("policies"), list) else []
    for i, policy in enumerate(out.get("policies") or []):
        original = given[i] if i < len(given) and isinstance(given[i], dict) else {}
        for name in _STOCK_ONLY["policies"]:
            if isinstance(policy, dict) and name not in original:
                policy.pop(name, None)


def _nested(field: fields.Nested) -> Schema:
    return field.schema  # marshmallow builds it once per field and keeps it


def _value(field: fields.Field, value: Any) -> Any:
    if value is None:
        return None
    if isinstance(field, Real) and isinstance(value, (int, float)):
        return float(value)  # as Real reads a valid number
    if isinstance(field, WholeNumber) and isinstance(value, (int, float)):
        return int(value)  # a valid whole number, written 12 or 12.0
    if isinstance(field, fields.Nested) and isinstance(value, dict):
        return normalised(_nested(field), value)
    if isinstance(field, Tagged) and isinstance(value, dict):
        schema = field.schemas.get(value.get(field.tag))
        return normalised(schema, value) if schema is not None else dict(value)
    if isinstance(field, fields.List) and isinstance(value, list):
        return [_value(field.inner, v) for v in value]
    if isinstance(field, fields.Dict) and isinstance(value, dict):
        inner = field.value_field
        return {k: _value(inner, v) if inner is not None else v for k, v in value.items()}
    if isinstance(field, NumberOrList):
        return _value(field.items if isinstance(value, list) else field.number, value)
    if isinstance(field, NumberOrConstant):
        return value if isinstance(value, str) else _value(field.number, value)
    # An uncertain input (a number or a distribution): schemas.uncertainty.UncertainElasticity.
    number, tagged = getattr(field, "number", None), getattr(field, "tagged", None)
    if isinstance(tagged, Tagged) and isinstance(value, dict):
        return _value(tagged, value)
    if isinstance(number, fields.Field) and not isinstance(value, dict):
        return _value(number, value)
    return value
