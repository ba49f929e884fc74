"""Benchmark: requests per second of /v1/collisions beside an empty JSON endpoint, one gunicorn.

Run from the repository root with the project's environment::

    .venv/bin/python tests/bench/bench_http.py            # defaults: 5 rounds x 2 s per endpoint
    .venv/bin/python tests/bench/bench_http.py --help

One gunicorn, started with deploy/gunicorn.conf.py exactly as in production (sync workers,
Prometheus multiprocess directory, JSON access log), serves the bench-only app of
``empty_app.py``: the product app plus ``/bench/empty``. Client processes on 127.0.0.1 then
drive, in interleaved rounds, three kinds of request:

* empty JSON: ``GET /bench/empty`` (the framework's floor);
* cached: the same ``/v1/collisions`` question again and again (answer-cache hits);
* first answer: ``/v1/collisions`` with a count never asked before (cache misses).

It prints a markdown table with the median requests per second of each and their ratio to the
empty endpoint. Every phase is bounded by time and by a request count; the script stops
gunicorn itself.
"""

from __future__ import annotations

import argparse
import contextlib
import http.client
import itertools
import os
import platform
import signal
import statistics
import subprocess
import sys
import tempfile
import time
import urllib.request
from collections.abc import Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor
from contextlib import contextmanager
from dataclasses import dataclass, replace
from multiprocessing import get_context
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parents[2]
BENCH_DIR = Path(__file__).resolve().parent
GUNICORN_CONF = REPO_ROOT / "deploy" / "gunicorn.conf.py"
BENCH_APP = "empty_app:create_bench_app()"
HOST = "127.0.0.1"
STARTUP_TIMEOUT_S = 60.0
REQUEST_TIMEOUT_S = 10.0
MAX_ERRORS_PER_CLIENT = 50
CACHED_TARGET = 0.70
FIRST_ANSWER_TARGET = 0.50


@dataclass(frozen=True, slots=True)
class Scenario:
    """One kind of request: a label, and a path template (``{n}`` varies per request)."""

    key: str
    label: str
    shown: str
    template: str
    target: float | None


@dataclass(frozen=True, slots=True)
class Job:
    """What one client process does in one phase."""

    port: int
    template: str
    first_number: int
    start_at: float
    duration_s: float
    max_requests: int


@dataclass(frozen=True, slots=True)
class Tally:
    """What one client process did in one phase."""

    completed: int
    errors: int
    elapsed_s: float


@dataclass(frozen=True, slots=True)
class Server:
    """The benchmarked gunicorn: its port, and the pid of its master process."""

    port: int
    pid: int


@dataclass(frozen=True, slots=True)
class Phase:
    """One phase: requests per second, failures, and server CPU seconds per answered request."""

    rate: float
    errors: int
    cpu_per_request_s: float | None


@dataclass(frozen=True, slots=True)
class Options:
    """Command-line options."""

    workers: int | None
    clients: int
    duration_s: float
    rounds: int
    max_requests: int
    bits: int
    count: int
    require_targets: bool


def scenarios(bits: int, count: int) -> tuple[Scenario, ...]:
    """The three request kinds, the empty endpoint first (it is the denominator)."""
    question = f"/v1/collisions?bits={bits}&count="
    return (
        Scenario("empty", "empty JSON", "GET /bench/empty", "/bench/empty", None),
        Scenario(
            "cached",
            "collisions, cached",
            f"GET {question}{count} (same question)",
            f"{question}{count}",
            CACHED_TARGET,
        ),
        Scenario(
            "first",
            "collisions, first answer",
            f"GET {question}<new count each request>",
            question + "{n}",
            FIRST_ANSWER_TARGET,
        ),
    )


