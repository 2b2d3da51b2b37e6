"""Answers as CSV: long form (one value per row with its unit), wide form (one column per
variable, units in the header), and summaries (one row per scenario and policy).

Long form (the default):

    /v1/paths        policy,period,variable,value,unit
    /v1/bands        policy,period,variable,percentile,value,unit
    /v1/paths/batch  scenario,scenario_id,policy,period,variable,value,unit

Wide form (`?layout=wide`): one row per (scenario,) policy and period, one column per variable,
each header cell `variable [unit]`; money is labelled "today's money (period 0)" for real prices
and flows and "money of the day" for nominal ones. Under inflation `price_index` is a column.

Summary form (`"output": "summary"`): one row per (scenario,) policy with its summary figures
(nested objects flattened as `object.member`) and the scenario's cautions.

In a batch the `scenario` cell is the caller's `id` of the scenario when it has one, else its
position. A scenario without an answer has one long-form row: variable `problem`, value its
problem's detail.

Series are found in the answer, not listed here: every array member of a path is a variable,
and every object of arrays is flattened (its members named `object.member`; the groups of who
gains and who loses keep their own names, `distribution` being the one object they come
from), so a new series reaches the CSV without a change here. A variable this module has no
unit for gets "see the JSON answer's documentation".

Text cells that a spreadsheet would read as a formula (they begin with =, +, -, @, a tab or a
carriage return) are neutralised as OWASP's "CSV Injection" page recommends: a single quote is
put in front, so the cell reads as text, and every text cell is wrapped in double quotes (any
quote inside doubled), so a tab or line break inside a name cannot split it. Numbers are written
unquoted, as numbers (a negative value stays -12.5); binding is 1 or 0. Only names the caller
chose (policy names, scenario ids) can carry such text; every other text cell is the service's
own. NUL characters are dropped from text cells.

Speed: the long and wide forms are written by `_Writer` without a Python step per value:
orjson writes every number of a block at once (the shortest text that reads back as the same
float), numpy cuts that text at its commas into fixed-width cells, and each row is the
concatenation of fixed-width cells (its lead, period, variable, value, unit) padded with NUL
bytes, which one `bytes.translate` removes. Batches are written in blocks of about
`BLOCK_ROWS` rows and streamed, so memory stays bounded and no single step holds the GIL for
long (health probes answered by another thread of the same worker wait for none of them).
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable, Iterator
from typing import Any

import numpy as np
import orjson

from ..engine.results import DISTRIBUTION_GROUPS
from ..problems import is_problem

__all__ = [
    "BLOCK_ROWS",
    "LAYOUTS",
    "UNITS",
    "bands_csv",
    "batch_csv",
    "batch_summary_csv",
    "neutralise",
    "paths_csv",
    "paths_summary_csv",
    "wide_unit",
]

#: Characters that make a spreadsheet cell a formula or split it (OWASP, CSV Injection).
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
#: The CSV layouts a caller may ask for (`?layout=`); the first is the default.
LAYOUTS = ("long", "wide")
#: Rows written per vectorised block (and per streamed chunk) of a batch.
BLOCK_ROWS = 25_000

_PRICE = "money per unit per price interval"
_QUANTITY = "units per price interval"
_FLOW = "money per model period"
_UNKNOWN = "see the JSON answer's documentation"
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
#: Objects of series whose members keep their own names as variables.
_OWN_NAMES = frozenset(["distribution"])
#: Integer-valued series (written without a decimal point).
_INTEGERS = frozenset(["binding"])


def neutralise(text: str) -> str:
    """A text cell that no spreadsheet evaluates: a leading ' where it would start a formula."""
    return "'" + text if text.startswith(FORMULA_START) else text


def _quoted(text: str) -> str:
    return '"' + neutralise(text).replace("\x00", "").replace('"', '""') + '"'


def unit_of(variable: str) -> str:
    """The unit of a variable: by its name, else by its member name (`object.member`)."""
    return UNITS.get(variable) or UNITS.get(variable.rpartition(".")[2], _UNKNOWN)


