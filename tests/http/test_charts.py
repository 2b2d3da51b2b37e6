"""POST /v1/charts: valid SVG (parsed) and PNG (decoded, right size) for paths, bands, sensitivity
and who gains and who loses (its bars against numpy_financial present values)."""

from __future__ import annotations

import io
import json
import re
import xml.etree.ElementTree as ET

import numpy as np
import numpy_financial as npf
import pytest

from service import labels, simulate
from service.charts import SIZE_PX
from service.engine.results import DISTRIBUTION_GROUPS
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
        assert "homes" in text and "Period (year)" in text and "today" in text  # period 0 marked as today
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
    answer = response.get_json()
    assert answer["errors"][0]["pointer"] == "/scenario/market/demand/price_elasticity"
    assert answer["detail"].startswith("/scenario/market/demand/price_elasticity: ")  # as the errors say
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


#: Charts drawn by `_svg`, by request: several facts are read off the same chart (the same
#: request gets the same bytes, as test_octet_stream_... and the ETag tests check).
_DRAWN: dict[str, str] = {}


def _svg(client, chart, units=None, **extra):
    body = {"chart": chart, "format": "svg", "scenario": scenario(chart), **extra}
    if units:
        body["units"] = units
    key = json.dumps(body, sort_keys=True)
    if key not in _DRAWN:
        response = client.post("/v1/charts", json=body)
        assert response.status_code == 200
        _DRAWN[key] = response.get_data(as_text=True)
    return _DRAWN[key]


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


# --- MODEL.md sections 13-15 on charts: the stock panel and who gains and who loses ---------

GROUP_KEYS = DISTRIBUTION_GROUPS  # MODEL.md 15 and 20: the seven groups


def additions_scenario(**welfare) -> dict:
    """The rent-freeze demo under inflation and the stock schedule, the freeze covering 60 % of
    the homes, plus an indexed levy (so that the government's bar is not zero)."""
    request = example_request("quillbrook-rent-freeze")
    request["market"]["inflation"] = 0.03
    request["adjustment"] = {"schedule": "stock", "half_life": 3, "depreciation": 0.01}
    request["policies"][1]["coverage"] = 0.6
    request["policies"].append({"name": "levy", "kind": "unit_tax", "amount": 40, "indexed": True})
    request["welfare"].update(welfare)
    return request


@pytest.mark.parametrize("fmt", ["svg", "png"])
def test_the_gains_and_losses_chart_answers_svg_and_png(client, fmt):
    body = {"chart": "gains_and_losses", "format": fmt, "units": HOUSING, "scenario": additions_scenario()}
    response = client.post("/v1/charts", json=body)
    assert response.status_code == 200 and response.mimetype == f"image/{'svg+xml' if fmt == 'svg' else fmt}"
    if fmt == "png":
        from matplotlib.image import imread

        pixels = imread(io.BytesIO(response.data), format="png")
        assert pixels.shape[:2] == (SIZE_PX[1], SIZE_PX[0]) and pixels.std() > 0.05
        return
    ET.fromstring(response.data)
    text = response.get_data(as_text=True)
    for needle in (
        "Who gains and who loses",
        "Tenants in controlled homes",
        "Households priced or rationed out",
        "Government",
        "EUR, today's money (period 0)",
        "total over years 1 to",  # the period's own word (HOUSING: years)
        "efficient allocation",
        "free market of the same period",
        "discounted at 3.5 % per year",
        "qualified analysts",
        "levy: net",
    ):
        assert needle in text, needle


def _bars(figure) -> np.ndarray:
    """(policies, groups) the widths of the bars drawn, panel by panel."""
    panels = [ax for ax in figure.axes if ax.patches]
    return np.array([[bar.get_width() for bar in ax.patches] for ax in panels])


@pytest.mark.parametrize("rate", [0.0, 0.035, 0.07])
def test_each_bar_is_the_present_value_of_its_groups_distribution(rate):
    from service.charts import gains_and_losses_figure

    request = additions_scenario(discount_rate=rate)
    body = simulate(request)
    drawn = _bars(gains_and_losses_figure(body, request, HOUSING, "linear"))
    # numpy_financial.npv: sum_t v_t / (1 + r)^t with period 0 first (its change is 0).
    expected = np.array([[npf.npv(rate, p["distribution"][g]) for g in GROUP_KEYS] for p in body["paths"]])
    assert drawn.shape == (len(body["paths"]), len(GROUP_KEYS))
    np.testing.assert_allclose(drawn, expected, rtol=1e-12, atol=1e-6)
    # The groups add up to minus the (discounted) deadweight loss of the summary (MODEL.md 15).
    losses = [s["discounted_deadweight_loss"] for s in body["summary"]]
    np.testing.assert_allclose(drawn.sum(axis=1), -np.array(losses), rtol=1e-9, atol=1e-3)
    if rate == 0.0:  # undiscounted: the summary's own totals
        totals = [[s["distribution_totals"][g] for g in GROUP_KEYS] for s in body["summary"]]
        np.testing.assert_allclose(drawn, totals, rtol=1e-12, atol=1e-6)