def drive(job: Job) -> Tally:
    """Send requests one after another until time or count runs out.

    The HTTP/1.1 client asks for keep-alive; gunicorn's sync workers close each connection
    anyway, and the client reconnects, so every endpoint pays the same connection cost.
    """
    connection = http.client.HTTPConnection(HOST, job.port, timeout=REQUEST_TIMEOUT_S)
    time.sleep(max(0.0, job.start_at - time.time()))
    deadline = job.start_at + job.duration_s
    completed = errors = 0
    while completed < job.max_requests and time.time() < deadline:
        path = job.template.format(n=job.first_number + completed + errors)
        try:
            connection.request("GET", path)
            response = connection.getresponse()
            response.read()
            ok = response.status == 200
        except (OSError, http.client.HTTPException):
            connection.close()
            ok = False
        if ok:
            completed += 1
        else:
            errors += 1
            if errors >= MAX_ERRORS_PER_CLIENT:
                break
    elapsed = time.time() - job.start_at
    connection.close()
    return Tally(completed, errors, elapsed)


def warm_up_client(_: int) -> int:
    """A no-op that makes the pool start its worker processes before any timing."""
    time.sleep(0.2)
    return os.getpid()


def run_phase(
    pool: ProcessPoolExecutor, options: Options, server: Server, template: str, first_number: int
) -> Phase:
    """Rate, failures and server CPU cost of one phase with every client busy."""
    start_at = time.time() + 0.3
    jobs = [
        Job(
            port=server.port,
            template=template,
            # Disjoint number ranges per client, so that no two requests repeat a count.
            first_number=first_number + index * 10 * options.max_requests,
            start_at=start_at,
            duration_s=options.duration_s,
            max_requests=options.max_requests,
        )
        for index in range(options.clients)
    ]
    cpu_before = workers_cpu_seconds(server.pid)
    futures = [pool.submit(drive, job) for job in jobs]
    limit = options.duration_s + REQUEST_TIMEOUT_S + 30.0
    tallies = [future.result(timeout=limit) for future in futures]
    cpu_after = workers_cpu_seconds(server.pid)
    elapsed = max(tally.elapsed_s for tally in tallies)
    completed = sum(tally.completed for tally in tallies)
    cpu = None
    if cpu_before is not None and cpu_after is not None and completed:
        cpu = (cpu_after - cpu_before) / completed
    return Phase(completed / elapsed, sum(tally.errors for tally in tallies), cpu)


def process_times(pid: int) -> tuple[int, float] | None:
    """(parent pid, CPU seconds of the process plus its reaped children) from /proc, if any."""
    try:
        with open(f"/proc/{pid}/stat", encoding="ascii", errors="replace") as stat:
            text = stat.read()
    except OSError:
        return None
    # Fields after the parenthesised command name: state, ppid, ... utime, stime, cutime,
    # cstime at positions 11..14 (proc(5)).
    fields = text[text.rindex(")") + 2 :].split()
    ticks = sum(int(value) for value in fields[11:15])
    return int(fields[1]), ticks / os.sysconf("SC_CLK_TCK")


def workers_cpu_seconds(master_pid: int) -> float | None:
    """CPU seconds used so far by gunicorn's workers, live and exited (Linux only)."""
    master = process_times(master_pid)
    if master is None or not os.path.isdir("/proc"):
        return None
    # The master's own share is small (it only supervises); exited workers are in its
    # children's times, so a worker recycled by max_requests is not lost.
    total = master[1]
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            times = process_times(int(entry))
            if times is not None and times[0] == master_pid:
                total += times[1]
    return total


def fetch(port: int, path: str) -> tuple[int, str]:
    """Status and text of one GET on the local service."""
    url = f"http://{HOST}:{port}{path}"
    try:
        with urllib.request.urlopen(url, timeout=REQUEST_TIMEOUT_S) as response:
            return int(response.status), response.read().decode("utf-8")
    except OSError:
        return 0, ""


def cache_lookups(server: Server) -> dict[str, float]:
    """Answer-cache lookups so far (result label -> count), summed over workers by /metrics."""
    from prometheus_client.parser import text_string_to_metric_families

    status, text = fetch(server.port, "/metrics")
    totals: dict[str, float] = {}
    if status != 200:
        return totals
    for family in text_string_to_metric_families(text):
        if family.type != "counter" or "cache" not in family.name:
            continue
        for sample in family.samples:
            if sample.name.endswith("_total") and "result" in sample.labels:
                result = sample.labels["result"]
                totals[result] = totals.get(result, 0.0) + sample.value
    return totals


