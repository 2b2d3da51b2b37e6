"""The library under gunicorn for real, on SQLite and on PostgreSQL: two workers writing one
record at once lose no update; a worker killed with SIGKILL in the middle of a write loses
nothing that was committed and leaves nothing half-written; a restart keeps everything."""

from __future__ import annotations

import contextlib
import copy
import http.client
import json
import os
import signal
import subprocess
import threading
import time
from pathlib import Path

import pytest

from deploy.loadtest import free_port, gunicorn_command, stop_gunicorn, workers
from service.examples import example_request
from service.library import Library, database_url

ROOT = Path(__file__).resolve().parents[2]
REQUEST = dict(copy.deepcopy(example_request("quillbrook-rent-freeze")), horizon=3)
pytestmark = pytest.mark.slow


def _call(port, method, path, body=None, headers=None, timeout=30):
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=timeout)
    try:
        data = None if body is None else json.dumps(body)
        conn.request(method, path, body=data, headers={"Content-Type": "application/json", **(headers or {})})
        response = conn.getresponse()
        raw = response.read()
        return response.status, dict(response.getheaders()), (json.loads(raw) if raw else None)
    finally:
        conn.close()


@contextlib.contextmanager
def gunicorn(database: dict[str, str], tmp_path: Path, processes: int = 2, **settings: str):
    port = free_port()
    env = {
        **os.environ,
        "SHOCKPATH_BIND": f"127.0.0.1:{port}",
        "SHOCKPATH_WORKERS": str(processes),
        "PROMETHEUS_MULTIPROC_DIR": str(tmp_path / f"metrics-{port}"),
        **{f"SHOCKPATH_{k.upper()}": v for k, v in {**database, **settings}.items()},
    }
    log = (tmp_path / f"gunicorn-{port}.log").open("w+b")
    process = subprocess.Popen(
        gunicorn_command(),
        cwd=ROOT,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=log,
    )
    try:
        _wait_ready(port, process, log)
        yield port, process
    finally:
        stop_gunicorn(process)
        log.close()


def _wait_ready(port, process, log=None, seconds=60):
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        with contextlib.suppress(OSError, http.client.HTTPException):
            if _call(port, "GET", "/readyz", timeout=2)[0] == 200:
                return
        time.sleep(0.2)
    process.kill()
    text = ""
    if log is not None:
        log.seek(0)
        text = log.read().decode(errors="replace")[-2000:]
    pytest.fail("gunicorn did not become ready: " + text)


def _library(database: dict[str, str]) -> Library:
    url = database_url(database.get("database_url", ""), database.get("library_path", ""))
    return Library(url, max_records=10**6, max_revisions=10**6)


def test_two_workers_writing_one_record_lose_no_update(database, tmp_path):
    with gunicorn(database, tmp_path, processes=2, library_write_delay_ms="30") as (port, _):
        status, _, record = _call(port, "POST", "/v1/scenarios", {"name": "shared", "request": REQUEST})
        assert status == 201
        path = f"/v1/scenarios/{record['id']}"
        won: list[str] = []
        refused = [0]

        def writer(name: str):
            for n in range(8):
                while True:
                    _, headers, _current = _call(port, "GET", path)
                    note = f"{name}-{n}"
                    body = {"name": "shared", "notes": note, "request": REQUEST}
                    status, _, _ = _call(port, "PUT", path, body, {"If-Match": headers["ETag"]})
                    if status == 200:
                        won.append(note)
                        break
                    assert status == 412, status
                    refused[0] += 1

        threads = [threading.Thread(target=writer, args=(f"w{i}",)) for i in range(3)]
        for t in threads:
            t.start()
        for t in threads:
            t.join()
        _, _, final = _call(port, "GET", path)
        assert final["revision"] == 1 + len(won) == 25
        notes = [
            _call(port, "GET", f"{path}?revision={r}")[2]["notes"] for r in range(2, final["revision"] + 1)
        ]
        assert sorted(notes) == sorted(won)  # every accepted change is a revision, none twice
        assert refused[0] > 0  # the writers did collide, and the collisions were refused


