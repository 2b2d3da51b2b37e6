"""The normalised request of an answer: what was sent, with every default written out.

`normalised(schema, body)` walks a request that `schema` has already accepted, field by field
in the schema's declared order, and returns a new dict in which

* every field that was left out and has a default (`load_default`) carries that default
  (a nested object left out, like `welfare`, is normalised from `{}`);
* integers written 12.0 are 12 and numbers are floats, as the schema reads them;
* tagged unions (a policy by its `kind`, a shock by its `profile`, a schedule, a distribution)
  are normalised by the schema their tag names; unknown structure is copied as it is;
* maps (the shifters of each curve) are written in the order of their keys, as the scenario
  reads them (engine.Market.shifter_names).

Defaults of `None` ("absent") are not written out: such a field means something only when
given. Inflation is written as the market reads it (a list that repeats its last rate is cut,
a list of zeros is 0.0). The result loads to the same scenario, so re-running it gives the
same `scenario_id` (and ETag): tests/schemas/test_normal.py checks every demo.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any, NamedTuple

from marshmallow import Schema, fields
from marshmallow.utils import missing

from .fields import NumberOrConstant, NumberOrList, Real, Tagged, WholeNumber
from .paths import _inflation_value as inflation_value

__all__ = ["normalised"]


def normalised(schema: Schema, body: dict[str, Any]) -> dict[str, Any]:
    """`body` (accepted by `schema`) with the defaults filled in, in the schema's field order."""
    plan = _plan(schema)
    out: dict[str, Any] = {}
    for name, convert, fill, constant in plan.fields:
        if name in body:
            out[name] = convert(body[name])
        elif constant is not _NO_CONSTANT:
            out[name] = constant
        elif fill is not None:
            value = fill()
            if value is not None:
                out[name] = value
    if not out.keys() >= body.keys():  # nothing should be left, but never drop a field
        for name, value in body.items():
            out.setdefault(name, value)
    if plan.inflation:
        rates = out.get("inflation")
        if not isinstance(rates, dict):
            # The market's rule: repeats of the last rate dropped, a list of zeros is 0.0 (the
            # same scenario, so the same request: answers of one scenario id carry one request).
            value = inflation_value(rates)
            out["inflation"] = list(value) if isinstance(value, tuple) else value
    if plan.policies:
        _as_the_scenario_reads_it(out, body)
    return out


class _Plan(NamedTuple):
    """How one schema is normalised, worked out once from its declared fields: per field its
    name, the converter of a value sent (_converter), and how a left-out field is written
    (_default: the maker of its default, or the default itself where it is one fixed value);
    whether it reads inflation as a market does; whether it holds policies."""

    fields: tuple[tuple[str, Callable[[Any], Any], Callable[[], Any] | None, Any], ...]
    inflation: bool
    policies: bool


#: Plans by schema instance (the schema kept alive beside its id).
_PLANS: dict[int, tuple[Schema, _Plan]] = {}


def _plan(schema: Schema) -> _Plan:
    found = _PLANS.get(id(schema))
    if found is not None and found[0] is schema:
        return found[1]
    plan = _Plan(
        tuple((name, _converter(field), *_default(field)) for name, field in schema.fields.items()),
        isinstance(schema.fields.get("inflation"), NumberOrList),
        "policies" in schema.fields,
    )
    _PLANS[id(schema)] = (schema, plan)
    return plan


#: The constant of a default that is not one fixed value (see _default).
_NO_CONSTANT = object()


def _default(field: fields.Field) -> tuple[Callable[[], Any] | None, Any]:
    """What a left-out field is written as: (maker, constant). A default that is one fixed value
    is the constant, written without a call (maker None); a nested object is normalised from {}
    and a callable default is called (constant _NO_CONSTANT); no default, or a default of None
    ("absent"), writes nothing (None, _NO_CONSTANT)."""
    default = field.load_default
    if default is missing or default is None:
        return None, _NO_CONSTANT
    if isinstance(field, fields.Nested):
        return (lambda: normalised(_nested(field), {})), _NO_CONSTANT
    if callable(default):
        return default, _NO_CONSTANT
    return None, default


#: Defaults that belong to the stock schedule only: written out there, and left out (as the
#: schema refuses them, MODEL.md 17-18) where the adjustment is another schedule.
_STOCK_ONLY = {"policies": ("new_homes",), "adjustment": ("conversion",)}


def _as_the_scenario_reads_it(out: dict[str, Any], body: dict[str, Any]) -> None:
    """Spellings the scenario reads alike are written one way, so that answers of one scenario id
    carry one request: a freeze as base_level (not the older level "base"); an `end` at or past
    the horizon left out (the policy lasts to the horizon, schemas.paths._within); and the
    stock-only defaults only under the stock schedule (elsewhere the schema refuses them)."""
    horizon = out.get("horizon")
    for policy in out.get("policies") or []:
        if isinstance(policy, dict) and policy.get("level") == "base":
            del policy["level"]
            policy["base_level"] = True
        if isinstance(policy, dict) and isinstance(policy.get("end"), int) and isinstance(horizon, int):
            if policy["end"] >= horizon:
                del policy["end"]
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


