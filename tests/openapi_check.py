"""Validate responses against the generated OpenAPI document (JSON Schema 2020-12).

Every response a test receives must have a status the operation declares (or fall under
`default`), a declared content type, and a body that matches its schema. A body over
FULL_VALIDATION_BYTES (the largest batch allowed answers 48 MB, which jsonschema takes about 30 s
to walk) is validated on a seeded sample of its long lists (`sample`), which still sees every
shape of item the list holds.
"""

from __future__ import annotations

import gzip
import random
import re

import orjson
from jsonschema import Draft202012Validator
from referencing import Registry, Resource
from referencing.jsonschema import DRAFT202012

from service.schemas.pointers import escape as _escape

BASE = "urn:shockpath:openapi"
#: Bodies up to this size are validated whole; larger ones on a sample.
FULL_VALIDATION_BYTES = 1 << 20
#: In a sampled body, a list keeps at most this many items picked at random (seeded), besides its
#: first and last items and the first item of each shape.
SAMPLE_ITEMS = 6


def _shape(value, memo: dict[int, object]) -> object:
    """The structure of a JSON value without its numbers and strings: a scalar's type; an object's
    keys, each with the shape of its value; a list's set of item shapes. Two items of the same
    shape differ only in values of the same types."""
    if isinstance(value, dict | list):
        known = memo.get(id(value))
        if known is None:
            if isinstance(value, dict):
                known = frozenset((key, _shape(item, memo)) for key, item in value.items())
            else:
                types = frozenset(map(type, value))  # at C speed: most lists are of numbers
                if dict in types or list in types:
                    types = frozenset(_shape(item, memo) for item in value)
                known = ("list", types)
            memo[id(value)] = known
        return known
    return type(value)


def sample(value, rng: random.Random, memo: dict[int, object] | None = None):
    """A copy of a JSON value in which each list longer than SAMPLE_ITEMS + 2 keeps, in order, its
    first and last items, the first item of each shape (`_shape`: so a null among numbers, or a
    missing or mistyped field at any depth, is always kept) and SAMPLE_ITEMS items drawn by `rng`,
    each sampled in turn. What the sample can miss is a wrong value of the right type (out of
    range, not in an enum) in an item not drawn."""
    memo = {} if memo is None else memo
    if isinstance(value, dict):
        return {key: sample(item, rng, memo) for key, item in value.items()}
    if not isinstance(value, list):
        return value
    n = len(value)
    if n <= SAMPLE_ITEMS + 2:
        keep = range(n)
    else:
        first: dict[object, int] = {}
        for i, item in enumerate(value):
            first.setdefault(_shape(item, memo), i)
        keep = sorted({0, n - 1, *first.values(), *rng.sample(range(1, n - 1), SAMPLE_ITEMS)})
    return [sample(value[i], rng, memo) for i in keep]


class ResponseChecker:
    def __init__(self, document: dict):
        self.document = document
        resource = Resource(contents=document, specification=DRAFT202012)
        self.registry = Registry().with_resource(BASE, resource)
        self.templates = [
            (re.compile("^" + re.sub(r"\{[^}]+\}", "[^/]+", path) + "$"), path) for path in document["paths"]
        ]

    def template(self, path: str) -> str | None:
        for pattern, template in self.templates:
            if pattern.match(path):
                return template
        return None

    def operation(self, method: str, path: str) -> dict | None:
        template = self.template(path)
        return self.document["paths"][template].get(method.lower()) if template else None

    def validate_schema(self, schema: dict, instance) -> None:
        Draft202012Validator(schema, registry=self.registry).validate(instance)

    def validate_body(self, schema: dict, body: bytes) -> None:
        """Validates a JSON body whole, or on a seeded sample when it is over FULL_VALIDATION_BYTES."""
        instance = orjson.loads(body)
        if len(body) > FULL_VALIDATION_BYTES:
            instance = sample(instance, random.Random(len(body)))
        self.validate_schema(schema, instance)

    def component(self, name: str) -> dict:
        return {"$ref": f"{BASE}#/components/schemas/{name}"}

    def check(self, method: str, path: str, response) -> None:
        op = self.operation(method, path)
        declared = (
            op["responses"]
            if op
            else {"default": self.document["paths"]["/v1/paths"]["post"]["responses"]["default"]}
        )
        status = str(response.status_code)
        spec = declared.get(status) or declared.get("default")
        assert spec is not None, f"{method} {path}: status {status} is not documented"
        content = spec.get("content")
        if not content:
            assert not response.data, f"{method} {path}: {status} should have no body"
            return
        mimetype = response.mimetype
        assert mimetype in content, f"{method} {path}: {status} content type {mimetype} is not documented"
        if mimetype.endswith("json"):
            data = response.data
            if response.headers.get("Content-Encoding") == "gzip":
                data = gzip.decompress(data)
            template = self.template(path) if op else "/v1/paths"
            where = "/v1/paths" if template is None else template
            method_key = method.lower() if op else "post"
            key = status if status in declared else "default"
            pointer = "/".join(
                [
                    "#",
                    "paths",
                    _escape(where),
                    method_key,
                    "responses",
                    key,
                    "content",
                    _escape(mimetype),
                    "schema",
                ]
            )
            self.validate_body({"$ref": BASE + pointer}, data)

    def wrap(self, client):
        return _CheckedClient(client, self)


class _CheckedClient:
    def __init__(self, client, checker: ResponseChecker):
        self._client = client
        self._checker = checker

    def open(self, path: str, method: str = "GET", **kwargs):
        response = self._client.open(path, method=method, **kwargs)
        self._checker.check(method, path.split("?")[0], response)
        return response

    def get(self, path: str, **kwargs):
        return self.open(path, "GET", **kwargs)

    def post(self, path: str, **kwargs):
        return self.open(path, "POST", **kwargs)

    def put(self, path: str, **kwargs):
        return self.open(path, "PUT", **kwargs)

    def delete(self, path: str, **kwargs):
        return self.open(path, "DELETE", **kwargs)
