"""Benchmarks of the service, printed side by side as ratios taken in one run (in process, each
side of a ratio is timed in alternating rounds and the best round of each kept).

    .venv/bin/python -m tests.benchmarks.bench_service [--scenarios 10000] [--seconds 10]

1. Engine throughput: scenarios x 40 periods x 4 policies (a growth-capped ceiling and a
   constant-elasticity unit tax among them) through service.simulate_many, against the scalar
   reference of tests/reference.py (brentq roots, quad welfare, a Python loop) on a sample.
2. HTTP: requests per second and p50/p99 latency of POST /v1/paths (a demo scenario, 20
   periods, 4 policies) under the production gunicorn configuration, against a bare endpoint
   of the same app that only parses and echoes the body, both driven by wrk; and the
   workers' CPU time per request of each, which the way wrk's connections fall on the
   workers does not move (the request rate's ratio swings with it on a two-core machine).
3. Batch: scenarios per second through POST /v1/paths/batch at the largest batch, over HTTP.
4. Bands: 100,000 draws x 40 periods x 3 policies (tests/benchmarks/bench_bands.py).
5. Memory: peak resident memory of each gunicorn worker after the runs above.

Needs wrk (Debian package `wrk`). Loopback only, bounded in time. Prints figures; asserts nothing.
"""

from __future__ import annotations

import argparse
import copy
import http.client
import json
import math
import os
import platform
import re
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]


def typical_request(horizon: int) -> dict:
    """The speed issue's typical request: constant elasticity, four policies (none, a 2 % growth
    cap, a unit tax, a quantity cap)."""
    from service.examples import example_request

    base = example_request("vellmar-bay-transfer-tax")  # constant elasticity
    base["horizon"] = horizon
    base["policies"] = [
        {"name": "free market", "kind": "none"},
        {"name": "2% cap", "kind": "price_ceiling", "growth": 0.02},
        {"name": "levy", "kind": "unit_tax", "amount": 60},
        {"name": "permits", "kind": "quantity_cap", "level": 19000},
    ]
    return base


def engine_scenarios(n: int, seed: int = 0, horizon: int = 40) -> list[dict]:
    rng = np.random.default_rng(seed)
    base = typical_request(horizon)
    out = []
    for _ in range(n):
        r = copy.deepcopy(base)
        r["market"]["price"] = float(rng.uniform(1500, 2500))
        r["market"]["demand"]["price_elasticity"] = float(rng.uniform(-1.2, -0.3))
        r["market"]["supply"]["long_run_elasticity"] = float(rng.uniform(0.8, 3.0))
        out.append(r)
    return out


#: Rounds in which each side of a ratio is timed in turn; each figure is the best of its rounds,
#: so a machine whose speed drifts during the run (a shared host) moves both sides alike.
ROUNDS = 5


def best_per_item(measures: dict[str, Callable[[int], int]], rounds: int = ROUNDS) -> dict[str, float]:
    """Seconds per item of each measure (called with the round's number, returning how many
    items it did): the best of `rounds` rounds in each of which every measure runs once."""
    best = dict.fromkeys(measures, math.inf)
    for round_number in range(rounds):
        for name, run in measures.items():
            start = time.perf_counter()
            items = run(round_number)
            best[name] = min(best[name], (time.perf_counter() - start) / items)
    return best


def bench_single(n: int, sample: int) -> dict:
    """One typical request (20 periods) at a time through service.simulate, every call a new
    scenario, against the scalar reference on the same requests, in alternating rounds."""
    from service import simulate

    from .. import reference

    requests = engine_scenarios(50 + n * ROUNDS, seed=1, horizon=20)
    for r in requests[:50]:
        simulate(r)

    def ours(k: int) -> int:
        for r in requests[50 + n * k : 50 + n * (k + 1)]:
            simulate(r)
        return n

    def scalar(k: int) -> int:
        for r in requests[50 + n * k : 50 + n * k + sample]:
            reference.paths(r)
        return sample

    best = best_per_item({"ours": ours, "scalar": scalar})
    return {"ms": 1e3 * best["ours"], "scalar_ms": 1e3 * best["scalar"]}


