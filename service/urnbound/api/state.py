"""The per-app state that the factory builds and the views read."""

from __future__ import annotations

from dataclasses import dataclass

from flask import current_app

from urnbound.api.caching import CachePolicy
from urnbound.api.metrics import Metrics
from urnbound.api.queries import QuerySchemas
from urnbound.api.schemas import AnswerSchemas
from urnbound.config import Settings

#: Key of the state in ``app.extensions``.
EXTENSION_KEY = "urnbound"


@dataclass(frozen=True, slots=True)
class ServiceState:
    """Everything an app owns: settings, metrics, caches and schema instances."""

    settings: Settings
    metrics: Metrics
    caching: CachePolicy
    queries: QuerySchemas
    answers: AnswerSchemas


def service_state() -> ServiceState:
    """The state of the app handling the current request."""
    state: ServiceState = current_app.extensions[EXTENSION_KEY]
    return state
