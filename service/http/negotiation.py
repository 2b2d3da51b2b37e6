"""Content negotiation: one rule for every endpoint that can answer in more than one type."""

from __future__ import annotations

from collections.abc import Sequence

from flask import request

from ..problems import ProblemError, problem

__all__ = ["negotiate"]


def negotiate(offered: Sequence[str], detail: str) -> str:
    """The offered media type the Accept header prefers; the first one without a header.

    Raises ProblemError 406 (with `detail`) when the header accepts none of them.
    """
    if not request.accept_mimetypes:
        return offered[0]
    best = request.accept_mimetypes.best_match(offered)
    if best is None:
        raise ProblemError(problem(406, "Not Acceptable", detail))
    return best
