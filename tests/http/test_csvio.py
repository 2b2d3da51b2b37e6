"""CSV cells a spreadsheet would run as formulas are neutralised (OWASP, "CSV Injection");
numbers stay numbers; downloads carry a filename and every value its unit."""

from __future__ import annotations

import copy
import csv
import io
import math
from decimal import Decimal

import numpy as np
import orjson
import pytest
from hypothesis import given
from hypothesis import strategies as st

from service import simulate_many
from service.http.csvio import (
    BLOCK_ROWS,
    LAYOUTS,
    UNITS,
    batch_csv,
    neutralise,
    paths_csv,
    unit_of,
    wide_unit,
)
from service.problems import is_problem

from ..engine.additions import GROUPS

# OWASP, "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection): cells beginning with
# =, +, -, @, tab or carriage return are read as formulas by Excel, LibreOffice and Sheets.
INJECTIONS = [
    '=HYPERLINK("http://x")',
    "+1+1",
    "-2+3",
    "@SUM(A1:A9)",
    "\t=1+1",
    "\r=1+1",
    '=cmd|"/C calc"!A0',
]


@pytest.mark.parametrize("name", INJECTIONS)
def test_a_policy_name_that_starts_a_formula_reaches_the_csv_as_text(client, contract_request, name):
    contract_request["policies"][1]["name"] = name
    response = client.post("/v1/paths", json=contract_request, headers={"Accept": "text/csv"})
    if not name.isprintable():  # a tab or carriage return: refused before any CSV is written
        assert response.status_code == 422
        assert [e["pointer"] for e in response.get_json()["errors"]] == ["/policies/1/name"]
        assert neutralise(name).startswith("'")  # text from elsewhere is still neutralised
        return
    assert response.status_code == 200
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True), newline="")))
    names = {r["policy"] for r in rows}
    assert "'" + name in names and name not in names
    assert all(not r["policy"].startswith(("=", "+", "-", "@", "\t", "\r")) for r in rows)


def test_ordinary_names_and_negative_numbers_are_untouched(client, contract_request):
    response = client.post("/v1/paths", json=contract_request, headers={"Accept": "text/csv"})
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True))))
    assert {r["policy"] for r in rows} == {p["name"] for p in contract_request["policies"]}
    changes = [r["value"] for r in rows if r["variable"] == "producer_surplus_change"]
    negative = [v for v in changes if v.startswith("-")]
    assert negative and all(float(v) < 0 for v in negative)  # numbers are written as numbers


def test_neutralise_leaves_safe_text_alone():
    assert neutralise("3% cap") == "3% cap"
    assert neutralise("rent freeze (=base)") == "rent freeze (=base)"
    assert neutralise("-5% cap") == "'-5% cap"


def test_the_csv_is_a_named_download_with_a_unit_on_every_row(client, contract_request):
    response = client.post("/v1/paths", json=contract_request, headers={"Accept": "text/csv"})
    sid = response.headers["ETag"].strip('"').removesuffix(".csv")
    assert response.headers["Content-Disposition"] == f'attachment; filename="paths-{sid[:12]}.csv"'
    rows = list(csv.DictReader(io.StringIO(response.get_data(as_text=True))))
    assert all(r["unit"] == UNITS[r["variable"]] for r in rows)
    assert {r["unit"] for r in rows if r["variable"] == "quantity"} == {"units per price interval"}


# --- what MODEL.md 12-15 add, in every CSV ----------------------------------------------------


def _rows(response) -> list[dict]:
    assert response.status_code == 200
    return list(csv.DictReader(io.StringIO(response.get_data(as_text=True), newline="")))


@pytest.fixture
def additions(contract_request):
    request = copy.deepcopy(contract_request)
    request["market"]["inflation"] = 0.025
    request["adjustment"] = {"schedule": "stock", "half_life": 2, "depreciation": 0.03}
    ceiling = next(p for p in request["policies"] if p["kind"] == "price_ceiling")
    ceiling["coverage"] = 0.4
    return request


def test_the_groups_in_the_csv_add_up_to_the_json_totals(client, additions):
    """Round trip: each group's rows summed over the periods are the summary's
    distribution_totals (sums in period order, as the engine sums them)."""
    body = client.post("/v1/paths", json=additions).get_json()
    rows = _rows(client.post("/v1/paths", json=additions, headers={"Accept": "text/csv"}))
    for path, summary in zip(body["paths"], body["summary"], strict=True):
        for group in GROUPS:
            values = [
                float(r["value"]) for r in rows if r["policy"] == path["name"] and r["variable"] == group
            ]
            assert values == path["distribution"][group]
            assert {r["unit"] for r in rows if r["variable"] == group} == {
                "today's money (period 0) per model period"
            }
            assert sum(values) == pytest.approx(summary["distribution_totals"][group], rel=1e-12, abs=1e-6)


