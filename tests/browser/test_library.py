"""The scenario library on the page, in headless chromium: save a scenario, restart the
service, open it by its link and run it; with two keys, a private scenario's link opens only
for its owner until the owner shares it. Screenshots go to tests/artifacts/."""

from __future__ import annotations

import contextlib
import json
import threading
from pathlib import Path

import pytest
from werkzeug.serving import make_server

from service import create_app
from service.examples import example_request

from .pages import run_scenario

ARTIFACTS = Path(__file__).resolve().parents[1] / "artifacts"
KEY_A = "page-key-of-analyst-a-0123"
KEY_B = "page-key-of-analyst-b-4567"
pytestmark = pytest.mark.slow


@contextlib.contextmanager
def serving(port: int = 0, **settings):
    app = create_app({"band_threads": 1, **settings})
    server = make_server("127.0.0.1", port, app, threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.server_port}", server.server_port
    finally:
        server.shutdown()
        server.server_close()
        app.extensions["shockpath.library"].close()


def _page_ready(page, url):
    page.goto(url)
    page.wait_for_function("document.querySelector('#request-json').value.trim().length > 0")
    page.wait_for_selector("#lib-save")


@contextlib.contextmanager
def _library_page(browser, tmp_path, **settings):
    """A page on a service whose library lies in tmp_path, its form filled and ready."""
    page = browser.new_page(viewport={"width": 1280, "height": 1800})
    try:
        with serving(library_path=str(tmp_path / "library.sqlite3"), **settings) as (base, _):
            _page_ready(page, base + "/")
            yield page
    finally:
        page.close()


@contextlib.contextmanager
def _page_asking_for_a_key(browser, tmp_path):
    """The page on a service with keys switched on (KEY_A) and a library in tmp_path, once it
    has asked for a key."""
    page = browser.new_page(viewport={"width": 1280, "height": 1800})
    try:
        with serving(library_path=str(tmp_path / "library.sqlite3"), api_keys=KEY_A) as (base, _):
            page.goto(base + "/")
            page.wait_for_function("document.querySelector('#status').textContent.includes('API key')")
            yield page
    finally:
        page.close()


def _load_demo(page, name):
    """Pick a demo and load it; wait for its own "Loaded <name>" (the start-up demo's "Loaded ..."
    is on the page already)."""
    page.select_option("#demo", name)
    page.click("#load-demo")
    page.wait_for_function(
        "(name) => document.querySelector('#status').textContent.startsWith('Loaded ' + name)", arg=name
    )


def _save(page, name, tags="", shared=False):
    page.fill("#lib-name", name)
    page.fill("#lib-tags", tags)
    if shared != page.is_checked("#lib-shared"):
        page.click("#lib-shared")
    page.click("#lib-save")
    page.wait_for_function("document.querySelector('#lib-status').textContent.startsWith('Saved')")
    return page.input_value("#lib-link")


def _request(page):
    return json.loads(page.input_value("#request-json"))


def _enter_key(page, key):
    """Type an API key in the library panel, as an analyst does (the page reads it on change)."""
    page.fill("#lib-key", key)
    page.dispatch_event("#lib-key", "change")


def _paste_with_key(page, base, key, request):
    """Open the page with `key` and paste `request` (with keys on, the demos need a key too)."""
    page.goto(base + "/")
    page.wait_for_selector("#lib-save")
    _enter_key(page, key)
    page.eval_on_selector(
        "#request-json",
        "(area, text) => { area.value = text; area.dispatchEvent(new Event('change')); }",
        json.dumps(request),
    )


