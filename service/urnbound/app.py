"""The application factory: builds settings and per-app state, then wires the HTTP layer."""

from __future__ import annotations

from collections.abc import Mapping

from flask import Flask

from urnbound import __version__
from urnbound.api import init_api
from urnbound.api.caching import cache_policy
from urnbound.api.metrics import build_metrics, multiprocess_dir_from_env
from urnbound.api.rendering import renderer_for
from urnbound.api.schemas import HealthSchema
from urnbound.api.schemes import gauge_registry
from urnbound.api.state import EXTENSION_KEY, AnswerSchemas, ServiceState
from urnbound.config import Settings, setting_names
from urnbound.domain.question import Context
from urnbound.domain.registry import Registry, default_registry
from urnbound.domain.schemes import Clock, utc_now, watch_schemes


def create_app(
    config: Mapping[str, object] | None = None,
    registry: Registry | None = None,
    clock: Clock | None = None,
) -> Flask:
    """Create the Urnbound WSGI app.

    :param config: overrides; keys naming a :class:`~urnbound.config.Settings` field
        (any case) replace the value read from ``URNBOUND_*`` variables, other keys go
        to ``app.config`` (e.g. ``TESTING``).
    :param registry: the questions to serve (default: every module of
        ``urnbound.domain.questions``).
    :param clock: the clock the watched schemes' answers read (default: UTC now).
    :raises SchemesError: for a bad schemes file, naming the scheme and the field.
    """
    overrides = dict(config or {})
    names = set(setting_names())
    settings = Settings.from_env().with_values(
        {key.lower(): value for key, value in overrides.items() if key.lower() in names}
    )
    app = Flask("urnbound")
    app.config.update({key: value for key, value in overrides.items() if key.lower() not in names})
    app.logger.setLevel(settings.log_level)
    app.extensions[EXTENSION_KEY] = build_state(settings, registry or default_registry(),
                                                clock or utc_now)
    init_api(app, settings)
    return app


def build_state(settings: Settings, registry: Registry, clock: Clock = utc_now) -> ServiceState:
    """Fresh state for one app: its own metrics registry, caches and schema instances."""
    # The ETag covers the settings that change an answer's text, not only the version.
    answer_version = f"{__version__};exact_digit_limit={settings.exact_digit_limit}"
    context = context_of(settings)
    schemes = watch_schemes(settings.schemes or None, clock)
    return ServiceState(
        settings=settings,
        metrics=build_metrics(multiprocess_dir_from_env(), gauge_registry(schemes, context)),
        caching=cache_policy(settings.cache_entries, answer_version, settings.cache_max_age),
        registry=registry,
        renderer=renderer_for(registry),
        context=context,
        answers=AnswerSchemas(HealthSchema()),
        schemes=schemes,
    )


def context_of(settings: Settings) -> Context:
    """The settings that change how questions are computed."""
    return Context(exact_digit_limit=settings.exact_digit_limit)
