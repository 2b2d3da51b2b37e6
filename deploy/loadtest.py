"""Load and fault test: gunicorn under wrk with a mix of demo scenarios, one worker killed.

    .venv/bin/python deploy/loadtest.py --seconds 60            # the long run (deploy/OPERATIONS.md figures)
    .venv/bin/python deploy/loadtest.py --seconds 8 --check     # the short run CI asserts on
    .venv/bin/python deploy/loadtest.py --repeat --seconds 30   # one request repeated; then the
                                                                # largest batch's CSV figures
    .venv/bin/python deploy/loadtest.py --repeat --seconds 0    # the CSV figures alone

Starts gunicorn with deploy/gunicorn.conf.py on a free loopback port, warms it up, drives it
with wrk (2 threads, 4 connections) for a fixed time, SIGKILLs one worker half-way, and
reports requests, throughput, p50/p99 latency, non-2xx responses, socket errors (requests lost
with the killed worker), whether the master replaced it, and the workers' resident memory at
start and end. Afterwards every demo scenario is posted once and compared with
service.simulate. Loopback only; bounded by --seconds; stops gunicorn itself.
"""

from __future__ import annotations

import argparse
import http.client
import json
import os
import re
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

CONNECTIONS = 4


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def request(port: int, method: str, path: str, body: bytes | None = None, timeout: float = 60):
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=timeout)
    conn.request(method, path, body=body, headers={"Content-Type": "application/json"})
    response = conn.getresponse()
    out = response.status, response.read()
    conn.close()
    return out


def workers(master: int) -> list[int]:
    return sorted(int(p) for p in Path(f"/proc/{master}/task/{master}/children").read_text().split())


def rss_mib(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) / 1024
    return 0.0


