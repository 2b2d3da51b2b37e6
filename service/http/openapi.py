"""The OpenAPI 3.1 document, generated from the marshmallow schemas and the operations that
each blueprint records beside its views (documented.py, routes.py).

python -m service.http            # print the document
python -m service.http --write    # write openapi/openapi.json
python -m service.http --check    # exit 1 if the committed file differs
"""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any

from apispec import APISpec
from apispec.ext.marshmallow import MarshmallowPlugin

from .. import limits
from ..engine import MODEL_VERSION
from ..limits import MAX_DRAW_CELLS, MAX_DRAWS
from ..schemas.briefing import BandsBriefingRequestSchema, BriefingRequestSchema
from ..schemas.charts import ChartRequestSchema
from ..schemas.fields import openapi_attributes
from ..schemas.library import ScenarioListSchema, ScenarioRecordSchema, ScenarioWriteSchema
from ..schemas.paths import BatchRequestSchema, PathsRequestSchema
from ..schemas.responses import (
    BandsResponseSchema,
    BatchResponseSchema,
    ExampleListSchema,
    HealthSchema,
    PathsResponseSchema,
    PathsSummarySchema,
    ProblemSchema,
    SensitivityResponseSchema,
)
from ..schemas.uncertainty import BandsRequestSchema, SensitivityRequestSchema
from .negotiation import XLSX
from .openapi_examples import (
    EXAMPLES_PATH,
    compute_examples,
    render_examples,
    request_examples,
    stored_examples,
)
from .routes import BLUEPRINTS

__all__ = ["DOCUMENT_PATH", "build_document"]

DOCUMENT_PATH = Path(__file__).resolve().parents[2] / "openapi" / "openapi.json"

_DESCRIPTION = f"""Year-by-year transition paths of a market (price, quantity, shortage, surplus
changes, deadweight loss) under shocks and policies, with supply that adjusts from its
short-run to its long-run elasticity. Money is in the caller's currency per unit per price
interval; welfare flows are per model period.

Limits (422 before any work): horizon <= {limits.MAX_HORIZON} periods, <= {limits.MAX_POLICIES}
policies, <= {limits.MAX_SHOCKS} shocks, <= {limits.MAX_SHIFTERS_PER_CURVE} shifters per curve,
<= {limits.MAX_BATCH_SCENARIOS} scenarios per batch and <= {limits.MAX_POLICY_PERIODS:,}
policy-periods (policies x (longest horizon + 1)) per batch; <= {MAX_DRAWS:,} draws and
<= {MAX_DRAW_CELLS:,} draws x (horizon + 1) x policies and <= {limits.MAX_BAND_VALUES:,} draws x
(horizon + 1) x banded series (6 per policy; 2 more under the stock schedule, 2 more on a ceiling with
coverage below 1, 1 more with an uncertain inflation rate) per bands request; bodies
<= {limits.MAX_BODY_BYTES} bytes (413); a workbook answer <= {limits.MAX_WORKBOOK_CELLS:,} cells
(422 as it is written). Every error is RFC 9457 application/problem+json.

A name given twice in one JSON object is not refused: the last one wins (RFC 8259 section 4
leaves duplicates to the implementation), so do not send duplicates.

Results are model estimates: they inform, and do not replace, local market studies and
qualified analysts."""

_SCHEMAS = {
    "Problem": ProblemSchema,
    "PathsRequest": PathsRequestSchema,
    "BatchRequest": BatchRequestSchema,
    "PathsResponse": PathsResponseSchema,
    "PathsSummary": PathsSummarySchema,
    "BatchResponse": BatchResponseSchema,
    "BandsRequest": BandsRequestSchema,
    "BandsResponse": BandsResponseSchema,
    "SensitivityRequest": SensitivityRequestSchema,
    "SensitivityResponse": SensitivityResponseSchema,
    "ChartRequest": ChartRequestSchema,
    "BriefingRequest": BriefingRequestSchema,
    "BandsBriefingRequest": BandsBriefingRequestSchema,
    "ExampleList": ExampleListSchema,
    "Health": HealthSchema,
    "ScenarioWrite": ScenarioWriteSchema,
    "ScenarioRecord": ScenarioRecordSchema,
    "ScenarioList": ScenarioListSchema,
}

