"""Parse caller-supplied numbers (counts, sizes, risk targets) exactly and at bounded cost.

Accepted text, after leading and trailing ASCII whitespace is dropped:

* a whole number written with the digits 0-9, optionally signed: ``42``, ``+7``;
* decimal or scientific notation that denotes a whole number: ``1e9``, ``2.5e12``,
  ``1E6``, ``1.0`` (counts and sizes); any decimal text for risk targets.

Not accepted: digit group separators (``1_000``, ``1,000``), other bases (``0x10``),
``nan``/``inf``, non-ASCII digits, blank text, and over-long text. Every check that
bounds cost (text length, exponent size) runs before any big integer is built, so
``1e999999999`` is refused from its exponent alone.
"""

from __future__ import annotations

import functools
import re
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction

from urnbound.core.errors import DomainError
from urnbound.core.limits import (
    MAX_BIG_TEXT_CHARS,
    MAX_COUNT,
    MAX_SIZE,
    MAX_TEXT_CHARS,
    MIN_RISK,
    MIN_SPACE_SIZE,
)

_WHITESPACE = " \t\r\n\f\v"
_DECIMAL = re.compile(
    r"(?P<sign>[+-]?)(?:(?P<int>[0-9]+)(?:\.(?P<frac>[0-9]*))?|\.(?P<frac_only>[0-9]+))"
    r"(?:[eE](?P<exp>[+-]?[0-9]+))?",
    re.ASCII,
)
_PLAIN = re.compile(r"[+-]?[0-9]+", re.ASCII)


@dataclass(frozen=True, slots=True)
class _Decimal:
    """A decimal number as sign * digits * 10**exponent, digits without leading or
    trailing zeros (``digits == ""`` for zero)."""

    negative: bool
    digits: str
    exponent: int

    @property
    def order(self) -> int:
        """Number of digits left of the point (value < 10**order); 0 for zero."""
        return len(self.digits) + self.exponent if self.digits else 0


def _split_decimal(text: str) -> _Decimal | None:
    match = _DECIMAL.fullmatch(text)
    if match is None:
        return None
    whole = match["int"] or ""
    frac = match["frac"] or match["frac_only"] or ""
    # The text is at most a few thousand characters, so int() here is cheap.
    exponent = int(match["exp"] or "0") - len(frac)
    digits = (whole + frac).lstrip("0")
    stripped = digits.rstrip("0")
    exponent += len(digits) - len(stripped)
    return _Decimal(match["sign"] == "-", stripped, exponent if stripped else 0)


def stripped_text(text: object, refuse: Callable[[str], DomainError],
                  max_chars: int = MAX_TEXT_CHARS) -> str:
    """A parameter's text without surrounding whitespace.

    :raises DomainError: from ``refuse(reason)`` when it is not text, longer than
        ``max_chars`` or empty, the reason saying which.

    >>> stripped_text(" 1e9 ", lambda reason: DomainError(reason))
    '1e9'
    """
    if not isinstance(text, str):
        raise refuse(f"a value of type {type(text).__name__}")
    if len(text) > max_chars:
        raise refuse(f"more than {max_chars} characters")
    stripped = text.strip(_WHITESPACE)
    if not stripped:
        raise refuse("an empty value")
    return stripped


@functools.lru_cache(maxsize=64)
def bound_text(value: int) -> str:
    """Write a range bound compactly: 10^60, 2^8192, or plain digits.

    Cached: the bounds are a handful of constants, and str() of 2^8192 costs some 20 µs,
    which every parse of a count would otherwise pay to state its rule.
    """
    if value >= 10**7:
        text = str(value)
        if text.strip("0") == "1":
            return f"10^{len(text) - 1}"
        if value & (value - 1) == 0:
            return f"2^{value.bit_length() - 1}"
    return str(value)


@functools.lru_cache(maxsize=64)
def whole_rule(minimum: int, maximum: int, scientific: bool) -> str:
    """The allowed form and range of a whole-number parameter, as a phrase.

    >>> whole_rule(0, 2**8192, True)
    'a whole number from 0 to 2^8192, written as digits or in scientific notation such as 1e9'
    """
    form = (
        "written as digits or in scientific notation such as 1e9"
        if scientific
        else "written as digits"
    )
    return f"a whole number from {bound_text(minimum)} to {bound_text(maximum)}, {form}"


def risk_rule() -> str:
    """The allowed form and range of a risk target, as a phrase."""
    return (
        f"a decimal number from {_risk_text(MIN_RISK)} up to but not including 1, "
        "written as digits or in scientific notation such as 0.001 or 1e-9"
    )


def _risk_text(value: Fraction) -> str:
    """1e-300 for 1/10**300: the smallest risk in the notation callers write."""
    exponent = len(str(value.denominator)) - 1
    return f"1e-{exponent}" if value == Fraction(1, 10**exponent) else str(value)


class _Rule:
    """The allowed form and range of one field, and the errors that state them."""

    __slots__ = ("field", "text")

    def __init__(self, field: str, text: str) -> None:
        self.field = field
        self.text = text

    def error(self, reason: str) -> DomainError:
        return DomainError(f"{self.text} (got {reason})", field=self.field)


