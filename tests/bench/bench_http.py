"""Benchmark: requests per second of the service as ratios to a bare Flask floor, one run.

Run from the repository root with the project's environment::

    .venv/bin/python tests/bench/bench_http.py            # defaults: 5 rounds x 2 s per phase
    .venv/bin/python tests/bench/bench_http.py --help

Several gunicorn instances run side by side, each started with deploy/gunicorn.conf.py as in
production (its worker class, 2 workers by default, a Prometheus multiprocess directory of its
own) on a free port of 127.0.0.1, with the bench apps of ``empty_app.py``:

* ``bare``: a Flask app with one empty JSON endpoint and nothing else: the floor;
* ``product``: the product app as deployed (access log, metrics, answer cache), plus the
  same empty endpoint, which shows what the product's middleware costs by itself;
* ``no-log``: the product with ``URNBOUND_ACCESS_LOG=0``;
* ``no-metrics``: the product without the request metrics hook and the /metrics mount;
* ``no-cache``: the product with ``URNBOUND_CACHE_ENTRIES=0`` (every answer recomputed).

One load client (a process on 127.0.0.1) then drives every (instance, request) phase in
interleaved rounds, rotating their order each round: the empty endpoint, the same
``/v1/collisions`` question again (cached), and a count never asked before (first answer).
Each phase's rate is divided by the bare floor's rate in the same round, and the table shows
the median of those ratios, the targets, and the gunicorn workers' CPU time per request (from
/proc), whose differences between instances say where the time goes.

Every phase is bounded by time and by a request count; each gunicorn runs in a process group
of its own, and the script stops every one it started (by process id, then its group).
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
from contextlib import ExitStack, contextmanager
from dataclasses import dataclass, replace
from multiprocessing import get_context
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parents[2]
BENCH_DIR = Path(__file__).resolve().parent
GUNICORN_CONF = REPO_ROOT / "deploy" / "gunicorn.conf.py"
HOST = "127.0.0.1"
STARTUP_TIMEOUT_S = 60.0
SHUTDOWN_TIMEOUT_S = 30.0
REQUEST_TIMEOUT_S = 10.0
MAX_ERRORS_PER_CLIENT = 50
#: Rate of the cached answer as a fraction of the bare floor's.
CACHED_TARGET = 0.85
#: Rate of a first (uncached) answer as a fraction of the bare floor's.
FIRST_ANSWER_TARGET = 0.70
EMPTY_PATH = "/bench/empty"


@dataclass(frozen=True, slots=True)
class Instance:
    """One gunicorn to start: a key, what it is, the app it loads and extra environment."""

    key: str
    label: str
    target: str
    environment: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True, slots=True)
class Scenario:
    """One phase kind: the instance asked, a label, and a path template (``{n}`` varies)."""

    key: str
    instance: str
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
    """A benchmarked gunicorn: its port, and the pid of its master process."""

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

    workers: int
    clients: int
    duration_s: float
    rounds: int
    max_requests: int
    bits: int
    count: int
    require_targets: bool


INSTANCES = (
    Instance("bare", "bare Flask", "empty_app:create_bare_app()"),
    Instance("product", "product", "empty_app:create_product_app()"),
    Instance(
        "no-log", "product, access log off", "empty_app:create_product_app()",
        (("URNBOUND_ACCESS_LOG", "0"),),
    ),
    Instance(
        "no-metrics", "product, metrics off", "empty_app:create_product_app_without_metrics()"
    ),
    Instance(
        "no-cache", "product, answer cache off", "empty_app:create_product_app()",
        (("URNBOUND_CACHE_ENTRIES", "0"),),
    ),
)


def scenarios(bits: int, count: int) -> tuple[Scenario, ...]:
    """Every phase kind, the bare floor first (it is the denominator)."""
    question = f"/v1/collisions?bits={bits}&count="
    same = f"GET {question}{count} (same question)"
    fresh = f"GET {question}<new count each request>"
    return (
        Scenario("floor", "bare", "empty JSON", f"GET {EMPTY_PATH}", EMPTY_PATH, None),
        Scenario("empty", "product", "empty JSON", f"GET {EMPTY_PATH}", EMPTY_PATH, None),
        Scenario("cached", "product", "collisions, cached", same, question + str(count),
                 CACHED_TARGET),
        Scenario("first", "product", "collisions, first answer", fresh, question + "{n}",
                 FIRST_ANSWER_TARGET),
        Scenario("empty-nolog", "no-log", "empty JSON", f"GET {EMPTY_PATH}", EMPTY_PATH, None),
        Scenario("cached-nolog", "no-log", "collisions, cached", same, question + str(count),
                 None),
        Scenario("first-nolog", "no-log", "collisions, first answer", fresh, question + "{n}",
                 None),
        Scenario("empty-nometrics", "no-metrics", "empty JSON", f"GET {EMPTY_PATH}", EMPTY_PATH,
                 None),
        Scenario("cached-nometrics", "no-metrics", "collisions, cached", same,
                 question + str(count), None),
        Scenario("same-nocache", "no-cache", "collisions, same question recomputed", same,
                 question + str(count), None),
    )


def drive(job: Job) -> Tally:
    """Send requests one after another until time or count runs out.

    The HTTP/1.1 client asks for keep-alive; the worker class keeps the connection or closes
    it (the client then reconnects) alike for every endpoint, so all pay the same connection
    cost.
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