_HEADERS = {
    "ETag": {
        "description": (
            'A strong tag of this answer: on /v1/paths the scenario_id in quotes ("<id>" for JSON, '
            '"<id>.csv" for CSV), elsewhere a hash of the canonical request, the format and the model '
            "version. A gzip-encoded answer's tag ends in :gzip. If-None-Match is compared weakly, so "
            'W/"<tag>" matches too.'
        ),
        "schema": {"type": "string"},
    },
    "Content-Disposition": {
        "description": 'CSV answers: attachment; filename="<endpoint>-<tag prefix>.csv".',
        "schema": {"type": "string"},
    },
    "Location": {"description": "The new record's URL.", "schema": {"type": "string"}},
    "Scenario-Model-Version": {
        "description": "The model version the scenario was saved under.",
        "schema": {"type": "string"},
    },
    "Model-Version-Changed": {
        "description": "true when the running model (the body's model_version) differs from the one the "
        "scenario was saved under: its numbers may differ from the ones seen when it was saved.",
        "schema": {"type": "string", "enum": ["true", "false"]},
    },
}

_PARAMETERS = {
    "If-None-Match": {
        "name": "If-None-Match",
        "in": "header",
        "required": False,
        "description": "An ETag from an earlier answer; a match gets 304 without recomputation.",
        "schema": {"type": "string"},
    },
    "layout": {
        "name": "layout",
        "in": "query",
        "required": False,
        "description": (
            "CSV answers only: long (default; one value per row with its unit) or wide (one row per "
            "(scenario of a batch,) policy and period, one column per variable, or per variable and "
            "percentile for bands, units in the header row)."
        ),
        "schema": {"type": "string", "enum": ["long", "wide"], "default": "long"},
    },
    "name": {"name": "name", "in": "path", "required": True, "schema": {"type": "string"}},
}


_SERVERS = [
    {"url": "/", "description": "The service that serves this document"},
    {"url": "http://127.0.0.1:8000", "description": "A local instance (the README's serve command)"},
]


def _schema_name(schema) -> str:
    for name, cls in _SCHEMAS.items():
        if type(schema) is cls or schema is cls:  # exact: BandsRequest subclasses PathsRequest
            return name
    cls = schema if isinstance(schema, type) else type(schema)  # a class's own name, not its metaclass's
    return cls.__name__.removesuffix("Schema")


def _content(kind: str) -> dict[str, Any]:
    if kind == "csv":
        return {"schema": {"type": "string"}}
    if kind == "text":
        return {"schema": {"type": "string"}}
    if kind.startswith("image/"):
        return {"schema": {"type": "string", "format": "binary", "contentMediaType": kind}}
    if kind == "html":  # a document (the briefing)
        return {"schema": {"type": "string", "contentMediaType": "text/html"}}
    if kind == "xlsx":  # an Excel workbook (service.workbook)
        return {"schema": {"type": "string", "format": "binary", "contentMediaType": XLSX}}
    if kind == "octets":
        return {
            "schema": {"type": "string", "format": "binary", "contentMediaType": "application/octet-stream"}
        }
    if kind == "ExampleRequest":
        # Any demo, whichever endpoint it is for: typed per kind under /v1/examples/paths/{name}
        # and /v1/examples/bands/{name}.
        return {
            "schema": {
                "type": "object",
                "additionalProperties": True,
                "description": "A PathsRequest or a BandsRequest, as the example's endpoint says.",
            }
        }
    if " | " in kind:  # any of several schemas (a body may be valid under more than one)
        return {"schema": {"anyOf": [{"$ref": f"#/components/schemas/{k}"} for k in kind.split(" | ")]}}
    return {"schema": {"$ref": f"#/components/schemas/{kind}"}}


def _example_name(example: dict[str, Any]) -> str:
    """The request example an answer belongs to (its summary's head), or "answer"."""
    return example["summary"].split(":")[0].split(" as ")[0] or "answer"


def _with_examples(content: dict[str, Any], examples: dict[str, Any] | None) -> dict[str, Any]:
    if examples:
        content = dict(content, examples=examples)
    return content


