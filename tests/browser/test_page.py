"""The page at / in a real headless browser (Debian's chromium driven by Playwright): run a
demo, see the charts and the table, submit an invalid value and see the field error.
Screenshots go to tests/artifacts/. CI installs chromium and sets SHOCKPATH_REQUIRE_BROWSER=1
so that a missing browser fails there instead of skipping."""

from __future__ import annotations

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
