"""Gunicorn settings for Urnbound, read once from URNBOUND_* environment variables."""

# Gunicorn reads the module-level names below as its settings; this file is the one place in
# the project where module-level configuration is the documented interface.
#
# Environment (all optional):
#   URNBOUND_HOST              bind address, default 127.0.0.1 (the container image sets 0.0.0.0)
#   URNBOUND_PORT              TCP port, 1..65535, default 8080
#   URNBOUND_WORKERS           sync worker processes, 1..64; 0 or unset: 2 x usable CPUs + 1
#   URNBOUND_WORKER_TIMEOUT    seconds a silent worker may run before it is killed, default 30
#   URNBOUND_GRACEFUL_TIMEOUT  seconds workers get to finish on shutdown, default 20
#   URNBOUND_MAX_REQUESTS      requests before a worker is recycled, 0 = never, default 10000
#   URNBOUND_LOG_LEVEL         gunicorn's own log level, default info
#   PROMETHEUS_MULTIPROC_DIR   when set, metrics are shared across workers through this
#                              directory; it must be empty at start (deploy/entrypoint.sh
#                              wipes it). `urnbound serve` without it asks this file for a
#                              private directory, made below and removed when gunicorn exits.

from __future__ import annotations

import os
from typing import Any

from urnbound.serving import claim_private_metrics_dir

_LOG_LEVELS = ("debug", "info", "warning", "error", "critical")


def _env_int(name: str, default: int, low: int, high: int) -> int:
    """Return the integer in environment variable ``name``, or ``default``; fail on bad input."""
    text = os.environ.get(name, "").strip()
    if not text:
        return default
    try:
        value = int(text)
    except ValueError:
        raise SystemExit(f"{name} must be an integer from {low} to {high}, got {text!r}") from None
    if not low <= value <= high:
        raise SystemExit(f"{name} must be an integer from {low} to {high}, got {value}")
    return value


def _usable_cpus() -> int:
    """Return the number of CPUs this process may run on (the affinity mask where known)."""
    if hasattr(os, "sched_getaffinity"):
        return max(1, len(os.sched_getaffinity(0)))
    return max(1, os.cpu_count() or 1)


def _log_level() -> str:
    """Return the gunicorn log level from URNBOUND_LOG_LEVEL."""
    level = os.environ.get("URNBOUND_LOG_LEVEL", "info").strip().lower() or "info"
    if level not in _LOG_LEVELS:
        allowed = ", ".join(_LOG_LEVELS)
        raise SystemExit(f"URNBOUND_LOG_LEVEL must be one of {allowed}, got {level!r}")
    return level


def _heartbeat_dir() -> str | None:
    """Return a memory-backed directory for worker heartbeats when one is writable."""
    # A heartbeat file on a disk-backed /tmp can stall workers (gunicorn's worker_tmp_dir note).
    shm = "/dev/shm"
    return shm if os.path.isdir(shm) and os.access(shm, os.W_OK) else None


_host = os.environ.get("URNBOUND_HOST", "").strip() or "127.0.0.1"
_port = _env_int("URNBOUND_PORT", 8080, 1, 65535)

# An IPv6 address such as ``::`` needs brackets before the port.
bind = [f"[{_host}]:{_port}" if ":" in _host and not _host.startswith("[") else f"{_host}:{_port}"]
# The work is CPU-bound with a bounded cost per request, so plain sync workers suffice; the
# default is gunicorn's documented starting point of 2 x cores + 1.
worker_class = "sync"
# URNBOUND_WORKERS=0 asks for the default, as in urnbound.config.Settings.
workers = _env_int("URNBOUND_WORKERS", 0, 0, 64) or 2 * _usable_cpus() + 1
timeout = _env_int("URNBOUND_WORKER_TIMEOUT", 30, 1, 600)
graceful_timeout = _env_int("URNBOUND_GRACEFUL_TIMEOUT", 20, 1, 600)
keepalive = 2
# Recycling workers now and then bounds the memory a long-lived worker can accumulate.
max_requests = _env_int("URNBOUND_MAX_REQUESTS", 10_000, 0, 10_000_000)
max_requests_jitter = max_requests // 10
# Request line and header limits stay at gunicorn's bounded defaults, stated here so they show.
limit_request_line = 4094
limit_request_fields = 100
limit_request_field_size = 8190
# The application writes one JSON line per request itself; gunicorn's access log would repeat it.
accesslog = None
errorlog = "-"
loglevel = _log_level()
worker_tmp_dir = _heartbeat_dir()
# Newer gunicorn opens a control socket under the home directory by default; the service does
# not use it, and several instances on one host (tests, benchmarks) would fight over the path.
control_socket_disable = True
proc_name = "urnbound"

# Made in the master while this file is read, so before a worker (or a preloaded app) imports
# the Prometheus client; None unless `urnbound serve` asked for it (urnbound.serving).
_private_metrics_dir = claim_private_metrics_dir()


def child_exit(server: Any, worker: Any) -> None:
    """Tell the Prometheus client a worker has gone, so its live gauges are dropped."""
    if os.environ.get("PROMETHEUS_MULTIPROC_DIR"):
        from prometheus_client import multiprocess

        multiprocess.mark_process_dead(worker.pid)


def on_exit(server: Any) -> None:
    """Remove the private metrics directory made for `urnbound serve`, if there is one."""
    if _private_metrics_dir is not None:
        _private_metrics_dir.remove()
