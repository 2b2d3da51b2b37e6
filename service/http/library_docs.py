"""OpenAPI data of the scenario library's operations (service/http/library.py): parameters,
problem responses and examples (a record as the service answers it, ids and times invented)."""

from __future__ import annotations

from typing import Any

from .. import limits
from ..engine import MODEL_VERSION
from ..examples import example_request
from ..problems import problem

__all__ = [
    "COMPUTE_PARAMETERS",
    "ID",
    "IF_MATCH",
    "LIST_EXAMPLE",
    "LIST_PARAMETERS",
    "PROBLEMS",
    "RECORD_EXAMPLE",
    "REVISION",
    "WRITE_EXAMPLES",
]

ID = {
    "name": "id",
    "in": "path",
    "required": True,
    "description": "The record's id (from POST /v1/scenarios).",
    "schema": {"type": "string"},
}
REVISION = {
    "name": "revision",
    "in": "query",
    "required": False,
    "description": "A revision number (1 = as first saved); the latest without it.",
    "schema": {"type": "integer", "minimum": 1},
}
IF_MATCH = {
    "name": "If-Match",
    "in": "header",
    "required": False,
    "description": 'The ETag of the revision the change starts from ("<id>.<revision>"). PUT needs it: '
    "428 without it, 412 when the record has moved on. * overwrites whatever revision is current.",
    "schema": {"type": "string"},
}
LIST_PARAMETERS = [
    {
        "name": "name",
        "in": "query",
        "required": False,
        "description": "Only records whose name holds this text (any case).",
        "schema": {"type": "string", "maxLength": limits.MAX_SCENARIO_NAME_LENGTH},
    },
    {
        "name": "tag",
        "in": "query",
        "required": False,
        "description": "Only records with this tag (any case); repeat for records with every one of them.",
        "schema": {
            "type": "array",
            "items": {"type": "string", "maxLength": limits.MAX_SCENARIO_TAG_LENGTH},
            "maxItems": limits.MAX_SCENARIO_TAGS,
        },
        "style": "form",
        "explode": True,
    },
    {
        "name": "cursor",
        "in": "query",
        "required": False,
        "description": "next_cursor of the page before.",
        "schema": {"type": "string"},
    },
    {
        "name": "limit",
        "in": "query",
        "required": False,
        "description": f"Records per page (default {limits.DEFAULT_SCENARIO_PAGE}).",
        "schema": {"type": "integer", "minimum": 1, "maximum": limits.MAX_SCENARIO_PAGE},
    },
]
COMPUTE_PARAMETERS = ["If-None-Match", "Accept"]


def _problem(status: int, title: str, detail: str, code: str | None, description: str) -> dict[str, Any]:
    """A documented problem, its example written as the service writes it (no code: the
    status's own, problems.STATUS_CODES)."""
    value = dict(problem(status, title, detail, code))
    return {"description": description, "problem": True, "example": {"summary": title, "value": value}}


PROBLEMS = {
    "403": _problem(
        403,
        "Forbidden",
        "This scenario is shared with you; only its owner may change it.",
        None,
        "The record is shared with the caller, who may read it but not change it.",
    ),
    "404": _problem(
        404,
        "Not Found",
        "No such scenario.",
        "no-such-scenario",
        "No such record, or not one the caller may see (another key's private record answers the same).",
    ),
    "409": _problem(
        409,
        "Conflict",
        "This scenario is a bands request: GET /v1/scenarios/qX3v7Tn0bL2mW9sYk4Pe1A/bands.",
        "other-computation",
        "The stored request is for the other computation.",
    ),
    "412": _problem(
        412,
        "Precondition Failed",
        "The scenario has changed since you read it (it is at revision 3): read it again, then send its "
        "new ETag in If-Match.",
        "stale-revision",
        "If-Match does not name the current revision.",
    ),
    "428": _problem(
        428,
        "Precondition Required",
        "Send the ETag of the revision you changed in If-Match (GET the scenario for it), so that no one "
        "else's change is overwritten.",
        "if-match-required",
        "No If-Match header.",
    ),
    "503": _problem(
        503,
        "Service Unavailable",
        "The scenario library's database cannot be reached; the compute endpoints still answer. Try again "
        "shortly.",
        "library-unavailable",
        "The library's database cannot be reached (Retry-After says when to try again).",
    ),
}


def _short_demo() -> dict[str, Any]:
    request = example_request("quillbrook-rent-freeze")
    request["horizon"] = 2
    return request


_WRITE = {
    "name": "Quillbrook freeze, March briefing",
    "notes": "Elasticities from the 2025 survey of landlords (invented).",
    "tags": ["briefing", "freeze"],
    "units": {
        "currency": "pounds",
        "quantity": "homes",
        "unit": "home",
        "price_interval": "month",
        "period": "year",
    },
    "shared": True,
}

WRITE_EXAMPLES = {
    "quillbrook-briefing": {
        "summary": "The Quillbrook rent freeze, saved for a briefing and shared",
        "value": {**_WRITE, "request": _short_demo()},
    }
}


def _record() -> dict[str, Any]:
    rid = "qX3v7Tn0bL2mW9sYk4Pe1A"
    return {
        "id": rid,
        "revision": 1,
        "latest_revision": 1,
        **{k: v for k, v in _WRITE.items()},
        "mine": True,
        "kind": "paths",
        "scenario_id": "8c1f0d2b3a4e5f60718293a4b5c6d7e8f90a1b2c3d4e5f60718293a4b5c6d7e8",
        "model_version": MODEL_VERSION,
        "created_at": "2026-03-02T09:15:00.000000Z",
        "revised_at": "2026-03-02T09:15:00.000000Z",
        "links": {
            "self": f"/v1/scenarios/{rid}",
            "compute": f"/v1/scenarios/{rid}/paths",
            "page": f"/?scenario={rid}",
        },
    }


RECORD_EXAMPLE = {"summary": "A saved scenario", "value": {**_record(), "request": _short_demo()}}
LIST_EXAMPLE = {"summary": "One page", "value": {"scenarios": [_record()], "next_cursor": None}}
