"""The gunicorn worker class: problem+json for errors found before the app runs, deadlines."""

from __future__ import annotations

import json
import os
import signal
import socket
import time
from collections.abc import Iterator

import pytest
from prometheus_client.parser import text_string_to_metric_families

from e2e.stack import HOST, Server, Stack
from urnbound.gunicorn_worker import StatusCapture, client_timeout, problem_response

#: Seconds one request may take on the instance these tests start.
CLIENT_TIMEOUT_S = 2
#: Seconds a worker's event loop may stall before the master replaces it.
WORKER_TIMEOUT_S = 2


@pytest.fixture(scope="module")
def instance(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Server]:
    stack = Stack(tmp_path_factory.mktemp("worker"))
    try:
        yield stack.gunicorn(
            "worker",
            workers=1,
            env={
                "URNBOUND_CLIENT_TIMEOUT": str(CLIENT_TIMEOUT_S),
                "URNBOUND_WORKER_TIMEOUT": str(WORKER_TIMEOUT_S),
            },
        )
    finally:
        stack.close()


def exchange(port: int, payload: bytes) -> bytes:
    """Send ``payload`` and read until the server closes (bounded by a 30 s timeout)."""
    with socket.create_connection((HOST, port), timeout=30) as connection:
        connection.sendall(payload)
        received = b""
        while len(received) < 100_000:
            try:
                chunk = connection.recv(65536)
            except ConnectionResetError:
                break
            if not chunk:
                break
            received += chunk
        return received


def parsed(raw: bytes) -> tuple[int, str, dict[str, object]]:
    head, _, body = raw.partition(b"\r\n\r\n")
    lines = head.decode("latin-1").split("\r\n")
    content_type = next(
        line.split(":", 1)[1].strip() for line in lines if line.lower().startswith("content-type:")
    )
    return int(lines[0].split(" ")[1]), content_type, json.loads(body)


@pytest.mark.parametrize(
    ("payload", "status"),
    [
        # gunicorn's limits (deploy/gunicorn.conf.py): 4094-byte request line, 8190-byte
        # header field, 100 header fields.
        (b"GET /" + b"a" * 5000 + b" HTTP/1.1\r\nHost: s\r\n\r\n", 414),
        (b"GET / HTTP/1.1\r\nHost: s\r\nX-Big: " + b"a" * 9000 + b"\r\n\r\n", 431),
        (b"GET / HTTP/1.1\r\n" + b"".join(b"X-%d: 1\r\n" % i for i in range(120)) + b"\r\n", 431),
        (b"NOT HTTP AT ALL\r\n\r\n", 400),
        # A TLS client hello (record type 0x16, RFC 8446 section 5.1) on the plain port.
        (b"\x16\x03\x01\x00\xa5\x01\x00\x00\xa1\x03\x03" + bytes(64), 400),
    ],
)
def test_errors_before_the_app_are_problem_documents(
    instance: Server, payload: bytes, status: int
) -> None:
    code, content_type, body = parsed(exchange(instance.port, payload))
    # RFC 9457 section 3: type, title, status, detail; status equal to the response's.
    assert code == status
    assert content_type == "application/problem+json"
    assert body["status"] == status and body["type"] == "about:blank"
    assert body["title"] and body["detail"]


def test_a_request_past_its_deadline_is_cut_off(instance: Server) -> None:
    with socket.create_connection((HOST, instance.port), timeout=30) as connection:
        connection.sendall(b"GET /healthz HTTP/1.1\r\nHost: s\r\n")
        closed = False
        # Up to 20 s of one header byte every 0.2 s; the server closes long before.
        for _ in range(100):
            try:
                connection.sendall(b"X")
                if connection.recv(1, socket.MSG_DONTWAIT) == b"":
                    closed = True
                    break
            except BlockingIOError:
                pass
            except OSError:
                closed = True
                break
            time.sleep(0.2)
    assert closed
    assert "not finished within" in instance.log()


def test_the_request_is_answered_after_a_slow_one_was_cut(instance: Server) -> None:
    raw = exchange(instance.port, b"GET /healthz HTTP/1.1\r\nHost: s\r\nConnection: close\r\n\r\n")
    assert raw.startswith(b"HTTP/1.1 200")


def test_status_capture_reads_the_status_gunicorn_chose() -> None:
    capture = StatusCapture()
    capture.sendall(b"HTTP/1.1 431 Request Header Fields Too Large\r\nConnection: close\r\n")
    assert capture.status() == (431, "Request Header Fields Too Large")
    assert StatusCapture().status() == (500, "Internal Server Error")


def test_problem_response_length_matches_its_body() -> None:
    raw = problem_response(400, "Bad Request", 'quote " and non-ASCII é')
    head, _, body = raw.partition(b"\r\n\r\n")
    assert f"Content-Length: {len(body)}".encode() in head
    assert json.loads(body)["detail"] == 'quote " and non-ASCII é'


def test_client_timeout_reads_and_checks_the_environment(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("URNBOUND_CLIENT_TIMEOUT", raising=False)
    assert client_timeout() == 10.0
    monkeypatch.setenv("URNBOUND_CLIENT_TIMEOUT", "2.5")
    assert client_timeout() == 2.5
    for bad in ("0", "301", "soon"):
        monkeypatch.setenv("URNBOUND_CLIENT_TIMEOUT", bad)
        with pytest.raises(SystemExit):
            client_timeout()


def exits_by_reason(instance: Server) -> dict[str, float]:
    """urnbound_worker_exits_total from the instance's /metrics, by reason."""
    raw = exchange(instance.port, b"GET /metrics HTTP/1.1\r\nHost: s\r\nConnection: close\r\n\r\n")
    body = raw.partition(b"\r\n\r\n")[2].decode()
    found = {}
    for family in text_string_to_metric_families(body):
        for sample in family.samples:
            if sample.name == "urnbound_worker_exits_total":
                found[sample.labels["reason"]] = sample.value
    return found


def test_a_stalled_worker_is_replaced_and_counted_as_a_timeout(instance: Server) -> None:
    # Runs last in this module: the instance has one worker, stopped here until replaced.
    (worker,) = instance.worker_pids()
    os.kill(worker, signal.SIGSTOP)  # its heartbeat stops, as in a worker stuck in C code
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and worker in instance.worker_pids():
        time.sleep(0.2)
    assert worker not in instance.worker_pids()
    while time.monotonic() < deadline and not instance.worker_pids():
        time.sleep(0.2)
    assert "WORKER TIMEOUT" in instance.log()
    answered = None
    while time.monotonic() < deadline and answered is None:
        try:
            answered = exits_by_reason(instance)
        except OSError:
            time.sleep(0.2)
    assert answered is not None and answered.get("timeout", 0) >= 1
    assert instance.metrics_dir is not None
    assert list(instance.metrics_dir.glob(f"*_{worker}.db")) == []
