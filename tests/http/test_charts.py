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
