"""A bench-only WSGI app: the service plus an empty JSON endpoint to compare against."""

from __future__ import annotations

from flask import Flask, Response, jsonify

from urnbound.app import create_app

#: Path of the comparison endpoint; it exists only in this benchmark app.
EMPTY_PATH = "/bench/empty"


def create_bench_app() -> Flask:
    """The product app from ``create_app()`` with one extra route returning ``{}``.

    Everything else (settings from the environment, metrics, access log, error handling) is
    the product's, so the empty endpoint pays the same per-request overhead as the real ones.
    Gunicorn loads it as ``empty_app:create_bench_app()``.
    """
    app = create_app()
    app.add_url_rule(EMPTY_PATH, endpoint="bench_empty", view_func=empty_json)
    return app


def empty_json() -> Response:
    """An empty JSON object: the cheapest answer the framework can give."""
    return jsonify({})
