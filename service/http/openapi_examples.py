"""Request and response examples for the OpenAPI document, from the demo scenarios.

Request examples are the demos as they are (each under its name). Response examples are real
answers of the service to short versions of the demos (2 periods; bands with 200 draws), which
are also listed as request examples under the same name, so a reader sees a request and its
answer side by side; numbers are rounded to 6 significant digits to keep the document short.

Answers are computed by `python -m service.http --write`, which stores them in
openapi_examples.json beside this module; the app reads the stored file (no model work at
start-up) and `--check` recomputes them.
"""

from __future__ import annotations

import copy
import gzip
import json
import re
from pathlib import Path
from typing import Any

from ..examples import example_request, examples
from ..problems import problem

__all__ = ["EXAMPLES_PATH", "compute_examples", "request_examples", "stored_examples"]

EXAMPLES_PATH = Path(__file__).resolve().parent / "openapi_examples.json"
SHORT = "quillbrook-rent-freeze-2-periods"
SHORT_BANDS = "quillbrook-uncertain-elasticities-2-periods"


def _short(name: str, **changes: Any) -> dict[str, Any]:
    request = example_request(name)
    request["horizon"] = 2
    request.update(changes)
    return request


def _sensitivity(request: dict[str, Any]) -> dict[str, Any]:
    return {k: v for k, v in request.items() if k not in ("draws", "seed", "percentiles")}


def _by_endpoint(endpoint: str) -> dict[str, dict[str, Any]]:
    return {
        name: {"summary": entry["title"], "value": entry["request"]}
        for name, entry in examples().items()
        if entry.get("endpoint", "/v1/paths") == endpoint
    }


def request_examples() -> dict[str, dict[str, dict[str, Any]]]:
    """operationId -> example name -> {summary, value}: the bodies each operation takes."""
    paths = _by_endpoint("/v1/paths")
    bands = _by_endpoint("/v1/bands")
    short = {
        "summary": "The Quillbrook rent freeze over 2 periods",
        "value": _short("quillbrook-rent-freeze"),
    }
    short_bands = {
        "summary": "Quillbrook with uncertain elasticities over 2 periods, 200 draws",
        "value": _short("quillbrook-uncertain-elasticities", draws=200, percentiles=[5, 50, 95]),
    }
    sensitivity = {
        name: {"summary": e["summary"], "value": _sensitivity(e["value"])}
        for name, e in {**bands, SHORT_BANDS: short_bands}.items()
    }
    charts = {
        "paths-chart": {
            "summary": "Paths of the Quillbrook rent freeze, housing units",
            "value": {
                "chart": "paths",
                "format": "svg",
                "units": {
                    "currency": "EUR",
                    "quantity": "homes",
                    "unit": "home",
                    "price_interval": "month",
                    "period": "year",
                },
                "scenario": example_request("quillbrook-rent-freeze"),
            },
        },
        "bands-chart": {
            "summary": "Percentile ribbons of Quillbrook's uncertain elasticities",
            "value": {"chart": "bands", "format": "png", "scenario": short_bands["value"]},
        },
        "gains-and-losses-chart": {
            "summary": "Who gains and who loses under the Quillbrook rent freeze and cap",
            "value": {
                "chart": "gains_and_losses",
                "units": {"currency": "EUR", "period": "year"},
                "scenario": example_request("quillbrook-rent-freeze"),
            },
        },
        "sensitivity-chart": {
            "summary": "A tornado of the rent freeze's discounted deadweight loss",
            "value": {
                "chart": "sensitivity",
                "policy": "rent freeze",
                "scenario": _sensitivity(short_bands["value"]),
            },
        },
    }
    batch = {
        "two-demos-2-periods": {
            "summary": "Two demos over 2 periods in one call",
            "value": {"scenarios": [short["value"], _short("ostrand-vale-vouchers")]},
        },
        "sweep-summaries": {
            "summary": "A sweep of the freeze's end, named scenarios, summaries only",
            "value": {
                "output": "summary",
                "scenarios": [
                    {"id": f"freeze to {end}", **_short("quillbrook-rent-freeze"), "horizon": 6}
                    | {
                        "policies": [
                            {"name": "freeze", "kind": "price_ceiling", "base_level": True, "end": end}
                        ]
                    }
                    for end in (2, 4)
                ],
            },
        },
    }
    out = {
        "postPaths": {**paths, SHORT: short},
        "postPathsBatch": batch,
        "postBands": {**bands, SHORT_BANDS: short_bands},
        "postSensitivity": sensitivity,
        "postChart": charts,
        "postBriefing": {
            SHORT: {
                "summary": "A briefing of a short demo with its own title and units",
                "value": {
                    **short["value"],
                    "title": "Quillbrook: a rent freeze",
                    "units": {
                        "currency": "EUR",
                        "quantity": "homes",
                        "unit": "home",
                        "price_interval": "month",
                        "period": "year",
                    },
                },
            },
            SHORT_BANDS: {
                "summary": "A briefing of the uncertain demo with few draws: its central answer and ranges",
                "value": {**short_bands["value"], "title": "Quillbrook: how sure are we?"},
            },
        },
    }
    # The CSV operations take the same bodies as the operations they answer as CSV.
    return out | {f"{op}Csv": out[op] for op in ("postPaths", "postPathsBatch", "postBands")}


