"""The OpenAPI document: generated from the schemas, committed, valid, served."""

from __future__ import annotations

import copy
import json

import orjson
import pytest
from jsonschema import ValidationError
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


def _reachable(document, node, seen):
    """Every schema object reachable from `node` through nesting and local $refs (examples are
    values, not schemas, and are left out)."""
    if isinstance(node, list):
        for item in node:
            yield from _reachable(document, item, seen)
    elif isinstance(node, dict):
        if id(node) in seen:
            return
        seen.add(id(node))
        yield node
        for key, value in node.items():
            if key in ("examples", "example"):
                continue
            if key == "$ref" and isinstance(value, str) and value.startswith("#/"):
                target = document
                for part in value[2:].split("/"):
                    target = target[part.replace("~1", "/").replace("~0", "~")]
                yield from _reachable(document, target, seen)
            else:
                yield from _reachable(document, value, seen)


def test_a_sample_of_a_valid_answer_is_valid(checker):
    """tests/openapi_check.py validates bodies over 1 MB on a sample that keeps at least
    SAMPLE_ITEMS + 2 items of every longer list, in order: sound while no response schema asks an
    array for more items than that or looks at items by position or by content."""
    from ..openapi_check import SAMPLE_ITEMS

    document = checker.document
    schemas = [
        media["schema"]
        for _, _, operation in _operations(document)
        for response in operation["responses"].values()
        for media in response.get("content", {}).values()
    ]
    nodes = list(_reachable(document, schemas, set()))
    assert len(nodes) > 100  # the walk followed the $refs into the components
    assert not [n for n in nodes if {"prefixItems", "contains", "minContains"} & set(n)]
    assert max(n.get("minItems", 0) for n in nodes) <= SAMPLE_ITEMS + 2


@pytest.fixture(scope="module")
def large_batch_answer(app):
    """A batch answer of 2 demo scenarios, its results repeated to 60 (about 2 MB): over the size
    from which response bodies are validated on a sample."""
    from service.examples import example_request

    from ..openapi_check import FULL_VALIDATION_BYTES

    scenarios = [example_request("contract-example"), example_request("quillbrook-uncertain-elasticities")]
    response = app.test_client().post("/v1/paths/batch", json={"scenarios": scenarios[:1] * 2})
    assert response.status_code == 200
    body = response.get_json()
    body["results"] = [copy.deepcopy(result) for _ in range(30) for result in body["results"]]
    assert len(orjson.dumps(body)) > FULL_VALIDATION_BYTES
    return body


def _validate_batch(checker, body):
    from ..openapi_check import BASE

    pointer = "#/paths/~1v1~1paths~1batch/post/responses/200/content/application~1json/schema"
    checker.validate_body({"$ref": BASE + pointer}, orjson.dumps(body))


def test_a_large_valid_body_passes_its_sampled_validation(checker, large_batch_answer):
    _validate_batch(checker, large_batch_answer)


@pytest.mark.parametrize("where", [17, 42])
@pytest.mark.parametrize(
    "damage",
    [
        pytest.param(lambda r: r["paths"][0]["consumer_price"].__setitem__(5, None), id="null-among-numbers"),
        pytest.param(lambda r: r.pop("summary"), id="missing-field"),
        pytest.param(lambda r: r.__setitem__("scenario_id", 7), id="mistyped-field"),
        pytest.param(lambda r: r["paths"][1].__setitem__("binding", "yes"), id="mistyped-series"),
    ],
)
def test_a_sampled_body_still_fails_on_an_item_of_a_new_shape(checker, large_batch_answer, where, damage):
    """The sample keeps the first item of each shape, so one bad item anywhere is seen."""
    body = dict(large_batch_answer, results=list(large_batch_answer["results"]))
    body["results"][where] = copy.deepcopy(body["results"][where])
    damage(body["results"][where])
    with pytest.raises(ValidationError):
        _validate_batch(checker, body)


def test_every_documented_406_example_is_what_the_endpoint_answers(client):
    """Each operation's 406 example names what that endpoint offers: a JSON-only endpoint's
    example says JSON only (it once showed /v1/paths's JSON, CSV or workbook everywhere). The
    example's request is replayed: the request example first by name, a saved scenario of the right kind
    for a path's {id}."""
    from service.examples import example_request

    document = json.loads(DOCUMENT_PATH.read_text(encoding="utf-8"))
    saved = {}
    for kind, demo in (("paths", "quillbrook-rent-freeze"), ("bands", "quillbrook-uncertain-elasticities")):
        created = client.post("/v1/scenarios", json={"name": f"406 {kind}", "request": example_request(demo)})
        assert created.status_code == 201, created.get_json()
        saved[kind] = created.get_json()["id"]
    checked = {}
    for path, operations in document["paths"].items():
        for method, operation in operations.items():
            examples = (
                operation["responses"].get("406", {}).get("content", {}).get("application/problem+json", {})
            ).get("examples")
            if not examples:
                continue
            (example,) = examples.values()
            kind = "bands" if path.endswith("/bands") else "paths"
            url = path.replace("{id}", saved[kind]).replace("{name}", "x")
            bodies = operation.get("requestBody", {}).get("content", {}).get("application/json", {})
            body = bodies["examples"][min(bodies["examples"])]["value"] if "examples" in bodies else None
            answer = client.open(url, method=method.upper(), json=body, headers={"Accept": "application/xml"})
            assert answer.status_code == 406, (method, path, answer.status_code)
            checked[f"{method.upper()} {path}"] = answer.get_json()["detail"]
            assert example["value"]["detail"] == checked[f"{method.upper()} {path}"], (method, path)
    assert (
        checked["GET /v1/scenarios"]
        == checked["GET /v1/examples"]
        == "This endpoint answers application/json."
    )
    assert "text/csv" in checked["POST /v1/paths"] and "text/csv" in checked["GET /v1/scenarios/{id}/paths"]