def test_the_batch_csv_carries_the_additions_of_each_scenario(client, additions, contract_request):
    body = {"scenarios": [additions, contract_request]}  # the second without any addition
    results = client.post("/v1/paths/batch", json=body).get_json()["results"]
    rows = _rows(client.post("/v1/paths/batch", json=body, headers={"Accept": "text/csv"}))
    assert "price_index" in results[0] and "price_index" not in results[1]
    assert any("covered_price" in p for p in results[0]["paths"])
    assert not any("homes_below_free_path" in p or "covered_price" in p for p in results[1]["paths"])
    for i, result in enumerate(results):
        mine = [r for r in rows if r["scenario"] == str(i)]
        assert {r["scenario_id"] for r in mine} == {result["scenario_id"]}
        index = [float(r["value"]) for r in mine if r["variable"] == "price_index"]
        assert index == result.get("price_index", [])
        for path in result["paths"]:
            got = {
                (r["variable"], int(r["period"])): float(r["value"])
                for r in mine
                if r["policy"] == path["name"]
            }
            for name in (
                "nominal_consumer_price",
                "homes_below_free_path",
                "rent_above_free_path",
                "covered_price",
            ):
                if name in path:
                    assert [got[(name, t)] for t in result["periods"]] == path[name]
                else:
                    assert not any(v == name for v, _ in got)
            for group in GROUPS:
                assert [got[(group, t)] for t in result["periods"]] == path["distribution"][group]


def test_the_bands_csv_carries_every_banded_series_with_its_unit(client):
    from service.examples import example_request

    request = example_request("quillbrook-uncertain-elasticities")
    request["adjustment"] = {"schedule": "stock", "half_life": 3, "depreciation": 0.02}
    request["market"]["inflation"] = {"distribution": "uniform", "low": 0.0, "high": 0.04}
    request["policies"][1]["coverage"] = 0.5
    request["policies"][1]["name"] = "=cap on half"
    request.update(draws=300)
    body = client.post("/v1/bands", json=request).get_json()
    rows = _rows(client.post("/v1/bands", json=request, headers={"Accept": "text/csv"}))
    got = {(r["policy"], r["variable"], r["percentile"], int(r["period"])): float(r["value"]) for r in rows}
    count = 0
    for band in body["bands"]:
        name = neutralise(band["name"])
        for variable, by_q in band["series"].items():
            for q, values in by_q.items():
                assert [got[(name, variable, q, t)] for t in body["periods"]] == values
                count += len(values)
    assert count == len(rows)
    assert "'=cap on half" in {r["policy"] for r in rows}
    units = {r["variable"]: r["unit"] for r in rows}
    assert units["homes_below_free_path"] == "units per price interval"
    assert (
        units["rent_above_free_path"]
        == units["covered_price"]
        == "today's money (period 0) per unit per price interval"
    )
    assert units["nominal_consumer_price"] == "money of the day per unit per price interval"
    assert all(units[v] == UNITS[v] for v in units)


def test_the_wide_bands_csv_has_a_row_per_policy_and_period_and_a_column_per_band(client):
    """`?layout=wide` on /v1/bands (and its CSV twin): one row per policy and period, one column
    `variable pQ [unit]` per banded series and percentile of any policy (empty where a policy
    has no such band: the coverage series are a partial ceiling's only), the JSON's numbers;
    its ETag differs from the long form's, and an unknown layout is a 400 that names it."""
    from service.examples import example_request

    request = example_request("quillbrook-uncertain-elasticities")
    request["policies"][1]["coverage"] = 0.5
    request.update(draws=200, percentiles=[10, 50, 90])
    body = client.post("/v1/bands", json=request).get_json()
    wide = client.post("/v1/bands?layout=wide", json=request, headers={"Accept": "text/csv"})
    twin = client.post("/v1/bands/csv?layout=wide", json=request)
    assert wide.status_code == twin.status_code == 200
    assert wide.get_data() == twin.get_data()
    long = client.post("/v1/bands", json=request, headers={"Accept": "text/csv"})
    assert wide.headers["ETag"] != long.headers["ETag"]
    rows = _rows(wide)
    assert len(rows) == len(body["bands"]) * len(body["periods"])
    header = list(rows[0])
    assert header[:2] == ["policy", "period"]
    assert f"consumer_price p50 [{unit_of('consumer_price')}]" in header
    checked = 0
    for k, band in enumerate(body["bands"]):
        for t, period in enumerate(body["periods"]):
            row = rows[k * len(body["periods"]) + t]
            assert row["policy"] == neutralise(band["name"]) and int(row["period"]) == period
            for column in header[2:]:
                variable, q = column.split(" [")[0].split(" p")
                if variable in band["series"]:
                    assert float(row[column]) == band["series"][variable][q][t]
                    checked += 1
                else:
                    assert row[column] == ""
    assert checked == sum(
        len(by_q) * len(body["periods"]) for b in body["bands"] for by_q in b["series"].values()
    )
    assert any(row[h] == "" for row in rows for h in header if h.startswith("covered_price"))
    refused = client.post("/v1/bands?layout=tall", json=request, headers={"Accept": "text/csv"})
    assert refused.status_code == 400
    assert "layout must be one of" in refused.get_json()["detail"]


