"""The application factory: builds settings and per-app state, then wires the HTTP layer."""

from __future__ import annotations

from collections.abc import Mapping

from flask import Flask

from urnbound import __version__
from urnbound.api import init_api
from urnbound.api.caching import cache_policy
from urnbound.api.metrics import build_metrics, multiprocess_dir_from_env
from urnbound.api.queries import query_schemas
from urnbound.api.schemas import answer_schemas
from urnbound.api.state import EXTENSION_KEY, ServiceState
from urnbound.config import Settings, setting_names


def create_app(config: Mapping[str, object] | None = None) -> Flask:
    """Create the Urnbound WSGI app.

    :param config: overrides; keys naming a :class:`~urnbound.config.Settings` field
        (any case) replace the value read from ``URNBOUND_*`` variables, other keys go
        to ``app.config`` (e.g. ``TESTING``).
    """
    overrides = dict(config or {})
    names = set(setting_names())
    settings = Settings.from_env().with_values(
        {key.lower(): value for key, value in overrides.items() if key.lower() in names}
    )
    app = Flask("urnbound")
    app.config.update({key: value for key, value in overrides.items() if key.lower() not in names})
    app.logger.setLevel(settings.log_level)
    app.extensions[EXTENSION_KEY] = build_state(settings)
    init_api(app, settings)
    return app


def build_state(settings: Settings) -> ServiceState:
    """Fresh state for one app: its own metrics registry, caches and schema instances."""
    # The ETag covers the settings that change an answer's text, not only the version.
    answer_version = f"{__version__};exact_digit_limit={settings.exact_digit_limit}"
    return ServiceState(
        settings=settings,
        metrics=build_metrics(multiprocess_dir_from_env()),
        caching=cache_policy(settings.cache_entries, answer_version, settings.cache_max_age),
        queries=query_schemas(),
        answers=answer_schemas(),
    )
