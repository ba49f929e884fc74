"""Identifier spaces: how many distinct values an identifier can take, and why."""

from __future__ import annotations

from dataclasses import dataclass

from urnbound.core.errors import DomainError
from urnbound.core.inverse import longest_length
from urnbound.core.limits import MAX_BITS, MAX_SIZE, MIN_BITS, MIN_SPACE_SIZE
from urnbound.core.precision import log2_of_int
from urnbound.domain.alphabets import Alphabet
from urnbound.domain.numbers import bound_text

#: Sizes with more digits than this are described in scientific notation.
_PLAIN_DIGITS = 30


@dataclass(frozen=True, slots=True)
class IdSpace:
    """A set of ``size`` equally likely identifier values.

    :ivar size: number of distinct values, exact.
    :ivar description: a short phrase saying how the space was given.
    :ivar alphabet_size: symbols per position, when the space is an alphabet and length.
    :ivar length: number of positions, when the space is an alphabet and length.
    """

    size: int
    description: str
    alphabet_size: int | None = None
    length: int | None = None

    def __post_init__(self) -> None:
        if self.size < 1:
            raise ValueError("an identifier space has at least one value")

    @property
    def bits(self) -> float:
        """log2 of the size: the entropy of one uniformly drawn identifier, in bits."""
        return log2_of_int(self.size)


def _values_text(size: int) -> str:
    text = str(size)
    if len(text) <= _PLAIN_DIGITS:
        return f"{text} values"
    if size & (size - 1) == 0:
        return f"2^{size.bit_length() - 1} values"
    return f"about {text[0]}.{text[1:6]}e{len(text) - 1} values ({len(text)} digits)"


def space_from_bits(bits: int) -> IdSpace:
    """Return the space of ``bits`` uniformly random bits (2**bits values).

    :raises DomainError: (field ``bits``) unless MIN_BITS <= bits <= MAX_BITS.

    >>> space_from_bits(64).description
    '2^64 values (64 random bits)'
    """
    if isinstance(bits, bool) or not MIN_BITS <= bits <= MAX_BITS:
        raise DomainError(f"bits must be a whole number from {MIN_BITS} to {MAX_BITS}",
                          field="bits")
    unit = "bit" if bits == 1 else "bits"
    return IdSpace(2**bits, f"2^{bits} values ({bits} random {unit})", 2, bits)


def _alphabet_label(alphabet: Alphabet) -> str:
    return f"{alphabet.name} alphabet ({alphabet.size} symbols)"


def space_from_alphabet(alphabet: Alphabet, length: int) -> IdSpace:
    """Return the space of identifiers of ``length`` symbols from ``alphabet``.

    :raises DomainError: (field ``length``) unless 1 <= length and the space holds at
        most 2**8192 values; the detail gives the longest allowed length.

    >>> from urnbound.domain.alphabets import named_alphabet
    >>> space_from_alphabet(named_alphabet("base64url"), 22).description
    'base64url alphabet (64 symbols), length 22'
    """
    longest = longest_length(alphabet.size)
    if isinstance(length, bool) or not 1 <= length <= longest:
        raise DomainError(
            f"length must be a whole number from 1 to {longest} for the "
            f"{_alphabet_label(alphabet)}, so that the space holds at most "
            f"{bound_text(MAX_SIZE)} values",
            field="length",
        )
    return IdSpace(
        alphabet.size**length,
        f"{_alphabet_label(alphabet)}, length {length}",
        alphabet.size,
        length,
    )


def space_from_size(size: int) -> IdSpace:
    """Return a space of ``size`` values given directly.

    :raises DomainError: (field ``size``) unless MIN_SPACE_SIZE <= size <= MAX_SIZE.

    >>> space_from_size(1_000_000).description
    '1000000 values'
    """
    if isinstance(size, bool) or not MIN_SPACE_SIZE <= size <= MAX_SIZE:
        raise DomainError(
            f"size must be a whole number from {MIN_SPACE_SIZE} to {bound_text(MAX_SIZE)}",
            field="size")
    return IdSpace(size, _values_text(size))
