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


# Bytes, not JSON: images and workbooks carry no examples; nor does the briefing, an HTML document.
BINARY = {
    "image/svg+xml",
    "image/png",
    "application/octet-stream",
    "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
}
DOCUMENTS = {"text/html"}
UNEXAMPLED = {"/", "/ui/{name}", "/metrics", "/openapi.json"}  # the page, its files, Prometheus text


def _at(checker, *parts):
    """Validates against the schema at a place in the document (its refs resolve there)."""
    from service.schemas.pointers import escape

    from ..openapi_check import BASE

    pointer = "/".join(["#", *(escape(p) for p in parts), "schema"])
    return lambda value: checker.validate_schema({"$ref": BASE + pointer}, value)


def _operations(document):
    for path, operations in document["paths"].items():
        for method, operation in operations.items():
            yield path, method, operation


def test_every_request_and_response_body_has_examples_that_match_its_schema(checker):
    document = checker.document
    for path, method, operation in _operations(document):
        if path in UNEXAMPLED:
            continue
        if "requestBody" in operation:
            media = operation["requestBody"]["content"]["application/json"]
            assert media.get("examples"), (path, method)
            valid = _at(checker, "paths", path, method, "requestBody", "content", "application/json")
            for example in media["examples"].values():
                valid(example["value"])
        for status, response in operation["responses"].items():
            for mime, media in response.get("content", {}).items():
                if mime in BINARY:
                    assert media["schema"]["format"] == "binary"
                    assert media["schema"]["contentMediaType"] == mime
                    continue
                if mime in DOCUMENTS and path not in UNEXAMPLED:
                    assert media["schema"] == {"type": "string", "contentMediaType": mime}
                    continue
                if status == "default" or mime == "application/problem+json" or status == "200":
                    assert media.get("examples"), (path, method, status, mime)
                valid = _at(checker, "paths", path, method, "responses", status, "content", mime)
                for example in media.get("examples", {}).values():
                    if mime.endswith("json"):
                        valid(example["value"])
                    else:
                        assert isinstance(example["value"], str) and example["value"]


def test_request_examples_come_from_every_demo(checker):
    from service.examples import examples

    operation = checker.document["paths"]["/v1/paths"]["post"]
    named = operation["requestBody"]["content"]["application/json"]["examples"]
    paths_demos = {n for n, e in examples().items() if e.get("endpoint", "/v1/paths") == "/v1/paths"}
    assert paths_demos <= set(named)


def test_the_document_names_its_servers():
    servers = build_document()["servers"]
    assert servers[0]["url"] == "/" and any(s["url"].startswith("http://127.0.0.1") for s in servers)


def test_the_stored_answer_examples_are_what_the_service_answers_now():
    from service.http.openapi_examples import EXAMPLES_PATH, compute_examples, render_examples

    assert EXAMPLES_PATH.read_text(encoding="utf-8") == render_examples(compute_examples()), (
        "service/http/openapi_examples.json is stale: run python -m service.http --write"
    )
