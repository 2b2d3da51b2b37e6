"""Answers as long-form CSV, one value per row with its unit; binding is 1 or 0.

    /v1/paths        policy,period,variable,value,unit
    /v1/bands        policy,period,variable,percentile,value,unit
    /v1/paths/batch  scenario,scenario_id,policy,period,variable,value,unit

Text cells that a spreadsheet would read as a formula (they begin with =, +, -, @, a tab or a
carriage return) are neutralised as OWASP's "CSV Injection" page recommends: a single quote is
put in front, so the cell reads as text, and every text cell is wrapped in double quotes (any
quote inside doubled), so a tab or line break inside a name cannot split it. Numbers are written
unquoted, as numbers (a negative value stays -12.5). Only names the caller chose
(policy names) can carry such text; every other text cell is the service's own.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable
from typing import Any

from ..engine.results import SERIES

__all__ = ["UNITS", "bands_csv", "batch_csv", "neutralise", "paths_csv"]

#: Characters that make a spreadsheet cell a formula or split it (OWASP, CSV Injection).
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")

_PRICE = "money per unit per price interval"
_QUANTITY = "units per price interval"
_FLOW = "money per model period"
#: The unit of every series, in the README's terms (money is the caller's currency).
UNITS = {
    "consumer_price": _PRICE,
    "producer_price": _PRICE,
    "marginal_value": _PRICE,
    "marginal_cost": _PRICE,
    "quantity": _QUANTITY,
    "quantity_demanded": _QUANTITY,
    "quantity_supplied": _QUANTITY,
    "shortage": _QUANTITY,
    "excess_supply": _QUANTITY,
    "binding": "1 if the policy binds, else 0",
    "consumer_surplus_change": _FLOW,
    "producer_surplus_change": _FLOW,
    "government_revenue": _FLOW,
    "deadweight_loss": _FLOW,
    "misallocation_loss": _FLOW,
    "cumulative_deadweight_loss": "money, per model period summed over periods 0 to this one",
    "discounted_deadweight_loss": "money, discounted to period 0, summed over periods 0 to this one",
}


def neutralise(text: str) -> str:
    """A text cell that no spreadsheet evaluates: a leading ' where it would start a formula."""
    return "'" + text if text.startswith(FORMULA_START) else text


def _text(rows: Iterable[Iterable[Any]], header: list[str]) -> str:
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n", quoting=csv.QUOTE_NONNUMERIC)
    writer.writerow(header)
    writer.writerows(rows)
    return out.getvalue()


def _path_rows(path: dict[str, Any], periods: list[int], lead: tuple = ()) -> Iterable[tuple]:
    name = neutralise(path["name"])
    for variable in SERIES:
        values = path[variable]
        if variable == "binding":
            values = [int(v) for v in values]
        unit = UNITS[variable]
        for t, value in zip(periods, values, strict=True):
            yield (*lead, name, t, variable, value, unit)


def paths_csv(body: dict[str, Any]) -> str:
    """CSV text (policy,period,variable,value,unit) from a /v1/paths body."""
    periods = body["periods"]
    rows = (row for path in body["paths"] for row in _path_rows(path, periods))
    return _text(rows, ["policy", "period", "variable", "value", "unit"])


def bands_csv(body: dict[str, Any]) -> str:
    """CSV text (policy,period,variable,percentile,value,unit) from a /v1/bands body."""
    periods = body["periods"]

    def rows():
        for band in body["bands"]:
            name = neutralise(band["name"])
            for variable, by_percentile in band["series"].items():
                unit = UNITS[variable]
                for key, values in by_percentile.items():
                    for t, value in zip(periods, values, strict=True):
                        yield (name, t, variable, key, value, unit)

    return _text(rows(), ["policy", "period", "variable", "percentile", "value", "unit"])


def batch_csv(results: list[dict[str, Any]]) -> str:
    """CSV text (scenario,scenario_id,policy,period,variable,value,unit) from batch results.

    A scenario without an answer has one row: variable `problem`, value its problem's detail.
    """

    def rows():
        for i, result in enumerate(results):
            if "status" in result:
                yield (i, "", "", "", "problem", neutralise(str(result.get("detail", ""))), "")
                continue
            periods = list(result["periods"])
            for path in result["paths"]:
                yield from _path_rows(path, periods, (i, result["scenario_id"]))

    return _text(rows(), ["scenario", "scenario_id", "policy", "period", "variable", "value", "unit"])
