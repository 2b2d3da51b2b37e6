"""Answers as an Excel workbook (.xlsx, written with openpyxl): what an analyst opens in a
spreadsheet, with the inputs and the totals beside the paths.

Sheets of a /v1/paths answer (`paths_workbook`):

* About: scenario id, model version, the money basis, how to read the sheets;
* Inputs: every field of the normalised request (`request` of the answer), one row each, by
  its JSON Pointer and in plain words;
* Summary: one row per policy, a column per total the answer carries (nested totals as
  `object.member`), units in the header;
* one sheet per policy: a row per period, a column per series the path carries (the price
  index and the supply elasticity first), units in the header, numbers as numbers;
* Who gains and loses: each group per policy, summed over periods 1..T, both not discounted
  (the summary's `distribution_totals`) and discounted with the request's rate (the same
  numbers as the who-gains chart: service.charts.gains_and_losses);
* Reduced form: per shifter, the percent change of rent and of homes let for a 1 % rise in it,
  first period and long run (the answer's `reduced_form`);
* Cautions.

A /v1/bands answer (`bands_workbook`) adds the uncertain inputs and the percentiles of each
summary figure, and its policy sheets put each series' percentiles beside the central path.
A batch (`batch_workbook`) puts every scenario on the same sheets, a `scenario` column first.
A summary answer (`"output": "summary"`, no series) gives the same workbook without the sheets
of paths.

Columns come from what the answer carries (service.labels names them), so series that a newer
engine adds appear without a change here. Text the caller chose (policy names, shifter names,
a title) could look like a formula (`=HYPERLINK(...)`): every text cell is written as a string
cell (an inline string: cell type `inlineStr` of ECMA-376 Part 1), which a spreadsheet
shows as it is and never evaluates, so the text keeps its exact value (no leading apostrophe, the
CSV's remedy, where every cell is text until a spreadsheet guesses).

The bytes are a pure function of the answer, so that identical requests give identical bytes
(the strong ETag promises it, RFC 9110 section 8.8.3): the document properties' created and
modified dates and every ZIP entry's date-time are one constant, `FIXED_TIME`, never the clock.
"""

from __future__ import annotations

import datetime
import io
import os
import re
import shutil
import zipfile
from collections.abc import Iterable
from typing import Any

from . import labels, limits
from .problems import is_problem

__all__ = ["FIXED_TIME", "MAX_ROWS", "WORKBOOK", "bands_workbook", "batch_workbook", "paths_workbook"]

WORKBOOK = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"
#: Rows of one worksheet in the file format (Excel's limit), the header included.
MAX_ROWS = 1_048_576
_PATH_SKIP = ("name", "kind")
_BAD_SHEET = re.compile(r"[\[\]:*?/\\']")
#: The one date-time a workbook carries (document properties and ZIP entries): the earliest a
#: ZIP entry can record (its MS-DOS date field starts at 1980), so nothing comes from the clock.
FIXED_TIME = datetime.datetime(1980, 1, 1)


def _cell(value: Any) -> Any:
    if isinstance(value, bool):
        return int(value)
    if isinstance(value, (int, float)) or value is None:
        return value
    if isinstance(value, (list, tuple)):
        return ", ".join(str(v) for v in value)
    return str(value)


def _text_cell(ws: Any, value: str, **style: Any) -> Any:
    """A string cell holding exactly `value`. openpyxl guesses a type from the value (a leading
    `=` makes a formula, `#N/A` an error); setting the type after the value keeps it text."""
    from openpyxl.cell import WriteOnlyCell

    cell = WriteOnlyCell(ws, value=value)
    cell.data_type = "s"
    for name, v in style.items():
        setattr(cell, name, v)
    return cell