def free_port() -> int:
    """A loopback TCP port that was free a moment ago."""
    import socket

    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        probe.bind((HOST, 0))
        port: int = probe.getsockname()[1]
        return port


def gunicorn_environment(port: int, metrics_dir: str, workers: int | None) -> dict[str, str]:
    """The environment of the benchmarked gunicorn: the deploy settings, bound to loopback."""
    environment = dict(os.environ)
    paths = [str(BENCH_DIR), str(REPO_ROOT / "service")]
    if environment.get("PYTHONPATH"):
        paths.append(environment["PYTHONPATH"])
    environment.update(
        {
            "URNBOUND_HOST": HOST,
            "URNBOUND_PORT": str(port),
            "PROMETHEUS_MULTIPROC_DIR": metrics_dir,
            "PYTHONPATH": os.pathsep.join(paths),
        }
    )
    if workers is not None:
        environment["URNBOUND_WORKERS"] = str(workers)
    return environment


@contextmanager
def running_gunicorn(options: Options, work_dir: str) -> Iterator[Server]:
    """Start gunicorn on a free loopback port, yield it, always stop it."""
    port = free_port()
    metrics_dir = os.path.join(work_dir, "metrics")
    os.mkdir(metrics_dir)
    log_path = os.path.join(work_dir, "gunicorn.log")
    command = [sys.executable, "-m", "gunicorn", "--config", str(GUNICORN_CONF), BENCH_APP]
    with open(log_path, "wb") as log:
        process = subprocess.Popen(
            command,
            cwd=REPO_ROOT,
            env=gunicorn_environment(port, metrics_dir, options.workers),
            stdin=subprocess.DEVNULL,
            stdout=subprocess.DEVNULL,  # one JSON access-log line per request
            stderr=log,
            start_new_session=True,
        )
    try:
        wait_until_ready(process, port, log_path)
        yield Server(port, process.pid)
    finally:
        stop(process)


def wait_until_ready(process: subprocess.Popen[bytes], port: int, log_path: str) -> None:
    """Return once /healthz answers; exit with gunicorn's log if it does not in time."""
    deadline = time.monotonic() + STARTUP_TIMEOUT_S
    while time.monotonic() < deadline and process.poll() is None:
        if fetch(port, "/healthz")[0] == 200:
            return
        time.sleep(0.1)
    with open(log_path, encoding="utf-8", errors="replace") as log:
        sys.exit(f"gunicorn did not become healthy:\n{log.read()}")


def stop(process: subprocess.Popen[bytes]) -> None:
    """Terminate gunicorn; kill its process group if it lingers."""
    if process.poll() is None:
        process.terminate()
    try:
        process.wait(timeout=30)
    except subprocess.TimeoutExpired:
        with contextlib.suppress(ProcessLookupError):
            os.killpg(process.pid, signal.SIGKILL)
        process.wait(timeout=30)


def worker_count(options: Options) -> int:
    """The number of gunicorn workers the deploy configuration will start."""
    if options.workers:
        return options.workers
    import runpy

    settings = runpy.run_path(str(GUNICORN_CONF))
    return int(settings["workers"])


def check_answers(server: Server, chosen: Sequence[Scenario]) -> None:
    """Exit unless every endpoint answers 200 before any timing starts."""
    for scenario in chosen:
        path = scenario.template.format(n=10**9 + 7)
        status, _ = fetch(server.port, path)
        if status != 200:
            sys.exit(f"{path} answered {status or 'nothing'}; nothing was measured")


@dataclass(frozen=True, slots=True)
class Measurements:
    """Per scenario key, one figure per round: requests per second and server CPU seconds per
    request (empty when /proc is unavailable); failed requests; cache lookups of first answers.
    """

    rates: dict[str, list[float]]
    cpu: dict[str, list[float]]
    errors: int
    first_answer_lookups: dict[str, float]


