"""Identifier formats: how many bits of an identifier are random, its layout and its source.

A format with a fixed layout (``uuid-v4``, ``uuid-v7``) may be given wherever a space is,
as ``format=<name>``; its space is that of its random bits. A time-ordered format
(``uuid-v7``) draws its random bits afresh within each tick of its timestamp, so two of
its identifiers can be equal only when they fall in the same tick: its space is the
space of one tick. Random strings and random integers are families, listed here with
the parameters that name one of them (``alphabet`` + ``length``, ``bits``).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction
from types import MappingProxyType
from typing import Final

from urnbound.core.errors import DomainError
from urnbound.core.limits import MAX_BITS, MIN_BITS
from urnbound.domain.durations import duration_text
from urnbound.domain.spaces import IdSpace


@dataclass(frozen=True, slots=True)
class IdFormat:
    """One identifier format.

    :ivar name: the name a request gives in ``format`` (families: a descriptive name).
    :ivar random_bits: uniformly random bits per identifier (per tick when time-ordered);
        ``None`` for a family, whose bits depend on its parameters.
    :ivar layout: the fields of the identifier, in order.
    :ivar source: where the format is defined.
    :ivar request: the parameters that name it in a request.
    :ivar tick_seconds: the length of one timestamp tick, for a time-ordered format.
    """

    name: str
    random_bits: int | None
    layout: str
    source: str
    request: str
    tick_seconds: Fraction | None = None

    @property
    def time_ordered(self) -> bool:
        """True when identifiers carry a timestamp and can coincide only within a tick."""
        return self.tick_seconds is not None

    @property
    def tick(self) -> str | None:
        """The tick as an ISO 8601 duration (``PT0.001S``), for a time-ordered format."""
        return None if self.tick_seconds is None else duration_text(self.tick_seconds)


@dataclass(frozen=True, slots=True)
class TimeOrderedSpace(IdSpace):
    """The space of one tick of a time-ordered layout: identifiers coincide only within
    a tick, each drawing ``length`` random bits afresh.

    :ivar tick_seconds: the length of one tick, in seconds.
    """

    tick_seconds: Fraction = Fraction(1, 1000)

    @property
    def tick(self) -> str:
        """The tick as an ISO 8601 duration."""
        return duration_text(self.tick_seconds)

    @property
    def random_bits(self) -> int:
        """Random bits per identifier."""
        return self.size.bit_length() - 1


def time_ordered_space(name: str, random_bits: int, tick_seconds: Fraction) -> TimeOrderedSpace:
    """The space of one tick of ``random_bits`` random bits, described by ``name``.

    >>> time_ordered_space("custom layout", 20, Fraction(1, 10)).description
    'custom layout: 2^20 values (20 random bits) within one PT0.1S tick'
    """
    description = (f"{name}: 2^{random_bits} values ({random_bits} random bits) within one "
                   f"{duration_text(tick_seconds)} tick")
    return TimeOrderedSpace(2**random_bits, description, 2, random_bits, tick_seconds)


def custom_layout_space(tick_seconds: Fraction, random_bits: int) -> TimeOrderedSpace:
    """A custom time-ordered layout: a tick and the random bits drawn within each tick.

    :raises DomainError: (field ``random_bits``) outside 1 .. 8192.
    """
    if isinstance(random_bits, bool) or not MIN_BITS <= random_bits <= MAX_BITS:
        raise DomainError(f"random_bits must be a whole number from {MIN_BITS} to {MAX_BITS}",
                          field="random_bits")
    return time_ordered_space("custom time-ordered layout", random_bits, tick_seconds)


def _registry() -> Mapping[str, IdFormat]:
    entries = (
        IdFormat(
            "uuid-v4", 122,
            "128 bits: 48 random, 4 version (0100), 12 random, 2 variant (10), 62 random",
            "RFC 9562, section 5.4", "format=uuid-v4"),
        IdFormat(
            "uuid-v7", 74,
            "128 bits: 48-bit Unix timestamp in milliseconds, 4 version (0111), 12 random "
            "(rand_a), 2 variant (10), 62 random (rand_b)",
            "RFC 9562, section 5.7", "format=uuid-v7", Fraction(1, 1000)),
        IdFormat(
            "random-string", None,
            "length symbols, each drawn uniformly from an alphabet of any size",
            "common practice", "alphabet, alphabet_size or symbols, with length"),
        IdFormat(
            "random-integer", None, "b bits, each uniformly random", "common practice",
            "bits"),
    )
    return MappingProxyType({entry.name: entry for entry in entries})


#: Every format, read-only, in a fixed order.
FORMATS: Final[Mapping[str, IdFormat]] = _registry()
#: The formats a request may name with ``format`` (those with a fixed layout).
NAMED_FORMATS: Final[tuple[str, ...]] = tuple(
    name for name, entry in FORMATS.items() if entry.random_bits is not None)


def named_format(name: str) -> IdFormat:
    """The format with a fixed layout called ``name``, matched without regard to case.

    :raises DomainError: (field ``format``) for any other name; the detail lists the names.

    >>> named_format("UUID-v4").random_bits, named_format("uuid-v7").tick
    (122, 'PT0.001S')
    """
    entry = FORMATS.get(name.strip().lower()) if isinstance(name, str) else None
    if entry is None or entry.random_bits is None:
        raise DomainError(
            f"format must be one of: {', '.join(NAMED_FORMATS)} (random strings are given "
            "by alphabet and length, random integers by bits)", field="format")
    return entry


def space_of_format(entry: IdFormat) -> IdSpace:
    """The space of a format's random bits (of one tick, for a time-ordered format).

    >>> space_of_format(named_format("uuid-v4")).description
    'uuid-v4: 2^122 values (122 random bits)'
    >>> space_of_format(named_format("uuid-v7")).description
    'uuid-v7: 2^74 values (74 random bits) within one PT0.001S tick'
    """
    bits = entry.random_bits
    if bits is None:
        raise DomainError(f"the format {entry.name} is a family: give {entry.request}",
                          field="format")
    if entry.tick_seconds is not None:
        return time_ordered_space(entry.name, bits, entry.tick_seconds)
    return IdSpace(2**bits, f"{entry.name}: 2^{bits} values ({bits} random bits)", 2, bits)
