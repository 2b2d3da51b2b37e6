"""The briefing of a /v1/bands request: the central answer (the same scenario id as the bands'
`central`) with how uncertain it is: the inputs drawn in words, percentile ribbons, and the range
of each headline figure, which are the bands answer's own percentiles."""

from __future__ import annotations

import html
import re

import pytest

from service import bands
from service.briefing import RANGE_FIGURES, briefing
from service.examples import example_request
from service.uncertainty import central_request, is_bands_request

from .test_briefing import UNITS, _number, _Tables

pytest.importorskip("matplotlib")


def _uncertain(draws: int = 300) -> dict:
    return {**example_request("quillbrook-uncertain-elasticities"), "draws": draws}


def test_the_central_request_of_a_bands_request_is_the_scenario_of_its_central_answer():
    request = _uncertain()
    answer = bands(request)
    central = central_request(request, answer["uncertain_inputs"])
    assert not is_bands_request(central) and is_bands_request(request)
    assert central["market"]["demand"]["price_elasticity"] == -0.4  # the normal's mean
    assert central["market"]["supply"]["long_run_elasticity"] == 1.5  # the triangular's mode
    from service import simulate

    assert simulate(central)["scenario_id"] == answer["central"]["scenario_id"]


def test_a_bands_briefing_shows_the_ranges_that_the_bands_answer_holds():
    request = _uncertain()
    answer = bands(request)
    text = briefing(request, UNITS, "Quillbrook: how sure are we?")
    assert "<h2>How uncertain</h2>" in text and "run 300 times" in text
    assert "normal (mean -0.4, sd 0.1), central value -0.4" in text
    assert answer["central"]["scenario_id"] in text and answer["scenario_id"] in text
    for caution in answer["cautions"]:  # the bands' own cautions (what a band is) among them
        assert html.escape(caution) in text
    assert text.count("<svg") >= 3 and "<script" not in text.lower()
    assert "<br>(median " in text  # the median on a line of its own: a narrow column never cuts it
    tables = _Tables()
    tables.feed(text)
    ranges = tables.tables[-1]
    assert ranges[0] == ["Figure", *(b["name"] for b in answer["bands"])]
    assert len(ranges) == 1 + len(RANGE_FIGURES)
    row = next(r for r in ranges if "(discounted deadweight loss)" in r[0])
    for cell, band in zip(row[1:], answer["bands"], strict=True):
        low, high, median = re.fullmatch(r"(.+?) to (.+?)\s*\(median (.+?)\)", cell).groups()
        by_q = band["summary"]["discounted_deadweight_loss"]
        assert _number(low) == pytest.approx(by_q["5"], rel=5e-3, abs=0.5)
        assert _number(high) == pytest.approx(by_q["95"], rel=5e-3, abs=0.5)
        assert _number(low) <= _number(median) <= _number(high)


def test_the_briefing_endpoint_takes_a_bands_request_and_points_at_its_errors(client):
    response = client.post("/v1/briefing", json={**_uncertain(200), "title": "Ranges", "units": UNITS})
    assert response.status_code == 200 and response.mimetype == "text/html"
    assert "<h2>How uncertain</h2>" in response.get_data(as_text=True)
    refused = client.post("/v1/briefing", json={**_uncertain(0)})
    assert refused.status_code == 422
    assert [e["pointer"] for e in refused.get_json()["errors"]] == ["/draws"]


def test_a_paths_briefing_has_no_ranges(client):
    response = client.post("/v1/briefing", json=example_request("quillbrook-rent-freeze"))
    assert response.status_code == 200
    assert "How uncertain" not in response.get_data(as_text=True)
