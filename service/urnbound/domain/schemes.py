"""Watched identifier schemes: a TOML file of schemes, each a risk budget projected to now.

The file named by ``URNBOUND_SCHEMES`` holds one ``[[scheme]]`` table per scheme::

    [[scheme]]
    name = "tickets"                    # letters, digits, - and _; unique
    alphabet = "lowercase-alphanumeric" # the space, as a request gives it: bits, alphabet
    length = 14                         # + length, size, format, ...
    issued = 40_000_000                 # identifiers counted ...
    counted_at = 2026-11-01T00:00:00Z   # ... at this moment (with a UTC offset)
    rate = "2e5"                        # identifiers per `per` since then
    per = "P1D"                         # ISO 8601 duration (default PT1S)
    growth = 1.5                        # optional, per year (default 1)
    max_risk = "1e-6"
    horizon = "P3650D"                  # optional, how far ahead to look (default P3650D)

Every field but ``name`` and ``counted_at`` is read by the parameters of ``/v1/budgets``
(numbers may be TOML numbers or strings), so a scheme takes and refuses exactly what that
question does. A scheme's budget as of a moment is the budget question with ``issued``
projected from ``counted_at`` to that moment at the scheme's rate and growth. Any fault
(unknown field, unknown format, a negative rate, a repeated name, ...) is refused with
the scheme and the field named.
"""

from __future__ import annotations

import hashlib
import re
import tomllib
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from fractions import Fraction
from pathlib import Path
from typing import Any

from urnbound.core.projection import BudgetProjection, project_budget
from urnbound.core.tick_budgets import project_tick_budget
from urnbound.domain.errors import DomainError, InvalidQuery
from urnbound.domain.formats import TimeOrderedSpace
from urnbound.domain.inputs import Inputs
from urnbound.domain.question import Answer, Context
from urnbound.domain.questions import budgets

#: Fields a scheme may have besides the parameters of /v1/budgets.
OWN_FIELDS = ("name", "counted_at")
#: The parameters of /v1/budgets a scheme may not set (its series is the service's).
NOT_FOR_SCHEMES = ("points",)
#: How far ahead a scheme looks unless it says.
DEFAULT_HORIZON = "P3650D"
#: Moments in a scheme's series (the dashboard polls the scheme, not a long series).
SCHEME_POINTS = 12
_NAME = re.compile(r"[A-Za-z0-9][A-Za-z0-9_-]{0,63}", re.ASCII)


class SchemesError(ValueError):
    """A schemes file the service refuses, with the scheme and the field at fault."""


@dataclass(frozen=True, slots=True)
class Scheme:
    """One watched scheme: a budget question whose count was taken at ``counted_at``.

    :ivar inputs: the scheme's fields loaded as the inputs of /v1/budgets.
    :ivar fields: the fields as written in the file (for the listing).
    """

    name: str
    counted_at: datetime
    inputs: Inputs
    fields: Mapping[str, str]

    def elapsed(self, now: datetime) -> Fraction:
        """Seconds from the count to ``now``, exactly to the microsecond (0 if before)."""
        micros = (now - self.counted_at) // timedelta(microseconds=1)
        return Fraction(max(micros, 0), 10**6)

    def projection(self, now: datetime, context: Context, points: int = SCHEME_POINTS
                   ) -> BudgetProjection:
        """The scheme's budget as of ``now``.

        A time-ordered layout's budget accrues the tick model's hazard from the count's
        moment on, the identifiers counted then taken as issued at the rate of that moment
        before it (``core/tick_budgets.py``), so that a growing rate needs no rate as of
        now.
        """
        inputs, space = self.inputs, self.inputs["space"]
        schedule = budgets.schedule_of(inputs)
        if isinstance(space, TimeOrderedSpace):
            return project_tick_budget(space.random_bits, space.tick_seconds, schedule,
                                       inputs["horizon"], inputs["max_risk"], points,
                                       start=self.elapsed(now))
        return project_budget(
            space.size, schedule, inputs["horizon"], inputs["max_risk"], points,
            start=self.elapsed(now), exact_digit_limit=context.exact_digit_limit)

    def answer(self, now: datetime, context: Context) -> Answer:
        """The members of the budget answer as of ``now``."""
        return budgets.budget_answer(self.inputs, self.projection(now, context))


def parse_schemes(text: str, source: str = "schemes file") -> tuple[Scheme, ...]:
    """The schemes of a TOML document, in file order.

    :raises SchemesError: naming ``source``, the scheme and the field at fault.

    >>> parse_schemes('[[scheme]]\\nname = "a"\\nbits = 64\\ncounted_at = 2026-01-01T00:00:00Z\\n'
    ...               'rate = 5\\nmax_risk = "1e-6"')[0].inputs["space"].bits
    64.0
    """
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise SchemesError(f"{source}: not valid TOML: {error}") from None
    unknown = sorted(set(document) - {"scheme"})
    if unknown:
        raise SchemesError(f"{source}: unknown top-level key {unknown[0]!r}; write each "
                           "scheme as a [[scheme]] table")
    tables = document.get("scheme", [])
    if not isinstance(tables, list):
        raise SchemesError(f"{source}: write each scheme as a [[scheme]] table")
    schemes: list[Scheme] = []
    for position, table in enumerate(tables, start=1):
        scheme = _scheme(table, f"{source}: scheme {position}")
        if any(s.name == scheme.name for s in schemes):
            raise SchemesError(f"{source}: scheme {scheme.name!r}: field 'name': the name "
                               "is used by an earlier scheme")
        schemes.append(scheme)
    return tuple(schemes)


