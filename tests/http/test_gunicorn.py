"""The service under gunicorn for real, with the production configuration, on loopback."""

from __future__ import annotations

import http.client
import itertools
import json
import os
import signal
import socket
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from deploy.loadtest import download, gunicorn_command, largest_batch, stop_gunicorn
from service import simulate
from service.examples import example_request

ROOT = Path(__file__).resolve().parents[2]
pytestmark = pytest.mark.slow
#: Where the module's gunicorn writes its stderr (its own and the app's JSON log lines).
LOG: dict[str, Path] = {}


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
    LOG["path"] = tmp_path_factory.mktemp("gunicorn") / "stderr.log"
    log = LOG["path"].open("w+b")
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
    stop_gunicorn(process)
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


# --- broken uploads: 400, counted as client errors, never a 500 -------------------------------


def _raw(port: int, data: bytes, close_write: bool = False) -> bytes:
    """Send raw bytes; half-close if asked (the body ends early); the answer's bytes."""
    with socket.create_connection(("127.0.0.1", port), timeout=10) as s:
        s.sendall(data)
        if close_write:
            s.shutdown(socket.SHUT_WR)
        out = b""
        while chunk := s.recv(65536):
            out += chunk
            if b"\r\n\r\n" in out and b'"detail"' in out and out.rstrip().endswith(b"}"):
                break
        return out


def _counter(port: int, status: str) -> float:
    _, text = _get(port, "/metrics")
    line = f'shockpath_http_requests_total{{endpoint="/v1/paths",method="POST",status="{status}"}}'
    return sum(float(x.split()[-1]) for x in text.decode().splitlines() if x.startswith(line))


_HEAD = b"POST /v1/paths HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\n"


@pytest.mark.parametrize(
    ("data", "close_write"),
    [
        (_HEAD + b"Transfer-Encoding: chunked\r\n\r\nzz\r\nabc\r\n0\r\n\r\n", False),  # the issue's
        (_HEAD + b"Transfer-Encoding: chunked\r\n\r\n5\r\nabcdefgh\r\n0\r\n\r\n", False),  # no terminator
        (_HEAD + b'Transfer-Encoding: chunked\r\n\r\n10\r\n{"mar', True),  # ends mid-chunk
        (_HEAD + b'Content-Length: 500\r\n\r\n{"market": ', True),  # shorter than its length
    ],
)
def test_a_broken_upload_is_a_400_problem_not_a_500(server, data, close_write):
    port, _ = server
    before = _counter(port, "400"), _counter(port, "500")
    answer = _raw(port, data, close_write)
    head, _, body = answer.partition(b"\r\n\r\n")
    assert head.startswith(b"HTTP/1.1 400"), answer[:300]
    assert b"application/problem+json" in head
    assert json.loads(body)["type"] == "urn:shockpath:problem:incomplete-body"
    assert (_counter(port, "400"), _counter(port, "500")) == (before[0] + 1, before[1])


@pytest.mark.parametrize(
    ("data", "status"),
    [
        (b"GET /v1/examples?" + b"x" * 9000 + b" HTTP/1.1\r\nHost: x\r\n\r\n", 414),  # URL too long
        (b"GET /healthz HTTP/1.1\r\nHost: x\r\nX-Big: " + b"y" * 9000 + b"\r\n\r\n", 431),
        (_HEAD + b"Content-Length: abc\r\n\r\n{}", 400),
        (_HEAD + b"Content-Length: 2\r\nTransfer-Encoding: chunked\r\n\r\n{}", 400),
    ],
)
def test_a_request_gunicorn_cannot_parse_gets_a_problem_not_an_html_page(server, data, status):
    port, _ = server
    answer = _raw(port, data)
    head, _, body = answer.partition(b"\r\n\r\n")
    assert head.startswith(f"HTTP/1.1 {status}".encode()), answer[:300]
    assert b"Content-Type: application/problem+json" in head
    problem = json.loads(body)
    assert problem["status"] == status and problem["type"].startswith("urn:shockpath:problem:")
    assert problem["title"] and problem["detail"] and b"<html" not in body


