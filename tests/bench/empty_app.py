"""Bench-only WSGI apps: the bare Flask floor, and the product app with pieces switched off."""

from __future__ import annotations

from dataclasses import replace

from flask import Flask, Response

from urnbound.api.front import Front, flask_hook
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
    """:func:`create_product_app` without the request metrics: no counting or timing of
    requests, no /metrics path.

    The answer-cache and answer-method counters that question replies update stay; only the
    per-request counting and timing of the front's observer is taken out (the access log
    stays).
    """
    app = create_product_app()
    front = app.wsgi_app
    if not isinstance(front, Front):
        raise RuntimeError(f"unexpected WSGI app {type(front).__name__}; bench app out of date")
    observer = replace(front.observer, metrics=None)
    app.wsgi_app = replace(front, observer=observer, exposition=None)  # type: ignore[method-assign]
    hooks = app.after_request_funcs[None]
    kept = [hook for hook in hooks if not _qualname(hook).startswith("flask_hook.")]
    if len(kept) != len(hooks) - 1:
        raise RuntimeError("the front's Flask hook was not found; the bench app is out of date")
    app.after_request_funcs[None] = [*kept, flask_hook(observer)]
    return app


def _qualname(hook: object) -> str:
    return str(getattr(hook, "__qualname__", ""))
