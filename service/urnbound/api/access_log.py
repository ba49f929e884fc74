"""One JSON line per request on standard output."""

from __future__ import annotations

import json
import logging
import sys
import time
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from typing import Any

from flask import Flask, Request, Response, request

from urnbound.config import Settings

#: Longest query string copied into a log line.
MAX_LOGGED_QUERY = 512
#: WSGI environ key holding ``time.perf_counter()`` at the moment the request reached the app.
REQUEST_START_KEY = "urnbound.access_log.start"

WsgiStartResponse = Callable[..., Any]
WsgiApp = Callable[[dict[str, Any], WsgiStartResponse], Iterable[bytes]]


@dataclass(slots=True)
class UtcClock:
    """ISO 8601 UTC timestamps to the millisecond, formatting the date and time once a second.

    Same text as ``datetime.now(UTC).isoformat(timespec="milliseconds")``, at a fraction of
    its cost per request.
    """

    #: (second, its date and time text), replaced as one tuple: threads (gthread workers)
    #: never see one second's text beside another second's number.
    _cached: tuple[int, str] = (-1, "")

    def now(self) -> str:
        """The current time, e.g. ``2026-12-02T08:30:00.125+00:00``."""
        return self.at(time.time_ns())

    def at(self, epoch_ns: int) -> str:
        """The time ``epoch_ns`` nanoseconds after the Unix epoch.

        >>> from datetime import UTC, datetime
        >>> UtcClock().at(1_764_664_200_125_999_000)
        '2025-12-02T08:30:00.125+00:00'
        >>> UtcClock().at(10**18) == datetime.fromtimestamp(10**9, UTC).isoformat(
        ...     timespec="milliseconds")
        True
        """
        second, fraction = divmod(epoch_ns, 1_000_000_000)
        cached_second, prefix = self._cached
        if second != cached_second:
            prefix = time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime(second))
            self._cached = (second, prefix)
        return f"{prefix}.{fraction // 1_000_000:03d}+00:00"


def write_line(line: str) -> None:
    """Write ``line`` to the current ``sys.stdout`` (looked up each time) and flush it."""
    try:
        sys.stdout.write(line + "\n")
        sys.stdout.flush()
    except Exception:  # logging must never break a response
        logging.getLogger("urnbound.access").exception("could not write the access log")


def access_line(
    current: Request, response: Response, seconds: float, clock: UtcClock | None = None
) -> str:
    """The JSON access-log line for the request ``current`` and its ``response``."""
    environ = current.environ
    query = environ.get("QUERY_STRING", "")
    rule = current.url_rule
    entry = {
        "time": (clock or UtcClock()).now(),
        "event": "access",
        "remote": environ.get("REMOTE_ADDR"),
        "method": current.method,
        "path": current.path,
        "query": query[:MAX_LOGGED_QUERY],
        "endpoint": rule.rule if rule is not None else None,
        "status": response.status_code,
        "bytes": response.calculate_content_length(),
        "duration_ms": round(seconds * 1000, 3),
        "user_agent": environ.get("HTTP_USER_AGENT") or None,
    }
    return json.dumps(entry, separators=(",", ":"))


@dataclass(frozen=True, slots=True)
class StartStamp:
    """WSGI middleware noting when each request reached the app."""

    app: WsgiApp

    def __call__(
        self, environ: dict[str, Any], start_response: WsgiStartResponse
    ) -> Iterable[bytes]:
        environ[REQUEST_START_KEY] = time.perf_counter()
        return self.app(environ, start_response)


@dataclass(frozen=True, slots=True)
class AccessLog:
    """Writes the access line of each response, timed from :class:`StartStamp`."""

    clock: UtcClock = field(default_factory=UtcClock)

    def __call__(self, response: Response) -> Response:
        current: Request = request._get_current_object()  # type: ignore[attr-defined]
        now = time.perf_counter()
        started = current.environ.get(REQUEST_START_KEY, now)
        write_line(access_line(current, response, now - started, self.clock))
        return response


def logs_access(settings: Settings) -> bool:
    """Whether the settings ask for access lines (they are written at level INFO)."""
    return settings.access_log and logging.getLevelName(settings.log_level) <= logging.INFO


def init_access_log(app: Flask, settings: Settings) -> None:
    """Log every request handled by ``app`` when the settings ask for it."""
    if not logs_access(settings):
        return
    app.after_request(AccessLog())
    app.wsgi_app = StartStamp(app.wsgi_app)  # type: ignore[method-assign]