def test_a_step_discount_schedule_weights_each_period_by_the_product_of_its_rates():
    """The engine's discounted group totals, which the who-gains chart draws, under a step
    schedule: each period weighted by prod_(u<=t) 1/(1+r_u) (MODEL.md 6), the last step holding
    after its period; through period 4 an ordinary present value at 3.5 % (numpy_financial.npv)."""
    from service.charts import gains_and_losses

    steps = [{"through_period": 4, "rate": 0.035}, {"through_period": 9, "rate": 0.03}]
    request = additions_scenario(discount_rate=steps)
    body = simulate(request)
    values = gains_and_losses(body)
    rates = np.array([0.0] + [0.035] * 4 + [0.03] * 11)  # periods 0..15; the last step holds past 9
    factors = np.cumprod(1.0 / (1.0 + rates))
    for p, row in zip(body["paths"], values, strict=True):
        series = np.array([p["distribution"][g] for g in GROUP_KEYS])
        np.testing.assert_allclose(row, (series * factors).sum(axis=1), rtol=1e-12, atol=1e-6)
        head = (series[:, :5] * factors[:5]).sum(axis=1)
        np.testing.assert_allclose(head, [npf.npv(0.035, s[:5]) for s in series], rtol=1e-12, atol=1e-6)


def test_random_rationing_answers_422_pointing_at_the_rationing(client):
    request = example_request("quillbrook-rent-freeze")
    request["market"]["demand"]["price_elasticity"] = -1.2  # finite willingness to pay
    request["welfare"]["rationing"] = "random"
    response = client.post("/v1/charts", json={"chart": "gains_and_losses", "scenario": request})
    assert response.status_code == 422 and response.mimetype == "application/problem+json"
    (error,) = response.get_json()["errors"]
    assert error["pointer"] == "/scenario/welfare/rationing"
    assert "not reported under random rationing" in error["message"]
    # The paths chart of the same scenario is drawn: only the split is missing.
    assert client.post("/v1/charts", json={"chart": "paths", "scenario": request}).status_code == 200


def test_the_homes_below_panel_appears_only_under_the_stock_schedule(client):
    stock = additions_scenario()
    with_stock = client.post("/v1/charts", json={"chart": "paths", "format": "svg", "scenario": stock})
    assert "homes below the free path" in with_stock.get_data(as_text=True)
    for other in ("paths", "bands"):
        text = _svg(client, other)
        assert "homes below the free path" not in text and "quantity traded" in text
    # Drawn from the response's own series: the panel's lines are its homes_below_free_path.
    from service.charts import render_paths

    body = simulate(stock)
    assert "homes below the free path" in render_paths(body, HOUSING, "svg", "linear").decode()
    body["paths"][0].pop("homes_below_free_path")  # not every path carries it: no panel
    assert "homes below the free path" not in render_paths(body, HOUSING, "svg", "linear").decode()


def _axes_count(svg: str) -> int:
    """Axes that carry a drawing (matplotlib writes each axes as a group with its own id)."""
    return len(re.findall(r'<g id="axes_\d+">', svg))


@pytest.mark.parametrize(
    "panels",
    [["consumer_price"], ["quantity", "shortage"], ["consumer_price", "quantity", "deadweight_loss"]],
)
def test_panels_draws_exactly_the_panels_asked_for_under_the_title_given(client, panels):
    title = "Quillbrook: what a freeze does"
    body = {
        "chart": "paths",
        "format": "svg",
        "panels": panels,
        "title": title,
        "scenario": scenario("paths"),
    }
    response = client.post("/v1/charts", json=body)
    assert response.status_code == 200
    svg = response.get_data(as_text=True)
    assert _axes_count(svg) == len(panels)
    assert f"<!-- {title} -->" in svg
    for name in panels:
        assert f"({labels.SERIES[name][1]})" in svg  # each panel's title names its series


def test_a_band_chart_takes_panels_too(client):
    body = {"chart": "bands", "format": "svg", "panels": ["consumer_price"], "scenario": scenario("bands")}
    svg = client.post("/v1/charts", json=body).get_data(as_text=True)
    assert _axes_count(svg) == 1


