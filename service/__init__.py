"""shockpath: transition paths of a market under shocks and policies, over HTTP and in Python.

create_app(config=None)   the Flask (WSGI) application factory
simulate(request)         the body of POST /v1/paths for one request dict
simulate_many(requests)   one body or problem document per request, one engine call
bands(request)            the body of POST /v1/bands
sensitivity(request)      the body of POST /v1/sensitivity
ProblemError              raised by simulate, bands, sensitivity; `.problem` is the RFC 9457 document
is_problem(item)          True for a problem document of simulate_many (a Problem), False for a body

Each name is imported when first used (PEP 562), so `import service.engine` loads numpy and
scipy only, and `from service import simulate` loads neither Flask nor prometheus_client.
"""

from __future__ import annotations

import importlib
from typing import Any

__all__ = [
    "Problem",
    "ProblemError",
    "bands",
    "create_app",
    "is_problem",
    "sensitivity",
    "simulate",
    "simulate_many",
]

_HOMES = {
    "Problem": "service.problems",
    "ProblemError": "service.problems",
    "is_problem": "service.problems",
    "bands": "service.uncertainty",
    "create_app": "service.http.app",
    "sensitivity": "service.uncertainty",
    "simulate": "service.simulation",
    "simulate_many": "service.simulation",
}


def __getattr__(name: str) -> Any:
    home = _HOMES.get(name)
    if home is None:
        raise AttributeError(f"module 'service' has no attribute {name!r}")
    value = getattr(importlib.import_module(home), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