def measure(options: Options, server: Server, chosen: Sequence[Scenario]) -> Measurements:
    """Warm up, then run ``rounds`` rounds of every scenario, rotating their order."""
    measured = Measurements({s.key: [] for s in chosen}, {s.key: [] for s in chosen}, 0, {})
    errors = 0
    # Counts above anything the cached question or the warm-up uses, unique across the run.
    numbers = itertools.count(options.count + 10**6, 10 * options.max_requests * options.clients)
    with ProcessPoolExecutor(max_workers=options.clients, mp_context=get_context("spawn")) as pool:
        list(pool.map(warm_up_client, range(options.clients)))
        warm = replace(options, duration_s=min(1.0, options.duration_s))
        for scenario in chosen:
            run_phase(pool, warm, server, scenario.template, next(numbers))
        for index in range(options.rounds):
            # Rotating the order keeps a slow moment of the machine off any one scenario.
            for scenario in [*chosen[index % len(chosen) :], *chosen[: index % len(chosen)]]:
                before = cache_lookups(server) if scenario.key == "first" else None
                phase = run_phase(pool, options, server, scenario.template, next(numbers))
                measured.rates[scenario.key].append(phase.rate)
                if phase.cpu_per_request_s is not None:
                    measured.cpu[scenario.key].append(phase.cpu_per_request_s)
                errors += phase.errors
                if before is not None:
                    lookups = measured.first_answer_lookups
                    for result, value in cache_lookups(server).items():
                        lookups[result] = lookups.get(result, 0.0) + value - before.get(result, 0)
    return replace(measured, errors=errors)


def ratio_to_empty(measured: Measurements, key: str) -> float:
    """Median over rounds of the scenario's rate divided by the empty endpoint's in that round.

    Within one round the phases run seconds apart, so the ratio is less exposed to other load
    on the machine than the ratio of two medians.
    """
    pairs = zip(measured.rates[key], measured.rates["empty"], strict=True)
    return statistics.median(rate / floor for rate, floor in pairs)


def percent(value: float) -> str:
    """A ratio as a whole percentage."""
    return f"{100 * value:.0f} %"


def cpu_columns(measured: Measurements, key: str) -> tuple[str, str]:
    """Median server CPU per request, and the rate ratio that CPU cost alone would allow."""
    costs, floors = measured.cpu[key], measured.cpu["empty"]
    if not costs or len(costs) != len(floors):
        return "n/a", "n/a"
    implied = statistics.median(floor / cost for cost, floor in zip(costs, floors, strict=True))
    return f"{1e3 * statistics.median(costs):.2f} ms", percent(implied)


def table(chosen: Sequence[Scenario], measured: Measurements, rounds: int) -> list[str]:
    """The markdown table: rates, ratio to empty, target, and server CPU per request."""
    lines = [
        f"| Endpoint | Request | Requests/s (median of {rounds}) | Range | vs empty | Target "
        "| Server CPU/request | vs empty by CPU |",
        "|---|---|---:|---:|---:|---|---:|---:|",
    ]
    for scenario in chosen:
        values = measured.rates[scenario.key]
        ratio = ratio_to_empty(measured, scenario.key)
        if scenario.target is None:
            target = "-"
        else:
            verdict = "met" if ratio >= scenario.target else "MISSED"
            target = f">= {percent(scenario.target)} ({verdict})"
        cpu, by_cpu = cpu_columns(measured, scenario.key)
        lines.append(
            f"| {scenario.label} | `{scenario.shown}` | {statistics.median(values):,.0f} "
            f"| {min(values):,.0f}-{max(values):,.0f} | {percent(ratio)} | {target} "
            f"| {cpu} | {by_cpu} |"
        )
    return lines


def targets_met(chosen: Sequence[Scenario], measured: Measurements) -> bool:
    """Whether every scenario with a target reached it."""
    return all(
        ratio_to_empty(measured, scenario.key) >= scenario.target
        for scenario in chosen
        if scenario.target is not None
    )


