"""The scenario library over HTTP: /v1/scenarios (save, list, read, revise, delete) and
/v1/scenarios/{id}/paths | bands (the stored request answered by the compute endpoints' own
code: the same negotiation, ETags, formats and cache).

Owners: with keys configured, the hash of the key the request presents; without keys, one
owner. Conditional writes: a record's ETag is "<id>.<revision>". PUT needs If-Match (428
without it, 412 when stale) so that no change is made from an old read; DELETE checks
If-Match when it is sent. GET answers If-None-Match with 304.

The computations say which model version the scenario was saved under
(Scenario-Model-Version) and whether the running model differs (Model-Version-Changed:
true or false); the body's own model_version is the running one's.
"""

from __future__ import annotations

import re
from collections.abc import Callable

from flask import Response, current_app, request

from .. import limits
from ..engine import MODEL_VERSION
from ..library import Library, decode_cursor, etag, owner_hash, validate_write
from ..problems import ProblemError, problem
from .auth import accepted_key
from .conditional import ENCODING_SUFFIXES, conditional
from .documented import NOT_MODIFIED, DocumentedBlueprint, problem_responses
from .jsonio import json_response, read_json
from .library_docs import (
    COMPUTE_PARAMETERS,
    ID,
    IF_MATCH,
    LIST_EXAMPLE,
    LIST_PARAMETERS,
    PROBLEMS,
    RECORD_EXAMPLE,
    REVISION,
    WRITE_EXAMPLES,
)
from .negotiation import JSON_ONLY, XLSX, negotiate
from .paths import paths_answer
from .uncertainty import bands_answer

__all__ = ["blueprint"]

blueprint = DocumentedBlueprint("library", __name__)

#: What an id looks like (secrets.token_urlsafe); anything else cannot be a record.
_ID = re.compile(r"^[A-Za-z0-9_-]{1,64}$")


def _answers_record(description: str, *headers: str) -> dict:
    """The documented success of an operation that answers one record."""
    return {
        "description": description,
        "content": {"application/json": "ScenarioRecord"},
        "headers": [*headers, "ETag"],
        "examples": {"application/json": RECORD_EXAMPLE},
    }


def _library() -> Library:
    return current_app.extensions["shockpath.library"]


def _owner() -> str:
    """The hash of the caller's key (require_key has checked it), or the keyless owner's."""
    keys = current_app.extensions["shockpath.settings"].api_keys
    if not keys:
        return owner_hash("")
    key = accepted_key(request.headers.get("Authorization"), keys)
    if key is None:  # require_key refused it already; never reached
        raise ProblemError(problem(401, "Unauthorized", "Send a valid key."))
    return owner_hash(key)


def _invalid(pointer: str, message: str) -> ProblemError:
    return ProblemError(
        problem(
            422,
            "The request is not valid",
            f"{pointer}: {message}",
            "invalid-request",
            errors=[{"pointer": pointer, "message": message}],
        )
    )


def _record_id(record_id: str) -> str:
    if not _ID.match(record_id):
        raise ProblemError(problem(404, "Not Found", "No such scenario.", "no-such-scenario"))
    return record_id


def _revision() -> int | None:
    raw = request.args.get("revision")
    if raw is None:
        return None
    if not raw.isdigit() or not 1 <= int(raw) <= 10**9:
        raise _invalid("/revision", "Query parameter revision must be a whole number from 1.")
    return int(raw)


def _tagged(body: dict, status: int = 200) -> Response:
    response = json_response(body, status)
    response.set_etag(etag(body["id"], body["revision"]))
    response.vary.add("Authorization")
    return response


def _matches() -> Callable[[str], bool]:
    condition = request.if_match
    return lambda tag: condition.star_tag or any(condition.contains(tag + e) for e in ENCODING_SUFFIXES)


