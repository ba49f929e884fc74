"""One JSON line per request on standard output."""

from __future__ import annotations

import json
import logging
import sys
import time
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from urnbound.config import Settings

#: Longest query string copied into a log line.
MAX_LOGGED_QUERY = 512


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


#: One encoder for every line (``json.dumps`` with separators builds a new one each call).
_ENCODER = json.JSONEncoder(separators=(",", ":"))


@dataclass(frozen=True, slots=True)
class Served:
    """What the access line says about one request and its response.

    :ivar endpoint: the matched route, or ``None`` when no route matched.
    :ivar length: the body's length in bytes (a HEAD response counts the body it omits).
    """

    method: str
    path: str
    endpoint: str | None
    status: int
    length: int | None


def access_line(environ: Mapping[str, Any], served: Served, seconds: float,
                clock: UtcClock | None = None) -> str:
    """The JSON access-log line of the request ``environ`` served as ``served``."""
    query = environ.get("QUERY_STRING", "")
    entry = {
        "time": (clock or UtcClock()).now(),
        "event": "access",
        "remote": environ.get("REMOTE_ADDR"),
        "method": served.method,
        "path": served.path,
        "query": query[:MAX_LOGGED_QUERY],
        "endpoint": served.endpoint,
        "status": served.status,
        "bytes": served.length,
        "duration_ms": round(seconds * 1000, 3),
        "user_agent": environ.get("HTTP_USER_AGENT") or None,
    }
    return _ENCODER.encode(entry)


@dataclass(frozen=True, slots=True)
class AccessLog:
    """Writes one access line per request on standard output."""

    clock: UtcClock = field(default_factory=UtcClock)

    def write(self, environ: Mapping[str, Any], served: Served, seconds: float) -> None:
        """Write the line of one request, ``seconds`` after it reached the service."""
        write_line(access_line(environ, served, seconds, self.clock))


def logs_access(settings: Settings) -> bool:
    """Whether the settings ask for access lines (they are written at level INFO)."""
    return settings.access_log and logging.getLevelName(settings.log_level) <= logging.INFO