def _uncertain_partial_rule() -> dict:
    """Tollbrae's caps (new homes exempt, rents reset between tenants) beside a free market,
    with an uncertain long-run elasticity: only the caps' bands carry the rents of controlled
    and uncontrolled homes (an analyst's trial case)."""
    request = example_request("tollbrae-decontrol-and-exempt-building")
    request["market"]["supply"]["long_run_elasticity"] = {
        "distribution": "triangular",
        "low": 0.4,
        "mode": 0.8,
        "high": 1.5,
    }
    request["draws"] = 200
    return request


@pytest.mark.parametrize("panels", [None, ["controlled_and_uncontrolled_rents"]])
def test_a_band_chart_of_rules_on_part_of_the_homes_draws_the_rents_where_a_policy_has_them(client, panels):
    request = _uncertain_partial_rule()
    answer = client.post("/v1/bands", json=request).get_json()
    carries = [("covered_price" in b["series"]) for b in answer["bands"]]
    assert any(carries) and not all(carries)  # the free market has no controlled rents
    body = {"chart": "bands", "format": "svg", "scenario": request}
    if panels is not None:
        body["panels"] = panels
    response = client.post("/v1/charts", json=body)
    assert response.status_code == 200, response.get_json()
    svg = response.get_data(as_text=True)
    assert f"({labels.SERIES['covered_price'][1]})" in svg
    for band in answer["bands"]:  # every policy is in the legend, drawn on a panel or not
        assert band["name"] in svg


def test_a_briefing_of_bands_for_rules_on_part_of_the_homes_is_answered(client):
    response = client.post("/v1/briefing", json=_uncertain_partial_rule())
    assert response.status_code == 200, response.get_json()
    # The band chart's title, wrapped where it is wider than the chart (a text comment a line).
    comments = re.findall(r"<!-- (.*?) -->", response.get_data(as_text=True))
    assert "ranges over the draws" in " ".join(comments)


def test_a_panel_the_answer_does_not_carry_is_a_422_at_its_pointer(client):
    body = {"chart": "paths", "panels": ["consumer_price", "vacant_homes"], "scenario": scenario("paths")}
    response = client.post("/v1/charts", json=body)
    assert response.status_code == 422
    (error,) = response.get_json()["errors"]
    assert error["pointer"] == "/panels/1" and "not in this answer" in error["message"]


def test_controlled_and_uncontrolled_rents_are_a_default_panel_only_where_a_ceiling_is_partial(client):
    partial = example_request("corrowdale-older-buildings")
    svg = client.post(
        "/v1/charts", json={"chart": "paths", "format": "svg", "scenario": partial}
    ).data.decode()
    assert "Rents: controlled homes (solid)" in svg
    whole = _svg(client, "paths")
    assert "Rents: controlled" not in whole


def test_money_is_labelled_real_and_nominal_beside_it_under_inflation(client):
    request = example_request("essvane-freeze-under-inflation")
    svg = client.post(
        "/v1/charts", json={"chart": "paths", "format": "svg", "scenario": request}
    ).data.decode()
    assert "money of the day" in svg and "today's money (period 0)" in svg
    assert "(nominal consumer price)" in svg


def test_the_tornado_shows_the_output_chosen_with_a_value_at_each_bar_end(client):
    request = scenario("sensitivity")
    answer = client.post("/v1/sensitivity", json=request).get_json()
    body = {"chart": "sensitivity", "format": "svg", "output": "final_consumer_price", "scenario": request}
    svg = client.post("/v1/charts", json=body).get_data(as_text=True)
    assert "(final consumer price)" in svg
    item = answer["inputs"][0]
    policy = max(item["policies"], key=lambda p: p["swing"]["final_consumer_price"] or 0)
    from service.charts import _value_label

    for end in ("low", "high"):
        assert f"<!-- {_value_label(policy[end]['final_consumer_price'])} -->" in svg
    bad = client.post("/v1/charts", json={**body, "output": "tallest_building"})
    assert bad.status_code == 422 and bad.get_json()["errors"][0]["pointer"] == "/output"


def test_a_tornado_of_a_policy_the_scenario_does_not_have_is_a_422_at_the_policy(client):
    request = scenario("sensitivity")
    names = [p["name"] for p in request["policies"]]
    body = {"chart": "sensitivity", "format": "svg", "scenario": request}
    bad = client.post("/v1/charts", json={**body, "policy": "no such policy"})
    assert bad.status_code == 422
    (error,) = bad.get_json()["errors"]
    assert error["pointer"] == "/policy" and all(name in error["message"] for name in names)
    assert client.post("/v1/charts", json={**body, "policy": names[-1]}).status_code == 200


