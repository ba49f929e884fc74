"""End to end: nginx from deploy/ in front of two gunicorn instances, under load and faults.

Everything runs on 127.0.0.1 with free ports; every loop is bounded in count and time; the
module's processes are stopped by their ids when it ends. Outcomes are asserted (statuses,
bodies, counts of errors), never timings.
"""

from __future__ import annotations

import http.client
import itertools
import json
import os
import signal
import socket
import threading
import time
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest
import requests
from prometheus_client.parser import text_string_to_metric_families

from e2e.stack import HOST, Server, Stack, nginx_binary

pytestmark = pytest.mark.skipif(
    nginx_binary() is None, reason="nginx is not installed (.ci/run installs it with apt-get)"
)

#: The rate limit the proxy is started with for these tests (requests/s, burst).
RATE, BURST = 5, 10
#: Source address of the client that is rate limited; 127.0.0.1 is exempt (the other tests).
LIMITED_CLIENT = "127.0.0.2"
REQUEST_TIMEOUT_S = 20.0
PROBLEM = "application/problem+json"


class Front:
    """The started stack: the proxy and the two instances behind it."""

    def __init__(self, stack: Stack, proxy: Server, instances: list[Server]) -> None:
        self.stack = stack
        self.proxy = proxy
        self.instances = instances

    def access_entries(self) -> list[dict[str, object]]:
        """The proxy's access log, one JSON object per request."""
        lines = self.stack.access_log.read_text(encoding="utf-8").splitlines()
        return [json.loads(line) for line in lines if line.strip()]


@pytest.fixture(scope="module")
def front(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Front]:
    stack = Stack(tmp_path_factory.mktemp("front"))
    try:
        instances = [stack.gunicorn("first"), stack.gunicorn("second")]
        proxy = stack.nginx(instances, rate=RATE, burst=BURST, unlimited=(HOST,))
        yield Front(stack, proxy, instances)
    finally:
        stack.close()


@pytest.fixture
def session() -> Iterator[requests.Session]:
    with requests.Session() as session:
        yield session


_counts = itertools.count(1)


def unique_count() -> int:
    """A count no other request of this module asks about (so no cache holds its answer)."""
    return 10**9 + next(_counts)


def raw_exchange(port: int, payload: bytes, source: str = HOST) -> bytes:
    """Send ``payload`` on a fresh connection and read until the server closes (bounded)."""
    with socket.create_connection(
        (HOST, port), timeout=REQUEST_TIMEOUT_S, source_address=(source, 0)
    ) as connection:
        connection.sendall(payload)
        received = b""
        while len(received) < 1_000_000:
            try:
                chunk = connection.recv(65536)
            except ConnectionResetError:
                break  # a server may reset after answering a request it will not read
            if not chunk:
                break
            received += chunk
        return received


def problem_of(raw: bytes) -> tuple[int, dict[str, str], dict[str, object]]:
    """Status, headers (lower-case names) and the JSON body of a raw HTTP/1.1 response."""
    head, _, body = raw.partition(b"\r\n\r\n")
    lines = head.decode("latin-1").split("\r\n")
    status = int(lines[0].split(" ")[1])
    headers = {}
    for line in lines[1:]:
        name, _, value = line.partition(":")
        headers[name.strip().lower()] = value.strip()
    return status, headers, json.loads(body)


def assert_problem(
    status: int, headers: dict[str, str], body: dict[str, object], expected: int
) -> None:
    """An RFC 9457 problem document for ``expected`` (RFC 9457 section 3.1 members)."""
    assert status == expected
    assert headers["content-type"].split(";")[0] == PROBLEM
    assert body["status"] == expected
    assert body["type"] == "about:blank"
    assert isinstance(body["title"], str) and body["title"]
    assert isinstance(body["detail"], str) and body["detail"]


