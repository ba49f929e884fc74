"""The parameters of an issue schedule and of a curve (rate, per, growth, horizon, points).

A rate is identifiers per ``per`` (an ISO 8601 duration, default one second); a growth is
the factor the rate is multiplied by each year; a horizon is an ISO 8601 duration up to
``MAX_HORIZON_SECONDS``. Every number is parsed exactly, its text length and exponent
checked before any number is built, and every refusal names the field and its range.
"""

from __future__ import annotations

from fractions import Fraction

from urnbound.core.curves import SPACINGS
from urnbound.core.errors import DomainError
from urnbound.core.limits import (
    DEFAULT_POINTS,
    MAX_BIG_TEXT_CHARS,
    MAX_COUNT,
    MAX_GROWTH,
    MAX_HORIZON_SECONDS,
    MAX_POINTS,
    MAX_RATE,
    MAX_TEXT_CHARS,
    MIN_POINTS,
    MIN_RATE,
)
from urnbound.domain import numbers
from urnbound.domain.durations import duration_rule, parse_duration
from urnbound.domain.errors import InvalidQuery
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import NUMBER_PATTERN, Parameter
from urnbound.domain.rates import parse_decimal_in

_DAYS_IN_YEARS = MAX_HORIZON_SECONDS // 86_400


def rate_rule() -> str:
    """The allowed form and range of an issue rate, as a phrase."""
    return ("a decimal number of identifiers per `per` from 1e-9 to 1e30, written as digits "
            "or in scientific notation such as 2e6")


def growth_rule() -> str:
    """The allowed form and range of a yearly growth factor, as a phrase."""
    return (f"a decimal number above 0 and at most {MAX_GROWTH} (1 for a steady rate, 2 for "
            "a rate that doubles each year, 0.5 for one that halves)")


def horizon_rule() -> str:
    """The allowed form and range of a horizon, as a phrase."""
    return (f"{duration_rule()}, and at most P{_DAYS_IN_YEARS}D "
            f"({_DAYS_IN_YEARS // 365} years of 365 days)")


def parse_issue_rate(text: str) -> Fraction:
    """Identifiers per ``per``, exactly, from 1e-9 to 1e30.

    >>> parse_issue_rate("2e6"), parse_issue_rate("0.5")
    (Fraction(2000000, 1), Fraction(1, 2))
    """
    return parse_decimal_in(text, "rate", MIN_RATE, MAX_RATE, rate_rule())


def parse_growth(text: str) -> Fraction:
    """The yearly growth factor, exactly, in (0, MAX_GROWTH].

    >>> parse_growth("1.5")
    Fraction(3, 2)
    """
    return parse_decimal_in(text, "growth", 0, MAX_GROWTH, growth_rule(), low_open=True)


def parse_per(text: str) -> Fraction:
    """The period a rate is counted over, in seconds (an ISO 8601 duration)."""
    return parse_duration(text, field="per")


def parse_horizon(text: str) -> Fraction:
    """How far ahead to project, in seconds, at most MAX_HORIZON_SECONDS.

    >>> parse_horizon("P730D")
    Fraction(63072000, 1)
    """
    seconds = parse_duration(text, field="horizon")
    if seconds > MAX_HORIZON_SECONDS:
        raise DomainError(f"horizon must be {horizon_rule()} (got a longer duration)",
                          field="horizon")
    return seconds


def elapsed_text(seconds: Fraction) -> str:
    """A duration as ISO 8601 days, hours, minutes and seconds; ``P0D`` for none.

    The text parses back to exactly ``seconds`` when they have at most nine decimals.

    >>> elapsed_text(Fraction(0)), elapsed_text(Fraction(90061)), elapsed_text(Fraction(3, 2))
    ('P0D', 'P1DT1H1M1S', 'PT1.5S')
    >>> elapsed_text(Fraction(86400 * 400))
    'P400D'
    """
    if seconds == 0:
        return "P0D"
    whole, rest = divmod(seconds.numerator, seconds.denominator)  # integers: cheap
    days, left = divmod(whole, 86_400)
    hours, left = divmod(left, 3_600)
    minutes, secs = divmod(left, 60)
    text = f"P{days}D" if days else "P"
    clock = ""
    if hours:
        clock += f"{hours}H"
    if minutes:
        clock += f"{minutes}M"
    if secs or rest:
        clock += f"{secs}{_fraction_digits(rest * 10**9 // seconds.denominator)}S"
    return text + ("T" + clock if clock else "")