def _is_number(value: Any) -> bool:
    return isinstance(value, (int, float))


def _is_dict(value: Any) -> bool:
    return isinstance(value, dict)


def _is_list(value: Any) -> bool:
    return isinstance(value, list)


def _not_dict(value: Any) -> bool:
    return not isinstance(value, dict)


def _always(value: Any) -> bool:
    return True


#: A converter's rule: whether it applies to a value, and what it writes the value as.
_Rule = tuple[Callable[[Any], bool], Callable[[Any], Any]]

#: Converters by field instance (the field kept alive beside its id).
_CONVERTERS: dict[int, tuple[fields.Field, Callable[[Any], Any]]] = {}


def _real(value: int | float) -> float:
    """A number as a Real field reads it: a float, and a zero written -0.0 as 0.0 (the same
    scenario, so the same id and the same bytes)."""
    return float(value) + 0.0


def _converter(field: fields.Field) -> Callable[[Any], Any]:
    """The function that writes a value sent for `field` as the schema reads it.

    The rules, tried in this order, the first whose field type and value type both match
    applies (a value that matches none is copied as it is; None stays None):
    a number for Real is a float, for WholeNumber an int; an object for Nested is normalised by
    its schema, for Tagged by the schema its tag names (an unknown tag: copied); a list is
    converted item by item, a dict value by value; NumberOrList converts by its number or its
    items; NumberOrConstant keeps its constant (a string); an uncertain input (a number or a
    distribution, schemas.uncertainty) converts by its tagged or its number part. Which rules
    can apply depends on the field alone, so they are picked once per field.
    """
    found = _CONVERTERS.get(id(field))
    if found is not None and found[0] is field:
        return found[1]
    rules: list[_Rule] = []
    if isinstance(field, Real):
        rules.append((_is_number, _real))
    if isinstance(field, WholeNumber):
        rules.append((_is_number, int))
    if isinstance(field, fields.Nested):
        rules.append((_is_dict, lambda v: normalised(_nested(field), v)))
    if isinstance(field, Tagged):
        rules.append((_is_dict, _tagged(field)))
    if isinstance(field, fields.List):
        inner = _converter(field.inner)
        rules.append((_is_list, lambda v: [inner(x) for x in v]))
    if isinstance(field, fields.Dict):  # keys in order: maps written in any order read alike
        value_field = field.value_field
        if value_field is None:
            rules.append((_is_dict, lambda v: {k: v[k] for k in sorted(v)}))
        else:
            each = _converter(value_field)
            rules.append((_is_dict, lambda v: {k: each(v[k]) for k in sorted(v)}))
    if isinstance(field, NumberOrList):
        items, number = _converter(field.items), _converter(field.number)
        rules.append((_always, lambda v: items(v) if isinstance(v, list) else number(v)))
    if isinstance(field, NumberOrConstant):
        number = _converter(field.number)
        rules.append((_always, lambda v: v if isinstance(v, str) else number(v)))
    number_part, tagged_part = getattr(field, "number", None), getattr(field, "tagged", None)
    if isinstance(tagged_part, Tagged):
        rules.append((_is_dict, _converter(tagged_part)))
    if isinstance(number_part, fields.Field):
        rules.append((_not_dict, _converter(number_part)))
    convert = _from_rules(tuple(rules))
    _CONVERTERS[id(field)] = (field, convert)
    return convert


def _tagged(field: Tagged) -> Callable[[Any], Any]:
    def convert(value: dict[str, Any]) -> Any:
        schema = field.schemas.get(value.get(field.tag))
        return normalised(schema, value) if schema is not None else dict(value)

    return convert


def _from_rules(
    rules: tuple[tuple[Callable[[Any], bool], Callable[[Any], Any]], ...],
) -> Callable[[Any], Any]:
    if not rules:
        return lambda value: value
    if rules in (((_is_number, _real),), ((_is_number, int),)):
        # A number field (most fields): the one rule without the calls of the general form.
        as_number = rules[0][1]
        return lambda value: as_number(value) if isinstance(value, (int, float)) else value
    if len(rules) == 1:
        ((applies, convert),) = rules
        if applies is _always:
            return lambda value: None if value is None else convert(value)
        return lambda value: convert(value) if value is not None and applies(value) else value

    def first_rule(value: Any) -> Any:
        if value is None:
            return None
        for applies, convert in rules:
            if applies(value):
                return convert(value)
        return value

    return first_rule