def _scheme(table: Mapping[str, Any], where: str) -> Scheme:
    name = table.get("name")
    if not isinstance(name, str) or _NAME.fullmatch(name) is None:
        raise SchemesError(f"{where}: field 'name': give a name of 1 to 64 letters, digits, "
                           "- and _, starting with a letter or digit")
    where = where.rsplit(": scheme", 1)[0] + f": scheme {name!r}"
    accepted = _budget_fields()
    for field in table:
        if field not in OWN_FIELDS and field not in accepted:
            raise SchemesError(f"{where}: field {field!r}: unknown field; a scheme takes "
                               f"{', '.join((*OWN_FIELDS, *accepted))}")
    counted_at = _moment(table.get("counted_at"), where)
    texts = {field: _text(value, where, field) for field, value in table.items()
             if field not in OWN_FIELDS}
    texts.setdefault("horizon", DEFAULT_HORIZON)
    try:
        inputs = budgets.QUESTION.load({field: [text] for field, text in texts.items()})
    except InvalidQuery as error:
        field, messages = sorted(error.errors.items())[0]
        raise SchemesError(f"{where}: field {field!r}: {' '.join(messages)}") from None
    scheme = Scheme(name, counted_at, inputs, texts)
    if isinstance(inputs["space"], TimeOrderedSpace):
        _check_tick_model(scheme, where)
    return scheme


def _check_tick_model(scheme: Scheme, where: str) -> None:
    """Refuse a time-ordered scheme the tick model cannot project from its count on (with
    growth: a rate per tick past half the values per tick, or a horizon past where it is)."""
    try:
        scheme.projection(scheme.counted_at, Context(), points=2)
    except DomainError as error:
        raise SchemesError(f"{where}: field {error.field!r}: {error.detail}") from None


def _budget_fields() -> tuple[str, ...]:
    from urnbound.domain.inputs import accepted_names

    question = budgets.QUESTION
    names = accepted_names([*question.inputs, *question.optional])
    return tuple(name for name in names if name not in NOT_FOR_SCHEMES)


def _moment(value: object, where: str) -> datetime:
    """counted_at: a TOML date-time or ISO 8601 text, with a UTC offset."""
    if isinstance(value, str):
        try:
            value = datetime.fromisoformat(value)
        except ValueError:
            value = None
    if not isinstance(value, datetime) or value.tzinfo is None:
        raise SchemesError(f"{where}: field 'counted_at': give the moment issued was counted "
                           "as a date and time with a UTC offset, e.g. 2026-11-01T00:00:00Z")
    return value


def _text(value: object, where: str, field: str) -> str:
    """A field's value as the text a query would give."""
    if isinstance(value, bool) or not isinstance(value, (str, int, float)):
        raise SchemesError(f"{where}: field {field!r}: give a number or a string")
    return value if isinstance(value, str) else repr(value)


def scheme_named(schemes: Sequence[Scheme], name: str) -> Scheme | None:
    """The scheme called ``name``, or ``None``."""
    return next((scheme for scheme in schemes if scheme.name == name), None)


#: A clock: the current moment, with its UTC offset.
Clock = Callable[[], datetime]


def utc_now() -> datetime:
    """The current moment in UTC (the service's clock; tests inject their own)."""
    return datetime.now(UTC)


@dataclass(frozen=True, slots=True)
class WatchedSchemes:
    """The schemes the service watches, the file they came from and the clock it reads.

    :ivar path: the schemes file, or ``None`` when none is configured.
    :ivar digest: SHA-256 of the file as loaded (to tell when it changed on disk).
    """

    path: str | None
    schemes: tuple[Scheme, ...]
    digest: str
    clock: Clock

    def file_state(self) -> dict[str, object]:
        """The file's state for /readyz: loaded, changed on disk (restart to reload), missing."""
        if self.path is None:
            return {"file": None, "schemes": 0, "state": "none configured"}
        try:
            current = hashlib.sha256(Path(self.path).read_bytes()).hexdigest()
        except OSError:
            state = "missing (the schemes loaded at start are served)"
        else:
            state = "loaded" if current == self.digest else (
                "changed on disk (the schemes loaded at start are served; restart to reload)")
        return {"file": self.path, "schemes": len(self.schemes), "state": state}


def watch_schemes(path: str | None, clock: Clock = utc_now) -> WatchedSchemes:
    """The schemes of the file at ``path`` (none for ``None`` or an empty path).

    :raises SchemesError: for a file that cannot be read or that has any fault, naming the
        file, the scheme and the field.
    """
    if not path:
        return WatchedSchemes(None, (), "", clock)
    try:
        data = Path(path).read_bytes()
    except OSError as error:
        raise SchemesError(f"schemes file {path}: cannot be read ({error.strerror})") from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        raise SchemesError(f"schemes file {path}: not UTF-8 text") from None
    schemes = parse_schemes(text, f"schemes file {path}")
    return WatchedSchemes(path, schemes, hashlib.sha256(data).hexdigest(), clock)
