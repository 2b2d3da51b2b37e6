"""shockpath: transition paths of a market under shocks and policies, over HTTP and in Python.

create_app(config=None)   the Flask (WSGI) application factory
simulate(request)         the body of POST /v1/paths for one request dict
simulate_many(requests)   one body or problem document per request, one engine call
ProblemError              raised by simulate; `.problem` is the RFC 9457 document
"""

from .app import create_app
from .problems import ProblemError
from .simulation import simulate, simulate_many
from .uncertain import bands, sensitivity

__all__ = ["ProblemError", "bands", "create_app", "sensitivity", "simulate", "simulate_many"]
