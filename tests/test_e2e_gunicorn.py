"""End to end: the service under gunicorn with the deploy configuration, asked over real HTTP."""

from __future__ import annotations

import contextlib
import os
import shutil
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import mpmath
import pytest
import requests
from prometheus_client.parser import text_string_to_metric_families

REPO_ROOT = Path(__file__).resolve().parents[1]
GUNICORN_CONF = REPO_ROOT / "deploy" / "gunicorn.conf.py"
STARTUP_TIMEOUT_S = 60.0
SHUTDOWN_TIMEOUT_S = 30.0
REQUEST_TIMEOUT_S = 30.0


@dataclass(frozen=True, slots=True)
class RunningService:
    """A gunicorn process serving the app, and the base URL it answers on."""

    process: subprocess.Popen[bytes]
    base_url: str
    log_path: Path


def free_loopback_port() -> int:
    """A TCP port on 127.0.0.1 that was free a moment ago."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        probe.bind(("127.0.0.1", 0))
        port: int = probe.getsockname()[1]
        return port


def service_environment(port: int, metrics_dir: Path) -> dict[str, str]:
    """The environment gunicorn runs in: loopback bind, two workers, shared metrics."""
    environment = dict(os.environ)
    source_dir = str(REPO_ROOT / "service")
    inherited = environment.get("PYTHONPATH")
    environment.update(
        {
            "URNBOUND_HOST": "127.0.0.1",
            "URNBOUND_PORT": str(port),
            # Two workers, so that /metrics has to sum over processes.
            "URNBOUND_WORKERS": "2",
            "URNBOUND_GRACEFUL_TIMEOUT": "5",
            "PROMETHEUS_MULTIPROC_DIR": str(metrics_dir),
            "PYTHONPATH": source_dir + (os.pathsep + inherited if inherited else ""),
        }
    )
    return environment


def wait_until_healthy(service: RunningService) -> None:
    """Poll /healthz until it answers 200; fail with gunicorn's log if it never does."""
    deadline = time.monotonic() + STARTUP_TIMEOUT_S
    while time.monotonic() < deadline:
        if service.process.poll() is not None:
            break
        try:
            if requests.get(service.base_url + "/healthz", timeout=2).status_code == 200:
                return
        except requests.RequestException:
            pass
        time.sleep(0.1)
    log = service.log_path.read_text(encoding="utf-8", errors="replace")
    pytest.fail(f"gunicorn did not become healthy (exit code {service.process.poll()}):\n{log}")


def stop(process: subprocess.Popen[bytes]) -> None:
    """Stop gunicorn gracefully; kill its process group if it does not exit in time."""
    if process.poll() is None:
        process.terminate()
    try:
        process.wait(timeout=SHUTDOWN_TIMEOUT_S)
    except subprocess.TimeoutExpired:
        with contextlib.suppress(ProcessLookupError):
            os.killpg(process.pid, signal.SIGKILL)
        process.wait(timeout=SHUTDOWN_TIMEOUT_S)


@pytest.fixture(scope="module")
def service(tmp_path_factory: pytest.TempPathFactory) -> Iterator[RunningService]:
    """gunicorn with deploy/gunicorn.conf.py serving urnbound.wsgi:app on a free port."""
    work = tmp_path_factory.mktemp("gunicorn")
    metrics_dir = work / "metrics"
    metrics_dir.mkdir()
    port = free_loopback_port()
    log_path = work / "gunicorn.log"
    command = [
        sys.executable,
        "-m",
        "gunicorn",
        "--config",
        str(GUNICORN_CONF),
        "urnbound.wsgi:app",
    ]
    with log_path.open("wb") as log:
        process = subprocess.Popen(
            command,
            cwd=REPO_ROOT,
            env=service_environment(port, metrics_dir),
            stdin=subprocess.DEVNULL,
            stdout=log,
            stderr=subprocess.STDOUT,
            start_new_session=True,
        )
    running = RunningService(process, f"http://127.0.0.1:{port}", log_path)
    try:
        wait_until_healthy(running)
        yield running
    finally:
        stop(process)
        # The per-worker sample files are of no use once gunicorn has gone.
        shutil.rmtree(metrics_dir, ignore_errors=True)


@pytest.fixture
def http(service: RunningService) -> Iterator[requests.Session]:
    """A requests session, closed after the test."""
    with requests.Session() as session:
        yield session


