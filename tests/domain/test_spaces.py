"""Identifier spaces: exact sizes, accurate bits at any scale, stated limits."""

from __future__ import annotations

import math

import mpmath
import pytest
from hypothesis import example, given
from hypothesis import strategies as st

from urnbound.core.errors import DomainError
from urnbound.core.inverse import longest_length
from urnbound.core.precision import log2_of_int as log2_of
from urnbound.domain.alphabets import alphabet_from_symbols, alphabet_of_size, named_alphabet
from urnbound.domain.spaces import (
    IdSpace,
    space_from_alphabet,
    space_from_bits,
    space_from_size,
)


def _mp_log2(value: int) -> float:
    # mpmath at 200 bits, far beyond float precision: an independent reference.
    ctx = mpmath.MPContext()
    ctx.prec = 200
    return float(ctx.log(ctx.mpf(value), 2))


@given(st.integers(min_value=1, max_value=2**8192))
@example(1)
@example(2**53 + 1)
@example(2**64 - 1)
@example(2**8192 - 1)
@example(10**2466)
def test_log2_matches_high_precision_reference(value: int) -> None:
    expected = _mp_log2(value)
    assert math.isclose(log2_of(value), expected, rel_tol=4e-16, abs_tol=4e-16)


@pytest.mark.parametrize("k", [0, 1, 52, 63, 64, 65, 1000, 8192])
def test_log2_of_powers_of_two_is_exact(k: int) -> None:
    assert log2_of(2**k) == k


def test_log2_refuses_non_positive() -> None:
    with pytest.raises(ValueError):
        log2_of(0)


def test_space_from_bits() -> None:
    space = space_from_bits(64)
    assert space == IdSpace(2**64, "2^64 values (64 random bits)", 2, 64)
    assert space.bits == 64.0
    assert space_from_bits(1).description == "2^1 values (1 random bit)"
    assert space_from_bits(8192).size == 2**8192


def test_uuid_version_4_space() -> None:
    # RFC 9562 (2024), section 5.4: a version 4 UUID carries 122 random bits.
    assert space_from_bits(122).size == 5316911983139663491615228241121378304


@pytest.mark.parametrize("bits", [0, -1, 8193, True])
def test_bits_out_of_range(bits: int) -> None:
    with pytest.raises(DomainError) as caught:
        space_from_bits(bits)
    assert caught.value.field == "bits"
    assert "from 1 to 8192" in caught.value.detail


def test_space_from_named_alphabet() -> None:
    # RFC 4648 (2006), table 2: base64url has 64 symbols, so 22 symbols carry 132 bits.
    space = space_from_alphabet(named_alphabet("base64url"), 22)
    assert space.size == 64**22 == 2**132
    assert space.bits == 132.0
    assert (space.alphabet_size, space.length) == (64, 22)
    assert space.description == "base64url alphabet (64 symbols), length 22"


def test_space_from_literal_and_sized_alphabets() -> None:
    assert space_from_alphabet(alphabet_from_symbols("abcde"), 3).size == 125
    assert space_from_alphabet(alphabet_from_symbols("abcde"), 3).description == (
        "custom alphabet (5 symbols), length 3"
    )
    space = space_from_alphabet(alphabet_of_size(40), 10)
    assert space.size == 40**10
    assert space.description == "unnamed alphabet (40 symbols), length 10"


@pytest.mark.parametrize("size", [2, 3, 10, 16, 36, 62, 64, 1000, 65535, 65536])
def test_longest_length_is_the_exact_boundary(size: int) -> None:
    longest = longest_length(size)
    assert size**longest <= 2**8192 < size ** (longest + 1)


def test_longest_length_of_known_sizes() -> None:
    # 8192 / 4 = 2048 hex symbols; 8192 / 6 = 1365.33; 8192 / 16 = 512.
    assert longest_length(16) == 2048
    assert longest_length(64) == 1365
    assert longest_length(2**16) == 512


@pytest.mark.parametrize(("name", "length"), [("base64", 0), ("base64", 1366), ("base16", 10**100)])
def test_length_out_of_range_states_longest(name: str, length: int) -> None:
    alphabet = named_alphabet(name)
    with pytest.raises(DomainError) as caught:
        space_from_alphabet(alphabet, length)
    assert caught.value.field == "length"
    assert f"from 1 to {longest_length(alphabet.size)} for the {name} alphabet" in (
        caught.value.detail
    )


def test_space_from_size() -> None:
    assert space_from_size(1_000_000) == IdSpace(1_000_000, "1000000 values")
    assert space_from_size(2).bits == 1.0
    assert space_from_size(2**8192).description == "2^8192 values"
    description = space_from_size(3**5000).description
    assert description.startswith("about ") and description.endswith("e2385 values (2386 digits)")
    # The leading digits against mpmath at 200 bits, independently (truncated, not rounded).
    ctx = mpmath.MPContext()
    ctx.prec = 200
    mantissa = float(description.split()[1].split("e")[0])
    reference = float(ctx.mpf(3) ** 5000 / ctx.mpf(10) ** 2385)
    assert 0 <= reference - mantissa < 1e-5


@pytest.mark.parametrize("size", [-5, 0, 1, 2**8192 + 1, True])
def test_size_out_of_range(size: int) -> None:
    with pytest.raises(DomainError) as caught:
        space_from_size(size)
    assert caught.value.field == "size"
    assert "from 2 to 2^8192" in caught.value.detail


def test_space_is_frozen() -> None:
    space = space_from_size(10)
    with pytest.raises(AttributeError):
        space.size = 11  # type: ignore[misc]