def test_every_series_of_the_json_answer_is_in_the_csv_with_the_same_numbers(client, additions):
    request = additions
    body = client.post("/v1/paths", json=request).get_json()
    rows = _rows(client.post("/v1/paths", json=request, headers={"Accept": "text/csv"}))
    got = {(r["policy"], int(r["period"]), r["variable"]): float(r["value"]) for r in rows}
    for t, value in zip(body["periods"], body["price_index"], strict=True):
        assert got[("", t, "price_index")] == value
    for path in body["paths"]:
        series = {
            k: v
            for k, v in path.items()
            if k not in ("name", "kind", "binding", "distribution", "vs_free_path")
        }
        series.update(path["distribution"])
        # Nested objects other than the distribution are flattened as object.member.
        series.update({f"vs_free_path.{k}": v for k, v in path.get("vs_free_path", {}).items()})
        for variable, values in series.items():
            for t, value in enumerate(values):
                assert got[(path["name"], t, variable)] == value, (path["name"], variable, t)


def test_the_groups_in_the_csv_sum_to_minus_the_deadweight_loss(client, additions):
    # Derived identity (MODEL.md 15): all groups together lose the deadweight loss.
    request = additions
    ceiling = next(p["name"] for p in request["policies"] if p["kind"] == "price_ceiling")
    rows = _rows(client.post("/v1/paths", json=request, headers={"Accept": "text/csv"}))
    groups = [r for r in rows if r["policy"] == ceiling and r["unit"] == "money per model period"]
    by_period: dict[int, dict[str, float]] = {}
    for r in groups:
        by_period.setdefault(int(r["period"]), {})[r["variable"]] = float(r["value"])
    for values in by_period.values():
        total = sum(values[n] for n in GROUPS)
        assert total == pytest.approx(-values["deadweight_loss"], rel=1e-9, abs=1e-6)


def test_without_inflation_there_is_no_price_index_row(client, contract_request):
    rows = _rows(client.post("/v1/paths", json=contract_request, headers={"Accept": "text/csv"}))
    assert not any(r["variable"] in ("price_index", "nominal_consumer_price") for r in rows)
    assert all(r["policy"] for r in rows)


# --- the vectorised writer writes what a row-by-row writer writes ------------------------------
#
# The writer lays rows out by arithmetic and copies cells in bulk (service/http/csvio.py,
# "Speed"). Its bytes are checked here against the format written out plainly, one row and one
# value at a time: text cells quoted and neutralised, numbers as orjson writes one float (the
# shortest text that reads back as the same float), binding as 1 or 0, a missing value empty.


def _text(text: str) -> str:
    return '"' + neutralise(text).replace("\x00", "").replace('"', '""') + '"'


def _number(value, variable: str) -> str:
    value = float(value)
    if math.isnan(value):
        return ""
    return str(int(value)) if variable == "binding" else orjson.dumps(value).decode()


def _series_of(path: dict):
    """(variable, values) of a path as the module docstring lists them."""
    for key, value in path.items():
        if isinstance(value, dict):
            for member, values in value.items():
                yield (member if key == "distribution" else f"{key}.{member}"), values
        elif isinstance(value, list | np.ndarray) and not isinstance(value, str):
            if len(value) == 0 or not isinstance(value[0], str):
                yield key, value


