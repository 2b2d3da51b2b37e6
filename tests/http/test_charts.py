"""POST /v1/charts: valid SVG (parsed) and PNG (decoded, right size) for paths, bands, sensitivity."""

from __future__ import annotations

import io
import xml.etree.ElementTree as ET

import pytest

from service.charts import SIZE_PX
from service.examples import example_request

pytest.importorskip("matplotlib")

UNITS = {"currency": "EUR", "quantity": "homes", "period": "year"}


def scenario(chart: str) -> dict:
    if chart == "paths":
        return example_request("quillbrook-rent-freeze")
    request = example_request("quillbrook-uncertain-elasticities")
    if chart == "bands":
        request["draws"] = 500
    else:
        for key in ("draws", "seed", "percentiles"):
            request.pop(key)
    return request


@pytest.mark.parametrize("chart", ["paths", "bands", "sensitivity"])
def test_svg_charts_parse_and_carry_labels_units_and_the_caution(client, chart):
    response = client.post(
        "/v1/charts", json={"chart": chart, "format": "svg", "units": UNITS, "scenario": scenario(chart)}
    )
    assert response.status_code == 200 and response.mimetype == "image/svg+xml"
    root = ET.fromstring(response.data)
    assert root.tag.endswith("svg")
    text = response.get_data(as_text=True)
    for needle in ("EUR", "do not replace", "Model: linear form"):
        assert needle in text, needle
    if chart != "sensitivity":
        assert "homes" in text and "Period (year)" in text and "base" in text
        for name in ("free market", "rent freeze"):
            assert name in text


@pytest.mark.parametrize("chart", ["paths", "bands", "sensitivity"])
def test_png_charts_decode_at_the_documented_size(client, chart):
    from matplotlib.image import imread

    response = client.post(
        "/v1/charts", json={"chart": chart, "format": "png", "units": UNITS, "scenario": scenario(chart)}
    )
    assert response.status_code == 200 and response.mimetype == "image/png"
    pixels = imread(io.BytesIO(response.data), format="png")
    assert pixels.shape[:2] == (SIZE_PX[1], SIZE_PX[0])
    assert pixels.std() > 0.05  # something is drawn


def test_the_accept_header_chooses_the_format(client):
    response = client.post(
        "/v1/charts", json={"chart": "paths", "scenario": scenario("paths")}, headers={"Accept": "image/png"}
    )
    assert response.mimetype == "image/png"
    assert (
        client.post("/v1/charts", json={"chart": "paths", "scenario": scenario("paths")}).mimetype
        == "image/svg+xml"
    )


def test_errors_in_the_scenario_point_into_it(client):
    bad = scenario("paths")
    bad["market"]["demand"]["price_elasticity"] = 0.3
    response = client.post("/v1/charts", json={"chart": "paths", "scenario": bad})
    assert response.status_code == 422
    assert response.get_json()["errors"][0]["pointer"] == "/scenario/market/demand/price_elasticity"
    unknown = client.post("/v1/charts", json={"chart": "pie", "scenario": bad})
    assert unknown.get_json()["errors"][0]["pointer"] == "/chart"


def test_the_palette_is_the_colour_blind_safe_one_with_distinct_line_styles():
    from service.charts import PALETTE, STYLES

    assert PALETTE[:3] == ("#000000", "#E69F00", "#0072B2")  # Okabe & Ito (2008), "Color Universal Design"
    assert len(set(map(str, STYLES))) == len(STYLES)


HOUSING = {
    "currency": "EUR",
    "quantity": "homes",
    "unit": "home",
    "price_interval": "month",
    "period": "year",
}


def _svg(client, chart, units=None, **extra):
    body = {"chart": chart, "format": "svg", "scenario": scenario(chart), **extra}
    if units:
        body["units"] = units
    response = client.post("/v1/charts", json=body)
    assert response.status_code == 200
    return response.get_data(as_text=True)


def test_the_price_axis_says_what_the_units_say(client):
    assert "EUR per home per month" in _svg(client, "paths", HOUSING)
    default = _svg(client, "paths")
    assert "money per unit per price interval" in default
    assert "Period (period)" not in default and "<!-- Period -->" in default


def test_period_ticks_are_whole_numbers(client):
    short = scenario("paths")
    short["horizon"] = 3
    response = client.post("/v1/charts", json={"chart": "paths", "format": "svg", "scenario": short})
    text = response.get_data(as_text=True)
    assert "<!-- 1 -->" in text and "<!-- 3 -->" in text
    assert "<!-- 0.5 -->" not in text and "<!-- 2.5 -->" not in text


@pytest.mark.parametrize("chart", ["paths", "bands", "sensitivity"])
def test_the_footnote_keeps_qualified_analysts_and_the_lower_bound_warning(client, chart):
    text = _svg(client, chart, HOUSING)
    assert "qualified analysts" in text and "from the elasticities given" in text
    assert "published elasticities" not in text
    assert "deadweight loss is a lower bound" in text  # every demo here has a binding ceiling


def test_overlapping_band_ribbons_differ_by_hatching_and_edge_style():
    from service.charts import HATCHES, STYLES

    assert len(set(HATCHES)) == len(HATCHES) and len(HATCHES) == len(STYLES)


def test_the_tornado_says_which_end_of_a_negative_elasticity_is_the_more_elastic(client):
    text = _svg(client, "sensitivity", HOUSING, policy="rent freeze")
    assert "(more elastic)" in text
    assert "for a negative elasticity, the more elastic end" in text


def test_octet_stream_gets_the_same_chart_bytes_for_generated_clients(client):
    body = {"chart": "paths", "format": "svg", "scenario": scenario("paths")}
    svg = client.post("/v1/charts", json=body)
    raw = client.post("/v1/charts", json=body, headers={"Accept": "application/octet-stream"})
    assert raw.status_code == 200 and raw.mimetype == "application/octet-stream"
    assert raw.data == svg.data