def _parse_whole(
    text: str | int, field: str, minimum: int, maximum: int, max_chars: int, scientific: bool
) -> int:
    rule = _Rule(field, f"{field} must be {whole_rule(minimum, maximum, scientific)}")
    if isinstance(text, bool) or not isinstance(text, (int, str)):
        raise rule.error(f"a value of type {type(text).__name__}")
    if isinstance(text, int):
        value = text
    else:
        if len(text) > max_chars:
            raise rule.error(f"more than {max_chars} characters")
        stripped = text.strip(_WHITESPACE)
        if not stripped:
            raise rule.error("an empty value")
        value = _whole_from_text(stripped, minimum, maximum, scientific, rule)
    if value < minimum:
        raise rule.error(f"a value below {bound_text(minimum)}")
    if value > maximum:
        raise rule.error(f"a value above {bound_text(maximum)}")
    return value


def _whole_from_text(text: str, minimum: int, maximum: int, scientific: bool, rule: _Rule) -> int:
    if not scientific:
        if _PLAIN.fullmatch(text) is None:
            raise rule.error("text that is not a whole number")
        return int(text)
    number = _split_decimal(text)
    if number is None:
        raise rule.error("text that is not a number")
    if number.exponent < 0:
        raise rule.error("a number with a fractional part")
    if number.order > _digits_bound(max(abs(minimum), abs(maximum))):
        # Decided from digit count and exponent alone: no big integer is built.
        if number.negative:
            raise rule.error(f"a value below {bound_text(minimum)}")
        raise rule.error(f"a value above {bound_text(maximum)}")
    scale: int = 10**number.exponent  # exponent >= 0 here, so this is an int
    magnitude = int(number.digits or "0") * scale
    return -magnitude if number.negative else magnitude


def _digits_bound(value: int) -> int:
    """An upper bound on the decimal digits of ``value``, from its bit length (no str()).

    >>> _digits_bound(999), _digits_bound(2**8192) >= len(str(2**8192))
    (4, True)
    """
    return value.bit_length() * 30103 // 100000 + 1


def parse_count(
    text: str | int, *, field: str = "count", minimum: int = 0, maximum: int = MAX_COUNT
) -> int:
    """Return the whole number written in ``text`` (or ``text`` itself if an int).

    :param text: digits, or decimal/scientific notation denoting a whole number.
    :param field: the request field, named in errors.
    :raises DomainError: for malformed text, a fraction, more than MAX_BIG_TEXT_CHARS
        characters, or a value outside [minimum, maximum]; the detail states form and range.

    >>> parse_count("2.5e12")
    2500000000000
    >>> parse_count(" 1E6 ")
    1000000
    """
    return _parse_whole(text, field, minimum, maximum, MAX_BIG_TEXT_CHARS, scientific=True)


def parse_size(text: str | int, *, field: str = "size") -> int:
    """Return an identifier-space size from 2 to 2**8192, written as for :func:`parse_count`.

    Text may be up to 2,600 characters long, so that every allowed size can be written
    out in full.

    >>> parse_size("1e6")
    1000000
    """
    return _parse_whole(text, field, MIN_SPACE_SIZE, MAX_SIZE, MAX_BIG_TEXT_CHARS, scientific=True)


def parse_int_in_range(text: str | int, field: str, lo: int, hi: int) -> int:
    """Return a small whole number written with plain digits, from ``lo`` to ``hi``.

    Used for ``bits``, ``length`` and ``alphabet_size``; scientific notation is refused.

    >>> parse_int_in_range("+22", "length", 1, 8192)
    22
    """
    return _parse_whole(text, field, lo, hi, MAX_TEXT_CHARS, scientific=False)


def _risk_rule(field: str) -> _Rule:
    return _Rule(field, f"{field} must be {risk_rule()}")


def parse_risk(text: str, *, field: str = "max_risk") -> Fraction:
    """Return the risk target written in ``text`` as an exact fraction.

    :raises DomainError: for malformed text, more than 200 characters, or a value
        outside [1e-300, 1); the detail states form and range.

    >>> parse_risk("1e-9")
    Fraction(1, 1000000000)
    >>> parse_risk("0.25")
    Fraction(1, 4)
    """
    rule = _risk_rule(field)
    stripped = stripped_text(text, rule.error)
    number = _split_decimal(stripped)
    if number is None:
        raise rule.error("text that is not a decimal number")
    if number.negative and number.digits:
        raise rule.error("a negative value")
    # Decide the range from digit count and exponent before building any big integer:
    # 10**(order - 1) <= value < 10**order.
    if number.digits and number.order >= 1:
        raise rule.error("a value of 1 or more")
    lowest = _risk_text(MIN_RISK)
    if not number.digits or number.order < -(len(str(MIN_RISK.denominator)) - 2):
        raise rule.error(f"a value below {lowest}")
    value = Fraction(int(number.digits)) * Fraction(10) ** number.exponent
    if value < MIN_RISK:
        raise rule.error(f"a value below {lowest}")
    return value