def _groups(body: dict) -> list[tuple[str, list]]:
    """(policy cell, series) in the order rows are written: the price index, then each path."""
    groups = [('""', [("price_index", body["price_index"])])] if "price_index" in body else []
    return groups + [(_text(p["name"]), list(_series_of(p))) for p in body["paths"]]


def _leads(results: list[dict], batch: bool):
    """(scenario and scenario id cells or "", the result or its problem row) of each result."""
    for i, body in enumerate(results):
        if not batch:
            yield "", body
            continue
        scenario = _text(body["id"]) if "id" in body else str(i)
        yield (scenario + ",", body) if is_problem(body) else (f'{scenario},"{body["scenario_id"]}",', body)


def reference_long(results: list[dict], batch: bool) -> bytes:
    head = ["scenario", "scenario_id"] if batch else []
    lines = [",".join(_text(h) for h in [*head, "policy", "period", "variable", "value", "unit"])]
    for lead, body in _leads(results, batch):
        if is_problem(body):
            lines.append(f'{lead}"","","","problem",{_text(str(body.get("detail", "")))},""')
            continue
        for policy, series in _groups(body):
            for variable, values in series:
                for t, value in enumerate(values):
                    cells = [str(t), _text(variable), _number(value, variable), _text(unit_of(variable))]
                    lines.append(lead + policy + "," + ",".join(cells))
    return ("\n".join(lines) + "\n").encode()


def reference_wide(results: list[dict], batch: bool) -> bytes:
    names: dict[str, None] = {}
    for body in results:
        if not is_problem(body):
            names.update((v, None) for _, series in _groups(body) for v, _ in series)
    head = ["scenario", "scenario_id"] if batch else []
    header = [*head, "policy", "period", *(f"{n} [{wide_unit(n)}]" for n in names)]
    lines = [",".join(_text(h) for h in header)]
    for lead, body in _leads(results, batch):
        if is_problem(body):
            lines.append(f'{lead}"",{_text("problem: " + str(body.get("detail", "")))},' + "," * len(names))
            continue
        index = dict(_groups(body)[0][1]) if "price_index" in body else {}
        for path in body["paths"]:
            series = {**index, **dict(_series_of(path))}
            for t in range(len(body["periods"])):
                cells = [_number(series[n][t], n) if n in series else "" for n in names]
                lines.append(f"{lead}{_text(path['name'])},{t}," + ",".join(cells))
    return ("\n".join(lines) + "\n").encode()


def _demo_requests() -> list[dict]:
    from service.examples import examples

    return [e["request"] for e in examples().values() if e.get("endpoint", "/v1/paths") == "/v1/paths"]


@pytest.mark.parametrize("layout", LAYOUTS)
def test_every_demo_is_written_byte_for_byte_as_row_by_row(layout):
    demos = _demo_requests()
    assert len(demos) >= 5
    for request, lists, arrays in zip(
        demos, simulate_many(demos), simulate_many(demos, lists=False), strict=True
    ):
        assert not is_problem(lists), request
        want = (reference_long if layout == "long" else reference_wide)([lists], batch=False)
        assert paths_csv(arrays, layout) == want
        assert paths_csv(lists, layout) == want  # series as lists, as the Python API gives them


@pytest.fixture
def awkward_batch(additions, contract_request):
    """Demos with ids a spreadsheet would run or that carry quotes, commas, a leading space and
    letters beyond ASCII (control characters are refused: tests/http/test_hostile_corpus.py),
    two scenarios the engine refuses (a negative price; a horizon that is not a number),
    horizons 1 to 120, and a policy name that starts a formula."""
    ids = ["=HYPERLINK(1)", "plain", 'say "hi"', "-1", " x", "n\u00fcl \u2713", "@a,b", "+"]
    scenarios = []
    for k, request in enumerate([*_demo_requests(), additions, contract_request]):
        request = copy.deepcopy(request)
        request["id"] = ids[k % len(ids)] + str(k)
        scenarios.append(request)
    broken = copy.deepcopy(contract_request)
    broken["market"]["price"] = -5
    broken["id"] = "broken"
    scenarios.insert(2, broken)
    not_a_number = copy.deepcopy(contract_request)
    not_a_number["horizon"] = "ten"
    scenarios.append(not_a_number)
    for horizon in (1, 2, 120):
        request = copy.deepcopy(contract_request)
        request["horizon"] = horizon
        request["policies"][0]["name"] = "=" + "long name " * 7
        scenarios.append(request)
    return scenarios