def start_gunicorn(
    port: int, metrics_dir: str, config: str = "deploy/gunicorn.conf.py", **settings: str
) -> subprocess.Popen:
    """gunicorn with deploy/gunicorn.conf.py and two workers on 127.0.0.1:port, once ready.

    Extra SHOCKPATH_* settings may be given as keyword arguments (benchmark_echo="true")."""
    env = {
        **os.environ,
        "SHOCKPATH_BIND": f"127.0.0.1:{port}",
        "SHOCKPATH_WORKERS": "2",
        "SHOCKPATH_LOG_LEVEL": "WARNING",
        "PROMETHEUS_MULTIPROC_DIR": metrics_dir,
        **{f"SHOCKPATH_{k.upper()}": v for k, v in settings.items()},
    }
    process = subprocess.Popen(
        gunicorn_command(config),
        cwd=ROOT,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        try:
            if request(port, "GET", "/readyz", timeout=2)[0] == 200 and len(workers(process.pid)) == 2:
                return process
        except OSError:
            pass
        time.sleep(0.2)
    process.kill()
    raise RuntimeError("gunicorn did not start")


def demo_bodies() -> list[bytes]:
    from service.examples import examples

    return [
        json.dumps(e["request"]).encode()
        for e in examples().values()
        if e.get("endpoint", "/v1/paths") == "/v1/paths"
    ]


def gunicorn_command(config: str = "deploy/gunicorn.conf.py") -> list[str]:
    """gunicorn of this interpreter's environment serving the app factory with `config`."""
    return [str(Path(sys.executable).with_name("gunicorn")), "--config", config, "service:create_app()"]


def stop_gunicorn(process: subprocess.Popen, seconds: float = 30) -> None:
    """Stop gunicorn as an orchestrator does: SIGTERM (a graceful shutdown), then SIGKILL if it
    has not ended within `seconds`."""
    process.send_signal(signal.SIGTERM)
    try:
        process.wait(timeout=seconds)
    except subprocess.TimeoutExpired:
        process.kill()
        process.wait()


def wrk_command(script: Path, port: int, seconds: int) -> list[str]:
    """wrk with two threads, CONNECTIONS connections and latency figures, driven by `script`."""
    return [
        "wrk",
        "-t2",
        f"-c{CONNECTIONS}",
        f"-d{seconds}s",
        "--latency",
        "-s",
        str(script),
        f"http://127.0.0.1:{port}",
    ]


def wrk_script(folder: Path, bodies: list[bytes]) -> Path:
    files = []
    for i, body in enumerate(bodies):
        path = folder / f"body{i}.json"
        path.write_bytes(body)
        files.append(str(path))
    lua = folder / "mix.lua"
    lua.write_text(
        "local bodies = {}\n"
        + "".join(
            f'do local f = io.open("{p}", "rb"); bodies[#bodies + 1] = f:read("*a"); f:close() end\n'
            for p in files
        )
        + "local i = 0\n"
        "request = function()\n"
        "  i = i % #bodies + 1\n"
        '  return wrk.format("POST", "/v1/paths", {["Content-Type"] = "application/json"}, bodies[i])\n'
        "end\n"
    )
    return lua


def parse_wrk(text: str) -> dict:
    def latency(label: str) -> float:
        m = re.search(rf"^\s*{label}%\s+([\d.]+)(us|ms|s)\b", text, re.M)
        return float(m.group(1)) * {"us": 1e-3, "ms": 1.0, "s": 1e3}[m.group(2)]

    sockets = re.search(r"Socket errors: connect (\d+), read (\d+), write (\d+), timeout (\d+)", text)
    non_2xx = re.search(r"Non-2xx or 3xx responses:\s+(\d+)", text)
    return {
        "requests": int(re.search(r"(\d+) requests in", text).group(1)),
        "rps": float(re.search(r"Requests/sec:\s+([\d.]+)", text).group(1)),
        "p50_ms": latency("50"),
        "p99_ms": latency("99"),
        "non_2xx": int(non_2xx.group(1)) if non_2xx else 0,
        "socket_errors": sum(int(x) for x in sockets.groups()) if sockets else 0,
    }


def run(seconds: int) -> dict:
    if shutil.which("wrk") is None:
        raise SystemExit("wrk is needed (Debian package wrk)")
    port = free_port()
    metrics_dir = tempfile.mkdtemp(prefix="shockpath-load-")
    process = start_gunicorn(port, metrics_dir)
    try:
        bodies = demo_bodies()
        for _ in range(20):  # warm both workers before measuring memory
            for body in bodies:
                request(port, "POST", "/v1/paths", body)
        before = {pid: rss_mib(pid) for pid in workers(process.pid)}
        with tempfile.TemporaryDirectory() as folder:
            script = wrk_script(Path(folder), bodies)
            wrk = subprocess.Popen(
                wrk_command(script, port, seconds),
                stdout=subprocess.PIPE,
                text=True,
            )
            time.sleep(seconds / 2)
            victim = workers(process.pid)[0]
            os.kill(victim, signal.SIGKILL)
            output, _ = wrk.communicate(timeout=seconds + 60)
        deadline = time.monotonic() + 20
        while time.monotonic() < deadline and (
            len(workers(process.pid)) < 2 or victim in workers(process.pid)
        ):
            time.sleep(0.2)
        after_workers = workers(process.pid)
        after = {pid: rss_mib(pid) for pid in after_workers}
        mismatches = 0
        from service import simulate

        for body in bodies:
            status, data = request(port, "POST", "/v1/paths", body)
            if status != 200 or json.loads(data) != simulate(json.loads(body)):
                mismatches += 1
        result = parse_wrk(output)
        result.update(
            killed=victim,
            replaced=len(after_workers) == 2 and victim not in after_workers,
            rss_start_mib=before,
            rss_end_mib=after,
            # Workers may be recycled (max_requests) or replaced: compare the largest at each end.
            memory_growth=max(after.values()) / max(before.values()) - 1.0,
            sampled=len(bodies),
            mismatches=mismatches,
        )
        return result
    finally:
        stop_gunicorn(process, 40)
        shutil.rmtree(metrics_dir, ignore_errors=True)


def graceful_shutdown() -> dict:
    """A long request in flight when the master gets SIGTERM still gets its whole answer."""
    from service.examples import example_request

    port = free_port()
    metrics_dir = tempfile.mkdtemp(prefix="shockpath-term-")
    process = start_gunicorn(port, metrics_dir)
    body = example_request("quillbrook-uncertain-elasticities")
    body.update(draws=100_000, horizon=40)
    result: dict = {}

    def call():
        status, data = request(port, "POST", "/v1/bands", json.dumps(body).encode())
        result["status"] = status
        result["complete"] = "bands" in json.loads(data)

    thread = threading.Thread(target=call)
    thread.start()
    time.sleep(0.7)
    process.send_signal(signal.SIGTERM)
    thread.join(timeout=60)
    result["exit_code"] = process.wait(timeout=60)
    shutil.rmtree(metrics_dir, ignore_errors=True)
    return result


#: The largest batch's formats measured: (label, path, Accept).
LARGEST_BATCH_FORMATS = [
    ("json", "/v1/paths/batch", "application/json"),
    ("csv_long", "/v1/paths/batch", "text/csv"),
    ("csv_wide", "/v1/paths/batch?layout=wide", "text/csv"),
]


def largest_batch() -> bytes:
    """The largest batch the limits allow, as the benchmarks build it: MAX_BATCH_SCENARIOS
    copies of the typical request (4 policies) over 49 years, MAX_POLICY_PERIODS in all."""
    from service import limits
    from tests.benchmarks.bench_service import typical_request

    return json.dumps({"scenarios": [typical_request(49)] * limits.MAX_BATCH_SCENARIOS}).encode()


def download(port: int, path: str, body: bytes, accept: str) -> tuple[int, int, float]:
    """POST and read the answer to its last byte in 1 MB pieces, keeping none of it:
    (status, bytes, seconds to the last byte)."""
    started = time.perf_counter()
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=600)
    conn.request("POST", path, body, {"Content-Type": "application/json", "Accept": accept})
    response = conn.getresponse()
    size = 0
    while piece := response.read(1 << 20):
        size += len(piece)
    conn.close()
    return response.status, size, round(time.perf_counter() - started, 2)