def wide_unit(variable: str) -> str:
    """The wide form's unit: real money named as today's money (period 0)."""
    unit = unit_of(variable)
    if unit.startswith("money") and not unit.startswith("money of the day"):
        return "today's money (period 0)" + unit.removeprefix("money")
    return unit


def _series(path: dict[str, Any]) -> Iterator[tuple[str, Any]]:
    """(variable, values) of every series of a path, nested objects flattened."""
    for key, value in path.items():
        if isinstance(value, dict):
            for member, values in value.items():
                if _is_series(values):
                    yield (member if key in _OWN_NAMES else f"{key}.{member}"), values
        elif _is_series(value):
            yield key, value


def _is_series(value: Any) -> bool:
    return isinstance(value, np.ndarray) or (
        isinstance(value, list) and (not value or not isinstance(value[0], str))
    )


# --- the vectorised writer -------------------------------------------------------------------


def _cells(texts: list[bytes]) -> np.ndarray:
    """Fixed-width cells (NUL-padded uint8 rows) of byte strings."""
    width = max(1, max((len(t) for t in texts), default=1))
    out = np.zeros((len(texts), width), np.uint8)
    for i, t in enumerate(texts):
        out[i, : len(t)] = np.frombuffer(t, np.uint8)
    return out


def _number_cells(values: np.ndarray, integer: np.ndarray | None = None) -> np.ndarray:
    """Fixed-width cells of numbers as orjson writes them (shortest round trip); integer rows
    lose their ".0"; NaN (a missing value) is an empty cell."""
    n = values.size
    if n == 0:
        return np.zeros((0, 1), np.uint8)
    text = orjson.dumps(np.ascontiguousarray(values, dtype=np.float64), option=orjson.OPT_SERIALIZE_NUMPY)
    buf = np.frombuffer(text, np.uint8)
    commas = np.flatnonzero(buf == ord(","))
    starts = np.empty(n, np.int64)
    starts[0] = 1
    starts[1:] = commas + 1
    ends = np.empty(n, np.int64)
    ends[:-1] = commas
    ends[-1] = buf.size - 1
    lengths = ends - starts
    if integer is not None:
        lengths[integer] -= 2  # "1.0" -> "1"
    lengths[np.isnan(values)] = 0  # orjson's null: no value
    width = int(lengths.max()) if n else 1
    offsets = np.arange(max(width, 1))
    picked = buf[np.minimum(starts[:, None] + offsets, buf.size - 1)]
    return np.where(offsets < lengths[:, None], picked, 0).astype(np.uint8)


def _join(parts: list[np.ndarray]) -> bytes:
    return np.concatenate(parts, axis=1).tobytes().translate(None, b"\x00")


class _Writer:
    """Collects blocks of long-form rows and writes them in vectorised blocks.

    A block is (lead, variable, values): `values` a 1-D array over periods 0..n-1. Each row is
    lead + period + variable + value + unit, every text cell quoted.
    """

    def __init__(self, unit=unit_of):
        self.unit = unit
        self.leads: list[bytes] = []
        self.lead_of: list[int] = []
        self.variables: dict[str, int] = {}
        self.var_of: list[int] = []
        self.values: list[np.ndarray] = []
        self.rows = 0

    def lead(self, text: str) -> int:
        self.leads.append(text.encode())
        return len(self.leads) - 1

    def add(self, lead: int, variable: str, values: Any) -> None:
        array = np.asarray(values, dtype=np.float64)
        self.lead_of.append(lead)
        self.var_of.append(self.variables.setdefault(variable, len(self.variables)))
        self.values.append(array)
        self.rows += array.size

    def flush(self) -> bytes:
        if not self.values:
            return b""
        lengths = np.array([v.size for v in self.values])
        values = np.concatenate(self.values)
        var = np.repeat(np.array(self.var_of), lengths)
        first = np.repeat(np.cumsum(lengths) - lengths, lengths)
        period = np.arange(values.size) - first
        names = list(self.variables)
        integer = np.isin(var, [self.variables[n] for n in names if n in _INTEGERS])
        span = int(lengths.max())
        # period and variable side by side: one cell per (variable, period)
        middle = _cells([b"%d,%s," % (t, _quoted(n).encode()) for n in names for t in range(span)])
        text = _join(
            [
                _cells(self.leads)[np.repeat(np.array(self.lead_of), lengths)],
                middle[var * span + period],
                _number_cells(values, integer),
                _cells([b"," + _quoted(self.unit(n)).encode() + b"\n" for n in names])[var],
            ]
        )
        self.__init__(self.unit)
        return text


