"""A fast path for loading valid requests, generated from the marshmallow schemas themselves.

`compile_loader(schema)` walks a schema's declared fields once and builds a tree of small
closures that check exactly what the fields check (type, finiteness, Range, OneOf, Length,
required, unknown members) and load defaults the way marshmallow does, then run the schema's
own `@validates_schema` (with the input as sent where it asks for `pass_original`) and
`@post_load` hooks. It never writes an error message: on the first
thing it does not accept it raises `Rejected`, and the caller loads the same input with
marshmallow, which gives the error document (with its JSON Pointers) exactly as before. So the
fast path can only make a valid request cheaper, never change an answer or an error; a test
checks that it loads every valid request to the same value as marshmallow, and that it
rejects every invalid one.

A schema with a field, validator or hook it does not know compiles to None: that schema is
loaded by marshmallow alone.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

from marshmallow import Schema, ValidationError, fields, validate
from marshmallow.utils import missing

from .fields import (
    AnyItem,
    AnyObject,
    Flag,
    NumberOrConstant,
    NumberOrList,
    Printable,
    Real,
    Tagged,
    WholeNumber,
)

__all__ = ["Rejected", "compile_loader", "load_fast"]

Loader = Callable[[Any], Any]


class Rejected(Exception):
    """The fast path does not accept this input; load it with marshmallow."""


class _Unsupported(Exception):
    pass


_REJECT = Rejected()


def _range_check(v: validate.Range) -> Callable[[Any], bool]:
    low, high, low_in, high_in = v.min, v.max, v.min_inclusive, v.max_inclusive
    if low is not None and high is not None:
        if low_in and high_in:
            return lambda x: low <= x <= high
        if low_in:
            return lambda x: low <= x < high
        if high_in:
            return lambda x: low < x <= high
        return lambda x: low < x < high
    if low is not None:
        return (lambda x: x >= low) if low_in else (lambda x: x > low)
    if high is not None:
        return (lambda x: x <= high) if high_in else (lambda x: x < high)
    return lambda x: True


def _length_check(v: validate.Length) -> Callable[[Any], bool]:
    if v.equal is not None:
        return lambda x: len(x) == v.equal
    low = 0 if v.min is None else v.min
    high = math.inf if v.max is None else v.max
    return lambda x: low <= len(x) <= high


def _check_validators(field: fields.Field) -> Callable[[Any], bool] | None:
    """One predicate for every validator of a field (None when there are none)."""
    checks: list[Callable[[Any], bool]] = []
    for v in field.validators:
        if isinstance(v, validate.Range):
            checks.append(_range_check(v))
        elif isinstance(v, validate.OneOf):
            choices = frozenset(v.choices)
            checks.append(lambda x, choices=choices: x in choices)
        elif isinstance(v, validate.Length):
            checks.append(_length_check(v))
        elif isinstance(v, Printable):
            checks.append(str.isprintable)
        else:
            raise _Unsupported(type(v).__name__)
    if not checks:
        return None
    if len(checks) == 1:
        return checks[0]

    def every(x):
        for check in checks:
            if not check(x):
                return False
        return True

    return every


def _with_validators(field: fields.Field, load: Loader) -> Loader:
    check = _check_validators(field)
    if field.allow_none:
        raise _Unsupported("allow_none")
    if check is None:
        return load
    if load is _real:

        def checked_real(value):
            # A finite float (inf - inf and NaN give NaN) skips _real's type dispatch.
            out = value if type(value) is float and value - value == 0.0 else _real(value)
            if not check(out):
                raise _REJECT
            return out

        return checked_real

    def checked(value):
        out = load(value)
        if not check(out):
            raise _REJECT
        return out

    return checked


def _real(value):
    kind = type(value)
    if kind is float:
        number = value
    elif kind is int:
        try:
            number = float(value)
        except OverflowError:
            raise _REJECT from None
    else:
        raise _REJECT
    if not math.isfinite(number):
        raise _REJECT
    return number


def _whole(value):
    kind = type(value)
    if kind is float:
        if not math.isfinite(value) or not value.is_integer():
            raise _REJECT
        value = int(value)
    elif kind is not int:
        raise _REJECT
    if abs(value) > 2**53:
        raise _REJECT
    return value


def _string(value):
    if type(value) is not str:
        raise _REJECT
    return value


def _boolean(value):
    if value is True or value is False:
        return value
    raise _REJECT


def _field_loader(field: fields.Field, cache: dict[int, Loader | None]) -> Loader:
    """The loader of one field, for a value that is present."""
    if isinstance(field, Real):
        return _with_validators(field, _real)
    if isinstance(field, WholeNumber):
        return _with_validators(field, _whole)
    if type(field) is fields.String:
        return _with_validators(field, _string)
    if type(field) is fields.Boolean or type(field) is Flag:
        return _with_validators(field, _boolean)
    if type(field) is fields.Nested:
        nested = _schema_loader(field.schema, cache)
        return _with_validators(field, nested)
    if type(field) is fields.List:
        inner = _field_loader(field.inner, cache)

        def load_list(value):
            if type(value) is not list:
                raise _REJECT
            return [inner(x) for x in value]

        return _with_validators(field, load_list)
    if type(field) is fields.Dict:
        keys = _field_loader(field.key_field, cache) if field.key_field is not None else None
        values = _field_loader(field.value_field, cache) if field.value_field is not None else None
        if keys is None or values is None:
            raise _Unsupported("untyped Dict")

        def load_dict(value):
            if type(value) is not dict:
                raise _REJECT
            return {keys(k): values(v) for k, v in value.items()}

        return _with_validators(field, load_dict)
    if isinstance(field, Tagged):
        variants = {name: _schema_loader(schema, cache) for name, schema in field.schemas.items()}
        tag = field.tag

        def load_tagged(value):
            if type(value) is not dict:
                raise _REJECT
            variant = variants.get(value.get(tag)) if type(value.get(tag)) is str else None
            if variant is None:
                raise _REJECT
            return variant(value)

        return _with_validators(field, load_tagged)
    if isinstance(field, NumberOrConstant):
        number = _field_loader(field.number, cache)
        constant = field.constant

        def load_number_or_constant(value):
            if type(value) is str:
                if value == constant:
                    return value
                raise _REJECT
            return number(value)

        return _with_validators(field, load_number_or_constant)
    if isinstance(field, NumberOrList):
        number = _field_loader(field.number, cache)
        items = _field_loader(field.items, cache)

        def load_number_or_list(value):
            return items(value) if type(value) is list else number(value)

        return _with_validators(field, load_number_or_list)
    if isinstance(field, AnyItem):
        return lambda value: value  # any value, null too; its item is validated on its own
    if isinstance(field, AnyObject):

        def load_object(value):
            if type(value) is not dict:
                raise _REJECT
            return value

        return _with_validators(field, load_object)
    raise _Unsupported(type(field).__name__)


def _hooks(schema: Schema) -> tuple[list[tuple[Callable, bool]], list[Callable]]:
    hooks = type(schema)._hooks
    known = {"validates_schema", "post_load"}
    for tag, entries in hooks.items():
        if entries and tag not in known:
            raise _Unsupported(f"hook {tag}")
    validators, post = [], []
    for tag, out in (("validates_schema", validators), ("post_load", post)):
        for name, pass_collection, kwargs in hooks.get(tag, []):
            original = bool(kwargs.get("pass_original"))
            if pass_collection or (original and tag != "validates_schema"):
                raise _Unsupported(f"{tag} options")
            hook = getattr(schema, name)
            out.append((hook, original) if tag == "validates_schema" else hook)
    return validators, post


def _schema_loader(schema: Schema, cache: dict[int, Loader | None]) -> Loader:
    key = id(schema)
    if key in cache:
        loader = cache[key]
        if loader is None:
            raise _Unsupported("recursive schema")
        return loader
    cache[key] = None
    if schema.unknown != "raise" or schema.many or schema.partial or schema.only or schema.exclude:
        raise _Unsupported("schema options")
    members = []
    for name, field in schema.load_fields.items():
        member = field.data_key if field.data_key is not None else name
        attribute = field.attribute or name
        default = field.load_default
        factory = default if callable(default) else None  # decided once, not per request
        members.append((member, attribute, _field_loader(field, cache), field.required, default, factory))
    allowed = frozenset(m[0] for m in members)
    validators, post = _hooks(schema)

    def load(value):
        if type(value) is not dict:
            raise _REJECT
        if not allowed.issuperset(value):
            raise _REJECT
        data: dict[str, Any] = {}
        for member, attribute, loader, required, default, factory in members:
            if member in value:
                data[attribute] = loader(value[member])
            elif required:
                raise _REJECT
            elif factory is not None:
                data[attribute] = factory()
            elif default is not missing:
                data[attribute] = default
        out: Any = data
        try:
            for hook, original in validators:
                if original:  # the request as sent, as marshmallow passes it
                    hook(data, value, many=False, partial=None, unknown="raise")
                else:
                    hook(data, many=False, partial=None, unknown="raise")
            for hook in post:
                out = hook(out, many=False, partial=None, unknown="raise")
        except ValidationError:
            raise _REJECT from None
        return out

    cache[key] = load
    return load


def compile_loader(schema: Schema) -> Loader | None:
    """The fast loader of `schema`, or None where it uses something the fast path does not know."""
    try:
        return _schema_loader(schema, {})
    except _Unsupported:
        return None


def load_fast(schema: Schema, loader: Loader | None, value: Any) -> Any:
    """`schema.load(value)`, through the fast loader where it accepts the value."""
    if loader is not None:
        try:
            return loader(value)
        except Rejected:
            pass
    return schema.load(value)
