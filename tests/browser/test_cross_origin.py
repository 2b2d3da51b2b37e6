"""A dashboard on another origin calls the service from headless chromium: a page served by a
second local server (another port, so another origin) fetches POST /v1/paths with JSON, which
needs a CORS preflight. It succeeds when the service lists that origin (SHOCKPATH_CORS_ORIGINS)
and the browser blocks it when the service does not. Loopback only."""

from __future__ import annotations

import http.server
import threading
from contextlib import contextmanager

import pytest
from werkzeug.serving import make_server

from service import create_app

pytestmark = pytest.mark.slow

DASHBOARD = b"""<!doctype html>
<html><head><meta charset="utf-8"><title>dashboard</title></head>
<body><p id="result">pending</p>
<script>
(async () => {
  const api = decodeURIComponent(location.hash.slice(1));
  const out = document.getElementById("result");
  try {
    const demo = await (await fetch(api + "/v1/examples/quillbrook-rent-freeze")).json();
    const response = await fetch(api + "/v1/paths", {
      method: "POST",
      headers: {"Content-Type": "application/json", "Accept": "application/json"},
      body: JSON.stringify(demo),
    });
    const body = await response.json();
    out.dataset.etag = response.headers.get("ETag") || "";
    out.textContent = `ok ${response.status} ${body.summary.length}`;
  } catch (error) {
    out.textContent = `blocked ${error.name}`;
  }
})();
</script></body></html>
"""


class _Dashboard(http.server.BaseHTTPRequestHandler):
    def do_GET(self):
        self.send_response(200)
        self.send_header("Content-Type", "text/html; charset=utf-8")
        self.send_header("Content-Length", str(len(DASHBOARD)))
        self.end_headers()
        self.wfile.write(DASHBOARD)

    def log_message(self, *args):
        pass


@contextmanager
def _serving(server):
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield server.server_port
    finally:
        server.shutdown()
        server.server_close()


@pytest.fixture(scope="module")
def dashboard():
    with _serving(http.server.ThreadingHTTPServer(("127.0.0.1", 0), _Dashboard)) as port:
        yield f"http://127.0.0.1:{port}"


def _run(browser, dashboard: str, api: str) -> str:
    context = browser.new_context()  # nothing cached from another run: no preflight, no connection
    try:
        page = context.new_page()
        page.goto(f"{dashboard}/#{api}")
        page.wait_for_function("document.querySelector('#result').textContent !== 'pending'", timeout=30_000)
        return page.text_content("#result"), page.get_attribute("#result", "data-etag")
    finally:
        context.close()


def test_a_page_on_a_configured_origin_calls_the_service(browser, dashboard):
    app = create_app({"cors_origins": dashboard})
    with _serving(make_server("127.0.0.1", 0, app, threaded=True)) as port:
        result, etag = _run(browser, dashboard, f"http://127.0.0.1:{port}")
        assert result == "ok 200 4"
        etag = etag.strip('"')
        assert len(etag.removesuffix(":gzip")) == 64  # ETag is exposed (gzip: the browser asked)


def test_a_page_on_an_origin_not_configured_is_blocked_by_the_browser(browser, dashboard):
    for config in ({}, {"cors_origins": "http://127.0.0.1:1"}):
        with _serving(make_server("127.0.0.1", 0, create_app(config), threaded=True)) as port:
            result, _ = _run(browser, dashboard, f"http://127.0.0.1:{port}")
            assert result == "blocked TypeError", (config, port)