def test_the_renters_chart_needs_renters_against_the_free_path(client):
    body = {"chart": "renters_vs_free_path", "scenario": scenario("paths")}
    response = client.post("/v1/charts", json=body)
    assert response.status_code == 422
    assert response.get_json()["errors"][0]["pointer"] == "/scenario/adjustment"


def test_the_renters_chart_colours_each_period_by_the_rules_phase_and_sums_them():
    from service.charts import render_renters, renters_phases

    request = additions_scenario()
    request["policies"][1]["end"] = 4
    body = simulate(request)
    # A rendering check on an invented series (the engine adds vs_free_path under MODEL.md 19).
    for p, path in enumerate(body["paths"]):
        renters = [0.0 if p == 0 else (100.0 if 1 <= t <= 4 else -40.0) for t in body["periods"]]
        path["vs_free_path"] = {"renters": renters, "extra_rent": [0.0] * len(renters)}
    rows = renters_phases(request, body)
    assert [name for name, _, _ in rows] == [p["name"] for p in request["policies"][1:]]
    name, values, phases = rows[0]
    assert values[1] == 100.0 and values[-1] == -40.0
    assert phases == [0, 1, 1, 1, 1] + [2] * (len(body["periods"]) - 5)
    svg = render_renters(body, request, HOUSING, "svg", "linear").decode()
    horizon = len(body["periods"]) - 1
    assert f"<!-- {name}: during +400, after \u2212{_compact_total(40.0 * (horizon - 4))} -->" in svg
    # The same rule in force to the horizon has no years after it: said so, not "after 0".
    request["policies"][1].pop("end")
    lasting = simulate(request)
    for path in lasting["paths"]:
        path["vs_free_path"] = {"renters": [0.0] + [100.0] * horizon, "extra_rent": [0.0] * (horizon + 1)}
    svg = render_renters(lasting, request, HOUSING, "svg", "linear").decode()
    assert f"<!-- {name}: during +{_compact_total(100.0 * horizon)}, in force to the end -->" in svg


def _compact_total(value: float) -> str:
    from service.charts import _compact

    return _compact(value)


@pytest.mark.parametrize("chart", ["paths", "gains_and_losses"])
def test_a_dollar_sign_in_units_or_title_prints_as_it_is(client, chart):
    body = {
        "chart": chart,
        "format": "svg",
        "title": r"Cost in $\frac$ terms",
        "units": {"currency": "$", "quantity": "homes"},
        "scenario": scenario("paths"),
    }
    response = client.post("/v1/charts", json=body)
    assert response.status_code == 200
    assert r"<!-- Cost in $\frac$ terms -->" in response.get_data(as_text=True)


def test_a_rule_that_only_moves_money_between_groups_shows_a_net_of_zero(client):
    # Tollbrae's exempting, decontrolled cap: the groups' gains and losses cancel to the last
    # digits (its deadweight loss against the same-period stocks is 0, MODEL.md 17), so its
    # panel says "net 0", not the rounding residue (about -2e-07 before).
    request = example_request("tollbrae-decontrol-and-exempt-building")
    svg = client.post(
        "/v1/charts", json={"chart": "gains_and_losses", "format": "svg", "scenario": request}
    ).get_data(as_text=True)
    assert "rents reset between tenants: net 0 -->" in svg
    assert "e-0" not in svg.split("rents reset between tenants: net", 1)[1][:12]
    from service.charts import _net

    assert _net(np.array([1e6, -1e6 + 1e-4])) == 0.0  # rounding of a million moved
    assert _net(np.array([1e6, -0.9e6])) == 1e5  # a real net gain is kept


def test_tick_labels_read_rents_and_homes_in_full_and_large_sums_short():
    """A council reads 1,350 as a rent; 1.35k is a programmer's number. Millions and more keep
    their short form (M, B, T) so the axis stays narrow."""
    from service.charts import _compact

    labels = [_compact(v) for v in (0.025, 12.5, 1350.0, 54000.0, 999_999.0, 2_500_000.0, -3.2e9)]
    assert labels == ["0.025", "12.5", "1,350", "54,000", "999,999", "2.5M", "\u22123.2B"]  # a minus sign


