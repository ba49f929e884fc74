"""Bench-only WSGI apps: the bare Flask floor, and the product app with pieces switched off."""

from __future__ import annotations

from flask import Flask, Response

from urnbound.api.access_log import StartStamp
from urnbound.api.metrics import MetricsMount
from urnbound.app import create_app

#: Path of the empty JSON endpoint; it exists only in these benchmark apps.
EMPTY_PATH = "/bench/empty"


def empty_json() -> Response:
    """An empty JSON object, as cheaply as Flask can send one."""
    return Response(b"{}", mimetype="application/json")


def create_bare_app() -> Flask:
    """The floor: a Flask app with only the empty endpoint (no access log, metrics or cache).

    Gunicorn loads it as ``empty_app:create_bare_app()``.
    """
    app = Flask("bench_bare")
    app.add_url_rule(EMPTY_PATH, endpoint="bench_empty", view_func=empty_json)
    return app


def create_product_app() -> Flask:
    """The product app from ``create_app()`` (settings from URNBOUND_*) plus the empty endpoint.

    The empty endpoint pays the product's per-request middleware (access log, metrics hooks,
    error handlers) and nothing else, so it separates that cost from the views'.
    """
    app = create_app()
    app.add_url_rule(EMPTY_PATH, endpoint="bench_empty", view_func=empty_json)
    return app


def create_product_app_without_metrics() -> Flask:
    """:func:`create_product_app` without the request metrics: no hook, no /metrics mount.

    The answer-cache and answer-method counters that the question view updates stay; only the
    per-request counting and timing of ``urnbound.api.metrics.init_metrics`` is taken out.
    """
    app = create_product_app()
    hooks = app.after_request_funcs[None]
    kept = [hook for hook in hooks if not _qualname(hook).startswith("init_metrics.")]
    if len(kept) != len(hooks) - 1:
        raise RuntimeError("the metrics hook was not found; the bench app is out of date")
    app.after_request_funcs[None] = kept
    app.wsgi_app = without_mount(app.wsgi_app)  # type: ignore[method-assign,assignment]
    return app


def without_mount(wsgi: object) -> object:
    """The WSGI chain with its :class:`MetricsMount` taken out (under the access-log stamp)."""
    if isinstance(wsgi, MetricsMount):
        return wsgi.app
    if isinstance(wsgi, StartStamp):
        return StartStamp(without_mount(wsgi.app))  # type: ignore[arg-type]
    raise RuntimeError(f"unexpected WSGI wrapper {type(wsgi).__name__}; bench app out of date")


def _qualname(hook: object) -> str:
    return str(getattr(hook, "__qualname__", ""))