def test_second_identical_request_is_served_from_the_shared_cache(
    front: Front, session: requests.Session
) -> None:
    url = f"{front.proxy.base_url}/v1/collisions?bits=64&count={unique_count()}"
    first = session.get(url, timeout=REQUEST_TIMEOUT_S)
    second = session.get(url, timeout=REQUEST_TIMEOUT_S)
    assert first.status_code == second.status_code == 200
    assert first.headers["X-Cache-Status"] == "MISS"
    assert second.headers["X-Cache-Status"] == "HIT"
    assert second.content == first.content
    assert second.headers["ETag"] == first.headers["ETag"]
    # New questions are spread over both instances, yet the repeated one reached neither:
    # the cache in front is shared by them.
    for _ in range(6):
        fresh = f"{front.proxy.base_url}/v1/collisions?bits=64&count={unique_count()}"
        assert session.get(fresh, timeout=REQUEST_TIMEOUT_S).status_code == 200
    entries = front.access_entries()
    upstreams = {e["upstream"] for e in entries if e["cache"] == "MISS"}
    assert {server.address for server in front.instances} <= upstreams
    repeated = [e for e in entries if e["uri"] == url.removeprefix(front.proxy.base_url)]
    assert [e["cache"] for e in repeated] == ["MISS", "HIT"]
    assert repeated[1]["upstream"] == ""


def test_conditional_request_through_the_proxy_is_304(
    front: Front, session: requests.Session
) -> None:
    url = f"{front.proxy.base_url}/v1/collisions?bits=64&count={unique_count()}"
    etag = session.get(url, timeout=REQUEST_TIMEOUT_S).headers["ETag"]
    # RFC 9110 section 13.1.2: a matching If-None-Match on GET is answered 304, no content.
    for _ in range(2):  # once for a fresh cache entry, once again
        again = session.get(url, headers={"If-None-Match": etag}, timeout=REQUEST_TIMEOUT_S)
        assert again.status_code == 304
        assert again.content == b""
        assert again.headers["ETag"] == etag
    other = session.get(url, headers={"If-None-Match": '"other"'}, timeout=REQUEST_TIMEOUT_S)
    assert other.status_code == 200


def test_request_line_too_long_is_a_problem_414(front: Front) -> None:
    raw = raw_exchange(
        front.proxy.port,
        b"GET /v1/collisions?bits=64&count=" + b"1" * 6000 + b" HTTP/1.1\r\nHost: service\r\n\r\n",
    )
    assert_problem(*problem_of(raw), expected=414)


def test_header_too_large_is_a_problem_431(front: Front) -> None:
    raw = raw_exchange(
        front.proxy.port,
        b"GET /healthz HTTP/1.1\r\nHost: service\r\nX-Large: " + b"a" * 6000 + b"\r\n\r\n",
    )
    assert_problem(*problem_of(raw), expected=431)


def test_malformed_request_is_a_problem_400(front: Front) -> None:
    # A TLS client hello sent to the plain HTTP port is not HTTP at all.
    raw = raw_exchange(
        front.proxy.port, b"\x16\x03\x01\x00\xa5\x01\x00\x00\xa1\x03\x03" + bytes(64)
    )
    assert_problem(*problem_of(raw), expected=400)


def test_body_too_large_is_a_problem_413(front: Front) -> None:
    # The declared length alone exceeds the limit, so the proxy answers before any body.
    raw = raw_exchange(
        front.proxy.port,
        b"POST /v1/collisions HTTP/1.1\r\nHost: service\r\nContent-Length: 40000\r\n\r\n",
    )
    assert_problem(*problem_of(raw), expected=413)


def test_rate_limit_per_client_is_a_problem_429(front: Front) -> None:
    statuses = []
    last_429: tuple[int, dict[str, str], dict[str, object]] | None = None
    connection = http.client.HTTPConnection(
        HOST, front.proxy.port, timeout=REQUEST_TIMEOUT_S, source_address=(LIMITED_CLIENT, 0)
    )
    try:
        # More than the burst plus what the rate refills while they are sent (each answer
        # is immediate, from the proxy); bounded at 8 times the burst.
        for _ in range(8 * BURST):
            connection.request("GET", "/healthz")
            response = connection.getresponse()
            body = response.read()
            statuses.append(response.status)
            if response.status == 429:
                headers = {name.lower(): value for name, value in response.getheaders()}
                last_429 = (429, headers, json.loads(body))
    finally:
        connection.close()
    assert statuses[:BURST] == [200] * BURST  # the burst is let through
    assert last_429 is not None
    assert_problem(*last_429, expected=429)
    assert last_429[1]["retry-after"] == "1"
    # The limit is per client: the exempt loopback address is still answered.
    assert requests.get(front.proxy.base_url + "/healthz", timeout=REQUEST_TIMEOUT_S).ok