def test_a_client_that_goes_away_mid_body_is_counted_as_a_client_error(server):
    port, _ = server
    before = _counter(port, "400"), _counter(port, "500")
    for data in (
        _HEAD + b'Transfer-Encoding: chunked\r\n\r\n100\r\n{"market"',
        _HEAD + b'Content-Length: 900\r\n\r\n{"market": {',
    ):
        s = socket.create_connection(("127.0.0.1", port), timeout=10)
        s.sendall(data)
        s.close()  # gone: no answer can reach it
    deadline = time.monotonic() + 10
    while _counter(port, "400") < before[0] + 2 and time.monotonic() < deadline:
        time.sleep(0.1)
    assert (_counter(port, "400"), _counter(port, "500")) == (before[0] + 2, before[1])
    log = LOG["path"].read_text(errors="replace")
    assert "unhandled error" not in log and "Error handling request" not in log


# --- health while every worker is busy ---------------------------------------------------------


def _probe(port: int, path: str) -> float:
    started = time.perf_counter()
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=30)
    conn.request("GET", path)
    response = conn.getresponse()
    response.read()
    conn.close()
    assert response.status == 200, path
    return time.perf_counter() - started


def test_health_and_readiness_answer_within_a_second_while_workers_are_busy(server):
    """Two of the largest batches the limits allow (1,000 scenarios x 4 policies x 50 periods,
    about 700 MB of long-form CSV each; one per worker, or both on one) and two clients
    trickling a body at a byte every half second: probes still answer within a second."""
    from service import limits

    port, _ = server
    batch = largest_batch()
    scenarios = json.loads(batch)["scenarios"]
    assert len(scenarios) * len(scenarios[0]["policies"]) * 50 == limits.MAX_POLICY_PERIODS
    answers: list[tuple[int, int, float]] = []

    def large():
        answers.append(download(port, "/v1/paths/batch", batch, "text/csv"))

    def trickle(stop: threading.Event):
        with socket.create_connection(("127.0.0.1", port), timeout=30) as s:
            s.sendall(_HEAD + b"Content-Length: 1000\r\n\r\n")
            while not stop.is_set():
                s.sendall(b" ")
                stop.wait(0.5)

    stop = threading.Event()
    slow = [threading.Thread(target=trickle, args=(stop,)) for _ in range(2)]
    busy = [threading.Thread(target=large) for _ in range(2)]
    for t in slow + busy:
        t.start()
    times = []
    time.sleep(0.5)
    while any(t.is_alive() for t in busy):
        times += [_probe(port, "/healthz"), _probe(port, "/readyz")]
        time.sleep(0.1)
    stop.set()
    for t in slow + busy:
        t.join(60)
    assert [status for status, _, _ in answers] == [200, 200]
    assert all(size > 600_000_000 for _, size, _ in answers), answers
    assert len(times) >= 6, "the batches ended before the probes could test anything"
    assert max(times) < 1.0, sorted(times)[-5:]


# --- operations: logs and metrics ----------------------------------------------------------------


def test_every_log_line_is_json_with_the_pid_of_its_process(server):
    port, _ = server
    assert _get(port, "/healthz")[0] == 200
    lines = [x for x in LOG["path"].read_text().splitlines() if x.strip()]
    records = [json.loads(x) for x in lines]
    assert all(isinstance(r["pid"], int) for r in records)
    booted = {r["pid"] for r in records if r["message"].startswith("Booting worker")}
    requests = {r["pid"] for r in records if r["message"] == "request"}
    assert len(booted) >= 2 and requests <= booted  # requests are logged by workers


def _samples(port: int, name: str) -> list[tuple[str, float]]:
    _, text = _get(port, "/metrics")
    return [
        (x.split(" ")[0], float(x.split()[-1]))
        for x in text.decode().splitlines()
        if x.startswith(name + "{") or x.startswith(name + " ")
    ]