def _round(value: Any) -> Any:
    if isinstance(value, float):
        return float(f"{value:.6g}")
    if isinstance(value, list):
        return [_round(v) for v in value]
    if isinstance(value, dict):
        return {k: _round(v) for k, v in value.items()}
    return value


def _example_answers(
    client, base: str, found: str, missing: str, why: str = "An example for another endpoint"
) -> dict[str, Any]:
    """A GET of one example: the 200 of `found` and the 404 of `missing` (under `base`)."""
    return {
        "200": {"application/json": {"summary": found, "value": _body(client.get(f"{base}/{found}"))}},
        "404": {
            "application/problem+json": {"summary": why, "value": _body(client.get(f"{base}/{missing}"))}
        },
    }


def _problem(status: int, detail: str) -> dict[str, Any]:
    return {"summary": detail, "value": problem(status, "Service Unavailable", detail)}


def _body(response) -> Any:
    data = response.data
    if response.headers.get("Content-Encoding") == "gzip":
        data = gzip.decompress(data)
    if response.mimetype.endswith("json"):
        return _round(json.loads(data))
    return data.decode("utf-8")


def compute_examples() -> dict[str, Any]:
    """operationId -> status -> media type -> {summary, value}: real answers, computed now."""
    from .app import create_app  # the app answers its own examples

    client = create_app({"TESTING": True, "band_threads": 1, "cache_bytes": 0}).test_client()
    requests = request_examples()

    def answer(path, body, accept="application/json", summary=""):
        response = client.post(path, json=body, headers={"Accept": accept})
        assert response.status_code == 200, (path, response.data[:300])
        return {"summary": summary, "value": _body(response)}

    short = requests["postPaths"][SHORT]["value"]
    short_bands = requests["postBands"][SHORT_BANDS]["value"]
    batch = requests["postPathsBatch"]["two-demos-2-periods"]["value"]
    invalid = copy.deepcopy(short)
    invalid["market"]["demand"]["price_elasticity"] = 0.5
    rejected = client.post("/v1/paths", json=invalid)
    refused = client.post("/v1/paths", json=short, headers={"Accept": "application/xml"})
    malformed = client.post("/v1/paths", data=b'{"market": ', content_type="application/json")
    wrong_type = client.post("/v1/paths", data=b"market=1", content_type="text/plain")
    problems = {
        "400": {"summary": "Malformed JSON", "value": _body(malformed)},
        "401": {
            "summary": "Keys are configured and none was sent",
            "value": problem(401, "Unauthorized", "Send a valid key as 'Authorization: Bearer <key>'."),
        },
        "406": {"summary": "Accept: application/xml", "value": _body(refused)},
        "413": {
            "summary": "A body over the limit",
            "value": problem(413, "Content Too Large", "The body is over 8388608 bytes."),
        },
        "415": {"summary": "A body sent as text/plain", "value": _body(wrong_type)},
        "422": {"summary": "A positive demand elasticity", "value": _body(rejected)},
    }
    about = f"{SHORT}: "
    out: dict[str, Any] = {
        "postPaths": {
            "200": {
                "application/json": answer("/v1/paths", short, summary=about + "the paths"),
                "text/csv": answer("/v1/paths", short, "text/csv", about + "the paths as CSV"),
            }
        },
        "postPathsBatch": {
            "200": {
                "application/json": answer("/v1/paths/batch", batch, summary="two-demos-2-periods"),
                "text/csv": answer("/v1/paths/batch", batch, "text/csv", "two-demos-2-periods as CSV"),
            }
        },
        "postBands": {
            "200": {
                "application/json": answer("/v1/bands", short_bands, summary=f"{SHORT_BANDS}: the bands"),
                "text/csv": answer("/v1/bands", short_bands, "text/csv", f"{SHORT_BANDS}: the bands as CSV"),
            }
        },
        "postSensitivity": {
            "200": {
                "application/json": answer(
                    "/v1/sensitivity", _sensitivity(short_bands), summary=f"{SHORT_BANDS}: the swings"
                )
            }
        },
        "listExamples": {
            "200": {"application/json": {"summary": "", "value": _body(client.get("/v1/examples"))}}
        },
        "getExample": _example_answers(
            client, "/v1/examples", "quillbrook-rent-freeze", "atlantis", "No such example"
        ),
        "getPathsExample": _example_answers(
            client, "/v1/examples/paths", "quillbrook-rent-freeze", "quillbrook-uncertain-elasticities"
        ),
        "getBandsExample": _example_answers(
            client, "/v1/examples/bands", "quillbrook-uncertain-elasticities", "quillbrook-rent-freeze"
        ),
        "liveness": {"200": {"application/json": {"summary": "", "value": _body(client.get("/healthz"))}}},
        "readiness": {
            "200": {"application/json": {"summary": "", "value": _body(client.get("/readyz"))}},
            "503": {"application/problem+json": _problem(503, "The model failed its readiness check.")},
        },
        "postChart": {
            "503": {"application/problem+json": _problem(503, "Charts need the charts extra (matplotlib).")}
        },
        "postBriefing": {
            "503": {
                "application/problem+json": _problem(503, "Briefings need the charts extra (matplotlib).")
            }
        },
        "problems": problems,
    }
    for op in ("postPaths", "postPathsBatch", "postBands"):  # the same answers, as CSV only
        out[f"{op}Csv"] = {"200": {"text/csv": out[op]["200"]["text/csv"]}}
    for operation_id, refused_here in _not_acceptable(client, requests).items():
        out.setdefault(operation_id, {})["406"] = {"application/problem+json": refused_here}
    return out


