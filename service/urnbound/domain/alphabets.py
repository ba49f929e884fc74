"""Symbol sets that identifiers are written in: named, literal, or given by size."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Final

from urnbound.core.errors import DomainError
from urnbound.core.limits import MAX_ALPHABET_SIZE, MIN_ALPHABET_SIZE

_DIGITS = "0123456789"
_UPPER = "ABCDEFGHIJKLMNOPQRSTUVWXYZ"
_LOWER = "abcdefghijklmnopqrstuvwxyz"


@dataclass(frozen=True, slots=True)
class Alphabet:
    """A set of distinct symbols in a fixed order.

    :ivar name: a registry name, ``"custom"`` for a literal symbol set, or
        ``"unnamed"`` for an alphabet known only by its size.
    :ivar symbols: the symbols in order; ``""`` for an alphabet known only by size.
    :ivar source: where the symbol set is defined.
    :ivar symbol_count: the size of an alphabet given without symbols, else ``None``.

    >>> Alphabet("binary", "01", "example").size
    2
    >>> Alphabet("unnamed", "", "caller", symbol_count=40).size
    40
    """

    name: str
    symbols: str
    source: str
    symbol_count: int | None = None

    def __post_init__(self) -> None:
        if self.symbol_count is not None and self.symbols:
            raise ValueError("give either symbols or symbol_count, not both")
        if self.symbol_count is None and not self.symbols:
            raise ValueError("an alphabet needs symbols or a symbol_count")

    @property
    def size(self) -> int:
        """Number of symbols."""
        return len(self.symbols) if self.symbol_count is None else self.symbol_count


def _registry() -> Mapping[str, Alphabet]:
    rfc = "RFC 4648, table {}"
    practice = "common practice"
    entries = (
        Alphabet("base16", _DIGITS + "ABCDEF", rfc.format(5)),
        Alphabet("base32", _UPPER + "234567", rfc.format(3)),
        Alphabet("base32hex", _DIGITS + _UPPER[:22], rfc.format(4)),
        Alphabet("base64", _UPPER + _LOWER + _DIGITS + "+/", rfc.format(1)),
        Alphabet("base64url", _UPPER + _LOWER + _DIGITS + "-_", rfc.format(2)),
        Alphabet("decimal", _DIGITS, practice),
        Alphabet("alphanumeric", _DIGITS + _UPPER + _LOWER, practice),
        Alphabet("lowercase-alphanumeric", _DIGITS + _LOWER, practice),
    )
    return MappingProxyType({alphabet.name: alphabet for alphabet in entries})


#: The named alphabets, read-only, in a fixed order.
NAMED_ALPHABETS: Final[Mapping[str, Alphabet]] = _registry()


def named_alphabet(name: str) -> Alphabet:
    """Return the registered alphabet called ``name``, matched without regard to case.

    :raises DomainError: (field ``alphabet``) for an unknown name; the detail lists the names.

    >>> named_alphabet("base32hex").size, named_alphabet("Base64URL").name
    (32, 'base64url')
    """
    alphabet = NAMED_ALPHABETS.get(name.strip().lower())
    if alphabet is None:
        names = ", ".join(NAMED_ALPHABETS)
        raise DomainError(f"alphabet must be one of: {names}", field="alphabet")
    return alphabet


def _first_repeat(chars: str) -> str | None:
    seen: set[str] = set()
    for char in chars:
        if char in seen:
            return char
        seen.add(char)
    return None


def alphabet_from_symbols(chars: str) -> Alphabet:
    """Return an alphabet made of the literal symbols ``chars`` (one symbol per code point).

    :raises DomainError: (field ``symbols``) when a symbol repeats, or the set has fewer
        than MIN_ALPHABET_SIZE or more than MAX_ALPHABET_SIZE symbols.

    >>> alphabet_from_symbols("abc").size
    3
    """
    field = "symbols"
    allowed = (
        f"symbols must hold from {MIN_ALPHABET_SIZE} to {MAX_ALPHABET_SIZE:,} "
        "distinct symbols"
    )
    if len(chars) < MIN_ALPHABET_SIZE:
        raise DomainError(f"{allowed}; got {len(chars)}", field=field)
    if len(chars) > MAX_ALPHABET_SIZE:
        raise DomainError(f"{allowed}; got {len(chars):,}", field=field)
    repeat = _first_repeat(chars)
    if repeat is not None:
        raise DomainError(
            f"{allowed}; the symbol {repeat!r} (U+{ord(repeat):04X}) appears more than once",
            field=field,
        )
    return Alphabet("custom", chars, "caller")


def alphabet_of_size(size: int) -> Alphabet:
    """Return an anonymous alphabet of ``size`` symbols.

    :raises DomainError: (field ``alphabet_size``) unless it is within the limits.

    >>> alphabet_of_size(40).symbols, alphabet_of_size(40).size
    ('', 40)
    """
    if isinstance(size, bool) or not MIN_ALPHABET_SIZE <= size <= MAX_ALPHABET_SIZE:
        raise DomainError(
            f"alphabet_size must be a whole number from {MIN_ALPHABET_SIZE} to {MAX_ALPHABET_SIZE}",
            field="alphabet_size",
        )
    return Alphabet("unnamed", "", "caller", symbol_count=size)