def test_save_restart_and_reopen_by_link(browser, tmp_path):
    ARTIFACTS.mkdir(exist_ok=True)
    database = {"library_path": str(tmp_path / "library.sqlite3")}
    page = browser.new_page(viewport={"width": 1280, "height": 1800})
    try:
        with serving(**database) as (base, port):
            _page_ready(page, base + "/")
            _load_demo(page, "tamsin-reach-permits")
            saved_request = _request(page)
            link = _save(page, "Tamsin Reach permits, council briefing", "briefing, permits")
            assert link == f"{base}/?scenario={page.get_attribute('#library', 'data-scenario')}"
            # Found again by a tag and by part of its name.
            page.fill("#lib-search-tag", "Permits")
            page.click("#lib-search")
            page.wait_for_selector("#lib-results li")
            assert "council briefing" in page.inner_text("#lib-results")
        with serving(port, **database) as (base_again, _):  # the service restarted, same address
            assert base_again == base
            page.goto(link)
            page.wait_for_function("document.querySelector('#lib-status').textContent.startsWith('Opened')")
            assert _request(page) == saved_request
            # The record's name titles its charts, and the page says it holds the record, not a demo.
            assert page.input_value("#scenario-name") == "Tamsin Reach permits, council briefing"
            assert page.text_content("#status").startswith('Opened "Tamsin Reach permits')
            assert page.input_value("#lib-name") == "Tamsin Reach permits, council briefing"
            assert page.input_value("#lib-tags") == "briefing, permits"
            page.click("#run")
            page.wait_for_function(
                "document.querySelector('#status').textContent.startsWith('Computed')", timeout=60_000
            )
            page.screenshot(path=str(ARTIFACTS / "page-library-reopened.png"), full_page=True)
    finally:
        page.close()


def test_with_keys_on_the_page_asks_for_a_key_then_loads_runs_and_draws_with_it(browser, tmp_path):
    with _page_asking_for_a_key(browser, tmp_path) as page:
        assert page.eval_on_selector_all("#demo option", "options => options.length") == 1  # no demos yet
        _enter_key(page, KEY_A)
        page.wait_for_function("document.querySelector('#status').textContent.startsWith('Key accepted')")
        _load_demo(page, "quillbrook-rent-freeze")
        run_scenario(page)  # every call of the run (the paths, each chart, the CSV) carries the key
        assert page.eval_on_selector_all("#charts img, #charts svg", "charts => charts.length") > 0
        assert "not drawn" not in page.inner_text("#charts")


def test_a_link_opens_for_another_key_only_once_shared(browser, tmp_path):
    settings = {"library_path": str(tmp_path / "library.sqlite3"), "api_keys": f"{KEY_A},{KEY_B}"}
    owner = browser.new_page()
    colleague = browser.new_context().new_page()
    try:
        with serving(**settings) as (base, _):
            _paste_with_key(owner, base, KEY_A, example_request("quillbrook-rent-freeze"))
            link = _save(owner, "Draft freeze")
            colleague.goto(link)
            colleague.wait_for_function(
                "document.querySelector('#lib-status').textContent.includes('API key')"
            )
            _enter_key(colleague, KEY_B)
            colleague.wait_for_function(
                "document.querySelector('#lib-status').textContent.startsWith('No such')"
            )
            # The owner shares it (a new revision); the same link now opens for the colleague.
            owner.click("#lib-shared")
            owner.click("#lib-revise")
            owner.wait_for_function(
                "document.querySelector('#lib-status').textContent.includes('revision 2')"
            )
            colleague.goto(link)
            colleague.wait_for_function(
                "document.querySelector('#lib-status').textContent.startsWith('Opened')"
            )
            assert colleague.input_value("#lib-name") == "Draft freeze"
            assert colleague.is_hidden("#lib-revise")  # only the owner changes it
            assert _request(colleague) == _request(owner)
            # Saved by the colleague, it is their own private copy, named as one.
            assert not colleague.is_checked("#lib-shared")
            colleague.click("#lib-save")
            colleague.wait_for_function(
                "document.querySelector('#lib-status').textContent.startsWith('Saved')"
            )
            assert colleague.text_content("#lib-status").startswith('Saved "Draft freeze (copy)"')
            assert colleague.input_value("#scenario-name") == "Draft freeze (copy)"
            assert not colleague.is_checked("#lib-shared")
            copy_id = colleague.get_attribute("#library", "data-scenario")
            assert copy_id not in link
            owner.goto(f"{base}/?scenario={copy_id}")
            owner.wait_for_function("document.querySelector('#lib-status').textContent.startsWith('No such')")
    finally:
        owner.close()
        colleague.context.close()


UNIT_INPUTS = {
    "#u-currency": "pounds",
    "#u-quantity": "homes",
    "#u-unit": "home",
    "#u-interval": "month",
    "#u-period": "year",
}


def _years_heading(page) -> str:
    return page.text_content("table.years thead th").strip()