def _not_acceptable(client, requests: dict[str, Any]) -> dict[str, Any]:
    """operationId -> the 406 the operation itself answers to `Accept: application/xml`, for every
    operation that documents one: each names what that endpoint offers, which differs by endpoint
    (and, for a chart, by the `format` of its body: the request example first by name is sent). Views
    read the Accept header before their path parameters, so any value stands in for one; an
    operation that answers as another (`answers_of`: a saved scenario run) shows that one's."""
    from .routes import BLUEPRINTS

    out: dict[str, Any] = {}
    for blueprint in BLUEPRINTS:
        for op in blueprint.operations:
            if "406" not in op.get("responses", {}) or "answers_of" in op:
                continue  # none, or the answers (406 included) of the operation it answers as
            examples = (
                (requests.get(op["operationId"]) or op.get("request_examples") or {})
                if "request" in op
                else {}
            )
            name = min(examples, default=None)  # the first in the document, which sorts them
            body = examples[name]["value"] if name else None
            response = client.open(
                re.sub(r"\{[^}]+\}", "x", op["path"]),
                method=op["method"].upper(),
                json=body,
                headers={"Accept": "application/xml"},
            )
            assert response.status_code == 406, (op["operationId"], response.status_code)
            summary = "Accept: application/xml" + (f", with the request example {name}" if name else "")
            out[op["operationId"]] = {"summary": summary, "value": _body(response)}
    return out


def stored_examples() -> dict[str, Any]:
    """The response examples as last written by `python -m service.http --write` (or none)."""
    if not EXAMPLES_PATH.exists():
        return {}
    return json.loads(EXAMPLES_PATH.read_text(encoding="utf-8"))


def render_examples(computed: dict[str, Any]) -> str:
    return json.dumps(computed, indent=1, sort_keys=True, ensure_ascii=False) + "\n"
