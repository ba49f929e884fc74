"""Benchmark: the production front against gunicorn alone, at 8 and 64 connections.

Run from the repository root with the project's environment (nginx installed)::

    .venv/bin/python tests/bench/bench_scale.py             # 2 rounds x 3 s per phase
    .venv/bin/python tests/bench/bench_scale.py --help

Started on free ports of 127.0.0.1 with the tests' stack (tests/e2e/stack.py): two gunicorn
instances under deploy/gunicorn.conf.py (2 workers each) and two nginx fronts from
deploy/nginx.conf.in, one before the first instance only and one before both. One load
client (asyncio, this process, HTTP/1.1 keep-alive connections) then drives each phase in
interleaved rounds:

* ``mix``: 80 % repeated questions (50 distinct URLs asked again and again) and 20 % new
  ones (a count never asked before), the same sequence for every target;
* ``repeated``: the 50 repeated questions only;
* ``new``: new questions only (every answer computed; what a second instance can add).

Targets: ``gunicorn`` (the first instance directly), ``proxy -> 1`` and ``proxy -> 2``.
Reported per phase: requests per second (median over rounds), p50 and p99 latency, errors
(any status but 200, or a failed connection) and, through the proxy, the share of answers
served from its cache (X-Cache-Status HIT). Each phase is bounded by time and by a request
count; every process is stopped by its id at the end.
"""

from __future__ import annotations

import argparse
import asyncio
import itertools
import os
import platform
import shutil
import statistics
import sys
import tempfile
import time
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO_ROOT / "tests"))

from e2e.stack import HOST, Server, Stack, nginx_binary  # noqa: E402

REPEATED = [f"/v1/collisions?bits=64&count={10**6 + 37 * i}" for i in range(50)]
REPEATED_SHARE = 0.8
MAX_REQUESTS_PER_PHASE = 500_000
IO_TIMEOUT_S = 10.0


@dataclass
class PhaseResult:
    """What one phase measured."""

    seconds: float = 0.0
    latencies: list[float] = field(default_factory=list)
    errors: int = 0
    hits: int = 0
    answered: int = 0

    @property
    def rate(self) -> float:
        return len(self.latencies) / self.seconds if self.seconds else 0.0


def paths(kind: str, new_counts: Iterator[int]) -> Iterator[str]:
    """The request paths of one phase, endless; new questions take counts from new_counts."""
    repeated = itertools.cycle(REPEATED)
    for index in itertools.count():
        if kind == "repeated" or (kind == "mix" and index % 10 < 10 * REPEATED_SHARE):
            yield next(repeated)
        else:
            yield f"/v1/collisions?bits=64&count={next(new_counts)}"


async def one_connection(
    port: int, source: Iterator[str], deadline: float, result: PhaseResult
) -> None:
    """Send requests one after another on one keep-alive connection until the deadline."""
    reader = writer = None
    while time.monotonic() < deadline and result.answered < MAX_REQUESTS_PER_PHASE:
        try:
            if writer is None:
                reader, writer = await asyncio.open_connection(HOST, port)
            assert reader is not None
            started = time.perf_counter()
            writer.write(f"GET {next(source)} HTTP/1.1\r\nHost: bench\r\n\r\n".encode())
            head = await asyncio.wait_for(reader.readuntil(b"\r\n\r\n"), IO_TIMEOUT_S)
            lower = head.lower()
            length = int(lower.split(b"content-length:", 1)[1].split(b"\r\n", 1)[0])
            await asyncio.wait_for(reader.readexactly(length), IO_TIMEOUT_S)
            result.answered += 1
            if head[9:12] != b"200":
                result.errors += 1
                continue
            result.latencies.append(time.perf_counter() - started)
            if b"x-cache-status: hit" in lower:
                result.hits += 1
            if b"connection: close" in lower:
                writer.close()
                writer = None
        except (TimeoutError, OSError, asyncio.IncompleteReadError, IndexError):
            result.errors += 1
            if writer is not None:
                writer.close()
            writer = None
    if writer is not None:
        writer.close()


