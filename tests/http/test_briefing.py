"""POST /v1/briefing: one self-contained HTML document of a scenario (no script, nothing from
elsewhere) with the question, the inputs in words, inline SVG charts, the summary and who-gains
tables on the chart's basis, the cautions, the model version and the scenario id."""

from __future__ import annotations

import html
import re
from html.parser import HTMLParser

import numpy as np
import pytest

from service import simulate
from service.charts import GROUPS
from service.examples import example_request

from ..reference import discounted_group_sums

pytest.importorskip("matplotlib")

UNITS = {"currency": "EUR", "quantity": "homes", "unit": "home", "price_interval": "month", "period": "year"}


class _Tables(HTMLParser):
    """The tables of a document as lists of rows of cell texts."""

    def __init__(self):
        super().__init__()
        self.tables, self.cell, self.tags = [], None, []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        if tag == "table":
            self.tables.append([])
        elif tag == "tr":
            self.tables[-1].append([])
        elif tag in ("td", "th"):
            self.cell = ""

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self.cell is not None:
            self.tables[-1][-1].append(self.cell)
            self.cell = None

    def handle_data(self, data):
        if self.cell is not None:
            self.cell += data


_WORDS = {"million": 1e6, "billion": 1e9, "trillion": 1e12}


def _number(text: str) -> float:
    """A number as the briefing writes it: 1,090, \u22124.2, 243.6 million."""
    value, _, word = text.replace(",", "").replace("\u2212", "-").partition(" ")
    return float(value) * _WORDS.get(word, 1.0)


def test_a_briefing_holds_the_question_inputs_charts_tables_cautions_and_the_ids(client):
    request = example_request("corrowdale-older-buildings")
    answer = simulate(request)
    response = client.post(
        "/v1/briefing", json={**request, "title": "Corrowdale: older buildings", "units": UNITS}
    )
    assert response.status_code == 200 and response.mimetype == "text/html"
    assert response.headers["ETag"].strip('"')
    text = response.get_data(as_text=True)
    assert text.startswith("<!doctype html>") and "<h1>Corrowdale: older buildings</h1>" in text
    assert "<h2>The question</h2>" in text and "compared with the market left free" in text
    assert "rents frozen at today&#x27;s rent, on 40 % of the homes" in text
    assert "real change of 10 %" in text  # shocks are real changes, in words
    assert text.count("<svg") >= 2 and "<script" not in text.lower()
    assert not re.search(r'(src|href)="(https?:)?//', text)  # nothing from elsewhere
    assert answer["scenario_id"] in text and f"model version {answer['model_version']}" in text
    for caution in answer["cautions"]:
        assert html.escape(caution) in text
    tables = _Tables()
    tables.feed(text)
    inputs, summary, gains = tables.tables
    assert any(row[0].startswith("Rent today (base price)") and row[1] == "1,090" for row in inputs)
    assert summary[0] == ["Figure", *(p["name"] for p in request["policies"])]
    final = next(r for r in summary if r[0].startswith("Rent paid in the last period"))
    assert "EUR per home per month, today's money (period 0)" in final[0]
    assert [_number(c) for c in final[1:]] == pytest.approx(
        [s["final_consumer_price"] for s in answer["summary"]], abs=0.5
    )
    # Who gains and who loses on the chart's basis: the engine's discounted sums, and the net,
    # to the precision an estimate is shown with (four figures from a million: 243.6 million).
    expected = np.array(discounted_group_sums(answer, request, [g for g, _ in GROUPS]))
    rows = gains[1:-1]
    assert np.allclose([[_number(c) for c in r[1:]] for r in rows], expected.T, rtol=5e-4, atol=0.6)
    assert [_number(c) for c in gains[-1][1:]] == pytest.approx(expected.sum(axis=1), rel=5e-4, abs=0.6)
    assert any("million" in c for r in gains[1:] for c in r[1:])
    assert "discounted at 3 % per year" in text


def test_a_briefing_without_a_title_or_units_takes_the_policy_names_and_plain_units(client):
    request = example_request("quillbrook-rent-freeze")
    text = client.post("/v1/briefing", json=request).get_data(as_text=True)
    assert "<h1>Briefing: rent freeze, 2.5% cap, freeze for 5 years</h1>" in text
    assert "money per unit per price interval" in text


def test_bad_input_points_where_it_would_for_paths_and_at_the_briefings_own_fields(client):
    request = example_request("quillbrook-rent-freeze")
    bad = client.post("/v1/briefing", json={**request, "horizon": 0, "title": ""})
    assert bad.status_code == 422
    assert [e["pointer"] for e in bad.get_json()["errors"]] == ["/title"]
    bad = client.post("/v1/briefing", json={**request, "horizon": 0})
    assert [e["pointer"] for e in bad.get_json()["errors"]] == ["/horizon"]
    bad = client.post("/v1/briefing", json={**request, "units": {"currency": "EUR", "colour": "red"}})
    assert bad.get_json()["errors"][0]["pointer"] == "/units/colour"


