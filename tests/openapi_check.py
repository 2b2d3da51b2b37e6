"""Validate responses against the generated OpenAPI document (JSON Schema 2020-12).

Every response a test receives must have a status the operation declares (or fall under
`default`), a declared content type, and a body that matches its schema.
"""

from __future__ import annotations

import gzip
import re

import orjson
from jsonschema import Draft202012Validator
from referencing import Registry, Resource
from referencing.jsonschema import DRAFT202012

from service.schemas.pointers import escape as _escape

BASE = "urn:shockpath:openapi"


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
            body = orjson.loads(data)
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
            self.validate_schema({"$ref": BASE + pointer}, body)

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