def gunicorn_environment(
    instance: Instance, port: int, metrics_dir: str, workers: int
) -> dict[str, str]:
    """The environment of one benchmarked gunicorn: the deploy settings, bound to loopback."""
    environment = {
        key: value for key, value in os.environ.items() if not key.startswith("URNBOUND_")
    }
    paths = [str(BENCH_DIR), str(REPO_ROOT / "service")]
    if environment.get("PYTHONPATH"):
        paths.append(environment["PYTHONPATH"])
    environment.update(
        {
            "URNBOUND_HOST": HOST,
            "URNBOUND_PORT": str(port),
            "URNBOUND_WORKERS": str(workers),
            "PROMETHEUS_MULTIPROC_DIR": metrics_dir,
            "PYTHONPATH": os.pathsep.join(paths),
        }
    )
    environment.update(dict(instance.environment))
    return environment


@contextmanager
def running_gunicorn(instance: Instance, workers: int, work_dir: str) -> Iterator[Server]:
    """Start one gunicorn on a free loopback port, yield it, always stop it."""
    port = free_port()
    own_dir = os.path.join(work_dir, instance.key)
    metrics_dir = os.path.join(own_dir, "metrics")
    os.makedirs(metrics_dir)
    log_path = os.path.join(own_dir, "gunicorn.log")
    command = [sys.executable, "-m", "gunicorn", "--config", str(GUNICORN_CONF), instance.target]
    with open(log_path, "wb") as log:
        process = subprocess.Popen(
            command,
            cwd=REPO_ROOT,
            env=gunicorn_environment(instance, port, metrics_dir, workers),
            stdin=subprocess.DEVNULL,
            stdout=subprocess.DEVNULL,  # one JSON access-log line per request
            stderr=log,
            start_new_session=True,  # its own process group, so that it can be killed whole
        )
    try:
        wait_until_ready(process, port, log_path)
        yield Server(port, process.pid)
    finally:
        stop(process)


def wait_until_ready(process: subprocess.Popen[bytes], port: int, log_path: str) -> None:
    """Return once the empty endpoint answers; exit with gunicorn's log if it does not in time."""
    deadline = time.monotonic() + STARTUP_TIMEOUT_S
    while time.monotonic() < deadline and process.poll() is None:
        if fetch(port, EMPTY_PATH)[0] == 200:
            return
        time.sleep(0.1)
    with open(log_path, encoding="utf-8", errors="replace") as log:
        raise SystemExit(f"gunicorn did not become ready:\n{log.read()}")


def stop(process: subprocess.Popen[bytes]) -> None:
    """Stop gunicorn by its pid; kill its whole process group if it lingers."""
    if process.poll() is None:
        process.terminate()
    try:
        process.wait(timeout=SHUTDOWN_TIMEOUT_S)
    except subprocess.TimeoutExpired:
        with contextlib.suppress(ProcessLookupError):
            os.killpg(process.pid, signal.SIGKILL)
        process.wait(timeout=SHUTDOWN_TIMEOUT_S)
    # Workers left behind by a master that died first share its process group.
    with contextlib.suppress(ProcessLookupError, PermissionError):
        os.killpg(process.pid, signal.SIGKILL)


def check_answers(servers: dict[str, Server], chosen: Sequence[Scenario]) -> None:
    """Exit unless every phase's request answers 200 before any timing starts."""
    for scenario in chosen:
        path = scenario.template.format(n=10**9 + 7)
        status, _ = fetch(servers[scenario.instance].port, path)
        if status != 200:
            raise SystemExit(f"{scenario.instance} {path} answered {status or 'nothing'}")


