"""The browser tests' shared fixture: Debian's chromium, headless, driven by Playwright."""

from __future__ import annotations

import os
import shutil

import pytest

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.fixture(scope="module")
def browser():
    if CHROMIUM is None:
        if os.environ.get("SHOCKPATH_REQUIRE_BROWSER"):
            pytest.fail("chromium is required here (apt-get install chromium)")
        pytest.skip("chromium is not installed (Debian package chromium)")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        browser = p.chromium.launch(
            executable_path=CHROMIUM,
            args=[
                "--no-sandbox",
                "--disable-gpu",
                "--disable-quic",
                "--no-first-run",
                "--disable-background-networking",
                "--disable-component-update",
                "--disable-sync",
            ],
        )
        yield browser
        browser.close()


@pytest.fixture(scope="module")
def page(browser):
    page = browser.new_page(viewport={"width": 1280, "height": 1800})
    yield page
    page.close()
