"""The WSGI entry point for gunicorn (``urnbound.wsgi:app``): the only module-level app."""

from __future__ import annotations

from urnbound.app import create_app

app = create_app()
