"""Gunicorn settings for Urnbound, read once from URNBOUND_* environment variables."""

# Gunicorn reads the module-level names below as its settings; this file is the one place in
# the project where module-level configuration is the documented interface.
#
# Environment (all optional):
#   URNBOUND_HOST              bind address, default 127.0.0.1 (the container image sets 0.0.0.0)
#   URNBOUND_PORT              TCP port, 1..65535, default 8080
#   URNBOUND_WORKERS           worker processes, 1..64; 0 or unset: 2 x usable CPUs + 1
#   URNBOUND_THREADS           threads per worker, 1..256, default 32 (gthread worker)
#   URNBOUND_CLIENT_TIMEOUT    seconds one request may take from its first byte to its answer,
#                              default 10 (urnbound.gunicorn_worker)
#   URNBOUND_KEEPALIVE         seconds an idle connection is kept open, default 5
#   URNBOUND_WORKER_TIMEOUT    seconds a worker's event loop may stall before the worker is
#                              killed, default 30
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

from urnbound.metrics_files import WorkerExits, fold_dead_worker
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
# Threaded workers (gunicorn's gthread, with a deadline per request and problem+json errors,
# urnbound.gunicorn_worker): idle and kept-alive connections wait in one event loop per worker
# and take a thread only once they send data, and a client that sends slowly holds one thread
# for at most URNBOUND_CLIENT_TIMEOUT seconds. With sync workers a single slow client held a
# whole worker. The work itself is CPU-bound and bounded per request, so threads share a core
# without gain; they are there for clients that are slow, not for computing in parallel.
worker_class = "urnbound.gunicorn_worker.GuardedThreadWorker"
# URNBOUND_WORKERS=0 asks for the default, as in urnbound.config.Settings: gunicorn's
# documented starting point of 2 x cores + 1.
workers = _env_int("URNBOUND_WORKERS", 0, 0, 64) or 2 * _usable_cpus() + 1
threads = _env_int("URNBOUND_THREADS", 32, 1, 256)
# Connections per worker, idle ones included; past it a worker stops accepting.
worker_connections = 1000
timeout = _env_int("URNBOUND_WORKER_TIMEOUT", 30, 1, 600)
graceful_timeout = _env_int("URNBOUND_GRACEFUL_TIMEOUT", 20, 1, 600)
# Longer than the proxy's upstream keep-alive (4 s in deploy/nginx.conf.in), so that nginx,
# not gunicorn, closes an idle connection and never sends on one gunicorn has just closed.
keepalive = _env_int("URNBOUND_KEEPALIVE", 5, 1, 300)
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


_worker_exits = WorkerExits()


def child_exit(server: Any, worker: Any) -> None:
    """Count the exit and fold the worker's sample files, so the directory stays bounded."""
    directory = os.environ.get("PROMETHEUS_MULTIPROC_DIR")
    if not directory:
        return
    # The master killed a worker that stopped answering (gunicorn's "WORKER TIMEOUT").
    _worker_exits.count("timeout" if getattr(worker, "aborted", False) else "exited")
    try:
        fold_dead_worker(directory, worker.pid)
    except OSError as error:
        server.log.warning("metrics: could not fold the files of worker %s: %s", worker.pid, error)


def on_exit(server: Any) -> None:
    """Remove the private metrics directory made for `urnbound serve`, if there is one."""
    if _private_metrics_dir is not None:
        _private_metrics_dir.remove()
