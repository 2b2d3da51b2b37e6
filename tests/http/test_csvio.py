"""CSV cells a spreadsheet would run as formulas are neutralised (OWASP, "CSV Injection");
numbers stay numbers; downloads carry a filename and every value its unit."""

from __future__ import annotations

import csv
import io

import pytest

from service.http.csvio import UNITS, neutralise

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
