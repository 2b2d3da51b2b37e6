"""Accept: the workbook media type on /v1/paths, /v1/paths/batch and /v1/bands answers an .xlsx;
read back with openpyxl, every number equals the JSON answer's (to 15 significant digits: openpyxl
writes 16, and a spreadsheet keeps 15), a policy name that would be a formula stays text with its
exact value (a string cell), and the same request gives the same bytes whatever the clock."""

from __future__ import annotations

import io
import time
import zipfile

import numpy as np
import pytest
from openpyxl import load_workbook

from service import labels
from service.charts import GROUPS
from service.examples import example_request
from service.http.cache import AnswerCache
from service.workbook import FIXED_TIME, WORKBOOK

from ..reference import discounted_group_sums

ACCEPT = {"Accept": WORKBOOK}
SAME = 1e-15  # relative: the 15 significant digits a spreadsheet keeps


def _book(response):
    assert response.status_code == 200, response.get_json()
    assert response.mimetype == WORKBOOK
    assert response.headers["Content-Disposition"].endswith('.xlsx"')
    return load_workbook(io.BytesIO(response.data))


def _rows(ws):
    return [list(r) for r in ws.iter_rows(values_only=True)]


def _flat_series(path: dict) -> dict:
    return {k: v for k, v in labels.flatten(path, ("name", "kind")).items() if isinstance(v, list)}


def test_a_paths_workbook_carries_inputs_summary_each_policys_periods_who_gains_and_cautions(client):
    request = example_request("corrowdale-older-buildings")
    answer = client.post("/v1/paths", json=request).get_json()
    book = _book(client.post("/v1/paths", json=request, headers=ACCEPT))
    names = book.sheetnames
    assert names[:3] == ["About", "Inputs", "Summary"]
    assert names[-3:] == ["Who gains and loses", "Reduced form", "Cautions"]
    about = dict(_rows(book["About"])[1:])
    assert about["Scenario id"] == answer["scenario_id"]
    assert about["Model version"] == answer["model_version"]
    assert "today's money (period 0)" in about["Money"]

    inputs = {row[0]: row[2] for row in _rows(book["Inputs"])[1:]}
    assert inputs["/horizon"] == request["horizon"]
    assert inputs["/policies/1/coverage"] == 0.4
    assert inputs["/welfare/discount_rate"] == 0.03
    assert inputs["/market/demand/shifters/income"] == 0.8

    summary = _rows(book["Summary"])
    header, body = summary[0], summary[1:]
    assert [r[0] for r in body] == [s["name"] for s in answer["summary"]]
    for row, s in zip(body, answer["summary"], strict=True):
        flat = labels.flatten(s, ("name", "kind"))
        assert len(row) - 2 == len(flat)  # every total, one column each
        for key, value in flat.items():
            column = header.index(labels.describe(key, totals=True))
            assert row[column] == (pytest.approx(value, rel=SAME) if isinstance(value, float) else value)

    for i, path in enumerate(answer["paths"], start=1):
        sheet = next(n for n in names if n.startswith(f"{i} "))
        rows = _rows(book[sheet])
        header, data = rows[0], rows[1:]
        assert [r[0] for r in data] == answer["periods"]
        series = _flat_series(path)
        assert len(header) == 2 + len(series)  # period, supply elasticity, then every series
        for key, values in series.items():
            column = header.index(labels.describe(key))
            got = [r[column] for r in data]
            assert got == ([int(v) for v in values] if key == "binding" else pytest.approx(values, rel=SAME))
            assert all(isinstance(v, (int, float)) for v in got)  # numbers as numbers
        # the partial freeze carries the rents of controlled and uncontrolled homes
        if path["name"].startswith("freeze on older"):
            assert any(h.startswith("Rent of uncontrolled homes") for h in header)

    gains = _rows(book["Who gains and loses"])
    assert "not discounted" in gains[0][2] and "at 3 % per period" in gains[0][3]
    discounted = np.array(discounted_group_sums(answer, request, [g for g, _ in GROUPS]))
    for p, (path, s) in enumerate(zip(answer["paths"], answer["summary"], strict=True)):
        mine = [r for r in gains[1:] if r[0] == path["name"]]
        assert [r[2] for r in mine] == pytest.approx(list(s["distribution_totals"].values()), rel=SAME)
        assert np.allclose([r[3] for r in mine], discounted[p], rtol=1e-12, atol=1e-9)
    cautions = [r[0] for r in _rows(book["Cautions"])[1:]]
    assert cautions == answer["cautions"]
    reduced = _rows(book["Reduced form"])
    assert [r[0] for r in reduced[1:]] == list(answer["reduced_form"])
    for row, rf in zip(reduced[1:], answer["reduced_form"].values(), strict=True):
        expected = [rf["short_run"]["price"], rf["long_run"]["price"], rf["short_run"]["quantity"]]
        assert row[1:] == pytest.approx([*expected, rf["long_run"]["quantity"]], rel=SAME)


