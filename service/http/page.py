"""GET / and /ui/{name}: the page to try scenarios in a browser (files in web/; no build step)."""

from __future__ import annotations

from importlib import resources

import orjson
from flask import Response

from .. import charts, labels
from ..problems import ProblemError, problem
from .documented import DocumentedBlueprint

__all__ = ["blueprint"]

blueprint = DocumentedBlueprint("page", __name__)

_PAGE_FILES = {
    "style.css": "text/css",
    "app.js": "text/javascript",
    "library.js": "text/javascript",
    "library.css": "text/css",
}
#: Made from service.labels, the one table of names and units (not a file in web/).
_LABELS = "labels.json"


def _page_file(name: str) -> bytes:
    return (resources.files("service.http") / "web" / name).read_bytes()


@blueprint.operation(
    "get",
    "/",
    operationId="page",
    summary="A page to try scenarios in a browser",
    responses={"200": {"description": "HTML.", "content": {"text/html": "text"}}},
)
def page() -> Response:
    """The built-in page to try scenarios (no build step, no outside network)."""
    return Response(_page_file("index.html"), mimetype="text/html")


@blueprint.operation(
    "get",
    "/ui/{name}",
    operationId="pageFile",
    summary="The page's style sheet, script and label table",
    path_parameters=["name"],
    responses={
        "200": {
            "description": "CSS, JavaScript, or labels.json: the plain names and units of every series, "
            "total and input (service.labels).",
            "content": {"text/css": "text", "text/javascript": "text", "application/json": "text"},
        },
        "404": {"description": "No such file.", "problem": True},
    },
)
def page_file(name: str) -> Response:
    if name == _LABELS:
        # With the panels a paths chart draws by default, so the page's caption names those.
        table = {**labels.table(), "default_panels": list(charts.DEFAULT_PANELS)}
        return Response(orjson.dumps(table), mimetype="application/json")
    if name not in _PAGE_FILES:
        raise ProblemError(problem(404, "Not Found", "No such page file."))
    return Response(_page_file(name), mimetype=_PAGE_FILES[name])
