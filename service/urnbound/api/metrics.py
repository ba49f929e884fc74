"""Prometheus metrics of one app: its registry, its instruments and the /metrics exposition.

The WSGI front (``front.py``) serves the exposition and observes every request.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from typing import Any

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
        """Count one lookup in the answer cache."""
        self._child(self.cache_events, ("hit" if hit else "miss",)).inc()

    def count_answer(self, endpoint: str, method: str) -> None:
        """Count one answer computed (a cache miss) by the method that computed it."""
        self._child(self.answers, (endpoint, method)).inc()

    def observe_request(self, endpoint: str, method: str, status: int, seconds: float) -> None:
        """Count one response and time it, under its route, method and status."""
        method = method_label(method)
        self._child(self.latency, (endpoint,)).observe(seconds)
        self._child(self.requests, (endpoint, method, str(status))).inc()

    def _child(self, metric: Any, labels: tuple[str, ...]) -> Any:
        # Labelled children are looked up once per label tuple, not per request: every part
        # is bounded (routes, COUNTED_METHODS, the statuses the app sends, the methods of
        # the core), and so is this map.
        key = (metric, labels)
        child = self._children.get(key)
        if child is None:
            child = self._children[key] = metric.labels(*labels)
        return child

    _children: dict[tuple[Any, tuple[str, ...]], Any] = field(default_factory=dict, repr=False)

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


def method_label(method: str) -> str:
    """The method as counted: its name when it is a common one, else ``other``."""
    return method if method in COUNTED_METHODS else "other"
