"""The per-app state that the factory builds and the views read."""

from __future__ import annotations

from dataclasses import dataclass

from flask import current_app

from urnbound.api.caching import CachePolicy
from urnbound.api.metrics import Metrics
from urnbound.api.rendering import Renderer
from urnbound.api.schemas import HealthSchema
from urnbound.config import Settings
from urnbound.domain.question import Context
from urnbound.domain.registry import Registry
from urnbound.domain.schemes import WatchedSchemes

#: Key of the state in ``app.extensions``.
EXTENSION_KEY = "urnbound"


@dataclass(frozen=True, slots=True)
class AnswerSchemas:
    """Schema instances of the answers that are not registered questions."""

    health: HealthSchema


@dataclass(frozen=True, slots=True)
class ServiceState:
    """Everything an app owns: settings, metrics, caches, its questions and their schemas.

    :ivar context: the settings that change how questions are computed.
    :ivar schemes: the watched schemes and the clock their answers read.
    """

    settings: Settings
    metrics: Metrics
    caching: CachePolicy
    registry: Registry
    renderer: Renderer
    context: Context
    answers: AnswerSchemas
    schemes: WatchedSchemes


def service_state() -> ServiceState:
    """The state of the app handling the current request."""
    state: ServiceState = current_app.extensions[EXTENSION_KEY]
    return state
