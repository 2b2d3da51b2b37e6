"""Content negotiation: one rule for every endpoint.

Every endpoint answers JSON; the tabular ones (paths, batch, bands) also answer CSV, charts
answer SVG or PNG. The Accept header picks among what the endpoint offers (no header, or */*,
gets the first); a header that accepts none of them is a 406 that lists what is offered.
Errors are always application/problem+json, whatever the Accept header.
"""

from __future__ import annotations

from collections.abc import Sequence

from flask import request

from ..problems import ProblemError, problem

__all__ = ["CSV", "JSON", "JSON_ONLY", "TABULAR", "XLSX", "negotiate"]

JSON = "application/json"
CSV = "text/csv"
#: An Excel workbook (service.workbook builds it).
XLSX = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"
JSON_ONLY = (JSON,)
TABULAR = (JSON, CSV, XLSX)


def negotiate(offered: Sequence[str] = JSON_ONLY) -> str:
    """The offered media type the Accept header prefers; the first one without a header.

    Raises ProblemError 406 when the header accepts none of them.
    """
    if not request.environ.get("HTTP_ACCEPT"):  # no header: nothing to parse (most API calls)
        return offered[0]
    if not request.accept_mimetypes:
        return offered[0]
    best = request.accept_mimetypes.best_match(offered)
    if best is None:
        names = " or ".join(offered)
        raise ProblemError(problem(406, "Not Acceptable", f"This endpoint answers {names}."))
    return best