def test_metrics_of_workers_cache_and_requests_in_flight(server):
    port, _ = server
    assert sum(v for _, v in _samples(port, "shockpath_http_requests_in_flight")) >= 1  # the scrape
    memory = _samples(port, "shockpath_worker_resident_memory_bytes")
    assert all('pid="' in k for k, _ in memory)
    assert len([v for _, v in memory if v > 20e6]) >= 2  # each worker's (the master's never set: 0)
    assert sum(v for _, v in _samples(port, "shockpath_worker_starts_total")) >= 2

    def lookups(result):
        return sum(v for k, v in _samples(port, "shockpath_answer_cache_lookups_total") if result in k)

    hits, misses = lookups("hit"), lookups("miss")
    request = example_request("contract-example")
    request["market"]["price"] = 1234.5  # asked by no other test
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=30)  # kept alive: one worker
    for _ in range(3):
        conn.request("POST", "/v1/paths", json.dumps(request), {"Content-Type": "application/json"})
        assert conn.getresponse().read()
    conn.close()
    assert (lookups("hit") - hits, lookups("miss") - misses) == (2, 1)


# --- recycling one worker at a time ---------------------------------------------------------------


def _events(text: str, message: str) -> list[tuple[float, int]]:
    out = []
    for line in text.splitlines():
        record = json.loads(line)
        if record["message"].startswith(message):
            stamp = time.mktime(time.strptime(record["time"][:19], "%Y-%m-%dT%H:%M:%S"))
            out.append((stamp + int(record["time"][20:23]) / 1000, record["pid"]))
    return out


def test_workers_recycle_one_at_a_time_without_losing_a_request(tmp_path):
    port = _free_port()
    env = {
        **os.environ,
        "SHOCKPATH_BIND": f"127.0.0.1:{port}",
        "SHOCKPATH_WORKERS": "2",
        "SHOCKPATH_MAX_REQUESTS": "40",
        "SHOCKPATH_RECYCLE_SPACING": "0.3",
        "PROMETHEUS_MULTIPROC_DIR": str(tmp_path / "metrics"),
    }
    log_path = tmp_path / "stderr.log"
    with log_path.open("wb") as log:
        process = subprocess.Popen(
            gunicorn_command(),
            cwd=ROOT,
            env=env,
            stdout=subprocess.DEVNULL,
            stderr=log,
        )
        try:
            deadline = time.monotonic() + 30
            while time.monotonic() < deadline:
                try:
                    if _get(port, "/healthz")[0] == 200:
                        break
                except OSError:
                    time.sleep(0.2)
            failures: list[str] = []

            # Requests until three workers have left (two pairs to check), for at most 30 s: about
            # 5 s on an idle machine, longer where other tests share the cores (pytest -n).
            until = time.monotonic() + 30
            enough = threading.Event()

            def hammer():
                while time.monotonic() < until and not enough.is_set():
                    try:
                        if _get(port, "/healthz")[0] != 200:
                            failures.append("status")
                    except OSError as error:
                        failures.append(repr(error))

            threads = [threading.Thread(target=hammer) for _ in range(4)]
            for t in threads:
                t.start()
            while time.monotonic() < until and not enough.is_set():
                time.sleep(0.2)
                written = log_path.read_text()
                if len(_events(written[: written.rfind("\n") + 1], "Autorestarting worker")) >= 3:
                    enough.set()
            for t in threads:
                t.join(120)
            time.sleep(1.0)
            exits = sum(v for _, v in _samples(port, "shockpath_worker_exits_total"))
        finally:
            process.send_signal(signal.SIGTERM)
            process.wait(timeout=30)
    text = log_path.read_text()
    leaving = _events(text, "Autorestarting worker")
    booting = _events(text, "Booting worker")[2:]  # after the first two
    assert failures == []
    # A leaver takes a few seconds to finish its connections and be replaced (the other worker
    # serves meanwhile, held back by the lock): 30 s see at least two recycles (the run stops at
    # three).
    assert len(leaving) >= 2, "30 s of requests at 40-60 per worker should recycle twice or more"
    assert exits >= len(leaving) - 1  # the master counts them (the last may still be exiting)
    for (left, _), (next_left, _) in itertools.pairwise(leaving):
        assert any(left <= booted <= next_left for booted, _ in booting), (
            "a second worker left before the first one's replacement booted",
            left,
            next_left,
        )
