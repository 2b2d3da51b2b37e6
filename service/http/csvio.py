"""Answers as long-form CSV, one value per row with its unit; binding is 1 or 0.

    /v1/paths        policy,period,variable,value,unit
    /v1/bands        policy,period,variable,percentile,value,unit
    /v1/paths/batch  scenario,scenario_id,policy,period,variable,value,unit

Series that only some answers carry (nominal prices, covered and uncovered homes, homes below
the free path) follow the others; each group of who gains and who loses is a variable of its
own (money per model period); under inflation `price_index` comes first, its policy cell empty.

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
import itertools
from collections.abc import Iterable
from typing import Any

from ..engine.results import COVERAGE_SERIES, DISTRIBUTION_GROUPS, NOMINAL_SERIES, SERIES, STOCK_SERIES

__all__ = ["UNITS", "bands_csv", "batch_csv", "neutralise", "paths_csv"]

#: Characters that make a spreadsheet cell a formula or split it (OWASP, CSV Injection).
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")

_PRICE = "money per unit per price interval"
_QUANTITY = "units per price interval"
_FLOW = "money per model period"
#: The unit of every series, in the terms of openapi/API.md (money is the caller's currency).
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
    "nominal_consumer_price": "money of the day per unit per price interval",
    "nominal_producer_price": "money of the day per unit per price interval",
    "covered_price": _PRICE,
    "uncovered_price": _PRICE,
    "covered_quantity": _QUANTITY,
    "uncovered_quantity": _QUANTITY,
    "homes_below_free_path": _QUANTITY,
    "rent_above_free_path": _PRICE,
    "price_index": "index, period 0 = 1",
    **{group: _FLOW for group in DISTRIBUTION_GROUPS},
}
#: Series that only some answers carry (MODEL.md 12-14), after SERIES in this order.
_OPTIONAL = NOMINAL_SERIES + COVERAGE_SERIES + STOCK_SERIES


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
    series = [(v, path[v]) for v in SERIES] + [(v, path[v]) for v in _OPTIONAL if v in path]
    if path.get("distribution"):  # who gains and who loses: each group a variable of its own
        series += [(group, path["distribution"][group]) for group in DISTRIBUTION_GROUPS]
    for variable, values in series:
        if variable == "binding":
            values = [int(v) for v in values]
        unit = UNITS[variable]
        for t, value in zip(periods, values, strict=True):
            yield (*lead, name, t, variable, value, unit)


def _index_rows(body: dict[str, Any], lead: tuple = ()) -> Iterable[tuple]:
    """Under inflation, the price index first, with an empty policy cell (it is the market's)."""
    for t, value in zip(body["periods"], body.get("price_index", ()), strict=False):
        yield (*lead, "", t, "price_index", value, UNITS["price_index"])


def paths_csv(body: dict[str, Any]) -> str:
    """CSV text (policy,period,variable,value,unit) from a /v1/paths body."""
    periods = body["periods"]
    paths = (row for path in body["paths"] for row in _path_rows(path, periods))
    return _text(itertools.chain(_index_rows(body), paths), ["policy", "period", "variable", "value", "unit"])


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
            yield from _index_rows(result, (i, result["scenario_id"]))
            for path in result["paths"]:
                yield from _path_rows(path, periods, (i, result["scenario_id"]))

    return _text(rows(), ["scenario", "scenario_id", "policy", "period", "variable", "value", "unit"])
