"""Parse ISO 8601 durations (``P365D``, ``PT0.001S``) strictly into exact seconds.

Accepted, after leading and trailing ASCII whitespace is dropped (ISO 8601-1:2019,
section 5.5.2.4, the designators in upper case only):

* ``PnW`` alone (weeks of 7 days);
* ``P[nD][T[nH][nM][nS]]`` with at least one component, ``T`` only before a time
  component, each component at most once and in that order;
* a decimal fraction (``.`` or ``,``) on the seconds only, at most nine digits (1 ns).

Refused, each with a message naming the field and the allowed form: years and months
(they have no fixed length; write days, ``P365D``), a leading sign (durations are not
negative), a zero duration, blank or over-long text, more than fifteen digits in a
number, and anything outside [1 ns, 10^12 s]. Every check runs on the text before any
arithmetic, so the cost of a parse is bounded by the text length limit.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from fractions import Fraction

from urnbound.core.errors import DomainError
from urnbound.core.limits import (
    MAX_DURATION_FRACTION_DIGITS,
    MAX_DURATION_NUMBER_DIGITS,
    MAX_DURATION_SECONDS,
    MIN_DURATION_SECONDS,
)
from urnbound.domain.numbers import stripped_text

#: A reason -> the error that states the rule and that reason.
_Refusal = Callable[[str], DomainError]
_WEEKS = re.compile(r"P(?P<weeks>[0-9]+)W", re.ASCII)
_PARTS = re.compile(
    r"P(?:(?P<days>[0-9]+)D)?"
    r"(?:T(?:(?P<hours>[0-9]+)H)?(?:(?P<minutes>[0-9]+)M)?"
    r"(?:(?P<seconds>[0-9]+)(?:[.,](?P<fraction>[0-9]+))?S)?)?",
    re.ASCII,
)
_SECONDS_PER = {"weeks": 604_800, "days": 86_400, "hours": 3_600, "minutes": 60,
                "seconds": 1}
_YEARS_OR_MONTHS = re.compile(r"P(?:[0-9.,]+Y)|P(?:[0-9.,]+Y)?[0-9.,]+M", re.ASCII)


def duration_rule() -> str:
    """The allowed form and range of a duration, as a phrase."""
    return (
        "an ISO 8601 duration such as P365D, PT1H30M or PT0.001S (weeks PnW, days D, "
        "then T and hours H, minutes M, seconds S; a fraction on the seconds only, up to "
        f"{MAX_DURATION_FRACTION_DIGITS} digits; no years or months), from 1 ns "
        f"(PT0.000000001S) to 10^{len(str(MAX_DURATION_SECONDS)) - 1} seconds"
    )


def parse_duration(text: str, *, field: str) -> Fraction:
    """The duration written in ``text``, in seconds, exactly.

    :raises DomainError: (field ``field``) for text not of the accepted form, or a
        duration outside [1 ns, 10^12 s]; the detail states the form and the range.

    >>> parse_duration("P365D", field="duration")
    Fraction(31536000, 1)
    >>> parse_duration("PT0.001S", field="window"), parse_duration("P2W", field="window")
    (Fraction(1, 1000), Fraction(1209600, 1))
    >>> parse_duration("PT1H30M", field="window")
    Fraction(5400, 1)
    """

    def refuse(reason: str) -> DomainError:
        return DomainError(f"{field} must be {duration_rule()} (got {reason})", field=field)

    stripped = stripped_text(text, refuse)
    if stripped[0] in "+-":
        raise refuse("a signed duration; durations are never negative")
    numbers = _components(stripped, refuse)
    seconds = _seconds_of(numbers, refuse)
    if seconds == 0:
        raise refuse("a zero duration")
    if seconds < MIN_DURATION_SECONDS:
        raise refuse("a duration below 1 ns")
    if seconds > MAX_DURATION_SECONDS:
        raise refuse(f"a duration above 10^{len(str(MAX_DURATION_SECONDS)) - 1} seconds")
    return seconds


def _components(text: str, refuse: _Refusal) -> dict[str, str]:
    """The digit texts of each component given, checked for form and length."""
    if _YEARS_OR_MONTHS.match(text):
        raise refuse("years or months, which have no fixed length; write days, e.g. P365D")
    weeks = _WEEKS.fullmatch(text)
    match = weeks or _PARTS.fullmatch(text)
    if match is None or text in ("P", "PT") or text.endswith("T"):
        raise refuse("text that is not an ISO 8601 duration of the accepted form")
    found = {name: value for name, value in match.groupdict().items() if value is not None}
    for name, digits in found.items():
        limit = MAX_DURATION_FRACTION_DIGITS if name == "fraction" else MAX_DURATION_NUMBER_DIGITS
        if len(digits) > limit:
            raise refuse(f"more than {limit} digits in the {name}")
    return found


def _seconds_of(numbers: dict[str, str], refuse: _Refusal) -> Fraction:
    total = Fraction(0)
    for name, digits in numbers.items():
        if name == "fraction":
            total += Fraction(int(digits), 10 ** len(digits))
        else:
            total += int(digits) * _SECONDS_PER[name]
    return total


def duration_text(seconds: Fraction) -> str:
    """A duration in seconds written back as ISO 8601 seconds, exactly when it can be.

    >>> duration_text(Fraction(1, 1000)), duration_text(Fraction(86400))
    ('PT0.001S', 'PT86400S')
    """
    whole, rest = divmod(seconds.numerator, seconds.denominator)
    if rest == 0:
        return f"PT{whole}S"
    for digits in range(1, MAX_DURATION_FRACTION_DIGITS + 1):
        scaled = rest * 10**digits
        if scaled % seconds.denominator == 0:
            return f"PT{whole}.{scaled // seconds.denominator:0{digits}d}S"
    return f"PT{float(seconds)!r}S"
