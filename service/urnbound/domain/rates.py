"""Parse rates per second (``1e4``, ``0.5``, ``2.5e3``) exactly, at bounded cost.

Accepted, after leading and trailing ASCII whitespace is dropped: unsigned decimal or
scientific notation (``1e4``, ``12.5``, ``.5``) from 1e-9 to 1e30 per second. The
exponent and the text length are checked before any number is built.
"""

from __future__ import annotations

import re
from fractions import Fraction

from urnbound.core.errors import DomainError
from urnbound.core.limits import MAX_RATE, MIN_RATE
from urnbound.domain.numbers import stripped_text

_RATE = re.compile(r"\+?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE](?P<exp>[+-]?[0-9]{1,4}))?",
                   re.ASCII)


def _exponent_text(value: Fraction | int) -> str:
    """1e30 for 10**30, 1e-9 for 1/10**9."""
    if isinstance(value, Fraction) and value.numerator == 1:
        return f"1e-{len(str(value.denominator)) - 1}"
    return f"1e{len(str(value)) - 1}"


def rate_rule() -> str:
    """The allowed form and range of a rate, as a phrase."""
    return (f"a decimal number of events per second from {_exponent_text(MIN_RATE)} to "
            f"{_exponent_text(MAX_RATE)}, written as digits or in scientific notation such "
            "as 1e4")


def parse_rate(text: str, *, field: str) -> Fraction:
    """The rate written in ``text``, per second, exactly.

    :raises DomainError: (field ``field``) for malformed text or a rate outside
        [1e-9, 1e30]; the detail states the form and the range.

    >>> parse_rate("1e4", field="guess_rate"), parse_rate(" 0.25 ", field="rate")
    (Fraction(10000, 1), Fraction(1, 4))
    """
    return parse_decimal_in(text, field, MIN_RATE, MAX_RATE, rate_rule())


def decimal_rule(low: Fraction | int, high: Fraction | int, *, low_open: bool = False) -> str:
    """The allowed form and range of a plain decimal parameter, as a phrase.

    >>> decimal_rule(0, 1, low_open=True)
    'a decimal number above 0 and at most 1, written as digits or in scientific notation'
    """
    start = f"above {low}" if low_open else f"from {low}"
    end = "and at most" if low_open else "to"
    return f"a decimal number {start} {end} {high}, written as digits or in scientific notation"


def parse_decimal_in(text: str, field: str, low: Fraction | int, high: Fraction | int,
                     rule: str, *, low_open: bool = False) -> Fraction:
    """The unsigned decimal number written in ``text``, exactly, within [low, high].

    With ``low_open`` the low end is excluded. The exponent has at most 4 digits, so the
    number built is bounded before it is built.

    >>> parse_decimal_in("1.5", "burst", 1, 10**6, "a number")
    Fraction(3, 2)
    """

    def refuse(reason: str) -> DomainError:
        return DomainError(f"{field} must be {rule} (got {reason})", field=field)

    stripped = stripped_text(text, refuse)
    if stripped.startswith("-"):
        raise refuse("a negative value")
    if _RATE.fullmatch(stripped) is None:
        raise refuse("text that is not a decimal number")
    value = Fraction(stripped.lstrip("+"))
    if value < low or (low_open and value == low):
        raise refuse(f"a value below {_bound(low)}" if value < low else f"a value of {low}")
    if value > high:
        raise refuse(f"a value above {_bound(high)}")
    return value


def _bound(value: Fraction | int) -> str:
    if isinstance(value, Fraction) and value.denominator != 1:
        return _exponent_text(value) if value.numerator == 1 else str(value)
    whole = int(value)
    return _exponent_text(whole) if whole >= 10**6 and str(whole).strip("0") == "1" else str(whole)