@dataclass(frozen=True, slots=True)
class Measurements:
    """Per scenario key, one figure per round: requests per second and server CPU seconds per
    request (empty when /proc is unavailable); failed requests; cache lookups of first answers.
    """

    rates: dict[str, list[float]]
    cpu: dict[str, list[float]]
    errors: int
    first_answer_lookups: dict[str, float]


def measure(
    options: Options, servers: dict[str, Server], chosen: Sequence[Scenario]
) -> Measurements:
    """Warm up, then run ``rounds`` rounds of every phase, rotating their order."""
    measured = Measurements({s.key: [] for s in chosen}, {s.key: [] for s in chosen}, 0, {})
    errors = 0
    # Counts above anything the cached question or the warm-up uses, unique across the run.
    numbers = itertools.count(options.count + 10**6, 10 * options.max_requests * options.clients)
    with ProcessPoolExecutor(max_workers=options.clients, mp_context=get_context("spawn")) as pool:
        list(pool.map(warm_up_client, range(options.clients)))
        warm = replace(options, duration_s=min(1.0, options.duration_s))
        for scenario in chosen:
            run_phase(pool, warm, servers[scenario.instance], scenario.template, next(numbers))
        for index in range(options.rounds):
            # Rotating the order keeps a slow moment of the machine off any one phase.
            shift = index % len(chosen)
            for scenario in [*chosen[shift:], *chosen[:shift]]:
                server = servers[scenario.instance]
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


def ratio_to_floor(measured: Measurements, key: str) -> float:
    """Median over rounds of the phase's rate divided by the bare floor's in that round.

    Within one round the phases run seconds apart, so the ratio is less exposed to other load
    on the machine than the ratio of two medians.
    """
    pairs = zip(measured.rates[key], measured.rates["floor"], strict=True)
    return statistics.median(rate / floor for rate, floor in pairs)


def median_cpu_us(measured: Measurements, key: str) -> float | None:
    """Median server CPU microseconds per request of one phase, if measured."""
    costs = measured.cpu[key]
    return 1e6 * statistics.median(costs) if costs else None


def percent(value: float) -> str:
    """A ratio as a whole percentage."""
    return f"{100 * value:.0f} %"


def table(
    chosen: Sequence[Scenario], measured: Measurements, rounds: int, labels: dict[str, str]
) -> list[str]:
    """The markdown table: rates, ratio to the floor, target, and server CPU per request."""
    lines = [
        f"| Instance | Request | Requests/s (median of {rounds}) | Range | vs bare floor "
        "| Target (ratio / target) | Server CPU/request |",
        "|---|---|---:|---:|---:|---|---:|",
    ]
    for scenario in chosen:
        values = measured.rates[scenario.key]
        ratio = ratio_to_floor(measured, scenario.key)
        if scenario.target is None:
            target = "-"
        else:
            verdict = "met" if ratio >= scenario.target else "MISSED"
            target = f">= {percent(scenario.target)}: {ratio / scenario.target:.2f} ({verdict})"
        cpu = median_cpu_us(measured, scenario.key)
        cpu_text = "n/a" if cpu is None else f"{cpu:,.0f} us"
        lines.append(
            f"| {labels[scenario.instance]} | {scenario.label}: `{scenario.shown}` "
            f"| {statistics.median(values):,.0f} | {min(values):,.0f}-{max(values):,.0f} "
            f"| {percent(ratio)} | {target} | {cpu_text} |"
        )
    return lines


#: Where the time goes: (what, phase that has it, phase without it), by server CPU.
BREAKDOWN = (
    ("product middleware in all (empty endpoint: product - bare)", "empty", "floor"),
    ("access log (empty endpoint: product - log off)", "empty", "empty-nolog"),
    ("request metrics (empty endpoint: product - metrics off)", "empty", "empty-nometrics"),
    ("cached answer's view (cached - empty endpoint)", "cached", "empty"),
    ("first answer's view (first answer - empty endpoint)", "first", "empty"),
    ("access log on a cached answer (cached: product - log off)", "cached", "cached-nolog"),
    ("request metrics on a cached answer (cached: product - metrics off)", "cached",
     "cached-nometrics"),
    ("what the answer cache saves (recomputed - cached)", "same-nocache", "cached"),
)