class _FixedTimeZip(zipfile.ZipFile):
    """A ZIP archive whose entries all carry FIXED_TIME (and the same permissions), whether openpyxl
    adds them from bytes (writestr) or from its temporary sheet files (write)."""

    def _entry(self, name: str) -> zipfile.ZipInfo:
        entry = zipfile.ZipInfo(name, date_time=FIXED_TIME.timetuple()[:6])
        entry.compress_type = self.compression
        entry.external_attr = 0o600 << 16
        return entry

    def writestr(self, zinfo_or_arcname, data, compress_type=None, compresslevel=None):
        if not isinstance(zinfo_or_arcname, zipfile.ZipInfo):
            zinfo_or_arcname = self._entry(zinfo_or_arcname)
        super().writestr(zinfo_or_arcname, data, compress_type, compresslevel)

    def write(self, filename, arcname=None, compress_type=None, compresslevel=None):
        entry = self._entry(arcname or os.path.basename(filename))
        if compress_type is not None:
            entry.compress_type = compress_type
        entry.file_size = os.path.getsize(filename)
        with open(filename, "rb") as src, self.open(entry, "w") as dst:
            shutil.copyfileobj(src, dst, 1 << 20)


def _too_large(why: str) -> None:
    from .problems import ProblemError, problem

    raise ProblemError(
        problem(
            422,
            "Too large for a workbook",
            f"{why}; ask for CSV (Accept: text/csv) or fewer scenarios, policies or periods.",
            "too-large-for-a-workbook",
        )
    )


class _Book:
    """An openpyxl workbook (write-only) with bold, frozen headers and unique sheet names. Sheets
    are checked against the limits as they are added and written only by bytes(), so a workbook
    that turns out too large leaves nothing half-written behind."""

    def __init__(self):
        self.sheets: list[tuple[str, list[str], list[list[Any]], list[int]]] = []
        self.names: set[str] = set()
        self.cells = 0

    def sheet(self, title: str, header: list[str], rows: Iterable[Iterable[Any]], widths=None) -> None:
        rows = [[_cell(v) for v in row] for row in rows]
        if len(rows) + 1 > MAX_ROWS:
            _too_large(
                f"Sheet '{title}' would need {len(rows) + 1:,} rows, more than the file format's {MAX_ROWS:,}"
            )
        self.cells += len(header) + sum(len(row) for row in rows)
        if self.cells > limits.MAX_WORKBOOK_CELLS:
            _too_large(f"The workbook would hold more than {limits.MAX_WORKBOOK_CELLS:,} cells")
        name = _BAD_SHEET.sub(" ", title).strip()[:31] or "Sheet"
        base, n = name, 2
        while name.lower() in self.names:
            suffix = f" ({n})"
            name, n = base[: 31 - len(suffix)] + suffix, n + 1
        self.names.add(name.lower())
        self.sheets.append((name, [str(h) for h in header], rows, list(widths or [])))

    def bytes(self) -> bytes:
        from openpyxl import Workbook
        from openpyxl.styles import Alignment, Font
        from openpyxl.writer.excel import ExcelWriter

        book = Workbook(write_only=True)
        book.properties.created = book.properties.modified = FIXED_TIME
        bold, top = Font(bold=True), Alignment(wrap_text=True, vertical="top")
        for name, header, rows, widths in self.sheets:
            ws = book.create_sheet(name)
            ws.freeze_panes = "B2"
            for i, width in enumerate(widths, start=1):
                ws.column_dimensions[_column(i)].width = width
            ws.append([_text_cell(ws, h, font=bold, alignment=top) for h in header])
            for row in rows:
                ws.append([_text_cell(ws, v) if isinstance(v, str) else v for v in row])
        out = io.BytesIO()
        # Workbook.save would stamp the modified date with the clock; its writer, given an
        # archive that stamps entries with FIXED_TIME, writes the same bytes for the same answer.
        ExcelWriter(book, _FixedTimeZip(out, "w", zipfile.ZIP_DEFLATED, allowZip64=True)).save()
        return out.getvalue()


def _column(i: int) -> str:
    from openpyxl.utils import get_column_letter

    return get_column_letter(i)


def _inputs_rows(request: dict, units: dict | None, lead: tuple = ()) -> Iterable[tuple]:
    for pointer, words, value in labels.input_rows(request, units):
        yield (*lead, pointer, words, value)


def _keys(objects: Iterable[dict], skip: tuple[str, ...]) -> list[str]:
    """Every flattened key of the objects, in first-seen order."""
    keys: dict[str, None] = {}
    for o in objects:
        for k in labels.flatten(o, skip):
            keys.setdefault(k, None)
    return list(keys)