@blueprint.operation(
    "post",
    "/v1/scenarios",
    operationId="postScenario",
    summary="Save a scenario: a name, notes, tags and a /v1/paths or /v1/bands request",
    request="ScenarioWrite",
    request_examples=WRITE_EXAMPLES,
    responses={
        "201": _answers_record("Saved as revision 1; Location is the record.", "Location"),
        **problem_responses("400", "406", "413", "415", "422"),
        "503": PROBLEMS["503"],
    },
    parameters=["Accept-Json"],
)
def post_scenario() -> Response:
    negotiate(JSON_ONLY)
    written = validate_write(read_json())
    body = _library().create(_owner(), written)
    response = _tagged(body, 201)
    response.headers["Location"] = body["links"]["self"]
    return response


@blueprint.operation(
    "get",
    "/v1/scenarios",
    operationId="listScenarios",
    summary="The caller's scenarios and the shared ones, newest first, by name and tag",
    responses={
        "200": {
            "description": "A page of records (without their requests) and the next page's cursor.",
            "content": {"application/json": "ScenarioList"},
            "examples": {"application/json": LIST_EXAMPLE},
        },
        **problem_responses("406", "422"),
        "503": PROBLEMS["503"],
    },
    parameters=["Accept-Json", *LIST_PARAMETERS],
)
def list_scenarios() -> Response:
    negotiate(JSON_ONLY)
    name = request.args.get("name", "")
    if len(name) > limits.MAX_SCENARIO_NAME_LENGTH or not name.isprintable():
        raise _invalid("/name", f"At most {limits.MAX_SCENARIO_NAME_LENGTH} printable characters.")
    tags = tuple(dict.fromkeys(t.strip().lower() for t in request.args.getlist("tag") if t.strip()))
    if len(tags) > limits.MAX_SCENARIO_TAGS:
        raise _invalid("/tag", f"At most {limits.MAX_SCENARIO_TAGS} tags.")
    for i, tag in enumerate(tags):
        if len(tag) > limits.MAX_SCENARIO_TAG_LENGTH or not tag.isprintable():
            raise _invalid(f"/tag/{i}", f"At most {limits.MAX_SCENARIO_TAG_LENGTH} printable characters.")
    cursor = None
    if "cursor" in request.args:
        cursor = decode_cursor(request.args["cursor"])
        if cursor is None:
            raise _invalid("/cursor", "Not a cursor this service gave (use next_cursor as it is).")
    raw_limit = request.args.get("limit", str(limits.DEFAULT_SCENARIO_PAGE))
    if not raw_limit.isdigit() or not 1 <= int(raw_limit) <= limits.MAX_SCENARIO_PAGE:
        raise _invalid("/limit", f"A whole number from 1 to {limits.MAX_SCENARIO_PAGE}.")
    body = _library().list(_owner(), name.strip(), tags, cursor, int(raw_limit))
    response = json_response(body)
    response.vary.add("Authorization")
    return response


@blueprint.operation(
    "get",
    "/v1/scenarios/{id}",
    operationId="getScenario",
    summary="One record: its latest revision, or revision n with ?revision=n",
    responses={
        "200": _answers_record("The record with its request."),
        **NOT_MODIFIED,
        "404": PROBLEMS["404"],
        **problem_responses("406", "422"),
        "503": PROBLEMS["503"],
    },
    parameters=["Accept-Json", "If-None-Match", REVISION],
    path_parameters=[ID],
)
def get_scenario(id: str) -> Response:
    negotiate(JSON_ONLY)
    body = _library().get(_owner(), _record_id(id), _revision())
    response = conditional(etag(body["id"], body["revision"]), lambda: json_response(body))
    response.vary.add("Authorization")
    return response


