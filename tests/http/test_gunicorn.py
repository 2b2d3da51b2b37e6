"""The service under gunicorn for real, with the production configuration, on loopback."""

from __future__ import annotations

import http.client
import json
import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import pytest

from service import simulate
from service.examples import example_request

ROOT = Path(__file__).resolve().parents[2]
pytestmark = pytest.mark.slow


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="module")
def server(tmp_path_factory, compiled_kernels):
    port = _free_port()
    metrics_dir = tmp_path_factory.mktemp("metrics")
    env = {
        **os.environ,
        "SHOCKPATH_BIND": f"127.0.0.1:{port}",
        "SHOCKPATH_WORKERS": "2",
        "PROMETHEUS_MULTIPROC_DIR": str(metrics_dir),
    }
    gunicorn = Path(sys.executable).with_name("gunicorn")
    log = (tmp_path_factory.mktemp("gunicorn") / "stderr.log").open("w+b")
    process = subprocess.Popen(
        [str(gunicorn), "--config", "deploy/gunicorn.conf.py", "service:create_app()"],
        cwd=ROOT,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=log,
    )
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        try:
            conn = http.client.HTTPConnection("127.0.0.1", port, timeout=2)
            conn.request("GET", "/readyz")
            ready = conn.getresponse().status == 200
            conn.close()
            if ready:
                break
        except OSError:
            time.sleep(0.2)
    else:
        process.kill()
        process.wait()
        log.seek(0)
        pytest.fail("gunicorn did not become ready: " + log.read().decode(errors="replace")[-2000:])
    yield port, metrics_dir
    process.send_signal(signal.SIGTERM)
    try:
        process.wait(timeout=30)
    except subprocess.TimeoutExpired:
        process.kill()
        process.wait()
    log.close()


def _get(port, path):
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=10)
    conn.request("GET", path)
    response = conn.getresponse()
    out = response.status, response.read()
    conn.close()
    return out


def _post(port, path, body: bytes, headers):
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=30)
    conn.request("POST", path, body=body, headers=headers)
    response = conn.getresponse()
    out = response.status, dict(response.getheaders()), response.read()
    conn.close()
    return out


def test_a_demo_scenario_over_http_equals_the_python_api(server):
    server, _ = server
    request = example_request("quillbrook-rent-freeze")
    status, headers, data = _post(
        server, "/v1/paths", json.dumps(request).encode(), {"Content-Type": "application/json"}
    )
    assert status == 200
    assert json.loads(data) == simulate(request)
    assert headers["ETag"] == f'"{json.loads(data)["scenario_id"]}"'


def test_examples_answer_under_gunicorn(server):
    server, _ = server
    conn = http.client.HTTPConnection("127.0.0.1", server, timeout=10)
    conn.request("GET", "/v1/examples")
    response = conn.getresponse()
    assert response.status == 200
    assert len(json.loads(response.read())["examples"]) >= 4
    conn.close()


def test_a_chunked_body_over_the_limit_is_413_over_http(server):
    server, _ = server
    conn = http.client.HTTPConnection("127.0.0.1", server, timeout=30)
    chunk = b" " * 65536
    size = 8 * 1024 * 1024 // len(chunk) + 2
    conn.request(
        "POST",
        "/v1/paths",
        body=(chunk for _ in range(size)),
        headers={"Content-Type": "application/json"},
        encode_chunked=True,
    )
    response = conn.getresponse()
    assert response.status == 413
    assert response.getheader("Content-Type") == "application/problem+json"
    response.read()
    conn.close()


def test_metrics_aggregate_over_both_workers(server):
    port, metrics_dir = server
    line = 'shockpath_http_requests_total{endpoint="/healthz",method="GET",status="200"}'

    def count() -> float:
        status, text = _get(port, "/metrics")
        assert status == 200
        found = [x for x in text.decode().splitlines() if x.startswith(line)]
        return float(found[0].split()[-1]) if found else 0.0

    before = count()
    for _ in range(60):  # a new connection each time, so both workers take some
        assert _get(port, "/healthz")[0] == 200
    pids = {p.name.rsplit("_", 1)[-1] for p in metrics_dir.glob("counter_*.db")}
    assert len(pids) >= 2, "both workers should have served requests"
    # Whichever worker answers the scrape, it reports the sum over all workers.
    assert [count() for _ in range(6)] == [before + 60] * 6
