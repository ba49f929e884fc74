"""HTTP layer: init_api wires blueprints, problem details, metrics and the access log."""

from __future__ import annotations

from flask import Flask

from urnbound.api import alphabets, capacity, collisions, health, lengths, openapi
from urnbound.api.access_log import init_access_log
from urnbound.api.metrics import init_metrics
from urnbound.api.problems import init_problems
from urnbound.api.state import EXTENSION_KEY, ServiceState
from urnbound.config import Settings

BLUEPRINTS = (
    collisions.blueprint,
    lengths.blueprint,
    capacity.blueprint,
    alphabets.blueprint,
    health.blueprint,
    openapi.blueprint,
)


def init_api(app: Flask, settings: Settings) -> None:
    """Register everything HTTP on ``app``, whose state the factory has already built."""
    state: ServiceState = app.extensions[EXTENSION_KEY]
    for blueprint in BLUEPRINTS:
        app.register_blueprint(blueprint)
    init_problems(app)
    init_metrics(app, state.metrics)
    init_access_log(app, settings)