def _header(names: Iterable[str]) -> bytes:
    return (",".join(_quoted(n) for n in names) + "\n").encode()


def _long_blocks(writer: _Writer, body: dict[str, Any], lead: str) -> None:
    """The rows of one answer: the price index first (empty policy cell), then each path."""
    if "price_index" in body:
        writer.add(writer.lead(lead + '"",'), "price_index", body["price_index"])
    for path in body["paths"]:
        mine = writer.lead(lead + _quoted(path["name"]) + ",")
        for variable, values in _series(path):
            writer.add(mine, variable, values)


def paths_csv(body: dict[str, Any], layout: str = "long") -> bytes:
    """CSV from a /v1/paths body (series as lists or numpy arrays)."""
    if layout == "wide":
        return b"".join(_wide([(None, body)], scenario=False))
    writer = _Writer()
    _long_blocks(writer, body, "")
    return _header(["policy", "period", "variable", "value", "unit"]) + writer.flush()


def _scenario_cell(i: int, result: dict[str, Any]) -> str:
    return _quoted(result["id"]) if "id" in result else str(i)


def batch_csv(results: list[dict[str, Any]], layout: str = "long") -> Iterator[bytes]:
    """CSV chunks from batch results (each a body or a problem document, maybe with `id`)."""
    if layout == "wide":
        yield from _wide(list(enumerate(results)), scenario=True)
        return
    yield _header(["scenario", "scenario_id", "policy", "period", "variable", "value", "unit"])
    writer = _Writer()
    for i, result in enumerate(results):
        scenario = _scenario_cell(i, result)
        if is_problem(result):
            yield writer.flush()
            detail = _quoted(str(result.get("detail", "")))
            yield f'{scenario},"","","","problem",{detail},""\n'.encode()
            continue
        _long_blocks(writer, result, f'{scenario},"{result["scenario_id"]}",')
        if writer.rows >= BLOCK_ROWS:
            yield writer.flush()
    yield writer.flush()


def _wide(items: list[tuple[int | None, dict[str, Any]]], scenario: bool) -> Iterator[bytes]:
    """Wide form: one row per (scenario,) policy and period; one column per variable of any
    answer (empty where an answer has none)."""
    columns: dict[str, None] = {}
    for _, body in items:
        if is_problem(body):
            continue
        if "price_index" in body:
            columns["price_index"] = None
        for path in body["paths"]:
            columns.update((v, None) for v, _ in _series(path))
    names = list(columns)
    index = {n: j for j, n in enumerate(names)}
    lead_names = (["scenario", "scenario_id"] if scenario else []) + ["policy", "period"]
    yield _header(lead_names + [f"{n} [{wide_unit(n)}]" for n in names])
    leads: list[bytes] = []
    lead_rows: list[np.ndarray] = []
    blocks: list[np.ndarray] = []
    rows = 0

    def flush() -> bytes:
        nonlocal leads, lead_rows, blocks, rows
        if not blocks:
            return b""
        values = np.concatenate(blocks)
        lengths = np.array([b.shape[0] for b in blocks])
        period = np.arange(values.shape[0]) - np.repeat(np.cumsum(lengths) - lengths, lengths)
        integer = np.zeros(values.shape, bool)
        for n in _INTEGERS & set(index):
            integer[:, index[n]] = True
        cells = _number_cells(values.ravel(), integer.ravel()).reshape(values.shape[0], len(names), -1)
        separators = np.full((values.shape[0], len(names), 1), ord(","), np.uint8)
        separators[:, -1, 0] = ord("\n")
        text = _join(
            [
                _cells(leads)[np.repeat(np.arange(len(leads)), lengths)],
                _cells([b"%d," % t for t in range(int(lengths.max()))])[period],
                np.concatenate([cells, separators], axis=2).reshape(values.shape[0], -1),
            ]
        )
        leads, lead_rows, blocks, rows = [], [], [], 0
        return text

    for i, body in items:
        head = ""
        if scenario:
            head = _scenario_cell(i, body) + ","
            if is_problem(body):
                yield flush()
                detail = _quoted("problem: " + str(body.get("detail", "")))
                yield (head + '"",' + detail + "," + "," * len(names) + "\n").encode()
                continue
            head += f'"{body["scenario_id"]}",'
        periods = len(body["periods"])
        for path in body["paths"]:
            block = np.full((periods, len(names)), np.nan)
            if "price_index" in body:
                block[:, index["price_index"]] = body["price_index"]
            for variable, values in _series(path):
                block[:, index[variable]] = values
            leads.append((head + _quoted(path["name"]) + ",").encode())
            blocks.append(block)
            rows += periods * len(names)  # values, so that a block holds about BLOCK_ROWS of them
        if rows >= BLOCK_ROWS:
            yield flush()
    yield flush()


