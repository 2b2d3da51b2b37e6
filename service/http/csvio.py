"""Answers as CSV: long form (one value per row with its unit), wide form (one column per
variable, units in the header), and summaries (one row per scenario and policy).

Long form (the default):

    /v1/paths        policy,period,variable,value,unit
    /v1/bands        policy,period,variable,percentile,value,unit
    /v1/paths/batch  scenario,scenario_id,policy,period,variable,value,unit

Wide form (`?layout=wide`): one row per (scenario,) policy and period, one column per variable,
each header cell `variable [unit]`. In both forms money is labelled "today's money (period 0)"
for real prices and flows and "money of the day" for nominal ones, the same unit for the same
series. Under inflation `price_index` is a column.

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

Speed: the long and wide forms are written without a Python step per value. orjson writes
every number of a block at once (the shortest text that reads back as the same float) and
numpy cuts that text at its commas. The rows are then laid out by arithmetic: a row's length is
the sum of its cells' lengths, and their cumulative sum gives every cell's position in one
output buffer. The numbers are copied there first, all in one assignment (each as a cell of
the widest number's width, in order, so that what a short number leaves past its end is
overwritten by what follows it); then every text cell (a lead, a period, a variable, a unit)
is written into all the rows that carry it by one assignment per text. Batches are written in
blocks of about `BLOCK_ROWS` rows and streamed, so memory stays bounded and no single step
holds the GIL for long (health probes answered by another thread of the same worker wait for
none of them).
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable, Iterator
from typing import Any

import numpy as np
import orjson

from ..engine.results import DISTRIBUTION_GROUPS
from ..labels import NOMINAL, REAL
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
#: Rows written per vectorised block (and per streamed chunk) of a batch: about 1.5 MB of long
#: form, 3.5 MB of wide, small enough for the processor's caches (the fastest size here).
BLOCK_ROWS = 10_000

#: Money of period 0 (prices and flows deflated by the price index when the request has
#: inflation; the same money without it) and money of the day (the nominal series): the answer's
#: own words (service.labels), in the long and the wide form alike.
_REAL = REAL
_PRICE = f"{_REAL} per unit per price interval"
_QUANTITY = "units per price interval"
_FLOW = f"{_REAL} per model period"
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
    "cumulative_deadweight_loss": f"{_REAL}, per model period summed over periods 0 to this one",
    "discounted_deadweight_loss": f"{_REAL}, discounted to period 0, summed over periods 0 to this one",
    "nominal_consumer_price": f"{NOMINAL} per unit per price interval",
    "nominal_producer_price": f"{NOMINAL} per unit per price interval",
    "covered_price": _PRICE,
    "uncovered_price": _PRICE,
    "covered_quantity": _QUANTITY,
    "uncovered_quantity": _QUANTITY,
    "homes_below_free_path": _QUANTITY,
    "rent_above_free_path": _PRICE,
    "vacant_homes": _QUANTITY,
    "converted_homes": _QUANTITY,
    "vs_free_path.renters": _FLOW,
    "vs_free_path.extra_rent": _FLOW,
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
    """The wide form's unit: the long form's (one wording for the same series in both)."""
    return unit_of(variable)


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


def _slots(buffer: np.ndarray, width: int) -> np.ndarray:
    """Every run of `width` bytes of a uint8 buffer as the items of one 1-D view (no copy):
    item p is buffer[p:p + width], so one assignment writes cells at any positions."""
    return np.ndarray((buffer.size - width + 1,), f"V{width}", buffer, 0, (1,))


def _put_texts(out: np.ndarray, at: np.ndarray, keys: np.ndarray, texts: list[bytes]) -> None:
    """Write texts[keys[i]] at out[at[i]:], its bytes and no more, for every i: one assignment
    per text (a few texts over many rows: the leads, periods, variables and units of a block)."""
    if not at.size:
        return
    if np.any(keys[1:] < keys[:-1]):  # rows of one text together (leads already are)
        at = at[np.argsort(keys.astype(np.uint16) if len(texts) <= 1 << 16 else keys, kind="stable")]
    bounds = np.cumsum(np.bincount(keys, minlength=len(texts))).tolist()
    slots: dict[int, np.ndarray] = {}
    for text, a, b in zip(texts, [0, *bounds], bounds, strict=False):
        if b > a and text:
            if len(text) not in slots:
                slots[len(text)] = _slots(out, len(text))
            slots[len(text)][at[a:b]] = text


class _Numbers:
    """Numbers as orjson writes them (the shortest text that reads back as the same float):
    one call writes them all, and the text is cut at its commas. Integer entries lose their
    ".0"; NaN (a missing value) is an empty cell."""

    def __init__(self, values: np.ndarray, integer: np.ndarray | None = None):
        values = np.ascontiguousarray(values, dtype=np.float64).ravel()
        n = values.size
        text = orjson.dumps(values, option=orjson.OPT_SERIALIZE_NUMPY)  # [a,b,...]
        self.buffer = np.frombuffer(text, np.uint8)
        commas = np.flatnonzero(self.buffer == ord(","))
        self.starts = np.concatenate([[1], commas + 1])[:n]
        ends = np.concatenate([commas, [self.buffer.size - 1]])[:n]
        self.lengths = ends - self.starts
        if integer is not None:
            self.lengths[integer] -= 2  # "1.0" -> "1"
        self.lengths[np.isnan(values)] = 0  # orjson's null: no value
        self.width = int(self.lengths.max(initial=0))

    def put(self, out: np.ndarray, at: np.ndarray) -> None:
        """Write number i at out[at[i]:], `at` increasing, `out` with `width` bytes to spare.
        Every number is copied as a cell of the widest one's width, in order, so the bytes past
        a number's end hold the text after it until something else is written there: the
        numbers that follow (later in this same assignment, which numpy makes in index order)
        and the text cells between them, which the caller writes afterwards."""
        if self.width:
            source = np.concatenate([self.buffer, np.zeros(self.width, np.uint8)])
            _slots(out, self.width)[at] = _slots(source, self.width)[self.starts]


def _lengths(items: list[Any]) -> np.ndarray:
    """len() of each item (texts, series, blocks) as an array."""
    return np.fromiter(map(len, items), np.int64, len(items))


def _positions(lengths: np.ndarray) -> np.ndarray:
    """Position 0..n-1 of every entry of blocks of the given lengths, laid end to end."""
    return np.arange(int(lengths.sum())) - np.repeat(np.cumsum(lengths) - lengths, lengths)


class _Writer:
    """Collects long-form rows and writes them in vectorised blocks.

    Rows come by lead (the cells before the period: scenario, scenario id, policy), each with
    its series (variable, values over periods 0..n-1). Each row is lead + period + variable +
    value + unit, every text cell quoted. The rows of a flush are
    laid out at once: a row's length is the sum of its cells' lengths, their cumulative sum
    places every cell, and the cells are written into one buffer, the numbers first
    (_Numbers.put), then each lead, period, variable and unit text into all its rows at once
    (_put_texts).
    """

    def __init__(self, unit=unit_of):
        self.unit = unit
        self.variables: dict[str, int] = {}
        self.names: list[bytes] = []
        self.units: list[bytes] = []
        self.periods: list[bytes] = []
        self._clear()

    def _clear(self) -> None:
        self.leads: list[bytes] = []
        self.lead_of: list[int] = []
        self.var_of: list[int] = []
        self.values: list[np.ndarray] = []
        self.rows = 0

    def add(self, text: str, series: Iterable[tuple[str, Any]]) -> None:
        """Rows of one lead: (variable, values) pairs, values over periods 0..n-1."""
        pairs = list(series)
        if not pairs:
            return
        lead = len(self.leads)
        self.leads.append(text.encode())
        variables, values = zip(*pairs, strict=True)
        for variable in variables:
            if variable not in self.variables:
                self.variables[variable] = len(self.names)
                self.names.append(_quoted(variable).encode() + b",")
                self.units.append(b"," + _quoted(self.unit(variable)).encode() + b"\n")
        self.lead_of += [lead] * len(values)
        self.var_of += [self.variables[v] for v in variables]
        self.values += values
        self.rows += sum(map(len, values))

    def flush(self) -> bytes:
        if not self.values:
            return b""
        lengths = _lengths(self.values)
        self.periods += [b"%d," % t for t in range(len(self.periods), int(lengths.max()))]
        lead = np.repeat(np.array(self.lead_of), lengths)
        var = np.repeat(np.array(self.var_of), lengths)
        period = _positions(lengths)
        integer = np.isin(var, [i for n, i in self.variables.items() if n in _INTEGERS])
        numbers = _Numbers(np.concatenate(self.values, dtype=np.float64), integer)
        lead_length = _lengths(self.leads)[lead]
        period_length = _lengths(self.periods)[period]
        name_length = _lengths(self.names)[var]
        row = lead_length + period_length + name_length + numbers.lengths + _lengths(self.units)[var]
        ends = np.cumsum(row)
        start, total = ends - row, int(ends[-1])
        out = np.empty(total + numbers.width, np.uint8)
        value_at = start + lead_length + period_length + name_length
        numbers.put(out, value_at)
        _put_texts(out, start, lead, self.leads)
        _put_texts(out, start + lead_length, period, self.periods)
        _put_texts(out, value_at - name_length, var, self.names)
        _put_texts(out, value_at + numbers.lengths, var, self.units)
        self._clear()
        return out[:total].tobytes()


def _header(names: Iterable[str]) -> bytes:
    return (",".join(_quoted(n) for n in names) + "\n").encode()


def _long_blocks(writer: _Writer, body: dict[str, Any], lead: str) -> None:
    """The rows of one answer: the price index first (empty policy cell), then each path."""
    if "price_index" in body:
        writer.add(lead + '"",', [("price_index", body["price_index"])])
    for path in body["paths"]:
        writer.add(lead + _quoted(path["name"]) + ",", _series(path))


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
    integer = np.isin(names, list(_INTEGERS))
    leads: list[bytes] = []
    blocks: list[np.ndarray] = []
    period_texts: list[bytes] = []
    rows = 0

    def flush() -> bytes:
        """The rows of the blocks so far: lead + 'period,' + numbers, each followed by ','
        (the last by a line break), laid out as _Writer.flush lays out long-form rows."""
        nonlocal leads, blocks, rows
        if not blocks:
            return b""
        lengths = _lengths(blocks)
        period_texts.extend(b"%d," % t for t in range(len(period_texts), int(lengths.max())))
        values = np.concatenate(blocks)
        n, width = values.shape
        numbers = _Numbers(values, np.broadcast_to(integer, values.shape).ravel())
        lead, period = np.repeat(np.arange(len(leads)), lengths), _positions(lengths)
        lead_length, period_length = _lengths(leads)[lead], _lengths(period_texts)[period]
        cells = numbers.lengths.reshape(n, width) + 1  # each number and its separator
        row = lead_length + period_length + cells.sum(axis=1)
        ends = np.cumsum(row)
        start, total = ends - row, int(ends[-1])
        separators = (start + lead_length + period_length)[:, None] + np.cumsum(cells, axis=1) - 1
        out = np.empty(total + numbers.width, np.uint8)
        numbers.put(out, (separators - cells + 1).ravel())
        out[separators[:, :-1]] = ord(",")
        out[separators[:, -1]] = ord("\n")
        _put_texts(out, start, lead, leads)
        _put_texts(out, start + lead_length, period, period_texts)
        leads, blocks, rows = [], [], 0
        return out[:total].tobytes()

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
            rows += periods
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


def bands_csv(body: dict[str, Any], layout: str = "long") -> str:
    """CSV text from a /v1/bands body: long (policy,period,variable,percentile,value,unit) or
    wide (one row per policy and period, one column per variable and percentile)."""
    if layout == "wide":
        return _bands_wide(body)
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


def _bands_wide(body: dict[str, Any]) -> str:
    """Wide form of a /v1/bands body: `policy,period`, then a column `variable pQ [unit]` per
    banded series and percentile of any policy, in the answer's order (empty where a policy
    has no such band: the coverage series belong to partial ceilings only)."""
    columns: dict[tuple[str, str], None] = {}
    for band in body["bands"]:
        columns.update(((variable, q), None) for variable, by_q in band["series"].items() for q in by_q)
    header = ["policy", "period"] + [f"{variable} p{q} [{wide_unit(variable)}]" for variable, q in columns]

    def rows():
        for band in body["bands"]:
            name = neutralise(band["name"])
            series = band["series"]
            for t, period in enumerate(body["periods"]):
                cells = [series[v][q][t] if v in series and q in series[v] else "" for v, q in columns]
                yield (name, period, *cells)

    return _text(rows(), header)