def test_a_saved_scenario_run_answers_the_workbook_it_documents(client):
    """GET /v1/scenarios/{id}/paths answers as POST /v1/paths does, a workbook too; the document
    says so (the client validates every answer against it)."""
    from service.examples import example_request
    from service.workbook import WORKBOOK

    created = client.post(
        "/v1/scenarios", json={"name": "a workbook", "request": example_request("quillbrook-rent-freeze")}
    )
    run = client.get(f"/v1/scenarios/{created.get_json()['id']}/paths", headers={"Accept": WORKBOOK})
    assert run.status_code == 200 and run.mimetype == WORKBOOK
    document = json.loads(DOCUMENT_PATH.read_text(encoding="utf-8"))
    assert WORKBOOK in document["paths"]["/v1/scenarios/{id}/paths"]["get"]["responses"]["200"]["content"]


def _resolved(document: dict, schema: dict) -> dict:
    while "$ref" in schema:
        schema = document["components"]["schemas"][schema["$ref"].rsplit("/", 1)[-1]]
    return schema


def _with_documented_defaults(document: dict, schema: dict, value):
    """`value` with every default the document declares written out, as a generated client
    writes its models' defaults: in each object, for each property it leaves out."""
    schema = _resolved(document, schema)
    if isinstance(value, list) and "items" in schema:
        return [_with_documented_defaults(document, schema["items"], v) for v in value]
    if not isinstance(value, dict):
        return value
    if "discriminator" in schema:  # a tagged union: the variant the tag names
        tag = schema["discriminator"]
        variant = tag["mapping"].get(value.get(tag["propertyName"]))
        return _with_documented_defaults(document, {"$ref": variant}, value) if variant else value
    for alternative in schema.get("oneOf", []):  # a number or an object: the object's schema
        alternative = _resolved(document, alternative)
        if "discriminator" in alternative or alternative.get("type") == "object":
            return _with_documented_defaults(document, alternative, value)
    properties = schema.get("properties", {})
    out = {
        k: _with_documented_defaults(document, properties[k], v) if k in properties else v
        for k, v in value.items()
    }
    for name, spec in properties.items():
        if name not in out and "default" in _resolved(document, spec):
            out[name] = copy.deepcopy(_resolved(document, spec)["default"])
    return out


def test_every_demo_with_every_documented_default_written_out_is_the_same_scenario(client):
    """A default the document declares is one a caller may send: a generated client's models
    send every one of them (a ceiling's `new_homes` was documented as "covered" by default, and
    refused outside the stock schedule)."""
    from service.examples import examples

    document = build_document()
    for name, entry in examples().items():
        endpoint = entry.get("endpoint", "/v1/paths")
        request = dict(entry["request"], draws=100) if endpoint == "/v1/bands" else entry["request"]
        schema = {
            "$ref": "#/components/schemas/" + ("BandsRequest" if endpoint == "/v1/bands" else "PathsRequest")
        }
        filled = _with_documented_defaults(document, schema, request)
        assert filled != request, name  # some default was written out
        sent, written = client.post(endpoint, json=request), client.post(endpoint, json=filled)
        assert written.status_code == 200, (name, written.get_json())
        assert written.get_json()["scenario_id"] == sent.get_json()["scenario_id"], name


def test_a_summary_batch_takes_scenarios_with_every_documented_default_written_out(client, contract_request):
    """A batch scenario's `output` follows the batch's, so the document gives it no default of
    its own: a generated client then leaves it out instead of sending "full" into a summary
    batch, which refuses a scenario asking for another output."""
    document = build_document()
    scenario = _with_documented_defaults(
        document, {"$ref": "#/components/schemas/BatchScenario"}, {"id": "north", **contract_request}
    )
    answer = client.post("/v1/paths/batch", json={"scenarios": [scenario], "output": "summary"})
    assert answer.status_code == 200, answer.get_json()
    (result,) = answer.get_json()["results"]
    assert result["id"] == "north" and "paths" not in result and result["summary"]


def test_bands_sensitivity_and_briefing_requests_document_full_as_their_only_output(checker, client):
    """Only /v1/paths and batches answer a summary: the other requests' `output` lists "full"
    alone, so a generated client's type cannot ask for what the service refuses."""
    from service.examples import example_request

    schemas = checker.document["components"]["schemas"]
    for name in ("BandsRequest", "SensitivityRequest", "BriefingRequest", "BandsBriefingRequest"):
        assert schemas[name]["properties"]["output"]["enum"] == ["full"], name
    for name in ("PathsRequest", "BatchRequest"):
        assert schemas[name]["properties"]["output"]["enum"] == ["full", "summary"], name
    request = {**example_request("quillbrook-uncertain-elasticities"), "horizon": 3, "draws": 50}
    for path in ("/v1/bands", "/v1/briefing"):
        refused = client.post(path, json={**request, "output": "summary"})
        assert refused.status_code == 422 and refused.get_json()["errors"][0]["pointer"] == "/output", path