def _series_keys(path: dict) -> list[str]:
    return [k for k, v in labels.flatten(path, _PATH_SKIP).items() if isinstance(v, list)]


def _about(book: _Book, rows: list[tuple[str, Any]]) -> None:
    basis = (
        f"Rents, prices and money are in {labels.REAL} unless a column says {labels.NOMINAL}; "
        "per-period money is per model period (rent x homes x payments per period)."
    )
    book.sheet(
        "About",
        ["Item", "Value"],
        [
            *rows,
            ("Money", basis),
            (
                "Made by",
                "shockpath: model estimates from the elasticities given; they inform, and do not "
                "replace, local market studies and qualified analysts.",
            ),
        ],
        widths=[24, 110],
    )


def _horizon(body: dict) -> int:
    """T of an answer: from its periods, or (a summary answer has none) from its request."""
    return len(body["periods"]) - 1 if "periods" in body else int(body["request"]["horizon"])


def _who_gains_rows(body: dict, lead: tuple = ()) -> Iterable[tuple]:
    """Per policy and group: the total over the horizon and the engine's discounted total (from
    the summary, so a summary answer has them too)."""
    for summary in body["summary"]:
        totals = summary.get("distribution_totals")
        if not totals:
            yield (*lead, summary["name"], "not reported under random rationing", None, None)
            continue
        discounted = summary.get("distribution_totals_discounted") or {}
        for group, total in totals.items():
            yield (
                *lead,
                summary["name"],
                labels.label(f"distribution.{group}"),
                total,
                discounted.get(group),
            )


def _who_gains_header(body: dict, units: dict | None, lead: list[str]) -> list[str]:
    words = {**labels.DEFAULT_UNITS, **(units or {})}
    horizon = _horizon(body)
    rate = ((body.get("request") or {}).get("welfare") or {}).get("discount_rate", 0.0)
    rate_text = (
        f"at {rate * 100:.3g} % per {words['period']}"
        if isinstance(rate, (int, float))
        else "at the request's steps"
    )
    money = f"{words['currency']}, {labels.REAL}"
    return [
        *lead,
        "Policy",
        "Group",
        f"Gain (+) or loss (-), summed over periods 1 to {horizon}, not discounted [{money}]",
        f"Gain (+) or loss (-), summed over periods 1 to {horizon}, discounted to period 0 "
        f"{rate_text} [{money}]",
    ]


def _summary_header(keys: list[str], units: dict | None, lead: list[str]) -> list[str]:
    return [*lead, "Policy", "Kind", *(labels.describe(k, units, totals=True) for k in keys)]


def _summary_rows(summary: list[dict], keys: list[str], lead: tuple = ()) -> Iterable[tuple]:
    for s in summary:
        flat = labels.flatten(s, _PATH_SKIP)
        yield (*lead, s["name"], s["kind"], *(flat.get(k) for k in keys))


def _path_table(body: dict, path: dict) -> tuple[list[str], list[list[Any]]]:
    """Columns (name, values) of one policy's sheet: the market's series first, then the path's."""
    columns: list[tuple[str, list]] = [("period", body["periods"])]
    for name in ("price_index", "supply_elasticity"):
        if name in body:
            columns.append((name, body[name]))
    flat = labels.flatten(path, _PATH_SKIP)
    columns += [(k, flat[k]) for k in _series_keys(path)]
    return [c for c, _ in columns], [list(v) for _, v in columns]


def _header(names: list[str], units: dict | None) -> list[str]:
    words = {**labels.DEFAULT_UNITS, **(units or {})}
    return [f"Period [{words['period']}]" if n == "period" else labels.describe(n, units) for n in names]


def _binding(name: str, values: list) -> list:
    return [int(v) for v in values] if name == "binding" else values


def _reduced_form(book: _Book, rows: Iterable[tuple], lead: list[str]) -> None:
    """The free market's answer to each shifter (the answer's reduced_form): percent change of
    rent and of homes let per 1 % rise in the shifter, first period and long run."""
    book.sheet(
        "Reduced form",
        [
            *lead,
            "Shifter",
            "Rent, first period [% per 1 %]",
            "Rent, long run [% per 1 %]",
            "Homes let, first period [% per 1 %]",
            "Homes let, long run [% per 1 %]",
        ],
        rows,
        widths=[*([12] * len(lead)), 28, 22, 22, 22, 22],
    )


