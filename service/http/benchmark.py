"""POST /benchmark/echo: parse and echo a JSON body with the app's own parser and serialiser,
the framework floor tests/benchmarks compares with. Registered only when
SHOCKPATH_BENCHMARK_ECHO is set; not part of the documented API."""

from __future__ import annotations

from flask import Blueprint, Response

from .jsonio import json_response, read_json

__all__ = ["blueprint"]

blueprint = Blueprint("benchmark", __name__)


@blueprint.post("/benchmark/echo")
def benchmark_echo() -> Response:
    return json_response(read_json())
