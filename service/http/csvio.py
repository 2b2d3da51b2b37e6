"""Paths as long-form CSV: one row per (policy, period, variable); binding is 1 or 0."""

from __future__ import annotations

import csv
import io
from typing import Any

from ..engine.results import SERIES

__all__ = ["paths_csv"]


def paths_csv(body: dict[str, Any]) -> str:
    """CSV text with header policy,period,variable,value from a /v1/paths body."""
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["policy", "period", "variable", "value"])
    periods = body["periods"]
    for path in body["paths"]:
        name = path["name"]
        for variable in SERIES:
            values = path[variable]
            if variable == "binding":
                values = [int(v) for v in values]
            writer.writerows(
                zip([name] * len(periods), periods, [variable] * len(periods), values, strict=True)
            )
    return out.getvalue()
