"""Registers the question routes, the fixed endpoints and the cross-cutting machinery on an app."""

from __future__ import annotations

from flask import Flask

from urnbound.api import health, openapi, schemes
from urnbound.api.access_log import AccessLog, logs_access
from urnbound.api.front import init_front
from urnbound.api.problems import init_problems
from urnbound.api.state import EXTENSION_KEY, ServiceState
from urnbound.api.views import init_questions
from urnbound.config import Settings

#: Endpoints that are not questions: probes, the OpenAPI document, the watched schemes.
BLUEPRINTS = (health.blueprint, openapi.blueprint, schemes.blueprint)


def wire(app: Flask, settings: Settings) -> None:
    """Register everything HTTP on ``app``, whose state the factory has already built."""
    state: ServiceState = app.extensions[EXTENSION_KEY]
    init_questions(app, state.registry)
    for blueprint in BLUEPRINTS:
        app.register_blueprint(blueprint)
    init_problems(app)
    init_front(app, state, AccessLog() if logs_access(settings) else None)
