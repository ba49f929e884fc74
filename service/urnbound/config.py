"""Typed service settings, read once from the environment inside the app factory."""

from __future__ import annotations

import dataclasses
import os
from collections.abc import Mapping
from dataclasses import dataclass

from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT

LOG_LEVELS = ("DEBUG", "INFO", "WARNING", "ERROR", "CRITICAL")
_TRUE = frozenset({"1", "true", "yes", "on"})
_FALSE = frozenset({"0", "false", "no", "off"})


@dataclass(frozen=True, slots=True)
class Settings:
    """Every setting of the service; each maps to one environment variable.

    The variable is the prefix (``URNBOUND_``) plus the field name in upper case,
    e.g. ``URNBOUND_CACHE_ENTRIES``.

    :ivar exact_digit_limit: cost limit of the exact path, in decimal digits of N**n.
    :ivar cache_entries: most answers kept in the in-process LRU cache (0 disables it).
    :ivar cache_max_age: seconds sent in ``Cache-Control: public, max-age=...``.
    :ivar log_level: level of the application logger.
    :ivar access_log: write one JSON line per request to standard output.
    :ivar host: address gunicorn listens on (read by ``deploy/gunicorn.conf.py`` too).
    :ivar port: port gunicorn listens on.
    :ivar workers: gunicorn worker processes; 0 means 2 x usable CPUs + 1.
    :ivar schemes: path of a TOML file of watched schemes (``domain/schemes.py``); empty
        for none. A bad file stops start-up with the scheme and the field named.
    :ivar schemes_max_age: seconds sent in ``Cache-Control`` of the schemes' answers, which
        change with the clock.

    Names and defaults of ``host``, ``port``, ``workers`` and ``log_level`` match
    ``deploy/gunicorn.conf.py``, which reads the same variables.

    >>> Settings.from_env(environ={"URNBOUND_CACHE_ENTRIES": "16"}).cache_entries
    16
    """

    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT
    cache_entries: int = 4096
    cache_max_age: int = 86_400
    log_level: str = "INFO"
    access_log: bool = True
    host: str = "127.0.0.1"
    port: int = 8080
    workers: int = 0
    schemes: str = ""
    schemes_max_age: int = 30

    def __post_init__(self) -> None:
        _require_range("exact_digit_limit", self.exact_digit_limit, 1, 10_000_000)
        _require_range("cache_entries", self.cache_entries, 0, 10_000_000)
        _require_range("cache_max_age", self.cache_max_age, 0, 31_536_000)
        _require_range("port", self.port, 1, 65_535)
        _require_range("workers", self.workers, 0, 64)
        _require_range("schemes_max_age", self.schemes_max_age, 0, 86_400)
        if self.log_level not in LOG_LEVELS:
            raise ValueError(f"log_level must be one of {', '.join(LOG_LEVELS)}")
        if not self.host:
            raise ValueError("host must be a host name or address")

    @classmethod
    def from_env(
        cls, prefix: str = "URNBOUND_", environ: Mapping[str, str] | None = None
    ) -> Settings:
        """Settings from ``prefix``-ed environment variables, defaults elsewhere."""
        source = os.environ if environ is None else environ
        found = {
            name: source[prefix + name.upper()]
            for name in setting_names()
            if prefix + name.upper() in source
        }
        return cls().with_values(found, origin=prefix)

    def with_values(self, values: Mapping[str, object], *, origin: str = "") -> Settings:
        """A copy with ``values`` (field name -> value or text) converted and applied."""
        converted = {
            name: _converted(name, value, origin + (name.upper() if origin else name))
            for name, value in values.items()
        }
        return dataclasses.replace(self, **converted)  # type: ignore[arg-type]

    @property
    def bind_address(self) -> str:
        """``host:port`` for gunicorn's ``bind`` setting."""
        host = f"[{self.host}]" if ":" in self.host else self.host
        return f"{host}:{self.port}"


def setting_names() -> tuple[str, ...]:
    """The field names of :class:`Settings`, in declaration order."""
    return tuple(field.name for field in dataclasses.fields(Settings))


def _converted(name: str, value: object, label: str) -> object:
    kinds = {field.name: field.type for field in dataclasses.fields(Settings)}
    if name not in kinds:
        raise ValueError(f"unknown setting {label}; known: {', '.join(setting_names())}")
    kind = kinds[name]
    if kind == "bool":
        return _as_bool(value, label)
    if kind == "int":
        return _as_int(value, label)
    text = str(value).strip()
    return text.upper() if name == "log_level" else text


def _as_bool(value: object, label: str) -> bool:
    if isinstance(value, bool):
        return value
    text = str(value).strip().lower()
    if text in _TRUE or text in _FALSE:
        return text in _TRUE
    raise ValueError(f"{label} must be one of 1/0, true/false, yes/no, on/off")


def _as_int(value: object, label: str) -> int:
    if isinstance(value, int) and not isinstance(value, bool):
        return value
    text = str(value).strip().replace("_", "")
    if not text.lstrip("+-").isdigit() or len(text) > 12:
        raise ValueError(f"{label} must be a whole number, got {value!r}")
    return int(text)


def _require_range(name: str, value: int, low: int, high: int) -> None:
    if isinstance(value, bool) or not isinstance(value, int) or not low <= value <= high:
        raise ValueError(f"{name} must be a whole number from {low} to {high}, got {value!r}")
