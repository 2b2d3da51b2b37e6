"""What the browser tests do on the page more than once."""

from __future__ import annotations


def run_scenario(page) -> None:
    """Press Run and wait until this run's charts are drawn (the results' `drawn` mark names the
    scenario just computed); the status then reports the computation."""
    page.click("#run")
    page.wait_for_function(
        "(() => { const r = document.querySelector('#results').dataset;"
        " return r.drawn && r.drawn === r.scenario; })()",
        timeout=120_000,
    )
    assert page.text_content("#status").startswith("Computed")