def no_collision_reference(size: int, count: int) -> mpmath.mpf:
    """P(all distinct) = size! / ((size - count)! * size**count), by mpmath at 80 digits."""
    # Independent general library: log-gamma at high precision, cancellation-safe at 80 digits
    # for these magnitudes (the log terms are about 1e21, the result about 1e-2).
    context = mpmath.MPContext()
    context.dps = 80
    log_ratio = (
        context.loggamma(size + 1) - context.loggamma(size - count + 1) - count * context.log(size)
    )
    return context.exp(log_ratio)


def test_fresh_answer_over_http(service: RunningService, http: requests.Session) -> None:
    response = http.get(
        service.base_url + "/v1/collisions",
        params={"bits": "64", "count": "1e9"},
        timeout=REQUEST_TIMEOUT_S,
    )
    assert response.status_code == 200
    assert response.headers["Content-Type"].startswith("application/json")
    assert response.headers["ETag"].startswith('"')
    assert response.headers["Cache-Control"].startswith("public, max-age=")
    body = response.json()
    assert body["space"]["size"] == str(2**64)
    assert body["space"]["bits"] == 64
    assert body["count"] == "1000000000"
    assert body["method"] in ("exact", "asymptotic")
    no_collision = no_collision_reference(2**64, 10**9)
    assert body["no_collision"]["value"] == pytest.approx(float(no_collision), rel=1e-12, abs=0)
    assert body["collision"]["value"] == pytest.approx(float(1 - no_collision), rel=1e-12, abs=0)
    # Between the 1 % (6.1e8) and 50 % (5.1e9) cells of the 64-bit row of the "Birthday
    # attack" table (Wikipedia), as /work/shared/reference-checks.md lists them.
    assert 0.01 < body["collision"]["value"] < 0.5


def test_conditional_get_is_answered_304(service: RunningService, http: requests.Session) -> None:
    url = service.base_url + "/v1/collisions"
    params = {"bits": "64", "count": "1000000000"}
    first = http.get(url, params=params, timeout=REQUEST_TIMEOUT_S)
    assert first.status_code == 200
    etag = first.headers["ETag"]
    # 1e9 and 1000000000 are the same question, so the same entity tag answers both.
    again = http.get(
        url,
        params={"bits": "64", "count": "1e9"},
        headers={"If-None-Match": etag},
        timeout=REQUEST_TIMEOUT_S,
    )
    assert again.status_code == 304
    assert again.content == b""
    assert again.headers["ETag"] == etag


def test_bad_input_is_problem_details(service: RunningService, http: requests.Session) -> None:
    response = http.get(
        service.base_url + "/v1/collisions",
        params={"bits": "64", "count": "-1"},
        timeout=REQUEST_TIMEOUT_S,
    )
    assert response.status_code == 422
    assert response.headers["Content-Type"].startswith("application/problem+json")
    problem = response.json()
    assert problem["status"] == 422
    assert {"type", "title", "detail"} <= problem.keys()
    assert "count" in problem["errors"]


def test_unknown_path_is_problem_details(service: RunningService, http: requests.Session) -> None:
    response = http.get(service.base_url + "/v1/no-such-thing", timeout=REQUEST_TIMEOUT_S)
    assert response.status_code == 404
    assert response.headers["Content-Type"].startswith("application/problem+json")
    assert response.json()["status"] == 404


def request_counts(text: str) -> dict[tuple[str, str], float]:
    """Sum of counter samples ending in ``_total`` by (endpoint, status) label values."""
    counts: dict[tuple[str, str], float] = {}
    for family in text_string_to_metric_families(text):
        if family.type != "counter":
            continue
        for sample in family.samples:
            labels = sample.labels
            if sample.name.endswith("_total") and {"endpoint", "status"} <= labels.keys():
                key = (labels["endpoint"], labels["status"])
                counts[key] = counts.get(key, 0.0) + sample.value
    return counts


def test_metrics_count_requests_across_workers(
    service: RunningService, http: requests.Session
) -> None:
    url = service.base_url + "/v1/collisions"
    asked = 6
    for count in range(asked):
        # Fresh connections each time, so gunicorn may hand them to either worker.
        reply = requests.get(url, params={"bits": "40", "count": str(count)}, timeout=30)
        assert reply.status_code == 200
    response = http.get(service.base_url + "/metrics", timeout=REQUEST_TIMEOUT_S)
    assert response.status_code == 200
    assert response.headers["Content-Type"].startswith("text/plain")
    answered = sum(
        value
        for (endpoint, status), value in request_counts(response.text).items()
        if "collisions" in endpoint and status == "200"
    )
    assert answered >= asked