async def run_phase(
    port: int, kind: str, connections: int, seconds: float, new_counts: Iterator[int]
) -> PhaseResult:
    result = PhaseResult()
    source = paths(kind, new_counts)
    started = time.monotonic()
    deadline = started + seconds
    await asyncio.gather(
        *(one_connection(port, source, deadline, result) for _ in range(connections))
    )
    result.seconds = time.monotonic() - started
    return result


def percentile(values: list[float], share: float) -> float:
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, int(share * len(ordered)))] if ordered else 0.0


def warm(port: int) -> None:
    """Ask every repeated question once, so that caches hold them before timing."""
    asyncio.run(run_phase(port, "repeated", 1, 0.5, iter(())))


def main(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seconds", type=float, default=3.0, help="per phase and round")
    parser.add_argument("--rounds", type=int, default=2)
    parser.add_argument("--connections", type=int, nargs="+", default=[8, 64])
    args = parser.parse_args(argv)
    if nginx_binary() is None:
        print("nginx is not installed (apt-get install nginx)", file=sys.stderr)
        return 1
    new_counts = itertools.count(4 * 10**9 + os.getpid() * 10**6)
    stack = Stack(Path(tempfile.mkdtemp(prefix="urnbound-bench-scale-")))
    try:
        first, second = stack.gunicorn("first"), stack.gunicorn("second")
        proxy_one = stack.nginx([first], unlimited=(HOST,), worker_processes=1)
        proxy_two = stack.nginx([first, second], unlimited=(HOST,), worker_processes=1)
        targets: dict[str, Server] = {
            "gunicorn": first,
            "proxy -> 1": proxy_one,
            "proxy -> 2": proxy_two,
        }
        for server in targets.values():
            warm(server.port)
        phases = [
            (target, kind, connections)
            for connections in args.connections
            for kind in ("mix", "repeated", "new")
            for target in targets
        ]
        results: dict[tuple[str, str, int], list[PhaseResult]] = {p: [] for p in phases}
        for round_index in range(args.rounds):
            order = phases[round_index % len(phases) :] + phases[: round_index % len(phases)]
            for target, kind, connections in order:
                measured = asyncio.run(
                    run_phase(targets[target].port, kind, connections, args.seconds, new_counts)
                )
                results[(target, kind, connections)].append(measured)
        print_table(results, args)
    finally:
        stack.close()
        shutil.rmtree(stack.work, ignore_errors=True)
    return 0


def print_table(
    results: dict[tuple[str, str, int], list[PhaseResult]], args: argparse.Namespace
) -> None:
    print(
        f"\n{platform.python_implementation()} {platform.python_version()}, "
        f"{os.cpu_count()} CPUs, {args.rounds} rounds x {args.seconds:g} s per phase, "
        "load client and servers on one machine\n"
    )
    print("| connections | questions | target | req/s | p50 ms | p99 ms | errors | cache hits |")
    print("|---:|---|---|---:|---:|---:|---:|---:|")
    rates: dict[tuple[str, str, int], float] = {}
    for (target, kind, connections), runs in results.items():
        rate = statistics.median(run.rate for run in runs)
        rates[(target, kind, connections)] = rate
        latencies = [value for run in runs for value in run.latencies]
        errors = sum(run.errors for run in runs)
        answered = sum(len(run.latencies) for run in runs)
        hits = sum(run.hits for run in runs)
        hit_text = f"{100 * hits / answered:.0f} %" if target != "gunicorn" and answered else "–"
        print(
            f"| {connections} | {kind} | {target} | {rate:,.0f} | "
            f"{1000 * percentile(latencies, 0.5):.2f} | {1000 * percentile(latencies, 0.99):.2f}"
            f" | {errors} | {hit_text} |"
        )
    print()
    for connections in args.connections:
        repeated = rates[("proxy -> 2", "repeated", connections)] / max(
            rates[("gunicorn", "repeated", connections)], 1e-9
        )
        growth = rates[("proxy -> 2", "new", connections)] / max(
            rates[("proxy -> 1", "new", connections)], 1e-9
        )
        print(
            f"{connections} connections: repeated questions through the proxy at "
            f"{repeated:.1f}x gunicorn alone (target >= 3x); new questions with two "
            f"instances behind the proxy at {growth:.2f}x one instance"
        )


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