def load_statuses(
    base_url: str, requests_per_client: int, clients: int, started: threading.Event
) -> list[int | str]:
    """Statuses of new questions sent by ``clients`` threads in parallel (errors by name)."""

    def client(index: int) -> list[int | str]:
        outcomes: list[int | str] = []
        with requests.Session() as session:
            for number in range(requests_per_client):
                count = 2 * 10**9 + index * 100_000 + number * 7 + os.getpid() % 1000
                try:
                    response = session.get(
                        f"{base_url}/v1/collisions?bits=64&count={count}", timeout=REQUEST_TIMEOUT_S
                    )
                    outcomes.append(response.status_code)
                except requests.RequestException as error:
                    outcomes.append(type(error).__name__)
                if number == 3:
                    started.set()
        return outcomes

    with ThreadPoolExecutor(clients) as pool:
        return [s for result in pool.map(client, range(clients)) for s in result]


def test_a_worker_killed_under_load_costs_at_most_the_request_in_flight(front: Front) -> None:
    victim_instance = front.instances[0]
    workers_before = victim_instance.worker_pids()
    assert len(workers_before) == 2
    started = threading.Event()
    with ThreadPoolExecutor(1) as runner:
        load = runner.submit(load_statuses, front.proxy.base_url, 40, 4, started)
        assert started.wait(timeout=60)
        victim = workers_before[0]
        os.kill(victim, signal.SIGKILL)
        statuses = load.result(timeout=300)
    errors = [status for status in statuses if status != 200]
    assert len(statuses) == 160
    # The proxy retries an idempotent request on the other instance, so even the request
    # the killed worker held is usually answered; at most that one may fail.
    assert len(errors) <= 1, errors
    # The master replaced the worker, counted its exit and folded its sample files.
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline and len(victim_instance.worker_pids()) < 2:
        time.sleep(0.1)
    workers_after = victim_instance.worker_pids()
    assert len(workers_after) == 2 and victim not in workers_after
    assert victim_instance.metrics_dir is not None
    leftover = [p.name for p in victim_instance.metrics_dir.glob(f"*_{victim}.db")]
    assert leftover == []
    exits = metric_samples(victim_instance, "urnbound_worker_exits_total")
    assert exits.get((("reason", "exited"),), 0) >= 1


def metric_samples(server: Server, name: str) -> dict[tuple[tuple[str, str], ...], float]:
    """Samples of ``name`` from the instance's own /metrics, by sorted labels."""
    text = requests.get(server.base_url + "/metrics", timeout=REQUEST_TIMEOUT_S).text
    found = {}
    for family in text_string_to_metric_families(text):
        for sample in family.samples:
            if sample.name == name:
                found[tuple(sorted(sample.labels.items()))] = sample.value
    return found


class SlowClients:
    """Connections that send a request's headers a byte at a time, until told to stop."""

    def __init__(
        self, port: int, count: int, byte_interval_s: float = 0.5, bound_s: float = 60.0
    ) -> None:
        self.port = port
        self.stop = threading.Event()
        self.connected = threading.Barrier(count + 1, timeout=bound_s)
        self.threads = [
            threading.Thread(target=self._run, args=(bound_s, byte_interval_s), daemon=True)
            for _ in range(count)
        ]

    def _run(self, bound_s: float, byte_interval_s: float) -> None:
        payload = b"GET /healthz HTTP/1.1\r\nHost: service\r\nX-Slow: " + b"s" * 10_000
        deadline = time.monotonic() + bound_s
        with socket.create_connection((HOST, self.port), timeout=bound_s) as connection:
            connection.sendall(payload[:1])
            self.connected.wait()
            for byte in payload[1:]:
                if self.stop.is_set() or time.monotonic() > deadline:
                    break
                try:
                    connection.sendall(bytes([byte]))
                except OSError:
                    break  # the server cut this client off: what it should do
                self.stop.wait(byte_interval_s)

    def __enter__(self) -> SlowClients:
        for thread in self.threads:
            thread.start()
        self.connected.wait()
        time.sleep(1.0)  # let every slow request reach a reader before the others arrive
        return self

    def __exit__(self, *exc: object) -> None:
        self.stop.set()
        for thread in self.threads:
            thread.join(timeout=30)