def test_the_bar_labels_of_one_chart_read_alike():
    """Beside -128M a loss of 828,917 reads -829k (a helper's trial saw both forms in one
    who-gains chart); where nothing reaches a million, thousands stay in full."""
    from service.charts import _in_scale_of, _signed

    assert _in_scale_of(-828_917.0, 128e6) == "\u2212829k"
    assert _signed(-828_917.0, 128e6) == "\u2212829k" and _signed(-5.25e6, 4.19e9) == "\u22125.25M"
    assert _signed(3.1e9, 3.1e9) == "+3.1B" and _signed(412.0, 3.1e9) == "+412"
    assert _signed(828_917.0, 900_000.0) == "+828,917"
    assert _signed(0.0, 1e9) == "0"
    # a value that rounds up takes the next short form: never 1e+03k or 1e+03M
    assert _in_scale_of(999_600.0, 1e8) == "1M" and _signed(999_700_000.0) == "+1B"


def test_the_percentile_words_read_as_ordinals():
    from service.charts import ordinal

    assert [ordinal(q) for q in (1, 2, 3, 5, 11, 12, 13, 21, 22, 95, 2.5, "97.5")] == [
        "1st",
        "2nd",
        "3rd",
        "5th",
        "11th",
        "12th",
        "13th",
        "21st",
        "22nd",
        "95th",
        "2.5th",
        "97.5th",
    ]


@pytest.mark.parametrize(
    ("percentiles", "said", "unsaid"),
    [
        (
            None,  # the demo's own: 5, 25, 50, 75, 95
            ["shaded: 5th to 95th percentile of 500 draws", "darker: 25th to 75th"],
            ["10th"],
        ),
        ([10, 50, 90], ["shaded: 10th to 90th percentile of 500 draws"], ["darker", "5th", "25th"]),
    ],
)
def test_a_band_chart_says_which_percentiles_are_shaded_and_what_the_line_is(
    client, percentiles, said, unsaid
):
    request = scenario("bands")
    if percentiles:
        request["percentiles"] = percentiles
    for fmt in ("svg", "png"):
        response = client.post("/v1/charts", json={"chart": "bands", "format": fmt, "scenario": request})
        assert response.status_code == 200
    svg = client.post("/v1/charts", json={"chart": "bands", "format": "svg", "scenario": request}).get_data(
        as_text=True
    )
    for words in [*said, "line: each policy at the central values"]:
        assert f"<!-- {words} -->" in svg, words
    for words in unsaid:
        assert words not in svg, words


def _title_fits(figure, title: str) -> None:
    """The figure's title holds every word of `title` and no line of it is wider than the figure."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    renderer = FigureCanvasAgg(figure).get_renderer()
    heading = figure._suptitle
    assert heading.get_text().split() == title.split()
    box = heading.get_window_extent(renderer)
    assert box.x0 >= 0 and box.x1 <= SIZE_PX[0], (box.x0, box.x1)
    # The panels start below the title, however many lines it takes.
    assert all(ax.get_position().y1 * SIZE_PX[1] <= box.y0 for ax in figure.axes)


LONG_TITLE = (
    "Quillbrook, uncertain elasticities, council briefing: what moves value lost to everyone, "
    "discounted under 2.5% cap"
)


def test_a_long_tornado_title_wraps_to_show_every_word_within_the_figure():
    from service.charts import sensitivity_figure
    from service.uncertainty import sensitivity

    body = sensitivity(scenario("sensitivity"))
    assert len(LONG_TITLE) <= 120  # the longest title the service takes
    long = sensitivity_figure(body, UNITS, "linear", "2.5% cap", LONG_TITLE)
    _title_fits(long, LONG_TITLE)
    assert long._suptitle.get_text().count("\n") == 1
    short = sensitivity_figure(body, UNITS, "linear", "2.5% cap", "What moves the loss")
    assert short._suptitle.get_text() == "What moves the loss" and short._suptitle.get_fontsize() == 15


def test_a_long_band_chart_title_wraps_too():
    from service.charts import bands_figure
    from service.uncertainty import bands

    body = bands(scenario("bands"))
    _title_fits(bands_figure(body, UNITS, "linear", LONG_TITLE), LONG_TITLE)


def test_a_title_without_spaces_is_broken_rather_than_cut():
    from service.charts import sensitivity_figure
    from service.uncertainty import sensitivity

    title = "x" * 120
    figure = sensitivity_figure(sensitivity(scenario("sensitivity")), UNITS, "linear", None, title)
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    box = figure._suptitle.get_window_extent(FigureCanvasAgg(figure).get_renderer())
    assert figure._suptitle.get_text().replace("\n", "") == title and box.x1 <= SIZE_PX[0]