def gunicorn_version() -> str:
    """The installed gunicorn version."""
    from importlib.metadata import version

    return version("gunicorn")


def report(options: Options, chosen: Sequence[Scenario], measured: Measurements) -> None:
    """Print the setting, the table and the cache check."""
    cpus = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    print(
        f"gunicorn {gunicorn_version()}, deploy/gunicorn.conf.py, "
        f"{worker_count(options)} sync workers; Python {platform.python_version()}; "
        f"{cpus} CPUs shared by server and load; {options.clients} client processes on "
        f"{HOST}; {options.rounds} interleaved rounds of {options.duration_s:g} s per endpoint."
    )
    print()
    print("\n".join(table(chosen, measured, options.rounds)))
    print()
    hits = measured.first_answer_lookups.get("hit", 0.0)
    misses = measured.first_answer_lookups.get("miss", 0.0)
    if hits or misses:
        print(f"Answer cache during first-answer phases: {misses:,.0f} misses, {hits:,.0f} hits.")
    print(
        "vs empty: median over rounds of the rate divided by the empty endpoint's rate in the "
        "same round. Server CPU/request: CPU time of all gunicorn workers (from /proc) per "
        "answered request; vs empty by CPU: the rate ratio if that cost were the only limit."
    )
    print(
        "Server and load generator share the machine; the load's own cost per request is the "
        "same for every endpoint and narrows the rate gaps, which the CPU columns leave out. "
        "Compare ratios from one run, not figures across machines."
    )
    if measured.errors:
        print(f"WARNING: {measured.errors} requests failed or did not answer 200.")


def parse_options(argv: Sequence[str] | None) -> Options:
    """Options from the command line."""
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0] if __doc__ else None)
    parser.add_argument("--workers", type=int, default=None, help="override URNBOUND_WORKERS")
    parser.add_argument("--clients", type=int, default=None, help="client processes")
    parser.add_argument("--duration", type=float, default=2.0, help="seconds per phase")
    parser.add_argument("--rounds", type=int, default=5, help="interleaved rounds")
    parser.add_argument(
        "--max-requests", type=int, default=100_000, help="cap per client and phase"
    )
    parser.add_argument("--bits", type=int, default=64, help="bits of the asked space")
    parser.add_argument("--count", type=int, default=10**9, help="count of the cached question")
    parser.add_argument(
        "--require-targets", action="store_true", help="exit 2 when a target is missed"
    )
    args = parser.parse_args(argv)
    if args.workers is not None and not 1 <= args.workers <= 64:
        parser.error("--workers must be from 1 to 64")
    if not 0.5 <= args.duration <= 60 or not 1 <= args.rounds <= 20:
        parser.error("--duration must be 0.5..60 s and --rounds 1..20")
    if not 1 <= args.max_requests <= 10**6:
        parser.error("--max-requests must be from 1 to 1000000")
    if not 1 <= args.bits <= 8192 or not 0 <= args.count <= 10**15:
        parser.error("--bits must be 1..8192 and --count 0..1e15")
    options = Options(
        workers=args.workers,
        clients=1,
        duration_s=args.duration,
        rounds=args.rounds,
        max_requests=args.max_requests,
        bits=args.bits,
        count=args.count,
        require_targets=args.require_targets,
    )
    # Enough clients that every sync worker always has a request waiting.
    clients = args.clients if args.clients is not None else worker_count(options) + 2
    if not 1 <= clients <= 256:
        parser.error("--clients must be from 1 to 256")
    return replace(options, clients=clients)


def main(argv: Sequence[str] | None = None) -> int:
    """Run the benchmark once; 0 on success, 1 on failed requests, 2 on missed targets."""
    options = parse_options(argv)
    chosen = scenarios(options.bits, options.count)
    with tempfile.TemporaryDirectory(prefix="urnbound-bench-") as work_dir:
        with running_gunicorn(options, work_dir) as server:
            check_answers(server, chosen)
            measured = measure(options, server, chosen)
    report(options, chosen, measured)
    if measured.errors:
        return 1
    if options.require_targets and not targets_met(chosen, measured):
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main())
