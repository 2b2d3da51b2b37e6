"""Demo scenarios (invented markets in invented places), shipped as JSON package data."""

from __future__ import annotations

import copy
import functools
import json
from importlib import resources
from typing import Any

__all__ = ["example_request", "examples"]


@functools.cache
def _load() -> dict[str, dict[str, Any]]:
    folder = resources.files("service") / "examples"
    out = {}
    for entry in sorted(folder.iterdir(), key=lambda e: e.name):
        if entry.name.endswith(".json"):
            out[entry.name[: -len(".json")]] = json.loads(entry.read_text(encoding="utf-8"))
    return out


def examples() -> dict[str, dict[str, Any]]:
    """name -> {"title", "description", "units", "request"} (and "endpoint" where it is not
    /v1/paths); a fresh copy each call."""
    return copy.deepcopy(_load())


def example_request(name: str) -> dict[str, Any] | None:
    """The postable request body of one example, or None."""
    entry = _load().get(name)
    return None if entry is None else copy.deepcopy(entry["request"])