@pytest.mark.parametrize("demo", ["quillbrook-rent-freeze", "quillbrook-uncertain-elasticities"])
def test_a_briefing_asked_for_a_summary_is_a_422_at_output(client, demo):
    """A briefing is drawn from every series, so it has no summary form: "output": "summary"
    is refused at its pointer, as /v1/bands refuses it (it was a 500: the briefing read the
    series of a summary answer), and "full" is the briefing as without it."""
    request = (
        {**example_request(demo), "horizon": 3, "draws": 50} if "uncertain" in demo else example_request(demo)
    )
    bad = client.post("/v1/briefing", json={**request, "output": "summary"})
    assert bad.status_code == 422, bad.get_data(as_text=True)[:300]
    assert [e["pointer"] for e in bad.get_json()["errors"]] == ["/output"]
    full = client.post("/v1/briefing", json={**request, "output": "full"})
    assert full.status_code == 200
    assert full.get_data() == client.post("/v1/briefing", json=request).get_data()


def test_under_random_rationing_the_briefing_says_who_gains_is_not_reported(client):
    request = example_request("quillbrook-rent-freeze")
    request["welfare"]["rationing"] = "random"
    text = client.post("/v1/briefing", json=request).get_data(as_text=True)
    assert "Not reported under random rationing" in text
    assert text.count("<svg") == 1


def test_a_matching_if_none_match_gets_304(client):
    request = example_request("quillbrook-rent-freeze")
    first = client.post("/v1/briefing", json=request)
    again = client.post("/v1/briefing", json=request, headers={"If-None-Match": first.headers["ETag"]})
    assert again.status_code == 304


def test_a_briefing_writes_rounding_as_about_zero_and_choices_in_words_as_the_page_does():
    """What a council reads: a figure within 1e-9 of zero is the rounding of a difference
    (about 0, as on the page), a choice such as the curve form is in words, and the answer's
    shape (`output`) is not an input of the market."""
    from service.briefing import _number, _scale, _scales, briefing_html

    assert _number(7.28e-12) == "\u2248 0" and _number(-4.2e-10) == "\u2248 0"
    assert _number(0.0) == "0" and _number(2.5e-9) == "2.5e-09"
    # Against each figure's own scale, as the page: 4.2e-8 homes of 10,000 is rounding, 4.2e-8 of
    # a rent of 1 is not; rents, homes and money take the base rent, the base homes, the bill.
    assert _number(-4.22e-8, 10_000.0) == "\u2248 0" and _number(4.22e-8, 1.0) == "4.22e-08"
    scales = _scales({"market": {"price": 1180.0, "quantity": 10_000.0}}, 15)
    assert scales == {"price": 1180.0, "homes": 10_000.0, "flow": 11_800_000.0, "money": 177_000_000.0}
    assert _scale("final_consumer_price", scales) == 1180.0
    assert _scale("peak_shortage", scales) == 10_000.0
    assert _scale("discounted_deadweight_loss", scales) == 177_000_000.0
    assert _scale("binding_periods", scales) == 1.0
    assert _number("constant_elasticity") == "constant elasticity"
    # Against a scale, to an estimate's precision as the page shows it (a helper's trial saw
    # 1,056,999,393 in the briefing beside 1.057 billion on the page).
    assert _number(1_056_999_393.0, 177e6) == "1.057 billion" and _number(-2.5e6, 177e6) == "-2.5 million"
    assert _number(47.98, 10_000.0) == "48" and _number(12.346, 12.5) == "12.35"
    assert _number(999_960_000.0, 177e6) == "1 billion"  # not 1000 million
    request = {**example_request("quillbrook-rent-freeze"), "output": "full"}
    request["market"]["form"] = "constant_elasticity"
    text = briefing_html(simulate(request))
    assert ">constant elasticity</td>" in text and ">constant_elasticity</td>" not in text
    assert "Answer with" not in text


def test_the_inputs_read_as_the_analyst_gave_them_with_no_digit_added_or_lost(client):
    request = example_request("quillbrook-rent-freeze")
    request["policies"] = [
        {"name": "free market", "kind": "none"},
        {"name": "limit", "kind": "price_ceiling", "level": 1250.5},
        {"name": "tax", "kind": "unit_tax", "amount": 59.5},
    ]
    text = client.post("/v1/briefing", json={**request, "units": UNITS}).get_data(as_text=True)
    assert "rents at most 1,250.5 EUR per home per month" in text
    assert "a tax of 59.5 EUR per home per month" in text
    tables = _Tables()
    tables.feed(text)
    given = {row[0].split(" (")[0]: row[1] for row in tables.tables[0][1:]}
    market = request["market"]
    assert market["payments_per_period"] == 12 and given["Rent payments per period"] == "12"
    assert given["Response to households"] == "1" and given["Response to income"] == "0.8"
    assert given["How homes offered respond to rent, in the long run"] == "1.5"
    assert given["Rent today"] == "1,180"


@pytest.mark.parametrize("name", ["quillbrook-rent-freeze", "quillbrook-uncertain-elasticities"])
def test_the_python_briefing_refuses_a_summary_at_its_output_as_the_endpoint_does(name):
    """The rule lives in service.briefing itself, so a Python caller gets the 422 the endpoint
    gives (a summary answer has no series to draw), not a KeyError."""
    from service import ProblemError
    from service.briefing import briefing

    with pytest.raises(ProblemError) as refused:
        briefing({**example_request(name), "output": "summary"})
    assert refused.value.status == 422
    assert [e["pointer"] for e in refused.value.problem["errors"]] == ["/output"]
