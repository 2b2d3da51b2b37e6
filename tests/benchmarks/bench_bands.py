"""Benchmark: percentile bands for 100,000 draws x 40 periods x 3 policies.

    .venv/bin/python -m tests.benchmarks.bench_bands [--draws 100000] [--sample 300] [--additions]

Prints seconds and peak resident memory of the vectorised engine (one and two threads, each
in a fresh process), and the ratio against a Python loop over draws that calls the same
engine one draw at a time (timed on a sample of draws and scaled). `--additions` runs the same
market with what MODEL.md 12-14 add to the bands: the stock schedule (homes below and rent
above the free path banded for every policy), a growth cap on 60 % of the homes (covered and
uncovered rent banded) and an uncertain inflation rate (the nominal rent banded per draw), 3
policies and 29 banded series where the plain run has 18, so 80,000 draws by default (the
most that MAX_BAND_VALUES allows). Not part of the test run: machines are shared and noisy, so
this prints figures and asserts nothing.
"""

from __future__ import annotations

import argparse
import copy
import json
import platform
import subprocess
import sys
import time

import numpy as np


def scenario(draws: int, additions: bool = False) -> dict:
    from service.examples import example_request

    # The uncertain demo in the constant-elasticity form, with the three policies of the speed
    # issue: none, a growth cap and a unit tax (whose clearing needs a root in every cell).
    request = example_request("quillbrook-uncertain-elasticities")
    request["market"]["form"] = "constant_elasticity"
    request["horizon"] = 40
    request["draws"] = draws
    request["percentiles"] = [5, 50, 95]
    request["policies"] = [
        {"name": "free market", "kind": "none"},
        {"name": "2.5% cap", "kind": "price_ceiling", "growth": 0.025},
        {"name": "levy", "kind": "unit_tax", "amount": 40},
    ]
    if additions:
        request["adjustment"] = {"schedule": "stock", "half_life": 4, "depreciation": 0.02}
        request["market"]["inflation"] = {"distribution": "uniform", "low": 0.01, "high": 0.05}
        request["policies"][1]["coverage"] = 0.6
    return request


def _child(draws: int, threads: int, additions: int) -> None:
    from service import bands

    request = scenario(draws, bool(additions))
    bands(copy.deepcopy(request), threads=threads)  # warm: imports, caches
    start = time.perf_counter()
    bands(request, threads=threads)
    seconds = time.perf_counter() - start
    # VmHWM, not ru_maxrss: on Linux a child's ru_maxrss starts at its parent's size at fork.
    peak = next(
        int(line.split()[1]) / 1024
        for line in open("/proc/self/status", encoding="ascii")
        if line.startswith("VmHWM:")
    )
    print(json.dumps({"seconds": seconds, "peak_mib": peak}))


def _run(draws: int, threads: int, additions: bool) -> dict:
    child = [str(draws), str(threads), str(int(additions))]
    out = subprocess.run(
        [sys.executable, "-m", "tests.benchmarks.bench_bands", "--child", *child],
        check=True,
        capture_output=True,
        text=True,
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def _scalar_loop(draws: int, sample: int, additions: bool) -> float:
    """Seconds per draw of a Python loop that runs the engine once per draw."""
    from service import simulate
    from service.engine.uncertainty import draw
    from service.schemas.uncertainty import BandsRequestSchema

    request = scenario(draws, additions)
    req = BandsRequestSchema().load(request)
    values = draw(req.inputs, sample, req.seed)
    plain = copy.deepcopy(request)
    for key in ("draws", "seed", "percentiles"):
        plain.pop(key)
    start = time.perf_counter()
    for row in values:
        one = copy.deepcopy(plain)
        for item, value in zip(req.inputs, row, strict=True):
            parts = item.pointer.strip("/").split("/")
            target = one
            for p in parts[:-1]:
                target = target[p]
            target[parts[-1]] = float(value)
        simulate(one)
    return (time.perf_counter() - start) / sample


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--draws", type=int, default=None)
    parser.add_argument("--sample", type=int, default=300)
    parser.add_argument("--additions", action="store_true")
    parser.add_argument("--child", nargs=3, type=int)
    args = parser.parse_args()
    if args.child:
        _child(*args.child)
        return
    if args.draws is None:
        args.draws = 80_000 if args.additions else 100_000
    one = _run(args.draws, 1, args.additions)
    two = _run(args.draws, 2, args.additions)
    per_draw = _scalar_loop(args.draws, args.sample, args.additions)
    loop = per_draw * args.draws
    print(f"machine: {platform.machine()}, {platform.python_version()}, numpy {np.__version__}")
    print(
        f"bands: {args.draws:,} draws x 41 periods x 3 policies"
        " (none, growth cap, constant-elasticity unit tax)"
        + (": stock schedule, cap on 60 % of homes, uncertain inflation" if args.additions else "")
    )
    print(f"{'figure':44} {'value':>12} {'target':>10}")
    print(f"{'vectorised, 1 thread (s)':44} {one['seconds']:12.2f} {'':>10}")
    print(f"{'vectorised, 2 threads (s)':44} {two['seconds']:12.2f} {'< 1.5':>10}")
    print(f"{'peak resident memory, 2 threads (MiB)':44} {two['peak_mib']:12.0f} {'< 1024':>10}")
    print(f"{'Python loop over draws, one engine call each (s)':44} {loop:12.1f} {'':>10}")
    print(f"{'  (measured on ' + str(args.sample) + ' draws, scaled)':44}")
    print(f"{'ratio loop / vectorised (2 threads)':44} {loop / two['seconds']:12.0f} {'':>10}")


if __name__ == "__main__":
    main()