def test_problem_type_pages_and_exact_metrics_path(
    service: RunningService, http: requests.Session
) -> None:
    problem = http.get(
        service.base_url + "/v1/collisions", params={"bits": "0", "count": "1"}, timeout=30
    ).json()
    page = http.get(service.base_url + problem["type"], timeout=REQUEST_TIMEOUT_S)
    assert page.status_code == 200
    assert page.headers["Content-Type"].startswith("text/html")
    for path in ("/metrics/", "/metrics/anything", "/metricsx"):
        response = http.get(service.base_url + path, timeout=REQUEST_TIMEOUT_S)
        assert response.status_code == 404, path
        assert response.headers["Content-Type"].startswith("application/problem+json")
    probe = http.get(service.base_url + "/readyz?from=balancer", timeout=REQUEST_TIMEOUT_S)
    assert probe.status_code == 200


SERVE_SCRIPT = "import sys; from urnbound.serving import serve; serve(None, tuple(sys.argv[1:]))"


def serve_environment(port: int, scratch: Path, **extra: str) -> dict[str, str]:
    """The environment of ``urnbound serve`` without a metrics directory, temp files in scratch."""
    environment = service_environment(port, scratch)
    del environment["PROMETHEUS_MULTIPROC_DIR"]
    environment["TMPDIR"] = str(scratch)  # where tempfile makes the private directory
    environment.update(extra)
    return environment


def private_dirs(scratch: Path) -> list[Path]:
    return sorted(scratch.glob("urnbound-metrics-*"))


def start_serve(environment: dict[str, str], log_path: Path) -> subprocess.Popen[bytes]:
    with log_path.open("wb") as log:
        return subprocess.Popen(
            [sys.executable, "-c", SERVE_SCRIPT],
            cwd=REPO_ROOT,
            env=environment,
            stdin=subprocess.DEVNULL,
            stdout=log,
            stderr=subprocess.STDOUT,
            start_new_session=True,
        )


@pytest.mark.parametrize("signal_number", [signal.SIGTERM, signal.SIGINT])
def test_serve_removes_the_metrics_directory_it_made(
    tmp_path: Path, signal_number: signal.Signals
) -> None:
    port = free_loopback_port()
    log_path = tmp_path / "serve.log"
    process = start_serve(serve_environment(port, tmp_path), log_path)
    try:
        running = RunningService(process, f"http://127.0.0.1:{port}", log_path)
        wait_until_healthy(running)
        for count in range(4):
            reply = requests.get(
                running.base_url + "/v1/collisions",
                params={"bits": "40", "count": str(count)},
                timeout=REQUEST_TIMEOUT_S,
            )
            assert reply.status_code == 200
        (made,) = private_dirs(tmp_path)
        assert any(path.suffix == ".db" for path in made.iterdir())
        metrics = requests.get(running.base_url + "/metrics", timeout=REQUEST_TIMEOUT_S)
        answered = sum(
            value
            for (endpoint, status), value in request_counts(metrics.text).items()
            if "collisions" in endpoint and status == "200"
        )
        assert answered >= 4
        process.send_signal(signal_number)  # the process is gunicorn's master itself
        assert process.wait(timeout=SHUTDOWN_TIMEOUT_S) == 0
    finally:
        stop(process)
    assert private_dirs(tmp_path) == [], log_path.read_text(encoding="utf-8", errors="replace")


def test_serve_removes_the_directory_when_the_app_cannot_start(tmp_path: Path) -> None:
    port = free_loopback_port()
    log_path = tmp_path / "serve.log"
    # A setting the app factory refuses: every worker fails to boot and gunicorn halts.
    environment = serve_environment(port, tmp_path, URNBOUND_CACHE_ENTRIES="-5")
    process = start_serve(environment, log_path)
    try:
        assert process.wait(timeout=STARTUP_TIMEOUT_S) != 0
    finally:
        stop(process)
    log = log_path.read_text(encoding="utf-8", errors="replace")
    assert "cache_entries" in log
    assert private_dirs(tmp_path) == [], log


def test_serve_keeps_a_directory_it_was_given(tmp_path: Path) -> None:
    given = tmp_path / "given"
    given.mkdir()
    port = free_loopback_port()
    log_path = tmp_path / "serve.log"
    environment = serve_environment(port, tmp_path, PROMETHEUS_MULTIPROC_DIR=str(given))
    process = start_serve(environment, log_path)
    try:
        wait_until_healthy(RunningService(process, f"http://127.0.0.1:{port}", log_path))
        process.terminate()
        assert process.wait(timeout=SHUTDOWN_TIMEOUT_S) == 0
    finally:
        stop(process)
    assert given.is_dir()
    assert any(path.suffix == ".db" for path in given.iterdir())
    assert private_dirs(tmp_path) == []