def _reduced_form_rows(body: dict, lead: tuple = ()) -> Iterable[tuple]:
    for name, rf in (body.get("reduced_form") or {}).items():
        short, long = rf["short_run"], rf["long_run"]
        yield (*lead, name, short["price"], long["price"], short["quantity"], long["quantity"])


def _cautions(book: _Book, cautions: Iterable[tuple], lead: list[str]) -> None:
    book.sheet("Cautions", [*lead, "Caution"], cautions, widths=[*([12] * len(lead)), 140])


def paths_workbook(body: dict[str, Any], units: dict | None = None) -> bytes:
    """The .xlsx of a /v1/paths answer (see the module docstring)."""
    book = _Book()
    _about(
        book,
        [
            ("Scenario id", body["scenario_id"]),
            ("Model version", body["model_version"]),
            ("Periods", f"0 (today's market) to {_horizon(body)}"),
        ],
    )
    book.sheet(
        "Inputs",
        ["Field (JSON Pointer)", "In plain words", "Value"],
        _inputs_rows(body.get("request") or {}, units),
        widths=[36, 70, 24],
    )
    keys = _keys(body["summary"], _PATH_SKIP)
    book.sheet(
        "Summary",
        _summary_header(keys, units, []),
        _summary_rows(body["summary"], keys),
        widths=[28, 14, *([22] * len(keys))],
    )
    for i, path in enumerate(body.get("paths", ()), start=1):  # none in a summary answer
        names, columns = _path_table(body, path)
        columns = [_binding(n, c) for n, c in zip(names, columns, strict=True)]
        book.sheet(
            f"{i} {path['name']}",
            _header(names, units),
            zip(*columns, strict=True),
            widths=[10, *([20] * (len(names) - 1))],
        )
    book.sheet(
        "Who gains and loses",
        _who_gains_header(body, units, []),
        _who_gains_rows(body),
        widths=[28, 36, 30, 30],
    )
    _reduced_form(book, _reduced_form_rows(body), [])
    _cautions(book, ((c,) for c in body["cautions"]), [])
    return book.bytes()


def bands_workbook(body: dict[str, Any], units: dict | None = None) -> bytes:
    """The .xlsx of a /v1/bands answer: the central answer's sheets with the percentiles."""
    central = {**body["central"], "request": body.get("request")}
    keys_q = list(body["percentiles"])
    book = _Book()
    _about(
        book,
        [
            ("Scenario id", body["scenario_id"]),
            ("Model version", body["model_version"]),
            ("Draws", body["draws"]),
            ("Seed", body["seed"]),
            ("Percentiles", ", ".join(f"{q:g}" for q in keys_q)),
            ("Central path", "every uncertain input at its central value (mean, mode, or midpoint)"),
        ],
    )
    book.sheet(
        "Inputs",
        ["Field (JSON Pointer)", "In plain words", "Value"],
        _inputs_rows(body.get("request") or {}, units),
        widths=[36, 70, 24],
    )
    uncertain_keys = _keys(body["uncertain_inputs"], ())
    book.sheet(
        "Uncertain inputs",
        [k.replace("_", " ") for k in uncertain_keys],
        ([u.get(k) for k in uncertain_keys] for u in body["uncertain_inputs"]),
        widths=[36, 14],
    )
    keys = _keys(central["summary"], _PATH_SKIP)
    book.sheet(
        "Summary (central)",
        _summary_header(keys, units, []),
        _summary_rows(central["summary"], keys),
        widths=[28, 14, *([22] * len(keys))],
    )

    def percentile_rows():
        for band in body["bands"]:
            for figure, by_q in band["summary"].items():
                yield (
                    band["name"],
                    labels.describe(figure, units, totals=True),
                    *(by_q.get(f"{q:g}") for q in keys_q),
                )
            yield (
                band["name"],
                "Share of draws in which the rule bites",
                band["binding_share"],
                *[None] * (len(keys_q) - 1),
            )
            yield (
                band["name"],
                "Draws left out (infeasible)",
                band["infeasible_draws"],
                *[None] * (len(keys_q) - 1),
            )

    book.sheet(
        "Summary percentiles",
        ["Policy", "Figure", *(f"{q:g}th percentile" for q in keys_q)],
        percentile_rows(),
        widths=[28, 60, *([18] * len(keys_q))],
    )
    for i, (band, path) in enumerate(zip(body["bands"], central["paths"], strict=True), start=1):
        names, columns = _path_table(central, path)
        columns = [_binding(n, c) for n, c in zip(names, columns, strict=True)]
        header = _header(names, units)
        header[1:] = [f"{h} - central" for h in header[1:]]
        for series, by_q in band["series"].items():
            for q in keys_q:
                header.append(f"{labels.describe(series, units)} - {q:g}th percentile")
                columns.append(by_q[f"{q:g}"])
        book.sheet(
            f"{i} {band['name']}",
            header,
            zip(*columns, strict=True),
            widths=[10, *([20] * (len(header) - 1))],
        )
    book.sheet(
        "Who gains and loses",
        _who_gains_header(central, units, []),
        _who_gains_rows(central),
        widths=[28, 36, 30, 30],
    )
    _reduced_form(book, _reduced_form_rows(central), [])
    _cautions(book, ((c,) for c in body["cautions"]), [])
    return book.bytes()


