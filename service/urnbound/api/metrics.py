"""Prometheus metrics of one app: its registry, its instruments and the /metrics mount."""

from __future__ import annotations

import os
import time
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from typing import Any

from flask import Flask, Response, request
from prometheus_client import (
    CONTENT_TYPE_LATEST,
    CollectorRegistry,
    Counter,
    Histogram,
    generate_latest,
)
from prometheus_client.multiprocess import MultiProcessCollector

from urnbound.metrics_files import directory_lock

#: Environment variable that switches the Prometheus client to multiprocess mode.
MULTIPROC_ENV = "PROMETHEUS_MULTIPROC_DIR"
#: Latency buckets in seconds: answers range from microseconds (cached) to a second.
LATENCY_BUCKETS = (0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1.0, 2.5)

WsgiStartResponse = Callable[..., Any]


@dataclass(frozen=True, slots=True)
class Metrics:
    """The instruments the service updates, all registered on ``registry``.

    :ivar registry: the app's own registry (never the process-wide default).
    :ivar multiprocess_dir: directory shared by gunicorn workers, or ``None``.
    """

    registry: CollectorRegistry
    requests: Counter
    latency: Histogram
    cache_events: Counter
    answers: Counter
    multiprocess_dir: str | None
    #: Gauges computed at each scrape in this process (the watched schemes), if any.
    live: CollectorRegistry | None = None

    def count_cache_lookup(self, hit: bool) -> None:
        """Count one lookup in the answer cache (children resolved once, not per request)."""
        child = self._cache_children.get(hit)
        if child is None:
            child = self._cache_children[hit] = self.cache_events.labels(
                result="hit" if hit else "miss")
        child.inc()

    _cache_children: dict[bool, Counter] = field(default_factory=dict, repr=False)

    def exposition(self) -> bytes:
        """The current samples in the Prometheus text format."""
        live = b"" if self.live is None else generate_latest(self.live)
        if self.multiprocess_dir is None:
            return generate_latest(self.registry) + live
        # Shared with other scrapes, exclusive of the master folding a dead worker's files.
        with directory_lock(self.multiprocess_dir, exclusive=False):
            return generate_latest(self.scrape_registry()) + live

    def scrape_registry(self) -> CollectorRegistry:
        """The registry to read: a fresh multiprocess one per scrape under gunicorn."""
        if self.multiprocess_dir is None:
            return self.registry
        registry = CollectorRegistry()
        MultiProcessCollector(registry, path=self.multiprocess_dir)  # type: ignore[no-untyped-call]
        return registry


def build_metrics(multiprocess_dir: str | None = None,
                  live: CollectorRegistry | None = None) -> Metrics:
    """Create a fresh registry and the service's instruments on it (``live``: gauges
    computed at each scrape, appended to the exposition)."""
    registry = CollectorRegistry(auto_describe=True)
    return Metrics(
        registry=registry,
        requests=Counter(
            "urnbound_http_requests",
            "HTTP requests answered, by endpoint, method and status code.",
            ("endpoint", "method", "status"),
            registry=registry,
        ),
        latency=Histogram(
            "urnbound_http_request_duration_seconds",
            "Time from request start to response, by endpoint.",
            ("endpoint",),
            buckets=LATENCY_BUCKETS,
            registry=registry,
        ),
        cache_events=Counter(
            "urnbound_answer_cache",
            "Lookups in the in-process answer cache, by result (hit or miss).",
            ("result",),
            registry=registry,
        ),
        answers=Counter(
            "urnbound_answers_computed",
            "Answers computed (cache misses), by endpoint and method (exact or asymptotic).",
            ("endpoint", "method"),
            registry=registry,
        ),
        multiprocess_dir=multiprocess_dir,
        live=live,
    )


def multiprocess_dir_from_env() -> str | None:
    """The multiprocess directory named by the environment, if any."""
    return os.environ.get(MULTIPROC_ENV) or None


WsgiApp = Callable[[dict[str, Any], WsgiStartResponse], Iterable[bytes]]