def breakdown(measured: Measurements) -> list[str]:
    """Differences of median server CPU per request between phases, as a markdown table."""
    lines = ["| Where the time goes | Server CPU/request |", "|---|---:|"]
    for label, having, lacking in BREAKDOWN:
        with_it, without = median_cpu_us(measured, having), median_cpu_us(measured, lacking)
        if with_it is None or without is None:
            continue
        lines.append(f"| {label} | {with_it - without:+,.0f} us |")
    return lines


def targets_met(chosen: Sequence[Scenario], measured: Measurements) -> bool:
    """Whether every phase with a target reached it."""
    return all(
        ratio_to_floor(measured, scenario.key) >= scenario.target
        for scenario in chosen
        if scenario.target is not None
    )


def gunicorn_version() -> str:
    """The installed gunicorn version."""
    from importlib.metadata import version

    return version("gunicorn")


def report(options: Options, chosen: Sequence[Scenario], measured: Measurements) -> None:
    """Print the setting, the tables and the cache check."""
    cpus = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(
        f"gunicorn {gunicorn_version()}, deploy/gunicorn.conf.py, {options.workers} workers "
        f"of its class per instance; Python {platform.python_version()}; {cpus} CPUs shared by "
        f"server and load (1-minute load average {load:.2f} at the end); {options.clients} "
        f"client process(es) on {HOST}; {options.rounds} interleaved rounds of "
        f"{options.duration_s:g} s per phase."
    )
    print()
    labels = {instance.key: instance.label for instance in INSTANCES}
    print("\n".join(table(chosen, measured, options.rounds, labels)))
    print()
    print("\n".join(breakdown(measured)))
    print()
    hits = measured.first_answer_lookups.get("hit", 0.0)
    misses = measured.first_answer_lookups.get("miss", 0.0)
    if hits or misses:
        print(f"Answer cache during first-answer phases: {misses:,.0f} misses, {hits:,.0f} hits.")
    print(
        "vs bare floor: median over rounds of the phase's rate divided by the bare Flask "
        "empty endpoint's rate in the same round. Server CPU/request: CPU time of the "
        "instance's gunicorn workers (from /proc) per answered request; the second table "
        "subtracts those medians between instances or requests."
    )
    print(
        "Server and load generator share the machine, and the load's own cost per request is "
        "the same for every phase, which narrows the rate gaps. Compare ratios from one run, "
        "not figures across machines."
    )
    if measured.errors:
        print(f"WARNING: {measured.errors} requests failed or did not answer 200.")


def parse_options(argv: Sequence[str] | None) -> Options:
    """Options from the command line."""
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0] if __doc__ else None)
    parser.add_argument("--workers", type=int, default=2, help="gunicorn workers per instance")
    parser.add_argument("--clients", type=int, default=1, help="load client processes")
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
    if not 1 <= args.workers <= 64 or not 1 <= args.clients <= 64:
        parser.error("--workers and --clients must be from 1 to 64")
    if not 0.5 <= args.duration <= 60 or not 1 <= args.rounds <= 20:
        parser.error("--duration must be 0.5..60 s and --rounds 1..20")
    if not 1 <= args.max_requests <= 10**6:
        parser.error("--max-requests must be from 1 to 1000000")
    if not 1 <= args.bits <= 8192 or not 0 <= args.count <= 10**15:
        parser.error("--bits must be 1..8192 and --count 0..1e15")
    return Options(
        workers=args.workers,
        clients=args.clients,
        duration_s=args.duration,
        rounds=args.rounds,
        max_requests=args.max_requests,
        bits=args.bits,
        count=args.count,
        require_targets=args.require_targets,
    )


def main(argv: Sequence[str] | None = None) -> int:
    """Run the benchmark once; 0 on success, 1 on failed requests, 2 on missed targets."""
    options = parse_options(argv)
    chosen = scenarios(options.bits, options.count)
    with tempfile.TemporaryDirectory(prefix="urnbound-bench-") as work_dir, ExitStack() as stack:
        servers = {
            instance.key: stack.enter_context(
                running_gunicorn(instance, options.workers, work_dir)
            )
            for instance in INSTANCES
        }
        check_answers(servers, chosen)
        measured = measure(options, servers, chosen)
    report(options, chosen, measured)
    if measured.errors:
        return 1
    if options.require_targets and not targets_met(chosen, measured):
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main())