@blueprint.operation(
    "put",
    "/v1/scenarios/{id}",
    operationId="putScenario",
    summary="Save a new revision (the old ones stay readable); If-Match is required",
    request="ScenarioWrite",
    request_examples=WRITE_EXAMPLES,
    responses={
        "200": _answers_record("The new revision."),
        "403": PROBLEMS["403"],
        "404": PROBLEMS["404"],
        "412": PROBLEMS["412"],
        "428": PROBLEMS["428"],
        **problem_responses("400", "406", "413", "415", "422"),
        "503": PROBLEMS["503"],
    },
    parameters=["Accept-Json", IF_MATCH],
    path_parameters=[ID],
)
def put_scenario(id: str) -> Response:
    negotiate(JSON_ONLY)
    record_id = _record_id(id)
    if not request.if_match:
        raise ProblemError(
            problem(
                428,
                "Precondition Required",
                "Send the ETag of the revision you changed in If-Match (GET the scenario for it), so that "
                "no one else's change is overwritten.",
                "if-match-required",
            )
        )
    written = validate_write(read_json())
    return _tagged(_library().update(_owner(), record_id, written, _matches()))


@blueprint.operation(
    "delete",
    "/v1/scenarios/{id}",
    operationId="deleteScenario",
    summary="Delete a record and all its revisions (only its owner may)",
    responses={
        "204": {"description": "Deleted."},
        "403": PROBLEMS["403"],
        "404": PROBLEMS["404"],
        "412": PROBLEMS["412"],
        "503": PROBLEMS["503"],
    },
    parameters=[
        dict(IF_MATCH, description="Optional here; when sent, the ETag of the current revision (412 if not).")
    ],
    path_parameters=[ID],
)
def delete_scenario(id: str) -> Response:
    record_id = _record_id(id)
    matches = _matches() if request.if_match else (lambda tag: True)
    _library().delete(_owner(), record_id, matches)
    response = Response(status=204)
    del response.headers["Content-Type"]  # no content, so no type of content
    return response


def _compute(record_id: str, kind: str, answer: Callable[[object], Response]) -> Response:
    record = _library().get(_owner(), _record_id(record_id), _revision())
    if record["kind"] != kind:
        raise ProblemError(
            problem(
                409,
                "Conflict",
                f"This scenario is a {record['kind']} request: GET {record['links']['compute']}.",
                "other-computation",
            )
        )
    response = answer(record["request"])
    response.headers["Scenario-Model-Version"] = record["model_version"]
    changed = record["model_version"] != MODEL_VERSION
    response.headers["Model-Version-Changed"] = "true" if changed else "false"
    response.vary.add("Authorization")
    return response


def _compute_responses(schema: str, what: str) -> dict:
    return {
        "200": {
            "description": f"What POST /v1/{what} answers for the stored request (JSON, CSV or a workbook).",
            "content": {"application/json": schema, "text/csv": "csv", XLSX: "xlsx"},
            "headers": ["ETag", "Content-Disposition", "Scenario-Model-Version", "Model-Version-Changed"],
        },
        **NOT_MODIFIED,
        "404": PROBLEMS["404"],
        "409": PROBLEMS["409"],
        **problem_responses("400", "406", "422"),  # 400: an unknown `layout`
        "503": PROBLEMS["503"],
    }


@blueprint.operation(
    "get",
    "/v1/scenarios/{id}/paths",
    operationId="getScenarioPaths",
    summary="Run a saved paths scenario under the running model (as POST /v1/paths)",
    answers_of="postPaths",
    responses=_compute_responses("PathsResponse", "paths"),
    parameters=[*COMPUTE_PARAMETERS, "layout", REVISION],  # CSV as POST /v1/paths writes it
    path_parameters=[ID],
)
def get_scenario_paths(id: str) -> Response:
    return _compute(id, "paths", paths_answer)


@blueprint.operation(
    "get",
    "/v1/scenarios/{id}/bands",
    operationId="getScenarioBands",
    summary="Run a saved bands scenario under the running model (as POST /v1/bands)",
    answers_of="postBands",
    responses=_compute_responses("BandsResponse", "bands"),
    parameters=[*COMPUTE_PARAMETERS, "layout", REVISION],  # CSV as POST /v1/bands writes it
    path_parameters=[ID],
)
def get_scenario_bands(id: str) -> Response:
    return _compute(id, "bands", bands_answer)