@pytest.mark.parametrize("block_rows", [37, BLOCK_ROWS])
@pytest.mark.parametrize("layout", LAYOUTS)
def test_a_batch_with_ids_and_problems_is_written_byte_for_byte_as_row_by_row(
    awkward_batch, layout, block_rows, monkeypatch
):
    monkeypatch.setattr("service.http.csvio.BLOCK_ROWS", block_rows)  # blocks end anywhere
    arrays = simulate_many(awkward_batch, prefix="/scenarios/{i}", lists=False)
    lists = simulate_many(awkward_batch, prefix="/scenarios/{i}")
    assert sum(map(is_problem, lists)) == 2 and "price_index" in lists[-6]
    want = (reference_long if layout == "long" else reference_wide)(lists, batch=True)
    chunks = list(batch_csv(arrays, layout))
    assert b"".join(chunks) == want
    assert len(chunks) > 3 if block_rows < 100 else True


finite = st.floats(allow_nan=False, allow_infinity=False)


@given(
    values=st.lists(finite | st.just(math.nan), min_size=1, max_size=40),
    binding=st.lists(st.booleans(), min_size=40, max_size=40),
)
def test_every_number_reads_back_as_the_same_float_in_the_fewest_digits(values, binding):
    """Python's repr of a float is the shortest text that reads back as the same float
    (Python 3.1 "What's New": David Gay's algorithm); each cell has exactly its digits, a
    missing value (NaN) is an empty cell, and binding is 1 or 0."""
    n = len(values)
    path = {"name": "p", "kind": "none", "consumer_price": np.array(values), "binding": np.array(binding[:n])}
    body = {"periods": list(range(n)), "paths": [path]}
    rows = list(csv.DictReader(io.StringIO(paths_csv(body).decode(), newline="")))
    prices = [r["value"] for r in rows if r["variable"] == "consumer_price"]
    for cell, value in zip(prices, values, strict=True):
        if math.isnan(value):
            assert cell == ""
        else:
            assert float(cell) == value and math.copysign(1, float(cell)) == math.copysign(1, value)
            assert Decimal(cell) == Decimal(repr(value))
    assert [r["value"] for r in rows if r["variable"] == "binding"] == [str(int(b)) for b in binding[:n]]
    wide = list(csv.reader(io.StringIO(paths_csv(body, "wide").decode(), newline="")))
    assert [row[2] for row in wide[1:]] == prices
    assert paths_csv(body) == reference_long([body], batch=False)


@pytest.mark.parametrize("url", ["/v1/paths", "/v1/paths/batch"])
def test_the_long_and_wide_csv_label_the_same_series_with_the_same_unit(client, url):
    """Under inflation prices are in money of period 0 (the answer's and the workbook's words,
    service.labels.REAL), nominal ones in money of the day; both layouts say so alike."""
    from service import labels
    from service.examples import example_request

    request = example_request("essvane-freeze-under-inflation")
    body = request if url == "/v1/paths" else {"scenarios": [request]}
    csv_accept = {"Accept": "text/csv"}
    long_rows = _rows(client.post(url, json=body, headers=csv_accept))
    long_units = {r["variable"]: r["unit"] for r in long_rows}
    wide = client.post(f"{url}?layout=wide", json=body, headers=csv_accept)
    assert wide.status_code == 200
    header = next(csv.reader(io.StringIO(wide.get_data(as_text=True))))
    wide_units = dict(cell[:-1].split(" [", 1) for cell in header if cell.endswith("]"))
    assert "nominal_consumer_price" in long_units and "price_index" in wide_units
    assert set(long_units) <= set(wide_units)
    assert {v: wide_units[v] for v in long_units} == long_units
    assert long_units["consumer_price"] == f"{labels.REAL} per unit per price interval"
    assert long_units["nominal_consumer_price"] == f"{labels.NOMINAL} per unit per price interval"
    assert long_units["deadweight_loss"] == f"{labels.REAL} per model period"


@pytest.mark.parametrize("layout", ["long", "wide"])
def test_every_series_of_homes_as_buildings_has_its_unit_in_the_csv(client, layout):
    """The stock schedule's series (homes below the free path, vacant and converted homes, renters
    and extra rent against the free path) carry a unit like every other, in both layouts."""
    from service.examples import example_request

    request = example_request("tollbrae-decontrol-and-exempt-building")
    response = client.post(f"/v1/paths/csv?layout={layout}", json=request)
    text = response.get_data(as_text=True)
    assert response.status_code == 200
    assert "see the JSON answer" not in text
    for variable in ("vacant_homes", "converted_homes", "vs_free_path.renters", "vs_free_path.extra_rent"):
        assert variable in text, variable