def _operation(op: dict[str, Any], answers: dict[str, Any], bodies: dict[str, Any]) -> dict[str, Any]:
    if "document" in op:
        document = dict(op["document"])
        if "parameters" in document:  # content types say what Accept may ask for: no Accept parameter
            document["parameters"] = [p for p in document["parameters"] if p in _PARAMETERS]
        if not op["path"].startswith("/v1/"):
            document.setdefault("security", [])
        return document
    problems = answers.get("problems", {})
    mine = answers.get(op.get("answers_of", op["operationId"]), {})
    out: dict[str, Any] = {"operationId": op["operationId"], "summary": op["summary"], "responses": {}}
    # Named parameters are references to components (never Accept: content types say what it may
    # ask for); inline ones (the library's path parameters) are kept as written.
    params = [
        p
        for p in op.get("parameters", []) + op.get("path_parameters", [])
        if not isinstance(p, str) or p in _PARAMETERS
    ]
    if params:
        out["parameters"] = params
    if "request" in op:
        out["requestBody"] = {
            "required": True,
            "content": {
                "application/json": _with_examples(
                    _content(op["request"]), bodies.get(op["operationId"]) or op.get("request_examples")
                )
            },
        }
    for status, spec in op["responses"].items():
        response: dict[str, Any] = {"description": spec["description"]}
        if spec.get("problem"):
            example = (
                mine.get(status, {}).get("application/problem+json")
                or problems.get(status)
                or spec.get("example")
            )
            response["content"] = {
                "application/problem+json": _with_examples(_content("Problem"), example and {status: example})
            }
        elif "content" in spec:
            response["content"] = {
                mime: _with_examples(
                    _content(kind),
                    (e := mine.get(status, {}).get(mime) or spec.get("examples", {}).get(mime))
                    and {_example_name(e): e},
                )
                for mime, kind in spec["content"].items()
            }
        if "headers" in spec:
            response["headers"] = {h: h for h in spec["headers"]}
        out["responses"][status] = response
    if not op["path"].startswith("/v1/"):
        out["security"] = []  # no key ever needed (the document's optional key is for /v1)
    else:
        # /v1 takes the document's security: a key is optional (the service may run without
        # keys), so generated clients accept a client with or without one.
        unauthorized = problems.get("401")
        out["responses"]["401"] = {
            "description": "Keys are configured and the request has no valid 'Authorization: Bearer <key>'.",
            "content": {
                "application/problem+json": _with_examples(
                    _content("Problem"), unauthorized and {"401": unauthorized}
                )
            },
            "headers": {"WWW-Authenticate": {"schema": {"type": "string"}}},
        }
    out["responses"]["default"] = {
        "description": "Any other error (404, 405, 500, ...) as a problem document.",
        "content": {
            "application/problem+json": _with_examples(
                _content("Problem"),
                {"404": {"summary": "No such path", "value": _NOT_FOUND}},
            )
        },
    }
    return out


_NOT_FOUND = {
    "type": "urn:shockpath:problem:not-found",
    "title": "Not Found",
    "status": 404,
    "detail": "No such resource.",
}


def build_document() -> dict[str, Any]:
    """The OpenAPI 3.1 document as a dict (deterministic: same code, same document)."""
    plugin = MarshmallowPlugin(schema_name_resolver=_schema_name)
    spec = APISpec(
        title="shockpath",
        version=MODEL_VERSION,
        openapi_version="3.1.0",
        plugins=[plugin],
        info={"description": _DESCRIPTION, "license": {"name": "MIT", "identifier": "MIT"}},
        servers=_SERVERS,
    )
    openapi_attributes(plugin.converter)
    spec.components.security_scheme(
        "bearer",
        {
            "type": "http",
            "scheme": "bearer",
            "description": "Needed on /v1 only when SHOCKPATH_API_KEYS is set.",
        },
    )
    for name, schema in _SCHEMAS.items():
        spec.components.schema(name, schema=schema)
    for name, header in _HEADERS.items():
        spec.components.header(name, header)
    for name, parameter in _PARAMETERS.items():
        spec.components.parameter(name, parameter["in"], parameter)
    answers, bodies = stored_examples(), request_examples()
    by_path: dict[str, dict[str, Any]] = {}
    for blueprint in BLUEPRINTS:
        for op in blueprint.operations:
            by_path.setdefault(op["path"], {})[op["method"]] = _operation(op, answers, bodies)
    for path, operations in by_path.items():
        spec.path(path=path, operations=operations)
    document = spec.to_dict()
    # Keys are optional: the empty requirement means the service runs without them.
    document["security"] = [{}, {"bearer": []}]
    return document


def render_document() -> str:
    return json.dumps(build_document(), indent=2, sort_keys=True) + "\n"


def main(argv: list[str]) -> int:
    if "--write" in argv:
        EXAMPLES_PATH.write_text(render_examples(compute_examples()), encoding="utf-8")
        DOCUMENT_PATH.write_text(render_document(), encoding="utf-8")
        return 0
    text = render_document()
    if "--check" in argv:
        same = DOCUMENT_PATH.exists() and DOCUMENT_PATH.read_text(encoding="utf-8") == text
        if not same:
            print(f"{DOCUMENT_PATH} is out of date: run python -m service.http --write", file=sys.stderr)
        fresh = EXAMPLES_PATH.exists() and EXAMPLES_PATH.read_text(encoding="utf-8") == render_examples(
            compute_examples()
        )
        if not fresh:
            print(f"{EXAMPLES_PATH} is out of date: run python -m service.http --write", file=sys.stderr)
        return 0 if same and fresh else 1
    sys.stdout.write(text)
    return 0