def in_process_figures() -> dict:
    """Seconds to the last byte of the largest batch through Flask's test client (no server,
    no socket), best of two: JSON, long CSV, wide CSV."""
    from service import create_app

    client = create_app().test_client()
    batch = largest_batch()
    out = {}
    for label, path, accept in LARGEST_BATCH_FORMATS:
        headers = {"Content-Type": "application/json", "Accept": accept}
        times = []
        for _ in range(2):
            started = time.perf_counter()
            response = client.post(path, data=batch, headers=headers, buffered=False)
            size = sum(len(piece) for piece in response.response)
            times.append(time.perf_counter() - started)
        out[label] = {"status": response.status_code, "bytes": size, "seconds": round(min(times), 2)}
    return out


def csv_figures(port: int) -> dict:
    """Seconds to the last byte of the largest batch as JSON, long CSV and wide CSV, one at a
    time (best of two); then /healthz and /readyz probed every 0.1 s while two of the largest
    batches are answered as long-form CSV side by side."""
    batch = largest_batch()
    alone = {}
    for label, path, accept in LARGEST_BATCH_FORMATS:
        runs = [download(port, path, batch, accept) for _ in range(2)]
        alone[label] = {"status": runs[0][0], "bytes": runs[0][1], "seconds": min(r[2] for r in runs)}
    answers: list[tuple[int, int, float]] = []

    def large():
        answers.append(download(port, "/v1/paths/batch", batch, "text/csv"))

    threads = [threading.Thread(target=large) for _ in range(2)]
    for t in threads:
        t.start()
    probes: dict[str, list[float]] = {"/healthz": [], "/readyz": []}
    time.sleep(0.3)
    while any(t.is_alive() for t in threads):
        for path, times in probes.items():
            started = time.perf_counter()
            status, _ = request(port, "GET", path, timeout=60)
            times.append(time.perf_counter() - started if status == 200 else float("inf"))
        time.sleep(0.1)
    for t in threads:
        t.join()
    return {
        "largest_batch_alone": alone,
        "two_largest_csv_batches": answers,
        "probes": {path: len(times) for path, times in probes.items()},
        "worst_ms": {path: round(1000 * max(times, default=0.0), 1) for path, times in probes.items()},
    }


def repeat(seconds: int, config: str) -> dict:
    """One demo request repeated by wrk (2 threads, 4 kept-alive connections) for `seconds`,
    then the largest batch's figures over gunicorn (csv_figures) and in process."""
    if shutil.which("wrk") is None:
        raise SystemExit("wrk is needed (Debian package wrk)")
    port = free_port()
    metrics_dir = tempfile.mkdtemp(prefix="shockpath-repeat-")
    process = start_gunicorn(port, metrics_dir, config)
    try:
        load: dict = {"load_average_before": os.getloadavg()}
        if seconds > 0:
            body = demo_bodies()[0]
            with tempfile.TemporaryDirectory() as folder:
                script = wrk_script(Path(folder), [body])
                output = subprocess.run(
                    wrk_command(script, port, seconds),
                    capture_output=True,
                    text=True,
                    timeout=seconds + 60,
                ).stdout
            load.update(parse_wrk(output), max_ms=_max_latency(output), load_average_after=os.getloadavg())
        return {
            "load": load,
            **csv_figures(port),
            "largest_batch_in_process": in_process_figures(),
            "load_average_at_end": os.getloadavg(),
        }
    finally:
        stop_gunicorn(process, 40)
        shutil.rmtree(metrics_dir, ignore_errors=True)


def _max_latency(text: str) -> float:
    m = re.search(r"^\s*Latency\s+\S+\s+\S+\s+([\d.]+)(us|ms|s)\b", text, re.M)
    return float(m.group(1)) * {"us": 1e-3, "ms": 1.0, "s": 1e3}[m.group(2)] if m else float("nan")


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--seconds", type=int, default=60)
    parser.add_argument("--check", action="store_true", help="assert the short run's expectations")
    parser.add_argument("--repeat", action="store_true", help="one repeated request; probes during CSV")
    parser.add_argument("--config", default="deploy/gunicorn.conf.py", help="gunicorn configuration")
    args = parser.parse_args()
    if args.repeat:
        print(json.dumps(repeat(args.seconds, args.config), indent=2))
        return
    result = run(args.seconds)
    term = graceful_shutdown()
    print(json.dumps({"load": result, "sigterm": term}, indent=2, default=str))
    if args.check:
        assert result["non_2xx"] == 0, result
        assert result["socket_errors"] <= CONNECTIONS, result  # at most the killed worker's connections
        assert result["replaced"], result
        assert result["memory_growth"] < 0.20, result
        assert result["mismatches"] == 0, result
        assert term == {"status": 200, "complete": True, "exit_code": 0}, term
        print("load and fault checks passed")


if __name__ == "__main__":
    main()
