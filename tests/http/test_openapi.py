"""The OpenAPI document: generated from the schemas, committed, valid, served."""

from __future__ import annotations

import json

from openapi_spec_validator import validate

from service.http.openapi import DOCUMENT_PATH, build_document, render_document


def test_the_committed_document_is_the_generated_one():
    assert DOCUMENT_PATH.read_text(encoding="utf-8") == render_document(), (
        "openapi/openapi.json is stale: run python -m service.http --write"
    )


def test_the_document_is_valid_openapi_3_1():
    document = build_document()
    assert document["openapi"] == "3.1.0"
    validate(document)


def test_the_served_document_is_the_committed_one(client):
    served = client.get("/openapi.json").get_json()
    assert served == json.loads(DOCUMENT_PATH.read_text(encoding="utf-8"))


def test_every_route_of_the_app_is_documented(app):
    documented = set(build_document()["paths"])
    routes = {
        rule.rule.replace("<", "{").replace(">", "}")
        for rule in app.url_map.iter_rules()
        if rule.endpoint != "static"
    }
    assert routes <= documented


def test_demo_requests_validate_against_the_request_schema(checker):
    from service.examples import examples

    for entry in examples().values():
        name = "BandsRequest" if entry.get("endpoint") == "/v1/bands" else "PathsRequest"
        checker.validate_schema(checker.component(name), entry["request"])