def batch_workbook(results: list[dict[str, Any]], units: dict | None = None) -> bytes:
    """The .xlsx of a batch: every scenario on the same sheets, a `scenario` column first (a
    scenario without an answer: one row on Scenarios with its problem)."""
    book = _Book()
    answered = [(i, r) for i, r in enumerate(results) if not is_problem(r)]
    _about(
        book,
        [
            ("Scenarios", len(results)),
            ("Answered", len(answered)),
            ("Model version", answered[0][1]["model_version"] if answered else ""),
        ],
    )
    book.sheet(
        "Scenarios",
        ["Scenario", "Scenario id", "Problem"],
        (
            (i, r.get("scenario_id", ""), "" if not is_problem(r) else r.get("detail", ""))
            for i, r in enumerate(results)
        ),
        widths=[10, 70, 80],
    )
    book.sheet(
        "Inputs",
        ["Scenario", "Field (JSON Pointer)", "In plain words", "Value"],
        (row for i, r in answered for row in _inputs_rows(r.get("request") or {}, units, (i,))),
        widths=[10, 36, 70, 24],
    )
    keys = _keys((s for _, r in answered for s in r["summary"]), _PATH_SKIP)
    book.sheet(
        "Summary",
        _summary_header(keys, units, ["Scenario"]),
        (row for i, r in answered for row in _summary_rows(r["summary"], keys, (i,))),
        widths=[10, 28, 14, *([22] * len(keys))],
    )
    names: dict[str, None] = {"period": None}
    for _, r in answered:
        for p in r.get("paths", ()):  # none in summary answers
            for n in _path_table(r, p)[0]:
                names.setdefault(n, None)
    ordered = list(names)

    def path_rows():
        for i, r in answered:
            for p in r.get("paths", ()):
                own, columns = _path_table(r, p)
                where = {n: _binding(n, c) for n, c in zip(own, columns, strict=True)}
                for t in range(len(r["periods"])):
                    yield (i, p["name"], *((where[n][t] if n in where else None) for n in ordered))

    if any("paths" in r for _, r in answered):
        book.sheet(
            "Paths",
            ["Scenario", "Policy", *_header(ordered, units)],
            path_rows(),
            widths=[10, 28, 10, *([20] * (len(ordered) - 1))],
        )
    if answered:
        book.sheet(
            "Who gains and loses",
            _who_gains_header(answered[0][1], units, ["Scenario"]),
            (row for i, r in answered for row in _who_gains_rows(r, (i,))),
            widths=[10, 28, 36, 30, 30],
        )
    _reduced_form(book, (row for i, r in answered for row in _reduced_form_rows(r, (i,))), ["Scenario"])
    _cautions(book, ((i, c) for i, r in answered for c in r["cautions"]), ["Scenario"])
    return book.bytes()