def test_two_workers_creating_at_once_keep_the_per_key_limit(database, tmp_path):
    with gunicorn(database, tmp_path, processes=2, library_max_records="5", library_write_delay_ms="20") as (
        port,
        _,
    ):
        statuses: list[int] = []

        def creator(i: int):
            for n in range(4):
                statuses.append(
                    _call(port, "POST", "/v1/scenarios", {"name": f"c{i}-{n}", "request": REQUEST})[0]
                )

        threads = [threading.Thread(target=creator, args=(i,)) for i in range(3)]
        for t in threads:
            t.start()
        for t in threads:
            t.join()
        assert sorted(statuses) == [201] * 5 + [422] * 7
        _, _, listed = _call(port, "GET", "/v1/scenarios")
        assert len(listed["scenarios"]) == 5


def _killed_mid_write(port, master, method, path, body, headers=None):
    """Send a write, SIGKILL the worker while it waits inside the transaction, wait for the
    replacement worker."""
    outcome: list[object] = []

    def send():
        try:
            outcome.append(_call(port, method, path, body, headers))
        except (OSError, http.client.HTTPException) as error:
            outcome.append(error)

    before = set(workers(master.pid))
    thread = threading.Thread(target=send)
    thread.start()
    time.sleep(1.0)  # the write has begun and waits 3 s before it commits
    for pid in before:
        os.kill(pid, signal.SIGKILL)
    thread.join()
    assert isinstance(outcome[0], Exception), outcome  # the caller was not told it was saved
    deadline = time.monotonic() + 30
    while not (set(workers(master.pid)) - before) and time.monotonic() < deadline:
        time.sleep(0.1)
    _wait_ready(port, master)


def test_a_worker_killed_mid_write_loses_nothing_and_leaves_nothing_half_written(database, tmp_path):
    with gunicorn(database, tmp_path, processes=1, library_write_delay_ms="3000") as (port, master):
        status, headers, record = _call(
            port, "POST", "/v1/scenarios", {"name": "kept", "tags": ["a", "b"], "request": REQUEST}
        )
        assert status == 201
        path = f"/v1/scenarios/{record['id']}"
        change = {"name": "half", "tags": ["c"], "notes": "never", "request": REQUEST}
        _killed_mid_write(port, master, "PUT", path, change, {"If-Match": headers["ETag"]})
        _killed_mid_write(port, master, "POST", "/v1/scenarios", {"name": "never saved", "request": REQUEST})
        _killed_mid_write(port, master, "DELETE", path, None)
        status, _, now = _call(port, "GET", path)
        assert status == 200 and now == record  # revision 1, as committed
        assert _call(port, "GET", f"{path}?revision=2")[0] == 404
        listed = _call(port, "GET", "/v1/scenarios")[2]["scenarios"]
        assert [r["name"] for r in listed] == ["kept"]
        assert _call(port, "GET", "/v1/scenarios?tag=c")[2]["scenarios"] == []
        assert _call(port, "GET", "/v1/scenarios?tag=b")[2]["scenarios"][0]["id"] == record["id"]
    library = _library(database)
    try:
        assert library.count() == {
            "library_owners": 1,
            "scenario_records": 1,
            "scenario_revisions": 1,
            "scenario_tags": 2,
        }
    finally:
        library.close()


def test_a_restart_keeps_everything(database, tmp_path):
    with gunicorn(database, tmp_path, processes=2) as (port, _):
        saved = []
        for i in range(3):
            status, _headers, record = _call(
                port, "POST", "/v1/scenarios", {"name": f"s{i}", "tags": ["t"], "request": REQUEST}
            )
            assert status == 201
            saved.append(record)
        body = {"name": "s0", "notes": "second", "request": REQUEST}
        status, _, second = _call(
            port, "PUT", saved[0]["links"]["self"], body, {"If-Match": f'"{saved[0]["id"]}.1"'}
        )
        assert status == 200
        before = _call(port, "GET", "/v1/scenarios")[2]
        first = _call(port, "GET", saved[0]["links"]["self"] + "?revision=1")[2]
        answer = _call(port, "GET", saved[1]["links"]["compute"])[2]
    with gunicorn(database, tmp_path, processes=2) as (port, _):
        assert _call(port, "GET", "/v1/scenarios")[2] == before
        assert _call(port, "GET", saved[0]["links"]["self"])[2] == second
        assert _call(port, "GET", saved[0]["links"]["self"] + "?revision=1")[2] == first
        assert _call(port, "GET", saved[1]["links"]["compute"])[2] == answer
