"""One JSON line per request on standard output."""

from __future__ import annotations

import json
import logging
import sys
import time
from datetime import UTC, datetime

from flask import Flask, Response, g, request

from urnbound.config import Settings

#: Longest query string copied into a log line.
MAX_LOGGED_QUERY = 512


class StdoutHandler(logging.Handler):
    """Writes each record to the current ``sys.stdout`` (looked up at every write)."""

    def emit(self, record: logging.LogRecord) -> None:
        try:
            sys.stdout.write(self.format(record) + "\n")
            sys.stdout.flush()
        except Exception:  # logging must never break a response
            self.handleError(record)


def access_logger(level: str) -> logging.Logger:
    """A logger owned by one app (not in the global registry), writing to stdout."""
    logger = logging.Logger("urnbound.access", level=level)
    handler = StdoutHandler()
    handler.setFormatter(logging.Formatter("%(message)s"))
    logger.addHandler(handler)
    logger.propagate = False
    return logger


def access_line(response: Response, seconds: float) -> str:
    """The JSON access-log line for the current request and its ``response``."""
    query = request.query_string.decode("latin-1")
    entry = {
        "time": datetime.now(UTC).isoformat(timespec="milliseconds"),
        "event": "access",
        "remote": request.remote_addr,
        "method": request.method,
        "path": request.path,
        "query": query[:MAX_LOGGED_QUERY],
        "endpoint": request.url_rule.rule if request.url_rule else None,
        "status": response.status_code,
        "bytes": response.calculate_content_length(),
        "duration_ms": round(seconds * 1000, 3),
        "user_agent": request.user_agent.string or None,
    }
    return json.dumps(entry, separators=(",", ":"))


def init_access_log(app: Flask, settings: Settings) -> None:
    """Log every request handled by ``app`` when the setting asks for it."""
    if not settings.access_log:
        return
    logger = access_logger(settings.log_level)

    @app.before_request
    def start_clock() -> None:
        g.urnbound_access_start = time.perf_counter()

    @app.after_request
    def log_access(response: Response) -> Response:
        started = g.get("urnbound_access_start", time.perf_counter())
        if logger.isEnabledFor(logging.INFO):
            logger.info(access_line(response, time.perf_counter() - started))
        return response
