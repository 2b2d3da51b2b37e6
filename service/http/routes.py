"""Every documented blueprint of the app, in registration order; the OpenAPI document is
built from their operations (openapi.py) and the app registers them (app.py)."""

from __future__ import annotations

from . import briefing, charts, examples, health, library, page, paths, uncertainty
from .documented import DocumentedBlueprint

__all__ = ["BLUEPRINTS"]

BLUEPRINTS: tuple[DocumentedBlueprint, ...] = (
    paths.blueprint,
    uncertainty.blueprint,
    charts.blueprint,
    briefing.blueprint,
    examples.blueprint,
    library.blueprint,
    page.blueprint,
    health.blueprint,
)