FORMULA_LIKE = ['=HYPERLINK("x")', '=HYPERLINK("http://example.invalid","x")', "#N/A", "+1", "@SUM(A1)"]


@pytest.mark.parametrize("name", FORMULA_LIKE)
def test_a_policy_name_that_would_be_a_formula_is_a_string_cell_with_its_exact_value(client, name):
    request = example_request("quillbrook-rent-freeze")
    request["policies"][1]["name"] = name
    book = _book(client.post("/v1/paths", json=request, headers=ACCEPT))
    cell = book["Summary"].cell(row=3, column=1)
    assert cell.value == name and cell.data_type == "s"
    seen = 0
    for ws in book.worksheets:
        for row in ws.iter_rows():
            for c in row:
                assert c.data_type not in ("f", "e"), (ws.title, c.coordinate, c.value)
                seen += c.value == name
    assert seen >= 3  # on Summary, Who gains and loses and the policy's own sheet: never altered


def _workbook_requests():
    paths = example_request("quillbrook-rent-freeze")
    bands = {**example_request("quillbrook-uncertain-elasticities"), "draws": 100}
    other = {**paths, "horizon": paths["horizon"] + 1}
    return [
        ("/v1/paths", paths, other),
        ("/v1/paths/batch", {"scenarios": [paths]}, {"scenarios": [other]}),
        ("/v1/bands", bands, {**bands, "seed": bands.get("seed", 0) + 1}),
    ]


@pytest.mark.parametrize(("url", "body", "other"), _workbook_requests(), ids=["paths", "batch", "bands"])
def test_the_same_workbook_request_gives_the_same_bytes_at_any_time(
    app, client, monkeypatch, url, body, other
):
    """A workbook is a pure function of the answer (its ETag is strong): two made a second
    apart, with no cached copy between them, are byte-identical; no part of the file carries the
    clock (the ZIP entries' date-times and the document properties' dates are FIXED_TIME)."""
    monkeypatch.setitem(app.extensions, "shockpath.cache", AnswerCache(0))  # make each one afresh
    first = client.post(url, json=body, headers=ACCEPT)
    time.sleep(1.1)  # core properties keep seconds
    second = client.post(url, json=body, headers=ACCEPT)
    assert first.status_code == second.status_code == 200
    assert first.data == second.data
    assert first.headers["ETag"] == second.headers["ETag"]
    with zipfile.ZipFile(io.BytesIO(first.data)) as archive:
        assert {e.date_time for e in archive.infolist()} == {FIXED_TIME.timetuple()[:6]}
        core = archive.read("docProps/core.xml").decode()
    assert core.count(FIXED_TIME.strftime("%Y-%m-%dT%H:%M:%SZ")) == 2  # created and modified
    book = load_workbook(io.BytesIO(first.data))
    assert book.properties.created == book.properties.modified == FIXED_TIME
    different = client.post(url, json=other, headers=ACCEPT)
    assert different.status_code == 200 and different.data != first.data


@pytest.mark.parametrize("batch", [False, True])
def test_a_summary_answer_as_a_workbook_has_the_totals_and_no_path_sheets(client, batch):
    """ "output": "summary" (a sweep's answer) as a workbook: every sheet but the paths, the same
    totals as the JSON summary, who gains and loses from the summary's totals."""
    request = example_request("corrowdale-older-buildings")
    if batch:
        url, body = "/v1/paths/batch", {"scenarios": [request], "output": "summary"}
        (answer,) = client.post(url, json=body).get_json()["results"]
    else:
        url, body = "/v1/paths", {**request, "output": "summary"}
        answer = client.post(url, json=body).get_json()
    assert "paths" not in answer
    book = _book(client.post(url, json=body, headers=ACCEPT))
    assert "Paths" not in book.sheetnames and not any(n[0].isdigit() for n in book.sheetnames)
    assert {"About", "Inputs", "Summary", "Who gains and loses", "Cautions"} <= set(book.sheetnames)
    summary = _rows(book["Summary"])
    column = summary[0].index(labels.describe("discounted_deadweight_loss", totals=True))
    expected = [s["discounted_deadweight_loss"] for s in answer["summary"]]
    assert [r[column] for r in summary[1:]] == pytest.approx(expected, rel=SAME)
    gains = _rows(book["Who gains and loses"])[1:]
    first = answer["summary"][1]
    total = first["distribution_totals"]["tenants_in_controlled_homes"]
    label = labels.label("distribution.tenants_in_controlled_homes")
    (row,) = [r for r in gains if first["name"] in r and label in r]
    assert row[-2] == pytest.approx(total, rel=SAME)
    if not batch:
        about = dict(_rows(book["About"])[1:])
        assert about["Periods"] == f"0 (today's market) to {request['horizon']}"