def answered_while_slow(base_url: str, requests_count: int) -> list[int | str]:
    """Statuses of ordinary requests, one after another (errors by name)."""
    outcomes: list[int | str] = []
    for number in range(requests_count):
        try:
            response = requests.get(
                f"{base_url}/v1/collisions?bits=64&count={10**6 + number}",
                timeout=REQUEST_TIMEOUT_S,
            )
            outcomes.append(response.status_code)
        except requests.RequestException as error:
            outcomes.append(type(error).__name__)
    return outcomes


def test_other_requests_are_answered_while_ten_slow_clients_hold_the_proxy(front: Front) -> None:
    with SlowClients(front.proxy.port, 10):
        outcomes = answered_while_slow(front.proxy.base_url, 20)
    assert outcomes == [200] * 20


def test_other_requests_are_answered_while_twenty_slow_clients_hold_gunicorn(
    front: Front,
) -> None:
    # Without the proxy: gthread workers give each slow client one thread, never a worker.
    instance = front.instances[1]
    with SlowClients(instance.port, 20):
        outcomes = answered_while_slow(instance.base_url, 20)
    assert outcomes == [200] * 20


def test_the_proxy_answers_502_as_a_problem_when_no_instance_is_up(
    tmp_path: Path,
) -> None:
    stack = Stack(tmp_path)
    try:
        instance = stack.gunicorn("only", workers=1)
        proxy = stack.nginx([instance])
        stack.servers.remove(instance)
        from e2e.stack import stop

        stop(instance.process)
        response = requests.get(proxy.base_url + "/healthz", timeout=REQUEST_TIMEOUT_S)
        headers = {name.lower(): value for name, value in response.headers.items()}
        assert_problem(response.status_code, headers, response.json(), expected=502)
    finally:
        stack.close()


def test_metrics_are_not_served_to_the_fronts_clients(front: Front) -> None:
    response = requests.get(front.proxy.base_url + "/metrics", timeout=REQUEST_TIMEOUT_S)
    headers = {name.lower(): value for name, value in response.headers.items()}
    assert_problem(response.status_code, headers, response.json(), expected=404)
    # The monitoring system scrapes each instance directly.
    direct = requests.get(front.instances[0].base_url + "/metrics", timeout=REQUEST_TIMEOUT_S)
    assert direct.status_code == 200


def test_cached_variants_follow_the_accept_header(front: Front, session: requests.Session) -> None:
    # /v1/curves answers JSON or an SVG chart by Accept, with Vary: Accept (RFC 9111
    # section 4.1): the shared cache must keep the two apart.
    url = f"{front.proxy.base_url}/v1/curves?bits=64&from=1&to=1e9&points=5&spacing=log"
    first, again = {}, {}
    for accept in ("application/json", "image/svg+xml"):
        first[accept] = session.get(url, headers={"Accept": accept}, timeout=REQUEST_TIMEOUT_S)
    for accept in ("application/json", "image/svg+xml"):
        again[accept] = session.get(url, headers={"Accept": accept}, timeout=REQUEST_TIMEOUT_S)
    for accept in first:
        assert first[accept].status_code == again[accept].status_code == 200
        assert again[accept].headers["X-Cache-Status"] == "HIT"
        assert again[accept].content == first[accept].content
        assert again[accept].headers["Content-Type"].startswith(accept)
    assert first["application/json"].content != first["image/svg+xml"].content