def bench_cold_start() -> dict:
    """Seconds for create_app in a fresh interpreter: kernels compiled (empty numba cache) and
    loaded from the cache; and from gunicorn's start to the first answer of a worker."""
    code = (
        "import time; t = time.perf_counter()\n"
        "from service import create_app; create_app()\n"
        "print(time.perf_counter() - t)"
    )
    out = {}
    with tempfile.TemporaryDirectory() as cache:
        env = dict(os.environ, NUMBA_CACHE_DIR=cache)
        for label in ("compile", "cached"):
            run = subprocess.run(
                [sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True
            )
            out[label] = float(run.stdout.strip().splitlines()[-1])
    start = time.perf_counter()
    server = Server()
    out["gunicorn_first_answer"] = time.perf_counter() - start
    server.stop()
    return out


def bench_engine(n: int, sample: int) -> dict:
    """simulate_many over n scenarios (series as lists, as arrays), the engine alone on the
    validated scenarios, and the scalar reference on a sample, in alternating rounds."""
    from service import engine, simulate_many
    from service.simulation import load_scenario

    from .. import reference

    requests = engine_scenarios(n)
    simulate_many(requests[:100])  # warm up
    assert all("scenario_id" in b for b in simulate_many(requests[:100]))
    scenarios = [load_scenario(r) for r in requests]

    def lists(_: int) -> int:
        simulate_many(requests)
        return n

    def arrays(_: int) -> int:
        simulate_many(requests, lists=False)  # series as numpy arrays, as the batch endpoint writes them
        return n

    def engine_only(_: int) -> int:
        engine.solve_scenarios(scenarios)
        return n

    def scalar(k: int) -> int:
        chunk = requests[sample * k : sample * (k + 1)] or requests[:sample]
        for r in chunk:
            reference.paths(r)
        return len(chunk)

    best = best_per_item({"lists": lists, "arrays": arrays, "engine": engine_only, "scalar": scalar})
    return {
        "per_second": 1.0 / best["lists"],
        "arrays_per_second": 1.0 / best["arrays"],
        "engine_per_second": 1.0 / best["engine"],
        "scalar_per_second": 1.0 / best["scalar"],
    }


class Server:
    """gunicorn with the production configuration on a free loopback port (deploy/loadtest.py
    starts it), with the bare echo endpoint switched on."""

    def __init__(self):
        sys.path.insert(0, str(ROOT / "deploy"))
        from loadtest import free_port, start_gunicorn

        self.port = free_port()
        self.metrics = tempfile.mkdtemp(prefix="shockpath-bench-")
        self.process = start_gunicorn(self.port, self.metrics, benchmark_echo="true")

    def request(self, method: str, path: str, body: bytes | None = None):
        conn = http.client.HTTPConnection("127.0.0.1", self.port, timeout=120)
        conn.request(method, path, body=body, headers={"Content-Type": "application/json"})
        response = conn.getresponse()
        out = response.status, response.read()
        conn.close()
        return out

    def workers(self) -> list[int]:
        children = Path(f"/proc/{self.process.pid}/task/{self.process.pid}/children").read_text().split()
        return [int(c) for c in children]

    def worker_cpu_seconds(self) -> float:
        """CPU seconds the workers have used so far: the running workers' own (every thread)
        and, through the master's counts of reaped children, those of workers already
        recycled, so a difference over a run counts every request's worker."""
        ticks = os.sysconf("SC_CLK_TCK")

        def fields(pid: int) -> list[str]:
            text = Path(f"/proc/{pid}/stat").read_text()
            return text[text.rindex(")") + 2 :].split()  # after the command name

        master = fields(self.process.pid)
        total = int(master[13]) + int(master[14])  # cutime, cstime: reaped children
        for pid in self.workers():
            try:
                worker = fields(pid)
            except FileNotFoundError:  # left between the listing and the read
                continue
            total += int(worker[11]) + int(worker[12])  # utime, stime
        return total / ticks

    def stop(self) -> None:
        self.process.send_signal(signal.SIGTERM)
        self.process.wait(timeout=60)
        shutil.rmtree(self.metrics, ignore_errors=True)


def _peak_rss_mib(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    return float("nan")


def wrk(port: int, path: str, body: bytes, seconds: int, distinct: bool = False) -> dict:
    """wrk -t2 -c4 posting `body`; with distinct=True every request gets its own base price
    (the text PRICE in the body), so no answer can come from the cache."""
    with tempfile.TemporaryDirectory() as folder:
        payload = Path(folder) / "body.json"
        payload.write_bytes(body)
        script = Path(folder) / "post.lua"
        lua = (
            'wrk.method = "POST"\n'
            'wrk.headers["Content-Type"] = "application/json"\n'
            f'local f = io.open("{payload}", "rb")\nlocal template = f:read("*a")\nf:close()\n'
            "wrk.body = template\n"
        )
        if distinct:
            lua += (
                "local n = 0\n"
                "local salt = 0\n"
                "function init(args)\n"
                "  math.randomseed(os.time() + os.clock() * 1e6)\n"
                "  salt = math.random(1, 1e9)\n"
                "end\n"
                "function request()\n"
                "  n = n + 1\n"
                '  local price = string.format("%d.%09d", 1000 + n % 1000, salt + n)\n'
                '  local b = string.gsub(template, "PRICE", price)\n'
                "  return wrk.format(nil, nil, nil, b)\n"
                "end\n"
            )
        script.write_text(lua)
        out = subprocess.run(
            [
                "wrk",
                "-t2",
                "-c4",
                f"-d{seconds}s",
                "--latency",
                "-s",
                str(script),
                f"http://127.0.0.1:{port}{path}",
            ],
            capture_output=True,
            text=True,
            check=True,
        ).stdout

    def latency(label: str) -> float:
        match = re.search(rf"^\s*{label}%\s+([\d.]+)(us|ms|s)", out, re.M)
        value, unit = float(match.group(1)), match.group(2)
        return value * {"us": 1e-3, "ms": 1.0, "s": 1e3}[unit]

    rps = float(re.search(r"Requests/sec:\s+([\d.]+)", out).group(1))
    count = int(re.search(r"(\d+) requests in", out).group(1))
    non_2xx = re.search(r"Non-2xx or 3xx responses:\s+(\d+)", out)
    return {
        "rps": rps,
        "p50_ms": latency("50"),
        "p99_ms": latency("99"),
        "non_2xx": int(non_2xx.group(1)) if non_2xx else 0,
        "requests": count,
    }


def wrk_with_cpu(server: Server, path: str, body: bytes, seconds: int, distinct: bool = False) -> dict:
    """wrk's figures and the workers' CPU milliseconds per request over the run: unlike the
    request rate, not moved by how wrk's four connections happen to fall on the workers (one
    worker may take all of them and leave the other idle)."""
    before = server.worker_cpu_seconds()
    figures = wrk(server.port, path, body, seconds, distinct)
    used = server.worker_cpu_seconds() - before
    return {**figures, "cpu_ms": 1e3 * used / max(figures["requests"], 1)}


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--scenarios", type=int, default=2_000)
    parser.add_argument("--single", type=int, default=2_000)
    parser.add_argument("--sample", type=int, default=100)
    parser.add_argument("--seconds", type=int, default=10)
    parser.add_argument("--draws", type=int, default=100_000)
    args = parser.parse_args()
    if shutil.which("wrk") is None:
        sys.exit("wrk is needed: apt-get install wrk")

    from service import limits

    from .bench_bands import _run as run_bands
    from .bench_bands import scenario as bands_scenario

    single = bench_single(args.single, args.sample)
    engine_figures = bench_engine(args.scenarios, args.sample)
    cold = bench_cold_start()

    typical = typical_request(20)
    body = json.dumps(typical).encode()
    templated = json.dumps({**typical, "market": {**typical["market"], "price": "PRICE"}}).replace(
        '"PRICE"', "PRICE"
    )
    batch_size = limits.MAX_BATCH_SCENARIOS
    batch_body = json.dumps({"scenarios": [typical] * batch_size}).encode()

    server = Server()
    try:
        paths = wrk(server.port, "/v1/paths", body, args.seconds)
        distinct = wrk_with_cpu(server, "/v1/paths", templated.encode(), args.seconds, distinct=True)
        echo = wrk_with_cpu(server, "/benchmark/echo", body, args.seconds)
        times = []
        for _ in range(5):
            start = time.perf_counter()
            status, _ = server.request("POST", "/v1/paths/batch", batch_body)
            times.append(time.perf_counter() - start)
            assert status == 200
        batch_rate = batch_size / float(np.median(times))
        bands = run_bands(args.draws, 2, False)
        # One bands request through the server too, so the workers' peaks include it.
        server.request("POST", "/v1/bands", json.dumps(bands_scenario(args.draws)).encode())
        peaks = [_peak_rss_mib(pid) for pid in server.workers()]
    finally:
        server.stop()

    rows = [
        (
            "1. one request in process (20 periods), ms: scalar / shockpath",
            single["scalar_ms"],
            single["ms"],
            ">= 5",
        ),
        (
            "3. simulate_many, scenarios/s (validate + solve + render)",
            engine_figures["per_second"],
            engine_figures["scalar_per_second"],
            "",
        ),
        (
            "   the same with series as numpy arrays (lists=False), scenarios/s",
            engine_figures["arrays_per_second"],
            engine_figures["scalar_per_second"],
            ">= 30",
        ),
        (
            "   engine alone on validated scenarios, scenarios/s",
            engine_figures["engine_per_second"],
            engine_figures["scalar_per_second"],
            "",
        ),
        (
            "2. POST /v1/paths, every request a new scenario vs bare echo, req/s",
            distinct["rps"],
            echo["rps"],
            ">= 0.4",
        ),
        (
            "   requests per second of worker CPU (1 / CPU per request)",
            1e3 / distinct["cpu_ms"],
            1e3 / echo["cpu_ms"],
            ">= 0.4",
        ),
        ("   p50 latency, ms", distinct["p50_ms"], echo["p50_ms"], ""),
        ("   p99 latency, ms", distinct["p99_ms"], echo["p99_ms"], ""),
        ("   POST /v1/paths, one scenario repeated (answer cache), req/s", paths["rps"], echo["rps"], ""),
        ("   POST /v1/paths/batch (1,000 scenarios), scenarios/s", batch_rate, None, ""),
        (f"4. bands {args.draws:,} x 41 x 3, seconds (2 threads)", bands["seconds"], None, "< 1.5"),
        ("   bands peak resident memory, MiB", bands["peak_mib"], None, "< 1024"),
        ("5. peak resident memory per worker after the runs, MiB", max(peaks), None, ""),
        ("6. cold start: create_app compiling the kernels, s", cold["compile"], None, ""),
        ("   create_app with the kernels in numba's cache, s", cold["cached"], None, ""),
        (
            "   gunicorn start to first answer (2 workers, cache warm), s",
            cold["gunicorn_first_answer"],
            None,
            "",
        ),
    ]
    print(
        f"machine: {platform.machine()}, {os.cpu_count()} cores, "
        f"Python {platform.python_version()}, numpy {np.__version__}"
    )
    print(
        f"engine: {args.scenarios:,} constant-elasticity scenarios x 41 periods x 4 policies; "
        f"scalar reference (tests/reference.py: brentq, quad) on {args.sample}"
    )
    print(f"HTTP: wrk -t2 -c4 -d{args.seconds}s, gunicorn deploy/gunicorn.conf.py ({len(peaks)} workers)")
    print(f"{'figure':58} {'shockpath':>11} {'comparison':>11} {'ratio':>8} {'target':>7}")
    for name, value, other, target in rows:
        ratio = f"{value / other:8.2f}" if other else f"{'':8}"
        other_text = f"{other:11.2f}" if other else f"{'':11}"
        print(f"{name:58} {value:11.2f} {other_text} {ratio} {target:>7}")
    print(
        f"non-2xx: paths {paths['non_2xx']}, distinct {distinct['non_2xx']}, echo {echo['non_2xx']}; "
        f"worker peaks MiB: {[round(p) for p in peaks]}"
    )


if __name__ == "__main__":
    main()