def test_a_saved_scenario_keeps_the_units_typed_and_opening_it_sets_them_back(browser, tmp_path):
    database = {"library_path": str(tmp_path / "library.sqlite3")}
    page = browser.new_page(viewport={"width": 1280, "height": 1800})
    try:
        with serving(**database) as (base, _):
            _page_ready(page, base + "/")
            for selector, value in UNIT_INPUTS.items():
                page.fill(selector, value)
                page.dispatch_event(selector, "change")
            run_scenario(page)
            assert _years_heading(page) == "Period (year)"
            _save(page, "Freeze in pounds a month")
            record_id = page.get_attribute("#library", "data-scenario")
            # The analyst, or a colleague at the same page, types other units (or none at all)...
            page.fill("#u-currency", "")
            page.fill("#u-period", "quarter")
            for selector in UNIT_INPUTS:
                page.dispatch_event(selector, "change")
            assert _years_heading(page) == "Period (quarter)"
            # ...then opens the record from the library: its units come back and relabel the tables.
            page.fill("#lib-search-name", "pounds a month")
            page.click("#lib-search")
            page.wait_for_selector(f"#lib-results li[data-id='{record_id}']")
            page.click(f"#lib-results li[data-id='{record_id}'] button")
            page.wait_for_function("document.querySelector('#lib-status').textContent.startsWith('Opened')")
            assert {selector: page.input_value(selector) for selector in UNIT_INPUTS} == UNIT_INPUTS
            assert _years_heading(page) == "Period (year)"
            # The record the service keeps says the same.
            stored = page.evaluate(f"fetch('/v1/scenarios/{record_id}').then((r) => r.json())")
            assert stored["units"] == {
                "currency": "pounds",
                "quantity": "homes",
                "unit": "home",
                "price_interval": "month",
                "period": "year",
            }
    finally:
        page.close()


def _opened(page, revision: int) -> None:
    page.wait_for_function(
        f"document.querySelector('#library').dataset.revision === '{revision}'"
        " && document.querySelector('#lib-status').textContent.startsWith('Opened')"
    )


def test_an_earlier_revision_opens_from_the_page_shares_by_its_own_link_and_saves_after_the_latest(
    browser, tmp_path
):
    database = {"library_path": str(tmp_path / "library.sqlite3")}
    page = browser.new_page(viewport={"width": 1280, "height": 1800})
    colleague = browser.new_context().new_page()
    try:
        with serving(**database) as (base, _):
            _page_ready(page, base + "/")
            first = _request(page)
            _save(page, "Freeze, three drafts")
            page.fill("#f-price", str(first["market"]["price"] + 100))
            page.click("#lib-revise")
            page.wait_for_function("document.querySelector('#lib-status').textContent.includes('revision 2')")
            # The revisions are offered on the page, the latest first; revision 1 opens as it was.
            assert page.eval_on_selector_all("#lib-revision option", "os => os.map((o) => o.value)") == [
                "2",
                "1",
            ]
            page.select_option("#lib-revision", "1")
            page.click("#lib-open-revision")
            _opened(page, 1)
            assert page.text_content("#lib-status").startswith(
                'Opened "Freeze, three drafts" (revision 1 of 2'
            )
            assert _request(page) == first
            # Its link opens revision 1 for whoever follows it, not the latest.
            link = page.input_value("#lib-link")
            colleague.goto(link)
            _opened(colleague, 1)
            assert _request(colleague) == first
            # Changes made from revision 1 are saved as revision 3 (no one else changed it).
            page.fill("#lib-notes", "back to the first draft")
            page.click("#lib-revise")
            page.wait_for_function("document.querySelector('#lib-status').textContent.startsWith('Saved')")
            assert page.text_content("#lib-status") == 'Saved "Freeze, three drafts" as revision 3.'
            stored = page.evaluate(
                "(id) => fetch('/v1/scenarios/' + id).then((r) => r.json())",
                page.get_attribute("#library", "data-scenario"),
            )
            assert (stored["revision"], stored["notes"], stored["request"]) == (
                3,
                "back to the first draft",
                first,
            )
    finally:
        page.close()
        colleague.context.close()


