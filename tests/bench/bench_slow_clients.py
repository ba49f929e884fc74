"""Benchmark: ordinary requests while slow clients hold connections, by worker class and front.

Run from the repository root with the project's environment::

    .venv/bin/python tests/bench/bench_slow_clients.py          # 20 slow clients, 12 s
    .venv/bin/python tests/bench/bench_slow_clients.py --help

For each setup, one gunicorn instance with deploy/gunicorn.conf.py (2 workers) starts on a
free port of 127.0.0.1, and ``--slow`` clients open connections that send a request's
headers one byte a second. Meanwhile one client sends an ordinary request (a new question)
every 0.1 s for ``--seconds`` seconds, each with a 5 s timeout. Setups:

* ``sync``: gunicorn's sync workers (``-k sync --threads 1``), the previous deployment;
* ``gthread``: the deployed worker class (gthread, 32 threads, 10 s per request);
* ``proxy``: nginx from deploy/nginx.conf.in in front of the deployed instance.

Reported: ordinary requests answered, answered within a second, p50/p99/max latency, and
how long the server let a slow client hold its connection (median). Every phase is bounded
in time; every process is stopped by its id at the end.
"""

from __future__ import annotations

import argparse
import shutil
import socket
import statistics
import sys
import tempfile
import threading
import time
import urllib.error
import urllib.request
from dataclasses import dataclass
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO_ROOT / "tests"))

from e2e.stack import HOST, Stack, nginx_binary  # noqa: E402

PROBE_INTERVAL_S = 0.1
PROBE_TIMEOUT_S = 5.0


@dataclass(frozen=True, slots=True)
class Outcome:
    probes: int
    answered: int
    within_second: int
    latencies: tuple[float, ...]
    held_s: tuple[float, ...]


def slow_client(port: int, bound_s: float, held: list[float], stop: threading.Event) -> None:
    """Send headers a byte a second until the server closes, the bound passes or stop."""
    payload = b"GET /healthz HTTP/1.1\r\nHost: bench\r\nX-Slow: " + b"s" * 1000
    started = time.monotonic()
    try:
        with socket.create_connection((HOST, port), timeout=bound_s) as connection:
            for byte in payload:
                if stop.is_set() or time.monotonic() - started > bound_s:
                    return
                connection.sendall(bytes([byte]))
                try:
                    if connection.recv(1, socket.MSG_DONTWAIT) == b"":
                        break
                except BlockingIOError:
                    pass
                stop.wait(1.0)
    except OSError:
        pass
    held.append(time.monotonic() - started)


def measure(port: int, slow: int, seconds: float) -> Outcome:
    stop = threading.Event()
    held: list[float] = []
    threads = [
        threading.Thread(target=slow_client, args=(port, seconds + 5, held, stop), daemon=True)
        for _ in range(slow)
    ]
    for thread in threads:
        thread.start()
    time.sleep(1.0)
    latencies: list[float] = []
    probes = 0
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        probes += 1
        started = time.perf_counter()
        url = f"http://{HOST}:{port}/v1/collisions?bits=64&count={5 * 10**9 + probes}"
        try:
            with urllib.request.urlopen(url, timeout=PROBE_TIMEOUT_S) as response:
                response.read()
                if response.status == 200:
                    latencies.append(time.perf_counter() - started)
        except (OSError, urllib.error.URLError):
            pass
        time.sleep(PROBE_INTERVAL_S)
    stop.set()
    for thread in threads:
        thread.join(timeout=10)
    return Outcome(
        probes,
        len(latencies),
        sum(1 for value in latencies if value <= 1.0),
        tuple(latencies),
        tuple(held),
    )


def percentile(values: tuple[float, ...], share: float) -> float:
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, int(share * len(ordered)))] if ordered else float("nan")


def main(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--slow", type=int, default=20, help="slow clients")
    parser.add_argument("--seconds", type=float, default=12.0)
    args = parser.parse_args(argv)
    setups = ["sync", "gthread"] + (["proxy"] if nginx_binary() else [])
    print(
        f"\n{args.slow} slow clients (headers at 1 byte/s); one ordinary request every "
        f"{PROBE_INTERVAL_S} s for {args.seconds:g} s, {PROBE_TIMEOUT_S:g} s timeout\n"
    )
    print(
        "| setup | answered | within 1 s | p50 ms | p99 ms | max ms | slow client held (median s) |"
    )
    print("|---|---:|---:|---:|---:|---:|---:|")
    for setup in setups:
        stack = Stack(Path(tempfile.mkdtemp(prefix="urnbound-bench-slow-")))
        try:
            extra = ("-k", "sync", "--threads", "1") if setup == "sync" else ()
            instance = stack.gunicorn(setup, args=extra)
            port = (
                stack.nginx([instance], unlimited=(HOST,)).port
                if setup == "proxy"
                else (instance.port)
            )
            outcome = measure(port, args.slow, args.seconds)
        finally:
            stack.close()
            shutil.rmtree(stack.work, ignore_errors=True)
        held = statistics.median(outcome.held_s) if outcome.held_s else float("nan")
        print(
            f"| {setup} | {outcome.answered}/{outcome.probes} | {outcome.within_second} | "
            f"{1000 * percentile(outcome.latencies, 0.5):.1f} | "
            f"{1000 * percentile(outcome.latencies, 0.99):.1f} | "
            f"{1000 * max(outcome.latencies, default=float('nan')):.1f} | {held:.1f} |"
        )
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