#: The one path that serves the exposition; ``/metrics/`` and longer paths are 404 problems.
METRICS_PATH = "/metrics"
#: WSGI environ key holding ``time.perf_counter()`` at the moment the request reached the app.
REQUEST_START_KEY = "urnbound.metrics.start"
#: Methods counted under their own name; any other method is counted as ``other``, so that
#: clients cannot add label values (a series each) by inventing methods.
COUNTED_METHODS = frozenset({"GET", "HEAD", "POST", "PUT", "PATCH", "DELETE", "OPTIONS"})


def metrics_wsgi_app(metrics: Metrics) -> WsgiApp:
    """A minimal WSGI app serving :meth:`Metrics.exposition` to GET and HEAD."""

    def application(environ: dict[str, Any], start_response: WsgiStartResponse) -> Iterable[bytes]:
        if environ.get("REQUEST_METHOD", "GET") not in ("GET", "HEAD"):
            body = (
                b'{"type":"about:blank","title":"Method Not Allowed","status":405,'
                b'"detail":"/metrics answers GET and HEAD only","instance":"/metrics"}'
            )
            start_response(
                "405 METHOD NOT ALLOWED",
                [
                    ("Content-Type", "application/problem+json"),
                    ("Content-Length", str(len(body))),
                    ("Allow", "GET, HEAD"),
                ],
            )
            return [body]
        output = metrics.exposition()
        headers = [("Content-Type", CONTENT_TYPE_LATEST), ("Content-Length", str(len(output)))]
        start_response("200 OK", headers)
        return [] if environ.get("REQUEST_METHOD") == "HEAD" else [output]

    return application


@dataclass(frozen=True, slots=True)
class MetricsMount:
    """WSGI middleware: exactly :data:`METRICS_PATH` to ``exposition``, the rest to ``app``.

    Unlike a prefix mount, ``/metrics/`` and ``/metrics/anything`` reach the app, which
    answers them with a 404 problem like any other unknown path (Prometheus scrapes the one
    configured path). Requests for the app are stamped with their start time on the way in.
    """

    app: WsgiApp
    exposition: WsgiApp

    def __call__(
        self, environ: dict[str, Any], start_response: WsgiStartResponse
    ) -> Iterable[bytes]:
        if environ.get("PATH_INFO") == METRICS_PATH:
            return self.exposition(environ, start_response)
        environ[REQUEST_START_KEY] = time.perf_counter()
        return self.app(environ, start_response)


def endpoint_label() -> str:
    """The matched route (bounded cardinality), or ``unmatched`` for a 404."""
    return request.url_rule.rule if request.url_rule is not None else "unmatched"


def method_label(method: str) -> str:
    """The method as counted: its name when it is a common one, else ``other``."""
    return method if method in COUNTED_METHODS else "other"


#: The labelled children one response updates: its latency histogram and its request counter.
Children = tuple[Histogram, Counter]


def init_metrics(app: Flask, metrics: Metrics) -> None:
    """Count and time every request, and serve exactly ``/metrics`` from a WSGI middleware."""
    # Labelled children are looked up once per (endpoint, method, status): every part is
    # bounded (routes, COUNTED_METHODS, the statuses the app sends), and so is this map.
    children: dict[tuple[str, str, int], Children] = {}

    def children_of(endpoint: str, method: str, status: int) -> Children:
        key = (endpoint, method, status)
        found = children.get(key)
        if found is None:
            found = children[key] = (
                metrics.latency.labels(endpoint=endpoint),
                metrics.requests.labels(endpoint=endpoint, method=method, status=str(status)),
            )
        return found

    @app.after_request
    def observe(response: Response) -> Response:
        now = time.perf_counter()
        started = request.environ.get(REQUEST_START_KEY, now)
        latency, count = children_of(
            endpoint_label(), method_label(request.method), response.status_code
        )
        latency.observe(now - started)
        count.inc()
        return response

    app.wsgi_app = MetricsMount(  # type: ignore[method-assign]
        app.wsgi_app, metrics_wsgi_app(metrics)
    )