def test_a_batch_workbook_puts_every_scenario_on_the_same_sheets_and_names_a_problem(client):
    good = example_request("quillbrook-rent-freeze")
    bad = {**good, "horizon": 0}
    answer = client.post("/v1/paths/batch", json={"scenarios": [good, bad]}).get_json()["results"]
    book = _book(client.post("/v1/paths/batch", json={"scenarios": [good, bad]}, headers=ACCEPT))
    scenarios = _rows(book["Scenarios"])[1:]
    assert scenarios[0][:2] == [0, answer[0]["scenario_id"]] and scenarios[0][2] in ("", None)
    assert scenarios[1][0] == 1 and scenarios[1][2] == answer[1]["detail"]
    paths = _rows(book["Paths"])
    header, data = paths[0], paths[1:]
    first = answer[0]
    assert len(data) == len(first["paths"]) * len(first["periods"])
    column = header.index(labels.describe("consumer_price"))
    for path in first["paths"]:
        assert [r[column] for r in data if r[1] == path["name"]] == pytest.approx(
            path["consumer_price"], rel=SAME
        )
    summary = _rows(book["Summary"])
    column = summary[0].index(labels.describe("discounted_deadweight_loss", totals=True))
    expected = [s["discounted_deadweight_loss"] for s in first["summary"]]
    assert [r[column] for r in summary[1:]] == pytest.approx(expected, rel=SAME)


def test_a_bands_workbook_puts_percentiles_beside_the_central_path(client):
    request = example_request("quillbrook-uncertain-elasticities")
    request["draws"] = 400
    answer = client.post("/v1/bands", json=request).get_json()
    book = _book(client.post("/v1/bands", json=request, headers=ACCEPT))
    assert dict(_rows(book["About"])[1:])["Scenario id"] == answer["scenario_id"]
    pointers = [r[0] for r in _rows(book["Uncertain inputs"])[1:]]
    assert pointers == [u["pointer"] for u in answer["uncertain_inputs"]]
    band = answer["bands"][0]
    rows = _rows(book[f"1 {band['name']}"[:31]])
    header = rows[0]
    for series, by_q in band["series"].items():
        for q, values in by_q.items():
            column = header.index(f"{labels.describe(series)} - {q}th percentile")
            assert [r[column] for r in rows[1:]] == pytest.approx(values, rel=1e-6)
    summary = _rows(book["Summary percentiles"])
    figure = labels.describe("discounted_deadweight_loss", totals=True)
    first = next(r for r in summary[1:] if r[0] == band["name"] and r[1] == figure)
    by_q = band["summary"]["discounted_deadweight_loss"]
    assert first[2:] == pytest.approx([by_q[q] for q in by_q], rel=SAME)


@pytest.mark.parametrize("path", ["/v1/paths", "/v1/paths/batch"])
def test_json_stays_the_default_and_csv_is_still_offered(client, path):
    request = example_request("quillbrook-rent-freeze")
    body = request if path == "/v1/paths" else {"scenarios": [request]}
    assert client.post(path, json=body).mimetype == "application/json"
    assert client.post(path, json=body, headers={"Accept": "text/csv"}).mimetype == "text/csv"


def test_a_workbook_beyond_the_cell_limit_is_a_422_that_suggests_csv_and_csv_still_answers(client):
    """A workbook is written cell by cell (about 10 us each here): 2 scenarios x 16 policies x
    601 periods would take several seconds a scenario, so past limits.MAX_WORKBOOK_CELLS the
    answer is a 422 in a moment; the same batch as CSV is answered."""
    from service import limits

    scenario = example_request("contract-example")
    scenario["horizon"] = limits.MAX_HORIZON
    scenario["policies"] = [dict(scenario["policies"][i % 8], name=f"p{i}") for i in range(16)]
    body = {"scenarios": [scenario, scenario]}
    response = client.post("/v1/paths/batch", json=body, headers=ACCEPT)
    assert response.status_code == 422 and response.mimetype == "application/problem+json"
    problem = response.get_json()
    assert problem["type"].endswith("too-large-for-a-workbook") and "CSV" in problem["detail"]
    assert f"{limits.MAX_WORKBOOK_CELLS:,} cells" in problem["detail"]
    assert client.post("/v1/paths/batch", json=body, headers={"Accept": "text/csv"}).status_code == 200


def test_a_bands_workbook_names_each_part_of_a_drawn_input_in_plain_words(client):
    """The Inputs sheet of an uncertain request: every field in words, never a bare `sd` or
    `output` (labels.DRAWN; a freeze's base level too)."""
    request = {**example_request("quillbrook-uncertain-elasticities"), "draws": 200}
    book = _book(client.post("/v1/bands", json=request, headers=ACCEPT))
    words = {row[0]: row[1] for row in _rows(book["Inputs"])[1:]}
    assert words["/market/demand/price_elasticity/sd"].startswith(
        "How homes wanted respond to rent (price elasticity of demand), standard deviation of the draws"
    )
    assert words["/market/supply/long_run_elasticity/mode"].split(" [")[0].endswith(", most likely draw")
    assert not [w for w in words.values() if "_" in w.split(" [")[0]], words