def test_the_owner_deletes_a_scenario_from_the_page_and_its_link_no_longer_opens(browser, tmp_path):
    settings = {"library_path": str(tmp_path / "library.sqlite3"), "api_keys": f"{KEY_A},{KEY_B}"}
    owner = browser.new_page(viewport={"width": 1280, "height": 1800})
    colleague = browser.new_context().new_page()
    try:
        with serving(**settings) as (base, _):
            _paste_with_key(owner, base, KEY_A, example_request("quillbrook-rent-freeze"))
            link = _save(owner, "Freeze to withdraw", shared=True)
            # A colleague may read the shared scenario but is offered no delete.
            colleague.goto(link)
            colleague.wait_for_selector("#lib-key")
            _enter_key(colleague, KEY_B)
            colleague.wait_for_function(
                "document.querySelector('#lib-status').textContent.startsWith('Opened')"
            )
            assert colleague.is_hidden("#lib-delete")
            # The owner finds it in the list and deletes it, after confirming.
            owner.click("#lib-search")
            owner.wait_for_selector("#lib-results li")
            questions = []
            owner.once("dialog", lambda dialog: (questions.append(dialog.message), dialog.accept()))
            owner.click("#lib-delete")
            owner.wait_for_function("document.querySelector('#lib-status').textContent.startsWith('Deleted')")
            assert questions and "Freeze to withdraw" in questions[0]
            assert owner.eval_on_selector_all("#lib-results li", "items => items.length") == 0
            assert owner.is_hidden("#lib-share") and owner.is_hidden("#lib-revise")
            assert _request(owner)["market"] == example_request("quillbrook-rent-freeze")["market"]
            colleague.goto(link)
            colleague.wait_for_function(
                "document.querySelector('#lib-status').textContent.startsWith('No such')"
            )
    finally:
        owner.close()
        colleague.context.close()


def test_the_message_asking_for_a_key_says_where_the_key_field_is(browser, tmp_path):
    with _page_asking_for_a_key(browser, tmp_path) as page:
        message = page.text_content("#status")
        tops = page.evaluate(
            "['run', 'lib-key', 'results-heading'].map((id) =>"
            " document.getElementById(id).getBoundingClientRect().top + window.scrollY)"
        )
        # The field lies between the form (its Run button) and the results, as the message says.
        assert tops[0] < tops[1] < tops[2]
        assert "between the inputs and the results" in message


def test_saving_under_another_name_retitles_the_charts_on_the_page_and_keeps_their_panel(browser, tmp_path):
    """The charts drawn before a save are titled by the scenario's name: saved as a new scenario
    under another name, the page takes that name and the charts already drawn are retitled,
    each with the panel the analyst chose; a name typed on the page retitles them too."""
    with _library_page(browser, tmp_path) as page:
        _load_demo(page, "quillbrook-rent-freeze")
        run_scenario(page)
        old = page.input_value("#scenario-name")
        assert page.get_attribute("#chart-figure img", "data-title").startswith(f"{old}: ")
        page.select_option("#chart-figure-panel", "quantity")
        page.wait_for_function(
            "!document.querySelector('#chart-figure img').dataset.title.endsWith('paths by policy')"
        )
        panel = page.get_attribute("#chart-figure img", "data-title").split(": ", 1)[1]
        assert panel.startswith("Homes let")
        _save(page, "Freeze for the March council")
        assert page.input_value("#scenario-name") == "Freeze for the March council"
        page.wait_for_function(
            "(t) => document.querySelector('#chart-figure img').dataset.title === t",
            arg=f"Freeze for the March council: {panel}",
        )
        page.wait_for_function(
            "document.querySelector('#gains-figure img').dataset.title"
            " === 'Freeze for the March council: who gains and who loses'"
        )
        page.fill("#scenario-name", "Freeze, second look")
        page.dispatch_event("#scenario-name", "change")
        page.wait_for_function(
            "(t) => document.querySelector('#chart-figure img').dataset.title === t",
            arg=f"Freeze, second look: {panel}",
        )
        # Inputs changed and not run: the charts are the last run's, and a save under another
        # name leaves their titles alone (the page's name is the record's).
        changed = _request(page)
        changed["horizon"] = changed["horizon"] + 1
        page.eval_on_selector(
            "#request-json",
            "(area, text) => { area.value = text; area.dispatchEvent(new Event('change')); }",
            json.dumps(changed),
        )
        _save(page, "A longer horizon")
        assert page.input_value("#scenario-name") == "A longer horizon"
        page.wait_for_timeout(500)
        assert page.get_attribute("#chart-figure img", "data-title") == f"Freeze, second look: {panel}"
