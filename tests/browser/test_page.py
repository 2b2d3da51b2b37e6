"""The page at / in a real headless browser (Debian's chromium driven by Playwright): run a
demo, see the charts and the tables (who gains and who loses; the homes below the free path under
the stock schedule), submit an invalid value and see the field error.
Screenshots go to tests/artifacts/. CI installs chromium and sets SHOCKPATH_REQUIRE_BROWSER=1
so that a missing browser fails there instead of skipping."""

from __future__ import annotations

import json
import threading
from pathlib import Path

import pytest
from werkzeug.serving import make_server

from service import create_app

ARTIFACTS = Path(__file__).resolve().parents[1] / "artifacts"
pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def base_url():
    server = make_server("127.0.0.1", 0, create_app({"band_threads": 1}), threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{server.server_port}"
    server.shutdown()


def test_a_demo_runs_and_shows_the_charts_and_the_table(page, base_url):
    ARTIFACTS.mkdir(exist_ok=True)
    page.goto(base_url + "/")
    page.wait_for_selector("#demo option", state="attached")
    names = page.eval_on_selector_all("#demo option", "els => els.map(e => e.value)")
    assert "quillbrook-rent-freeze" in names and "quillbrook-uncertain-elasticities" in names
    for name in names:
        page.select_option("#demo", name)
        page.click("#load-demo")
        page.wait_for_function("document.querySelector('#status').textContent.startsWith('Loaded')")
        page.click("#run")
        page.wait_for_function(
            "document.querySelector('#status').textContent.startsWith('Computed')", timeout=60_000
        )
        # The chart of this run, not a stale one: it carries the scenario id of the results.
        page.wait_for_function(
            "(() => { const c = document.querySelector('#chart');"
            " const id = document.querySelector('#results').dataset.scenario;"
            " return c.naturalWidth > 0 && c.dataset.scenario === id; })()"
        )
        rows = page.locator("#summary tbody tr")
        policies = page.evaluate("JSON.parse(document.querySelector('#request-json').value).policies.length")
        assert rows.count() == policies
        assert page.locator("#cautions li").count() >= 2
        assert page.get_attribute("#download-json", "href").startswith("blob:")
        if name == "quillbrook-uncertain-elasticities":
            page.screenshot(path=str(ARTIFACTS / "page-bands.png"), full_page=True)
            assert page.locator("#summary thead th.range").count() == 1
    page.screenshot(path=str(ARTIFACTS / "page-results.png"), full_page=True)


def test_an_invalid_value_shows_the_error_next_to_its_field(page, base_url):
    page.goto(base_url + "/")
    page.wait_for_function("document.querySelector('#status').textContent.startsWith('Loaded')")
    page.fill("#f-eta", "0.5")
    page.keyboard.press("Enter")  # the form submits from the keyboard
    page.wait_for_selector("#f-eta[aria-invalid='true']")
    described = page.get_attribute("#f-eta", "aria-describedby")
    message = page.text_content(f"#{described}")
    assert "less than 0" in message
    assert page.evaluate("document.activeElement.id") == "f-eta"
    page.screenshot(path=str(ARTIFACTS / "page-field-error.png"), full_page=True)


def _load(page, base_url, name):
    page.goto(base_url + "/")
    page.wait_for_function("document.querySelector('#status').textContent.startsWith('Loaded')")
    page.select_option("#demo", name)
    page.click("#load-demo")
    page.wait_for_function(f"document.querySelector('#status').textContent.startsWith('Loaded {name}')")


def _run(page):
    page.click("#run")
    page.wait_for_function(
        "document.querySelector('#status').textContent.startsWith('Computed')", timeout=60_000
    )


def _table(page):
    return page.eval_on_selector_all(
        "#summary tbody tr", "rows => rows.map(r => [...r.children].map(c => c.textContent))"
    )


def test_a_pasted_bands_request_runs_as_bands_whatever_demo_is_picked(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    bands = page.evaluate("fetch('/v1/examples/quillbrook-uncertain-elasticities').then(r => r.json())")
    bands["draws"] = 500
    page.click("details summary")
    page.fill("#request-json", json.dumps(bands))
    page.dispatch_event("#request-json", "change")
    assert page.input_value("#demo") == ""  # the picker no longer names the paths demo
    assert page.is_visible("#uncertainty-fieldset")
    _run(page)
    assert page.get_attribute("#results", "data-endpoint") == "/v1/bands"
    assert "500 draws" in page.text_content("#status")
    assert page.locator("#summary thead th.range").count() == 1
    assert page.locator("#other-errors li").count() == 0


def test_an_added_policy_is_run_and_shown_in_the_table(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    before = page.evaluate("JSON.parse(document.querySelector('#request-json').value).policies.length")
    page.click("#add-policy")
    last = "#policy-fields .item:last-child"
    page.select_option(f"{last} select", "unit_tax")
    page.fill(f"{last} input[data-pointer='/policies/{before}/amount']", "50")
    page.fill(f"{last} input[data-pointer='/policies/{before}/name']", "levy 50")
    _run(page)
    rows = _table(page)
    assert len(rows) == before + 1 and rows[-1][0] == "levy 50"
    headers = page.eval_on_selector_all("#summary thead th", "ths => ths.map(t => t.textContent)")
    assert any(h.startswith("Final quantity") for h in headers)
    assert any(h.startswith("Consumers gain") for h in headers)
    assert float(rows[-1][7].replace(",", "")) > 0  # the levy raises revenue
    page.click(f"{last} button.remove")
    assert page.locator("#policy-fields .item").count() == before


def test_an_edited_end_period_changes_the_answer(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    page.fill("input[data-pointer='/policies/1/end']", "3")
    request = page.evaluate("JSON.parse(document.querySelector('#request-json').value)")
    assert request["policies"][1]["end"] == 3
    page.select_option("select[data-pointer='/welfare/rationing']", "random")
    page.fill("input[data-pointer='/welfare/discount_rate']", "0.05")
    _run(page)
    rows = {r[0]: r for r in _table(page)}
    assert rows["rent freeze"][-1] == "3"  # binds in periods 1 to 3 only
    request = page.evaluate("JSON.parse(document.querySelector('#request-json').value)")
    assert request["welfare"] == {"rationing": "random", "discount_rate": 0.05}
    page.screenshot(path=str(ARTIFACTS / "page-edited.png"), full_page=True)
    # Random rationing: the split between groups is not reported, and said so.
    groups = page.eval_on_selector_all("#groups tbody tr td", "tds => tds.map(t => t.textContent)")
    assert groups and set(groups) == {"not reported under random rationing"}
    assert page.is_hidden("#gains-figure")


def test_inflation_stock_and_coverage_from_the_form_give_the_groups_and_the_homes_below(page, base_url):
    _load(page, base_url, "quillbrook-rent-freeze")
    page.fill("input[data-pointer='/market/inflation']", "0.03")
    page.select_option("select[data-pointer='/adjustment/schedule']", "stock")
    page.fill("input[data-pointer='/adjustment/half_life']", "3")
    page.fill("input[data-pointer='/adjustment/depreciation']", "0.01")
    page.fill("input[data-pointer='/policies/1/coverage']", "0.6")
    page.check("input[data-pointer='/policies/2/indexed']")
    assert "Prices and welfare stay in real money of period 0" in page.text_content(
        "#" + page.get_attribute("input[data-pointer='/market/inflation']", "aria-describedby")
    )
    request = page.evaluate("JSON.parse(document.querySelector('#request-json').value)")
    assert request["market"]["inflation"] == 0.03
    assert request["adjustment"] == {"schedule": "stock", "half_life": 3, "depreciation": 0.01}
    assert request["policies"][1]["coverage"] == 0.6 and request["policies"][2]["indexed"] is True
    _run(page)
    assert page.get_attribute("#results", "data-endpoint") == "/v1/paths"
    answer = page.evaluate("fetch(document.querySelector('#download-json').href).then(r => r.json())")
    assert answer["scenario_id"] == page.get_attribute("#results", "data-scenario")
    # The groups table: one row per policy, each cell the summary's total as the answer has it.
    rows = page.eval_on_selector_all(
        "#groups tbody tr",
        "rows => rows.map(r => [...r.querySelectorAll('td')].map(c => [c.dataset.group, c.textContent]))",
    )
    assert page.is_visible("#groups") and len(rows) == len(request["policies"])
    for row, summary in zip(rows, answer["summary"], strict=True):
        assert len(row) == 6
        for group, text in row:
            value = float(text.replace(",", "").replace("+", ""))
            assert value == pytest.approx(summary["distribution_totals"][group], abs=0.5)
    freeze = dict(rows[1])
    assert freeze["tenants_in_controlled_homes"].startswith("+")
    assert freeze["owners_of_uncontrolled_homes"].startswith("+")  # uncontrolled rents rise
    heads = page.eval_on_selector_all("#groups thead th", "ths => ths.map(t => t.textContent)")
    assert all("per model period, summed over the horizon" in h for h in heads[1:])
    # The stock schedule: homes below the free path in the summary and in the paths chart.
    stock_heads = page.eval_on_selector_all("#summary thead th.stock", "ths => ths.map(t => t.textContent)")
    assert stock_heads == ["Final homes below the free pathunits", "Peak homes below the free pathunits"]
    freeze_row = _table(page)[1]
    assert float(freeze_row[-1].replace(",", "")) == pytest.approx(
        answer["summary"][1]["peak_homes_below_free_path"], abs=0.5
    )
    page.wait_for_function(
        "(() => { const id = document.querySelector('#results').dataset.scenario;"
        " return ['#chart', '#gains-chart'].every(s => { const c = document.querySelector(s);"
        " return c.naturalWidth > 0 && c.dataset.scenario === id; }); })()"
    )
    svg = page.evaluate("fetch(document.querySelector('#chart').src).then(r => r.text())")
    assert "Homes below the free path" in svg
    assert "homes below the free path" in page.get_attribute("#chart", "alt")
    gains = page.evaluate("fetch(document.querySelector('#gains-chart').src).then(r => r.text())")
    assert "Who gains and who loses" in gains and "Households priced or rationed out" in gains
    page.screenshot(path=str(ARTIFACTS / "page-additions.png"), full_page=True)
    # A kind without coverage drops it from the request; the indexed box stays for a unit tax.
    page.select_option("select[data-pointer='/policies/1/kind']", "unit_tax")
    request = page.evaluate("JSON.parse(document.querySelector('#request-json').value)")
    assert "coverage" not in request["policies"][1]
    assert page.locator("input[data-pointer='/policies/1/indexed'][type='checkbox']").count() == 1
    page.select_option("select[data-pointer='/policies/1/kind']", "ad_valorem_tax")
    assert page.locator("input[data-pointer='/policies/1/indexed']").count() == 0