def _fraction_digits(nanoseconds: int) -> str:
    """``.5`` for 500,000,000 ns: up to nine decimals, none for 0."""
    return "." + f"{nanoseconds:09d}".rstrip("0") if nanoseconds else ""


def _points(text: str) -> int:
    return numbers.parse_int_in_range(text, "points", MIN_POINTS, MAX_POINTS)


def _text_schema(pattern: str | None = None) -> dict[str, object]:
    schema: dict[str, object] = {"type": "string", "maxLength": MAX_TEXT_CHARS}
    if pattern is not None:
        schema["pattern"] = pattern
    return schema


ISSUED = Parameter(
    "issued",
    lambda text: numbers.parse_count(text, field="issued"),
    numbers.whole_rule(0, MAX_COUNT, scientific=True),
    "Identifiers issued so far (default 0).",
    "4e7",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_BIG_TEXT_CHARS},
)
ISSUE_RATE = Parameter(
    "rate",
    parse_issue_rate,
    rate_rule(),
    "Identifiers issued per `per` from now on, across all generators.",
    "2e6",
    _text_schema(NUMBER_PATTERN),
)
PER = Parameter(
    "per",
    parse_per,
    duration_rule(),
    "The period the rate is counted over, as an ISO 8601 duration (default PT1S): "
    "rate=2e6&per=P1D is two million a day.",
    "P1D",
    _text_schema(),
)
GROWTH = Parameter(
    "growth",
    parse_growth,
    growth_rule(),
    "The factor the rate is multiplied by each year of 365 days, continuously (default 1).",
    "1.5",
    _text_schema(NUMBER_PATTERN),
)
HORIZON = Parameter(
    "horizon",
    parse_horizon,
    horizon_rule(),
    "How far ahead to project, as an ISO 8601 duration.",
    "P730D",
    _text_schema(),
)
POINTS = Parameter(
    "points",
    _points,
    numbers.whole_rule(MIN_POINTS, MAX_POINTS, scientific=False),
    f"How many evenly spaced moments or counts to report (default {DEFAULT_POINTS}).",
    "50",
    {"type": "integer", "minimum": MIN_POINTS, "maximum": MAX_POINTS},
)
FROM = Parameter(
    "from",
    lambda text: numbers.parse_count(text, field="from"),
    numbers.whole_rule(0, MAX_COUNT, scientific=True) + " (at least 1 for log spacing)",
    "The smallest count of the curve.",
    "1e3",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_BIG_TEXT_CHARS},
)
TO = Parameter(
    "to",
    lambda text: numbers.parse_count(text, field="to"),
    numbers.whole_rule(0, MAX_COUNT, scientific=True) + ", above from",
    "The largest count of the curve.",
    "1e9",
    {"type": "string", "pattern": NUMBER_PATTERN, "maxLength": MAX_BIG_TEXT_CHARS},
)


def _spacing(text: str) -> str:
    value = text.strip().lower() if isinstance(text, str) else ""
    if value not in SPACINGS:
        raise DomainError(f"spacing must be one of {', '.join(SPACINGS)} (got {text!r})"[:300],
                          field="spacing")
    return value


SPACING = Parameter(
    "spacing",
    _spacing,
    "one of " + ", ".join(SPACINGS),
    "How the counts are spread from from to to: log (default; each a constant factor "
    "above the last) or linear (evenly).",
    "log",
    {"type": "string", "enum": list(SPACINGS), "maxLength": MAX_TEXT_CHARS},
)


def per_second(inputs: Inputs) -> Inputs:
    """The inputs with ``rate`` per second (an exact fraction, rate / per) and no ``per``.

    ``rate=86400&per=P1D`` and ``rate=1`` are then one question: one cache entry, one ETag.

    >>> per_second(Inputs({"rate": Fraction(2 * 10**6), "per": Fraction(86400)}))["rate"]
    Fraction(625, 27)
    """
    per = inputs["per"]
    if per is None:
        return inputs
    return Inputs({**inputs.entries, "rate": inputs["rate"] / per, "per": None})


def refuse_time_ordered(inputs: Inputs) -> None:
    """Refuse a time-ordered space (curves): its tick model takes no count."""
    if getattr(inputs["space"], "tick_seconds", None) is not None:
        raise InvalidQuery({"space": [
            "curves are drawn for a space whose identifiers may coincide at any time: a "
            "time-ordered layout (format=uuid-v7, or tick with random_bits) is answered by "
            "/v1/budgets, /v1/collisions and /v1/rates with a rate"]})
