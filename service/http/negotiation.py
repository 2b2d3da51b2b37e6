"""Content negotiation: one rule for every endpoint.

Every endpoint answers JSON; the tabular ones (paths, batch, bands) also answer CSV, charts
answer SVG or PNG. The Accept header picks among what the endpoint offers (no header, or */*,
gets the first); a header that accepts none of them is a 406 that lists what is offered.
Errors are always application/problem+json, whatever the Accept header.

Media-type parameters in Accept (`application/json; charset=utf-8`, `text/csv;header=present`)
are ignored for matching, as RFC 9110 section 12.5.1 allows: the type and subtype choose, the
q-values rank. Every answer of an endpoint that negotiates (its 406 and its 304 too) carries
`Vary: Accept`, so that a shared cache keeps apart the answers given to different headers.
"""

from __future__ import annotations

from collections.abc import Sequence

from flask import Response, after_this_request, request
from werkzeug.datastructures import MIMEAccept

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

    Raises ProblemError 406 when the header accepts none of them. Whatever the outcome, the
    answer (or the problem) is marked `Vary: Accept`.
    """
    after_this_request(_vary_accept)
    if not request.environ.get("HTTP_ACCEPT"):  # no header: nothing to parse (most API calls)
        return offered[0]
    if not request.accept_mimetypes:
        return offered[0]
    best = _without_parameters(request.accept_mimetypes).best_match(offered)
    if best is None:
        names = " or ".join(offered)
        raise ProblemError(problem(406, "Not Acceptable", f"This endpoint answers {names}."))
    return best


def _without_parameters(accept: MIMEAccept) -> MIMEAccept:
    """The Accept header's media ranges with their parameters dropped, q-values kept.

    werkzeug matches a range with parameters only to an offer with the same parameters, so
    `application/json; charset=utf-8` would accept none of our (parameterless) offers.
    """
    return MIMEAccept([(value.split(";", 1)[0].strip(), quality) for value, quality in accept])


def _vary_accept(response: Response) -> Response:
    response.vary.add("Accept")
    return response
