"""Alphabets: the named registry against RFC 4648 and the stdlib codecs, plus caller alphabets."""

from __future__ import annotations

import base64
import string

import pytest
from hypothesis import given
from hypothesis import strategies as st

from urnbound.core.errors import DomainError
from urnbound.domain.alphabets import (
    NAMED_ALPHABETS,
    Alphabet,
    alphabet_from_symbols,
    alphabet_of_size,
    named_alphabet,
)

# RFC 4648 (2006): table 1 base64, table 2 base64url ("URL and Filename safe"),
# table 3 base32, table 4 base32hex ("Extended Hex"), table 5 base16. Symbols listed in
# value order 0, 1, 2, ... as the tables print them.
RFC_4648 = {
    "base64": (string.ascii_uppercase + string.ascii_lowercase + string.digits + "+/", 1),
    "base64url": (string.ascii_uppercase + string.ascii_lowercase + string.digits + "-_", 2),
    "base32": (string.ascii_uppercase + "234567", 3),
    "base32hex": (string.digits + "ABCDEFGHIJKLMNOPQRSTUV", 4),
    "base16": (string.digits + "ABCDEF", 5),
}


@pytest.mark.parametrize("name", sorted(RFC_4648))
def test_rfc_4648_symbols_sizes_and_sources(name: str) -> None:
    symbols, table = RFC_4648[name]
    alphabet = named_alphabet(name)
    assert alphabet.symbols == symbols
    assert alphabet.size == len(symbols)
    assert alphabet.source == f"RFC 4648, table {table}"


@pytest.mark.parametrize(
    ("name", "size"),
    # RFC 4648 (2006), tables 1 to 5: 64, 64, 32, 32 and 16 symbols.
    [("base64", 64), ("base64url", 64), ("base32", 32), ("base32hex", 32), ("base16", 16)],
)
def test_rfc_4648_sizes(name: str, size: int) -> None:
    assert named_alphabet(name).size == size


def _stdlib_symbol(name: str, value: int) -> str:
    # The stdlib codecs implement RFC 4648; put ``value`` in the first output symbol.
    if name in ("base64", "base64url"):
        raw = bytes([value << 2, 0, 0])
        encoded = base64.b64encode(raw) if name == "base64" else base64.urlsafe_b64encode(raw)
    elif name in ("base32", "base32hex"):
        raw = bytes([value << 3])
        encoded = base64.b32encode(raw) if name == "base32" else base64.b32hexencode(raw)
    else:
        encoded = base64.b16encode(bytes([value << 4]))
    return chr(encoded[0])


@pytest.mark.parametrize("name", sorted(RFC_4648))
def test_rfc_4648_symbol_order_matches_stdlib_codecs(name: str) -> None:
    alphabet = named_alphabet(name)
    assert "".join(_stdlib_symbol(name, v) for v in range(alphabet.size)) == alphabet.symbols


@pytest.mark.parametrize(
    ("name", "size"),
    # common practice: decimal digits; digits and both cases; digits and lowercase.
    [("decimal", 10), ("alphanumeric", 62), ("lowercase-alphanumeric", 36)],
)
def test_common_practice_alphabets(name: str, size: int) -> None:
    alphabet = named_alphabet(name)
    assert alphabet.size == size
    assert len(set(alphabet.symbols)) == size
    assert alphabet.symbols.isascii() and alphabet.symbols.isalnum()
    assert alphabet.source == "common practice"


def test_every_named_alphabet_has_distinct_symbols_and_its_own_name() -> None:
    for name, alphabet in NAMED_ALPHABETS.items():
        assert alphabet.name == name
        assert len(set(alphabet.symbols)) == alphabet.size >= 2


def test_registry_is_read_only() -> None:
    with pytest.raises(TypeError):
        NAMED_ALPHABETS["mine"] = Alphabet("mine", "ab", "test")  # type: ignore[index]


def test_unknown_name_lists_the_allowed_names() -> None:
    with pytest.raises(DomainError) as caught:
        named_alphabet("base58")
    assert caught.value.field == "alphabet"
    for name in NAMED_ALPHABETS:
        assert name in caught.value.detail


def test_literal_symbols_keep_their_order() -> None:
    alphabet = alphabet_from_symbols("xyz!")
    assert (alphabet.name, alphabet.symbols, alphabet.size) == ("custom", "xyz!", 4)


def test_repeated_symbol_is_named() -> None:
    with pytest.raises(DomainError) as caught:
        alphabet_from_symbols("abcb")
    assert caught.value.field == "symbols"
    assert "'b'" in caught.value.detail


@pytest.mark.parametrize("chars", ["", "a"])
def test_too_few_symbols(chars: str) -> None:
    with pytest.raises(DomainError) as caught:
        alphabet_from_symbols(chars)
    assert caught.value.field == "symbols"
    assert "from 2 to 65,536" in caught.value.detail


def test_symbol_count_limits() -> None:
    largest = "".join(chr(c) for c in range(0x100, 0x100 + 2**16))
    assert alphabet_from_symbols(largest).size == 2**16
    with pytest.raises(DomainError) as caught:
        alphabet_from_symbols(largest + "a")
    assert caught.value.field == "symbols"


@given(st.sets(st.characters(), min_size=2, max_size=200))
def test_distinct_symbols_always_accepted(symbols: set[str]) -> None:
    chars = "".join(sorted(symbols))
    assert alphabet_from_symbols(chars).size == len(symbols)


@given(st.text(min_size=1, max_size=50), st.integers(min_value=0, max_value=49))
def test_any_repeat_rejected(chars: str, position: int) -> None:
    doubled = chars + chars[position % len(chars)]
    with pytest.raises(DomainError):
        alphabet_from_symbols(doubled)


@pytest.mark.parametrize("size", [2, 40, 2**16])
def test_alphabet_of_size(size: int) -> None:
    alphabet = alphabet_of_size(size)
    assert (alphabet.size, alphabet.symbols) == (size, "")


@pytest.mark.parametrize("size", [-1, 0, 1, 2**16 + 1, True])
def test_alphabet_of_size_out_of_range(size: int) -> None:
    with pytest.raises(DomainError) as caught:
        alphabet_of_size(size)
    assert caught.value.field == "alphabet_size"
    assert "from 2 to 65536" in caught.value.detail


def test_alphabet_needs_exactly_one_of_symbols_and_count() -> None:
    with pytest.raises(ValueError):
        Alphabet("x", "ab", "test", symbol_count=2)
    with pytest.raises(ValueError):
        Alphabet("x", "", "test")
