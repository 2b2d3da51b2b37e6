"""The page at / in a real headless browser (Debian's chromium driven by Playwright): an analyst's
three jobs built in the form (not pasted) and checked against the answer, the workbook and the
briefing downloaded, charts with their own titles and downloads, sensitivity on the page, no
lost clicks after editing the JSON, questioned values, saved requests and links, and no table
wider than the window from 1,280 to 1,920 px. Screenshots go to tests/artifacts/. CI installs
chromium and sets SHOCKPATH_REQUIRE_BROWSER=1 so that a missing browser fails there."""

from __future__ import annotations

import io
import json
import re
import threading
from itertools import pairwise
from pathlib import Path

import numpy as np
import pytest
from openpyxl import load_workbook
from werkzeug.serving import make_server

from service import create_app
from service.charts import GROUPS
from service.examples import example_request

from ..reference import discounted_group_sums
from .pages import run_scenario

ARTIFACTS = Path(__file__).resolve().parents[1] / "artifacts"
pytestmark = pytest.mark.slow
HOUSING = {
    "#u-currency": "EUR",
    "#u-quantity": "homes",
    "#u-unit": "home",
    "#u-interval": "month",
    "#u-period": "year",
}


@pytest.fixture(scope="module")
def base_url():
    server = make_server("127.0.0.1", 0, create_app({"band_threads": 1}), threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{server.server_port}"
    server.shutdown()


def _load(page, base_url, name):
    page.goto(base_url + "/")
    page.wait_for_function("document.querySelector('#status').textContent.startsWith('Loaded')")
    page.select_option("#demo", name)
    page.click("#load-demo")
    page.wait_for_function(f"document.querySelector('#status').textContent.startsWith('Loaded {name}')")


def _request(page) -> dict:
    return page.evaluate("JSON.parse(document.querySelector('#request-json').value)")


def _answer(page) -> dict:
    return page.evaluate("fetch(document.querySelector('#download-json').href).then(r => r.json())")


def _summary(page) -> dict:
    """figure key -> cells (one per policy) of the summary table."""
    rows = page.eval_on_selector_all(
        "#summary tbody tr",
        "rows => rows.map(r => [r.dataset.figure,"
        " [...r.querySelectorAll('td')].map(c => c.firstChild.textContent)])",
    )
    return dict(rows)


def _years(page, policy) -> tuple[list[str], list[list[str]]]:
    table = f"table.years[data-policy='{policy}']"
    heads = page.eval_on_selector_all(f"{table} thead th", "ths => ths.map(t => t.textContent)")
    rows = page.eval_on_selector_all(
        f"{table} tbody tr", "rows => rows.map(r => [...r.children].map(c => c.textContent))"
    )
    return heads, rows


WORDS = {" million": 1e6, " billion": 1e9, " trillion": 1e12}


def _number(text: str) -> float:
    """A figure as the page shows it: 1,180, -26.36 million, +1.061 billion."""
    factor = next((f for w, f in WORDS.items() if text.endswith(w)), 1.0)
    text = next((text[: -len(w)] for w in WORDS if text.endswith(w)), text)
    return factor * float(text.replace(",", "").replace("+", "").replace("\u2212", "-"))


def _units(page):
    for selector, value in HOUSING.items():
        page.fill(selector, value)


def _no_clipping(page, width):
    """No table wider than its box, nothing wider than the window."""
    page.set_viewport_size({"width": width, "height": 1400})
    wide = page.evaluate(
        "[...document.querySelectorAll('#summary, #groups, table.years')].filter(t => t.offsetParent)"
        ".filter(t => t.scrollWidth > t.parentElement.clientWidth + 1).map(t => t.id || t.dataset.policy)"
    )
    assert wide == [], (width, wide)
    assert page.evaluate("document.documentElement.scrollWidth <= window.innerWidth"), width


def _download(page, selector) -> bytes:
    with page.expect_download() as info:
        page.click(selector)
    return Path(info.value.path()).read_bytes()


def test_job_one_a_cap_and_a_freeze_over_ten_years_with_inflation_built_in_the_form(page, base_url):
    ARTIFACTS.mkdir(exist_ok=True)
    _load(page, base_url, "quillbrook-rent-freeze")
    _units(page)
    page.fill("#scenario-name", "Quillbrook ten years")
    page.fill("#f-horizon", "10")
    page.fill("#f-inflation", "2.5 %")  # a percent written as such
    page.fill("input[data-pointer='/market/quantity']", "54,000")  # thousands with a comma
    page.click("button[data-action='remove-policy:3']")  # the five-year freeze goes
    page.fill("input[data-pointer='/policies/2/growth']", "2 %")
    page.fill("input[data-pointer='/policies/2/name']", "2% nominal cap")
    request = _request(page)
    assert request["horizon"] == 10 and request["market"]["inflation"] == 0.025
    assert request["market"]["quantity"] == 54000
    assert [p["name"] for p in request["policies"]] == ["free market", "rent freeze", "2% nominal cap"]
    assert request["policies"][2]["growth"] == 0.02
    hint = page.text_content("#" + page.get_attribute("#f-inflation", "aria-describedby"))
    assert "2.5 %" in hint and "today's money (period 0)" in hint
    assert "real change" in page.text_content("#shock-fields")  # shocks are real changes
    run_scenario(page)
    answer = _answer(page)
    assert answer["request"]["market"]["inflation"] == 0.025  # the answer carries its request
    # The summary: every total of the answer, a column per policy, units in the analyst's words.
    summary = _summary(page)
    # Every total but who gains and who loses, which has its own table (both bases).
    groups = ("distribution_totals", "distribution_totals_discounted")
    flat_keys = [k for k in answer["summary"][0] if k not in ("name", "kind", *groups)]
    # Nested figures (other_form) appear member by member (other_form.peak_shortage, ...).
    missing = [k for k in flat_keys if k not in summary and not any(f.startswith(k + ".") for f in summary)]
    assert not missing, missing
    price = page.text_content("#summary tr[data-figure='final_consumer_price'] th")
    assert "EUR per home per month, today's money (period 0)" in price
    assert [_number(c) for c in summary["final_consumer_price"]] == pytest.approx(
        [s["final_consumer_price"] for s in answer["summary"]], abs=0.5
    )
    # Nominal beside real: a nominal freeze holds the rent of the day while the real rent falls.
    heads, rows = _years(page, "rent freeze")
    nominal = next(i for i, h in enumerate(heads) if h.startswith("Rent paid in money of the day"))
    real = next(i for i, h in enumerate(heads) if h.startswith("Rent paid (consumer price)"))
    assert "money of the day" in heads[nominal] and "today's money (period 0)" in heads[real]
    assert {r[nominal] for r in rows[1:]} == {"1,180"}
    assert _number(rows[-1][real]) < _number(rows[1][real]) < 1180
    assert any(h.startswith("Price level") for h in heads)
    # The charts of this run, with the scenario name in their titles and PNG and SVG downloads.
    title = page.get_attribute("#chart-figure img", "data-title")
    assert title == "Quillbrook ten years: paths by policy"
    svg = page.evaluate("fetch(document.querySelector('#chart-figure img').src).then(r => r.text())")
    assert "money of the day" in svg and "EUR per home per month" in svg
    png = _download(page, "button[data-action='chart-figure-png']")
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    assert _download(page, "button[data-action='gains-figure-svg']").lstrip().startswith(b"<?xml")
    # One panel alone, with its own title.
    page.select_option("#chart-figure-panel", "nominal_consumer_price")
    page.wait_for_function(
        "document.querySelector('#chart-figure img').dataset.title.includes('money of the day')"
    )
    # The workbook, read back against the answer.
    book = load_workbook(io.BytesIO(_download(page, "#download-workbook")))
    about = dict(list(book["About"].iter_rows(values_only=True))[1:])
    assert about["Scenario id"] == answer["scenario_id"]
    rows = list(book["Summary"].iter_rows(values_only=True))
    assert [r[0] for r in rows[1:]] == [p["name"] for p in request["policies"]]
    # The briefing, a self-contained HTML document with the scenario's name.
    briefing = _download(page, "#download-briefing").decode()
    assert "<h1>Quillbrook ten years</h1>" in briefing and answer["scenario_id"] in briefing
    assert "<script" not in briefing
    for width in (1280, 1920):
        _no_clipping(page, width)
        page.screenshot(path=str(ARTIFACTS / f"page-job-one-{width}.png"), full_page=True)


def test_job_two_a_freeze_on_older_buildings_only_through_coverage(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    _units(page)
    page.fill("input[data-pointer='/policies/1/coverage']", "40 %")
    page.fill("input[data-pointer='/policies/1/name']", "freeze on older buildings")
    request = _request(page)
    assert request["policies"][1]["coverage"] == 0.4
    run_scenario(page)
    answer = _answer(page)
    # The rents of the other homes: in the year table and as a chart panel.
    heads, rows = _years(page, "freeze on older buildings")
    other = next(i for i, h in enumerate(heads) if h.startswith("Rent of uncontrolled homes"))
    path = answer["paths"][1]
    assert [_number(r[other]) for r in rows] == pytest.approx(path["uncovered_price"], abs=0.5)
    assert path["uncovered_price"][-1] > answer["paths"][0]["consumer_price"][-1]  # Fallis and Smith (1984)
    assert "rents of controlled and uncontrolled homes" in page.text_content("#chart-figure figcaption")
    # Shortage is named for what it is.
    assert page.text_content("#summary tr[data-figure='peak_shortage'] th").startswith(
        "Most homes wanted but not let"
    )
    # Who gains and who loses: the table is on the chart's basis (discounted), as the engine's sums.
    expected = np.array(discounted_group_sums(answer, answer["request"], [g for g, _ in GROUPS]))
    rows = page.eval_on_selector_all(
        "#groups tbody tr[data-group]",
        "rows => rows.map(r => [...r.querySelectorAll('td')].map(c => c.textContent))",
    )
    # Whole numbers below a million, four figures from a million (26.36 million).
    assert np.allclose([[_number(c) for c in r] for r in rows], expected.T, rtol=5e-4, atol=0.6)
    caption = page.text_content("#groups caption")
    assert "total over years 1 to 15" in caption and "discounted at 3.5 % per year" in caption
    assert "same basis as the chart" in caption
    for width in (1280, 1920):
        _no_clipping(page, width)
        page.screenshot(path=str(ARTIFACTS / f"page-job-two-{width}.png"), full_page=True)


def test_job_three_uncertain_elasticities_chosen_in_the_form_give_bands_and_a_tornado(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    page.select_option("select[data-action='uncertain:/market/demand/price_elasticity']", "normal")
    page.select_option("select[data-action='uncertain:/market/supply/long_run_elasticity']", "triangular")
    page.fill("input[data-pointer='/market/supply/long_run_elasticity/low']", "0.8")
    assert page.is_visible("#uncertainty-fieldset")
    page.fill("input[data-pointer='/draws']", "400")
    request = _request(page)
    assert request["market"]["demand"]["price_elasticity"]["distribution"] == "normal"
    assert request["market"]["supply"]["long_run_elasticity"] == {
        "distribution": "triangular",
        "low": 0.8,
        "mode": 1.5,
        "high": 1.95,
    }
    # The default adjustment rate ties building speed to the long-run elasticity: said so.
    page.select_option("#f-schedule", "geometric")
    assert page.is_visible("#coupling-note")
    run_scenario(page)
    assert page.get_attribute("#results", "data-endpoint") == "/v1/bands"
    assert "400 draws" in page.text_content("#status")
    assert page.locator("#summary td .range").count() > 0
    answer = _answer(page)
    shares = page.eval_on_selector_all(
        "#summary tr[data-figure='bands_binding_share'] td", "cells => cells.map(c => c.textContent)"
    )
    assert shares == [f"{100 * b['binding_share']:.0f} %" for b in answer["bands"]]
    page.wait_for_selector("#tornado-figure img[data-title]")
    assert page.is_visible("#sensitivity-caution")
    assert "slower building" in page.text_content("#sensitivity-caution")
    outputs = page.eval_on_selector_all("#tornado-output option", "os => os.map(o => o.value)")
    assert outputs[:2] == ["discounted_deadweight_loss", "final_consumer_price"]
    page.select_option("#tornado-output", "final_consumer_price")
    page.wait_for_function(
        "document.querySelector('#tornado-figure img')?.dataset.title"
        "?.includes('rent paid in the last period')"
    )
    svg = page.evaluate("fetch(document.querySelector('#tornado-figure img').src).then(r => r.text())")
    assert "(final consumer price)" in svg and "central" in svg
    for width in (1280, 1920):
        _no_clipping(page, width)
        page.screenshot(path=str(ARTIFACTS / f"page-job-three-{width}.png"), full_page=True)


def test_the_tornado_opens_on_the_policy_whose_loss_swings_most(page, base_url):
    """An analyst's trial: Tollbrae's exempt cap with rents reset between tenants loses nothing
    within each year, so opened on it (the first rule) the tornado was empty; it opens on the
    policy whose first figure swings most."""
    _load(page, base_url, "tollbrae-decontrol-and-exempt-building")
    request = _request(page)
    request["policies"] = [request["policies"][0], request["policies"][2], request["policies"][1]]
    request["market"]["supply"]["long_run_elasticity"] = {"distribution": "uniform", "low": 0.6, "high": 1.4}
    request["draws"] = 200
    page.click("#json-details summary")
    page.eval_on_selector("#request-json", _PASTE, json.dumps(request))
    run_scenario(page)
    page.wait_for_selector("#tornado-figure img[data-title]")
    body = page.evaluate(
        "fetch('/v1/sensitivity', {method: 'POST', headers: {'Content-Type': "
        "'application/json'}, body: JSON.stringify(state.sensitivity.request)}).then(r => r.json())"
    )
    swing = {
        q["name"]: max(
            (e["policies"][i]["swing"]["discounted_deadweight_loss"] or 0.0) for e in body["inputs"]
        )
        for i, q in enumerate(body["inputs"][0]["policies"])
    }
    lossless = request["policies"][1]["name"]
    assert swing[lossless] == 0.0 and max(swing.values()) > 0.0
    assert page.input_value("#tornado-policy") == max(swing, key=swing.get)


def test_no_click_is_lost_after_editing_the_request_by_hand(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    request = _request(page)
    request["policies"].pop()  # the analyst removes a policy in the JSON ...
    page.click("#json-details summary")
    page.fill("#request-json", json.dumps(request, indent=2))
    # ... and at once presses a remove button of the form that the edit redraws.
    page.click("button[data-action='remove-policy:1']")
    # A click lost to the redraw is pressed again a moment later (after the pointer is released).
    page.wait_for_function("document.querySelectorAll('#policy-fields .item').length === 2")
    names = [p["name"] for p in _request(page)["policies"]]
    assert names == ["free market", "2.5% cap"]
    assert page.locator("#policy-fields .item").count() == 2
    # Edited again and run at once: the run is of the edited request.
    request = _request(page)
    request["horizon"] = 6
    page.fill("#request-json", json.dumps(request))
    run_scenario(page)
    assert len(_answer(page)["periods"]) == 7
    assert len(_summary(page)["final_quantity"]) == 2


def test_one_press_of_a_remove_button_removes_exactly_one_policy_or_shock(page, base_url):
    """The replay of a click lost to a redraw (above) must not press the next item's button when
    the click itself redrew the form: removing a policy or a shock removes that one alone."""
    _load(page, base_url, "quillbrook-rent-freeze")
    before = _request(page)
    page.click("button[data-action='remove-policy:1']")
    page.wait_for_timeout(300)  # past the moment a lost click would be replayed
    names = [p["name"] for p in _request(page)["policies"]]
    assert names == [p["name"] for i, p in enumerate(before["policies"]) if i != 1]
    assert page.locator("#policy-fields .item").count() == len(before["policies"]) - 1
    assert len(before["shocks"]) >= 2
    page.click("button[data-action='remove-shock:0']")
    page.wait_for_timeout(300)
    assert _request(page)["shocks"] == before["shocks"][1:]


def test_the_chart_caption_names_the_panels_drawn_and_the_others_are_offered(page, base_url):
    _load(page, base_url, "tollbrae-decontrol-and-exempt-building")
    run_scenario(page)
    page.wait_for_function("document.querySelector('#chart-figure img')?.dataset.title")
    caption = page.text_content("#chart-figure figcaption")
    assert caption.startswith("Rent paid") and "Homes fewer than" in caption
    offered = page.eval_on_selector_all("#chart-figure-panel option", "os => os.map(o => o.value)")
    for extra in ("vacant_homes", "converted_homes", "vs_free_path.renters"):
        assert extra in offered  # offered one by one ...
    for words in ("standing empty", "converted", "Renters gain"):
        assert words not in caption  # ... and not drawn by "every panel"


def test_the_reduced_form_and_the_supply_response_of_the_answer_are_on_the_page(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    run_scenario(page)
    # The run brings its results into view (they start below the form and the library).
    top = page.evaluate("document.querySelector('#results-heading').getBoundingClientRect().top")
    assert -2 <= top < page.viewport_size["height"]  # to the pixel, give or take rounding
    answer = _answer(page)
    rows = page.eval_on_selector_all(
        "#reduced-form tbody tr",
        "rs => rs.map(r => [r.dataset.shifter, ...[...r.cells].map(c => c.textContent)])",
    )
    assert [r[0] for r in rows] == list(answer["reduced_form"])
    income = answer["reduced_form"]["income"]
    (row,) = [r for r in rows if r[0] == "income"]
    assert row[2] == f"+{income['short_run']['price']:.2f}".rstrip("0").rstrip(".")
    page.check("#all-series")
    head = page.text_content("#year-tables table.years thead")
    assert "Supply response this period" in head
    # The rule bites: a flag written as its unit says (1 = yes, 0 = no), not true or false.
    heads, rows = _years(page, "rent freeze")
    bites = next(i for i, h in enumerate(heads) if h.startswith("The rule bites"))
    assert "1 = yes, 0 = no" in heads[bites]
    flags = [r[bites] for r in rows]
    assert set(flags) == {"0", "1"} and flags[0] == "0"
    # The first table open is the first rule's (the free market's is all zeros), periods 0 to T.
    opened = page.eval_on_selector_all("#year-tables details[open] summary", "s => s.map(x => x.textContent)")
    # The demo gives its units (yearly periods): the table names its periods as years.
    assert opened == [f"rent freeze: years 0 (today) to {len(answer['periods']) - 1}"]
    # A freeze's base level is a yes-or-no box, not text to type "true" in.
    box = page.locator("input[data-pointer='/policies/1/base_level']")
    assert box.get_attribute("type") == "checkbox" and box.is_checked()
    # A choice reads in words in the summary table (constant elasticity, not constant_elasticity).
    assert "constant_elasticity" not in page.text_content("#summary")


def test_tables_show_rounding_noise_as_about_zero_and_keep_small_results(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    shown = page.evaluate("[1.46e-11, -3e-12, 0, 0.0042, 12.345, 54000.4].map((v) => number(v))")
    assert shown == ["\u2248 0", "\u2248 0", "0", "0.0042", "12.35", "54,000"]


def _questions_declined(page) -> list[str]:
    """Press Run, decline the page's question (a dialog) and wait for 'Not run': the question."""
    messages = []

    def dismiss(dialog):
        messages.append(dialog.message)
        dialog.dismiss()

    page.once("dialog", dismiss)
    page.click("#run")
    page.wait_for_function("document.querySelector('#status').textContent.startsWith('Not run')")
    return messages


def test_implausible_values_are_questioned_and_not_run_unless_confirmed(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    page.fill("#f-inflation", "60")  # 6,000 % a period: surely 60 % or 0.6 was meant
    messages = _questions_declined(page)
    assert "inflation of 6000 %" in messages[0] and "Run anyway?" in messages[0]
    assert page.get_attribute("#f-inflation", "aria-invalid") == "true"
    page.fill("#f-inflation", "3 %")
    run_scenario(page)  # nothing questioned: no dialog
    page.fill("input[data-pointer='/policies/2/growth']", "3")
    page.once("dialog", lambda d: d.accept())
    run_scenario(page)  # confirmed: it runs
    assert _answer(page)["request"]["policies"][2]["growth"] == 3


def test_thousands_written_with_points_and_shares_written_as_whole_percents_are_questioned(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    page.fill("input[data-pointer='/market/price']", "1.180")  # 1,180 in the European way
    page.fill("input[data-pointer='/market/quantity']", "54.000")
    messages = _questions_declined(page)
    assert "1.180 is read as 1.18; for 1,180 write 1180" in messages[0]
    assert "54.000 is read as 54; for 54,000 write 54000" in messages[0]
    assert page.get_attribute("input[data-pointer='/market/price']", "aria-invalid") == "true"
    # Shares typed as whole percents: depreciation 1 (100 % a period), coverage 40, conversion 2.
    asked = page.evaluate(
        """questions({market: {}, adjustment: {schedule: "stock", depreciation: 1, conversion: 2},
                      policies: [{name: "c", kind: "price_ceiling", coverage: 40}]}).map(q => q.pointer)"""
    )
    shares = ["/policies/0/coverage", "/adjustment/depreciation", "/adjustment/conversion"]
    assert asked == [*shares, "/market/price", "/market/quantity"]  # the form still holds 1.180


def test_shifters_and_shocks_are_added_and_removed_in_the_form(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    page.click("#add-supply-shifter")
    page.fill("[data-rename='/market/supply/shifters/supply_shifter_1']", "construction_cost")
    page.keyboard.press("Tab")
    page.click("#add-shock")
    last = "#shock-fields .item:last-child"
    page.select_option(f"{last} select[data-pointer='/shocks/2/shifter']", "construction_cost")
    page.select_option(f"{last} select[data-pointer='/shocks/2/profile']", "growth")
    page.fill(f"{last} input[data-pointer='/shocks/2/rate']", "1 %")
    request = _request(page)
    assert request["market"]["supply"]["shifters"] == {"construction_cost": -0.5}
    assert request["shocks"][2] == {"shifter": "construction_cost", "profile": "growth", "rate": 0.01}
    run_scenario(page)
    assert _answer(page)["request"]["shocks"][2]["rate"] == 0.01
    page.click("button[data-action='remove-shock:2']")
    page.click("button[data-action='remove-shifter:supply:construction_cost']")
    request = _request(page)
    assert len(request["shocks"]) == 2 and request["market"]["supply"]["shifters"] == {}


def test_a_request_is_saved_opened_and_shared_by_link(page, base_url, browser, tmp_path):
    _load(page, base_url, "quillbrook-rent-freeze")
    page.fill("#scenario-name", "Quillbrook shared")
    page.fill("#f-horizon", "7")
    saved = json.loads(_download(page, "#save-request"))
    assert saved == _request(page) and saved["horizon"] == 7
    saved["horizon"] = 9
    path = tmp_path / "mine.json"
    path.write_text(json.dumps(saved))
    page.set_input_files("#open-file", str(path))
    page.wait_for_function("document.querySelector('#f-horizon').value === '9'")
    assert page.input_value("#demo") == ""  # the picker says it is the analyst's own
    _units(page)  # the units typed travel with the link
    page.click("#copy-link")
    page.wait_for_selector("#scenario-link")
    link = page.input_value("#scenario-link")
    assert "#s=" in link
    other = browser.new_page()
    try:
        other.goto(link)
        other.wait_for_function(
            "document.querySelector('#status').textContent.startsWith('Opened the scenario')"
        )
        assert _request(other) == saved and other.input_value("#scenario-name") == "mine"
        assert {selector: other.input_value(selector) for selector in HOUSING} == HOUSING
    finally:
        other.close()


def test_an_invalid_value_shows_the_error_next_to_its_field(page, base_url):
    page.goto(base_url + "/")
    page.wait_for_function("document.querySelector('#status').textContent.startsWith('Loaded')")
    page.fill("#f-eta", "0.5")
    page.keyboard.press("Enter")  # the form submits from the keyboard
    page.wait_for_selector("#f-eta[aria-invalid='true']")
    described = page.get_attribute("#f-eta", "aria-describedby")
    message = page.text_content(f"#{described.split()[0]}")
    assert "negative (for example -0.5)" in message
    assert page.evaluate("document.activeElement.id") == "f-eta"


def test_random_rationing_says_who_gains_is_not_reported(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    page.select_option("select[data-pointer='/welfare/rationing']", "random")
    run_scenario(page)
    cells = page.eval_on_selector_all("#groups tbody td", "tds => tds.map(t => t.textContent)")
    assert cells and set(cells) == {"not reported under random rationing"}
    assert page.locator("#gains-figure").count() == 0


def test_series_and_totals_the_engine_adds_appear_with_their_plain_names(page, base_url):
    """An answer carrying the second additions' names (MODEL.md sections 16-20), invented values:
    the page shows them from the one label table, without a change of its own."""
    from service import simulate

    request = example_request("essvane-freeze-under-inflation")
    answer = simulate(request)
    periods = len(answer["periods"])
    for p, path in enumerate(answer["paths"]):
        path["vacant_homes"] = [0.0] * periods
        path["converted_homes"] = [float(p)] * periods
        path["vs_free_path"] = {"renters": [10.0 * p] * periods, "extra_rent": [0.0] * periods}
        path["distribution"]["households_drawn_in"] = [0.0] * periods
    for s in answer["summary"]:
        s["final_vacant_homes"] = 0.0
        s["vs_free_path_totals"] = {
            "renters": 1.0,
            "renters_discounted": 0.9,
            "renters_after_end": -2.0,
            "extra_rent": 0.0,
            "extra_rent_after_end": 0.0,
        }
        s["other_form"] = {
            "form": "constant_elasticity",
            "discounted_deadweight_loss": 5.0,
            "final_consumer_price": 1400.0,
            "peak_shortage": 3.0,
        }
        s["distribution_totals"]["households_drawn_in"] = 0.0
    _load(page, base_url, "essvane-freeze-under-inflation")
    page.route(
        "**/v1/paths",
        lambda route: (
            route.fulfill(json=answer)
            if route.request.headers.get("accept", "").startswith("*/*")
            else route.continue_()
        ),
    )
    run_scenario(page)
    page.unroute("**/v1/paths")
    summary = page.eval_on_selector_all("#summary tbody tr th", "ths => ths.map(t => t.textContent)")
    for words in (
        "Homes standing empty, last period",
        "Renters gain (+) or lose (-) against the free path, discounted",
        "Renters gain (+) or lose (-) against the free path after the rule ends",
        "The other curve form",
        "Households drawn in, summed",
    ):
        assert any(w.startswith(words) for w in summary), words
    heads, _ = _years(page, "free market")
    assert any(h.startswith("Homes standing empty (vacant homes)") for h in heads)
    assert any(h.startswith("Renters gain (+) or lose (-) against the free market path") for h in heads)
    assert page.locator("#groups tr[data-group='households_drawn_in']").count() == 1
    assert page.locator("#renters-figure").count() == 1  # drawn where the answer carries it


def test_a_long_scenario_name_still_gives_every_chart_its_title(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    assert page.get_attribute("#scenario-name", "maxlength") == "80"  # the library's name limit
    # A name set from outside the field (a linked record, a script) is not held to maxlength;
    # the service takes chart titles of at most 120 characters, so the page cuts longer ones.
    page.eval_on_selector("#scenario-name", "(field) => { field.value = 'Quillbrook '.repeat(12); }")
    run_scenario(page)
    captions = page.inner_text("#charts")
    assert "not drawn" not in captions
    assert page.eval_on_selector_all("#charts img", "images => images.length") >= 1


def test_draws_a_policy_makes_infeasible_are_counted_beside_its_bands(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    request = {
        "market": {
            "price": 1000,
            "quantity": 10000,
            "form": "linear",
            "demand": {"price_elasticity": -0.5},
            "supply": {
                "short_run_elasticity": 0.2,
                "long_run_elasticity": {"distribution": "uniform", "low": 1.0, "high": 3.2},
            },
        },
        "adjustment": {"schedule": "linear", "periods": 3},
        "horizon": 5,
        "policies": [
            {"name": "free", "kind": "none"},
            {"name": "low ceiling", "kind": "price_ceiling", "level": 600},
        ],
        "draws": 400,
        "seed": 1,
    }
    page.eval_on_selector(
        "#request-json",
        "(area, text) => { area.value = text; area.dispatchEvent(new Event('change')); }",
        json.dumps(request),
    )
    run_scenario(page)
    answer = _answer(page)
    left_out = answer["bands"][1]["infeasible_draws"]
    assert 0 < left_out < 400  # a ceiling this low leaves no homes let in some draws
    cells = page.eval_on_selector_all(
        "#summary tr[data-figure='bands_draws'] td", "cells => cells.map(c => c.textContent)"
    )
    assert cells[0] == "400"
    assert cells[1] == f"{400 - left_out} ({left_out} left out: the policy makes them infeasible)"


_PASTE = """(area, text) => {
    area.select();
    area.dispatchEvent(new ClipboardEvent("paste", { bubbles: true }));
    area.value = text;
    area.dispatchEvent(new Event("change"));
}"""


def test_a_request_pasted_over_the_box_drops_the_demo_name_but_not_one_typed(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    demo_name = page.input_value("#scenario-name")
    assert demo_name  # the demo's own name, set by the page
    other = json.dumps(example_request("tamsin-reach-permits"))
    page.eval_on_selector("#request-json", _PASTE, other)
    assert page.input_value("#scenario-name") == ""  # the demo's name no longer titles the charts
    assert page.text_content("#status").startswith("Pasted a request")
    page.fill("#scenario-name", "Our permits case")
    page.eval_on_selector("#request-json", _PASTE, json.dumps(example_request("quillbrook-rent-freeze")))
    assert page.input_value("#scenario-name") == "Our permits case"  # typed by the analyst: kept


def _paste(page, request: dict) -> None:
    page.eval_on_selector(
        "#request-json",
        "(area, text) => { area.value = text; area.dispatchEvent(new Event('change')); }",
        json.dumps(request),
    )


def _cells(page, selector: str) -> list[list[str]]:
    """Per row of `selector`, per policy cell, the figure and the lines under it."""
    return page.eval_on_selector_all(
        selector,
        "rows => rows.map(r => [...r.querySelectorAll('td')].map(c => [c.firstChild.textContent,"
        " ...[...c.querySelectorAll('.range')].map(s => s.textContent)]))",
    )


def _shown(value: float) -> str:
    """A money figure as the page writes it: whole numbers below a million, four figures in
    words from a million (459.3 million)."""
    for size, word in ((1e12, "trillion"), (1e9, "billion"), (1e6, "million")):
        if abs(value) >= size:
            return f"{float(f'{value / size:.4g}'):,g} {word}"
    return f"{value:,.0f}"


def test_band_figures_within_rounding_of_their_scale_show_as_about_zero(page, base_url):
    """An analyst's trial: a band's bound of -0.00000008 on a market of 48,000 homes let at
    1,180 a month read as a finding. A money figure below 1e-9 of the rent bill over the horizon,
    a rent below 1e-9 of the base rent, homes below 1e-9 of the base homes are rounding."""
    _load(page, base_url, "tollbrae-decontrol-and-exempt-building")
    request = _request(page)
    market = request["market"]
    low_run = market["supply"]["long_run_elasticity"]
    market["supply"]["long_run_elasticity"] = {
        "distribution": "uniform",
        "low": 0.7 * low_run,
        "high": 1.3 * low_run,
    }
    request.update(draws=500, seed=1)
    _paste(page, request)
    run_scenario(page)
    answer = _answer(page)
    bill = market["price"] * market["quantity"] * market["payments_per_period"] * (request["horizon"] + 1)
    noise = [
        (i, name)
        for i, band in enumerate(answer["bands"])
        for name, by_q in band["summary"].items()
        if name.startswith("total_")
        and name[6:] in answer["central"]["summary"][i]["distribution_totals"]
        and any(0 < abs(v) < 1e-9 * bill for v in by_q.values())
        and any(abs(v) > 1e-9 for v in by_q.values())  # what the old absolute rule showed
    ]
    assert noise  # this request's bands carry such rounding (seed 1)
    summary = {
        r[0]: r[1]
        for r in page.eval_on_selector_all(
            "#summary tbody tr",
            "rows => rows.map(r => [r.dataset.figure, [...r.querySelectorAll('td .range')]"
            ".map(s => s.textContent)])",
        )
    }
    for i, name in noise:
        shown = summary[f"distribution_totals.{name[6:]}"][i]
        assert "\u2248 0" in shown and "0.0000" not in shown, (name, shown)
    groups = {
        g: cells
        for g, cells in zip(
            page.eval_on_selector_all(
                "#groups tbody tr", "rows => rows.map(r => r.dataset.group || r.dataset.total)"
            ),
            _cells(page, "#groups tbody tr"),
            strict=True,
        )
    }
    for i, name in noise:
        assert "\u2248 0" in groups[name[6:]][i][-1], groups[name[6:]][i]
    assert "0.0000" not in page.inner_text("#summary") + page.inner_text("#groups")
    # Each figure against its own scale: homes against the base homes, rent against the base rent.
    shown = page.evaluate(
        "[[4.22e-8, 10000], [4.22e-8, 1], [-5e-7, 1180], [2e-6, 1180]].map(([v, s]) => number(v, s))"
    )
    assert shown == ["\u2248 0", "0.0000000422", "\u2248 0", "0.000002"]


def test_group_totals_and_who_gains_show_their_spread_when_bands_run(page, base_url):
    """An analyst's trial: the renters', owners' and government's totals and the who-gains table
    showed no range though the bands answer spreads each group's total."""
    _load(page, base_url, "quillbrook-uncertain-elasticities")
    request = _request(page)
    request["draws"] = 400
    _paste(page, request)
    run_scenario(page)
    answer = _answer(page)
    bands = answer["bands"]
    rows = dict(
        zip(
            page.eval_on_selector_all("#summary tbody tr", "rows => rows.map(r => r.dataset.figure)"),
            _cells(page, "#summary tbody tr"),
            strict=True,
        )
    )
    for i, band in enumerate(bands):
        government = band["summary"]["total_government"]
        assert rows["total_government_revenue"][i][1] == (
            f"5th\u201395th: {_shown(government['5'])} to {_shown(government['95'])}"
        )
        for key in ("total_consumer_surplus_change", "total_producer_surplus_change"):
            assert rows[key][i][1] == "spread: see each group below"
        owners = band["summary"]["discounted_owners_of_controlled_homes"]
        assert rows["distribution_totals_discounted.owners_of_controlled_homes"][i][1] == (
            f"5th\u201395th: {_shown(owners['5'])} to {_shown(owners['95'])}"
        )
    # Who gains (discounted at 3.5 %): under each group the spread of its discounted total, which
    # is not its summed total's; under the net, minus the discounted loss's spread.
    groups = page.eval_on_selector_all(
        "#groups tbody tr", "rows => rows.map(r => r.dataset.group || r.dataset.total)"
    )
    cells = dict(zip(groups, _cells(page, "#groups tbody tr"), strict=True))
    freeze = 1
    spread = bands[freeze]["summary"]["discounted_owners_of_controlled_homes"]
    summed = bands[freeze]["summary"]["total_owners_of_controlled_homes"]
    assert spread["5"] != summed["5"] and spread["95"] != summed["95"]
    assert cells["owners_of_controlled_homes"][freeze][1:] == [
        f"5th\u201395th: {_shown(spread['5'])} to {_shown(spread['95'])}",
    ]
    loss = bands[freeze]["summary"]["discounted_deadweight_loss"]
    assert cells["net"][freeze][1:] == [f"5th\u201395th: {_shown(-loss['95'])} to {_shown(-loss['5'])}"]
    # The chart's caption says which percentiles are shaded, from those the request asked for.
    caption = page.text_content("#chart-figure figcaption")
    assert (
        "Shaded: 5th to 95th percentile of 400 draws; darker: 25th to 75th; "
        "line: each policy at the central values." in caption
    )

    # Nothing discounted: each group's range is of the figure above it; other percentiles asked.
    request["welfare"]["discount_rate"] = 0
    request["percentiles"] = [10, 50, 90]
    _paste(page, request)
    run_scenario(page)
    answer = _answer(page)
    cells = dict(zip(groups, _cells(page, "#groups tbody tr"), strict=True))
    spread = answer["bands"][freeze]["summary"]["total_tenants_in_controlled_homes"]
    assert answer["bands"][freeze]["summary"]["discounted_tenants_in_controlled_homes"] == spread
    assert cells["tenants_in_controlled_homes"][freeze][1:] == [
        f"10th\u201390th: {_shown(spread['10'])} to {_shown(spread['90'])}"
    ]
    caption = page.text_content("#chart-figure figcaption")
    assert "Shaded: 10th to 90th percentile of 400 draws; line: each policy at the central values." in caption
    svg = page.evaluate("fetch(document.querySelector('#chart-figure img').src).then(r => r.text())")
    assert "shaded: 10th to 90th percentile of 400 draws" in svg
    page.screenshot(path=str(ARTIFACTS / "page-band-ranges.png"), full_page=True)


def test_a_long_tornado_title_shows_whole_in_the_page(page, base_url):
    """An analyst's trial: 'what moves ... under <policy name>' ran off the chart's edge."""
    _load(page, base_url, "quillbrook-uncertain-elasticities")
    request = _request(page)
    request["draws"] = 400
    request["policies"][2]["name"] = "a 2.5 % cap on rent growth, every home"
    _paste(page, request)
    page.fill("#scenario-name", "Quillbrook council briefing")
    run_scenario(page)
    page.wait_for_selector("#tornado-figure img[data-title]")
    page.select_option("#tornado-policy", request["policies"][2]["name"])
    page.wait_for_function(
        "document.querySelector('#tornado-figure img')?.dataset.title?.includes('every home')"
    )
    title = page.get_attribute("#tornado-figure img", "data-title")
    assert len(title) > 110 and not title.endswith("\u2026")  # whole, within the service's 120
    # The SVG draws the title on two lines (a text comment each), every word kept, none cut.
    svg = page.evaluate("fetch(document.querySelector('#tornado-figure img').src).then(r => r.text())")
    comments = [c.strip() for c in re.findall(r"<!-- (.*?) -->", svg)]
    assert title not in comments
    assert any(f"{a} {b}".split() == title.split() for a, b in pairwise(comments))
    page.locator("#tornado-figure").screenshot(path=str(ARTIFACTS / "page-tornado-long-title.png"))


def test_a_demo_loads_with_the_units_its_numbers_are_in(page, base_url):
    """An analyst's trial: the demos say "monthly rents, yearly periods" but loaded with the page's
    placeholder words (units, price interval, period). Loading one now sets the units it gives
    (homes, home, month, year) and leaves a currency the analyst typed, which no demo names."""
    page.goto(base_url + "/")
    page.wait_for_function("document.querySelector('#status').textContent.startsWith('Loaded')")
    page.fill("#u-currency", "EUR")
    page.fill("#u-period", "quarter")
    demo = "tollbrae-decontrol-and-exempt-building"
    page.select_option("#demo", demo)
    page.click("#load-demo")
    page.wait_for_function(f"document.querySelector('#status').textContent.startsWith('Loaded {demo}')")
    shown = {selector: page.input_value(selector) for selector in HOUSING}
    assert shown == HOUSING  # EUR kept; the demo's homes, home, month and year
    run_scenario(page)
    assert page.text_content("table.years thead th").strip() == "Period (year)"
    assert "EUR per home per month" in page.inner_text("#summary")


def test_homes_show_whole_and_money_from_a_million_in_words_with_four_figures(page, base_url):
    """An analyst's trial: 47.98 homes converted and a loss of 90,536,089 read as precise
    counts; a model estimate from uncertain elasticities is not known to the last home or the
    last unit of money. The downloads keep every digit."""
    _load(page, base_url, "tollbrae-decontrol-and-exempt-building")
    run_scenario(page)
    answer = _answer(page)
    cap = answer["paths"][1]["name"]
    page.evaluate("document.querySelectorAll('#year-tables details').forEach(d => d.open = true)")
    heads, rows = _years(page, cap)
    homes = [i for i, h in enumerate(heads) if h.endswith("homes") and not h.startswith("Period")]
    assert homes, heads
    converted = next(i for i, h in enumerate(heads) if h.startswith("Controlled homes converted"))
    assert [r[converted] for r in rows] == [f"{v:,.0f}" for v in answer["paths"][1]["converted_homes"]]
    assert all("." not in r[i] for r in rows for i in homes), [[r[i] for i in homes] for r in rows]
    summary = _summary(page)
    shown = summary["discounted_deadweight_loss"][1]
    assert re.fullmatch(r"\d{1,3}(\.\d{1,3})? (million|billion)", shown), shown
    assert sum(c.isdigit() for c in shown) <= 4
    assert _number(shown) == pytest.approx(answer["summary"][1]["discounted_deadweight_loss"], rel=5e-4)
    # Rents stay whole, as before: 1,097 a month.
    assert summary["final_consumer_price"][1] == f"{answer['summary'][1]['final_consumer_price']:,.0f}"


def test_a_refused_run_says_in_words_that_the_messages_stand_by_their_fields(page, base_url):
    """An analyst's trial: the status read "Not run: /horizon: Must be a whole number. (and 2
    more)", the request's field names, while the messages stood next to the fields."""
    page.goto(base_url + "/")
    page.wait_for_function("document.querySelector('#status').textContent.startsWith('Loaded')")
    page.fill("#f-price", "-5")
    page.fill("#f-horizon", "abc")
    page.click("#run")
    page.wait_for_function("document.querySelector('#status').textContent.startsWith('Not run')")
    assert page.locator("[aria-invalid='true']").count() == 2
    status = page.text_content("#status")
    assert status == "Not run: 2 values need a change, each marked next to its field."
    page.fill("#f-price", "1180")
    page.click("#run")
    page.wait_for_function("document.querySelector('#f-price').getAttribute('aria-invalid') === null")
    page.wait_for_function("document.querySelector('#status').textContent.startsWith('Not run: one value')")
    assert page.text_content("#status") == "Not run: one value needs a change, each marked next to its field."


def _label_of(page, pointer: str) -> str:
    return page.eval_on_selector(f"[data-pointer='{pointer}']", "input => input.labels[0].textContent")


def test_a_level_is_worded_by_its_policy_kind_in_a_scenario_built_by_hand(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    while page.locator("[data-action^='remove-policy']").count():
        page.locator("[data-action^='remove-policy']").first.click()
    page.select_option("#f-schedule", "stock")
    for kind in ("price_ceiling", "unit_tax", "quantity_cap", "price_floor"):
        page.click("#add-policy")
        index = len(_request(page)["policies"]) - 1
        page.select_option(f"[data-pointer='/policies/{index}/kind']", kind)
    # A freeze that lets rents reset between tenants is a cap of 0 % on rises: no level.
    page.fill("[data-pointer='/policies/0/level']", "")
    page.fill("[data-pointer='/policies/0/growth']", "0")
    page.fill("[data-pointer='/policies/0/vacancy_decontrol']", "10 %")
    page.select_option("[data-pointer='/policies/0/new_homes']", "exempt")
    page.fill("#u-quantity", "homes")
    page.dispatch_event("#u-quantity", "change")
    assert _label_of(page, "/policies/0/level") == "Rent limit (ceiling level)"
    assert "empty for a largest rent rise" in page.text_content(
        "#" + page.get_attribute("[data-pointer='/policies/0/level']", "aria-describedby")
    )
    # A permit cap's level counts homes, a floor's is the lowest rent: neither is a rent limit.
    assert _label_of(page, "/policies/2/level") == "Most homes let (quantity cap, e.g. a permit cap)"
    assert (
        page.text_content("#" + page.get_attribute("[data-pointer='/policies/2/level']", "aria-describedby"))
        == "homes"
    )
    assert _label_of(page, "/policies/3/level") == "Lowest rent allowed (price floor)"
    page.locator("[data-action='remove-policy:3']").click()
    request = _request(page)
    assert [p["kind"] for p in request["policies"]] == ["price_ceiling", "unit_tax", "quantity_cap"]
    assert request["adjustment"] == {"schedule": "stock"}
    run_scenario(page)
    assert [p["name"] for p in _answer(page)["summary"]] == [p["name"] for p in request["policies"]]


def test_a_paths_answer_downloads_as_a_wide_csv_too(page, base_url):
    """A spreadsheet reads the wide form as a table (one row per policy and period, a column per
    variable); the page offered the long form only (a helper's trial). Bands too: a column per
    series and percentile."""
    import csv
    import io

    _load(page, base_url, "quillbrook-rent-freeze")
    run_scenario(page)
    page.wait_for_function("!document.querySelector('#download-csv-wide').hidden")
    text = page.evaluate("fetch(document.querySelector('#download-csv-wide').href).then(r => r.text())")
    rows = list(csv.reader(io.StringIO(text)))
    answer = _answer(page)
    header = rows[0]
    assert "policy" in header and "period" in header and any(h.startswith("consumer_price") for h in header)
    periods = len(answer["periods"])
    assert len(rows) - 1 == periods * len(answer["paths"])  # one row per policy and period
    _load(page, base_url, "quillbrook-uncertain-elasticities")
    page.fill("input[data-pointer='/draws']", "200")
    run_scenario(page)
    assert page.get_attribute("#results", "data-endpoint") == "/v1/bands"
    page.wait_for_function("!document.querySelector('#download-csv-wide').hidden")
    text = page.evaluate("fetch(document.querySelector('#download-csv-wide').href).then(r => r.text())")
    rows = list(csv.reader(io.StringIO(text)))
    answer = _answer(page)
    assert rows[0][:2] == ["policy", "period"] and any(h.startswith("consumer_price p50 [") for h in rows[0])
    assert len(rows) - 1 == len(answer["periods"]) * len(answer["bands"])