# --- summaries ------------------------------------------------------------------------------


def _flat(summary: dict[str, Any]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in summary.items():
        if isinstance(value, dict):
            out.update((f"{key}.{member}", v) for member, v in value.items())
        else:
            out[key] = value
    return out


def _summary_text(items: list[tuple[int | None, dict[str, Any]]], scenario: bool) -> str:
    rows: list[tuple[list[Any], dict[str, Any], str]] = []
    columns: dict[str, None] = {}
    for i, body in items:
        lead: list[Any] = [_cell_text(i, body), body.get("scenario_id", "")] if scenario else []
        if is_problem(body):
            rows.append((lead, {}, "problem: " + str(body.get("detail", ""))))
            continue
        cautions = " | ".join(str(c) for c in body.get("cautions", ()))
        for summary in body["summary"]:
            flat = _flat(summary)
            columns.update((k, None) for k in flat)
            rows.append((lead, flat, cautions))
    names = [n for n in columns if n not in ("name", "kind")]
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n", quoting=csv.QUOTE_NONNUMERIC)
    writer.writerow(
        (["scenario", "scenario_id"] if scenario else []) + ["policy", "kind", *names, "cautions"]
    )
    for lead, flat, cautions in rows:
        cells = [_text_cell(flat.get("name", "")), flat.get("kind", "")]
        cells += ["" if flat.get(n) is None else flat[n] for n in names]
        writer.writerow([_text_cell(c) if isinstance(c, str) else c for c in lead] + cells + [cautions])
    return out.getvalue()


def _cell_text(i: int | None, body: dict[str, Any]) -> Any:
    return body["id"] if "id" in body else i


def _text_cell(text: str) -> str:
    return neutralise(text).replace("\x00", "")


def paths_summary_csv(body: dict[str, Any]) -> bytes:
    """policy,kind,<summary figures>,cautions from a /v1/paths summary answer."""
    return _summary_text([(None, body)], scenario=False).encode()


def batch_summary_csv(results: list[dict[str, Any]]) -> bytes:
    """scenario,scenario_id,policy,kind,<summary figures>,cautions from batch summary results."""
    return _summary_text(list(enumerate(results)), scenario=True).encode()


# --- bands (small: written by the csv module) -------------------------------------------------


def _text(rows: Iterable[Iterable[Any]], header: list[str]) -> str:
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n", quoting=csv.QUOTE_NONNUMERIC)
    writer.writerow(header)
    writer.writerows(rows)
    return out.getvalue()


def bands_csv(body: dict[str, Any]) -> str:
    """CSV text (policy,period,variable,percentile,value,unit) from a /v1/bands body."""
    periods = body["periods"]

    def rows():
        for band in body["bands"]:
            name = neutralise(band["name"])
            for variable, by_percentile in band["series"].items():
                unit = unit_of(variable)
                for key, values in by_percentile.items():
                    for t, value in zip(periods, values, strict=True):
                        yield (name, t, variable, key, value, unit)

    return _text(rows(), ["policy", "period", "variable", "percentile", "value", "unit"])
