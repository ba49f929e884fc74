"""Inverse answers when max_risk agrees with a boundary risk to nearly every digit given."""

from __future__ import annotations

from decimal import Decimal
from fractions import Fraction

import mpmath
import pytest
import sympy
from hypothesis import example, given, settings
from hypothesis import strategies as st

from urnbound.core.errors import DomainError
from urnbound.core.inverse import (
    CountFamily,
    LengthFamily,
    largest_count,
    longest_length,
    shortest_length,
)
from urnbound.core.search import certified_boundary


def _risk(size: int, count: int, mp: mpmath.MPContext) -> mpmath.mpf:
    """Independent reference: -expm1(lnG(N+1) - lnG(N-n+1) - n ln N) with mpmath."""
    log_distinct = mp.loggamma(size + 1) - mp.loggamma(size - count + 1) - count * mp.log(size)
    return -mp.expm1(log_distinct)


@pytest.mark.parametrize(
    ("size", "count"),
    [
        (2**64, 6_074_003),  # the 1e-6 capacity of 64 bits (published table cell: 6,100,000)
        (2**128, 26_087_635_651),  # the 1e-18 capacity of 128 bits (table: 2.6e10)
    ],
)
@pytest.mark.parametrize("digits", [40, 120, 190])
def test_capacity_is_decided_against_a_target_copied_from_the_risk(
    size: int, count: int, digits: int
) -> None:
    # max_risk is the true risk at `count` written to `digits` significant digits, so it
    # sits within 10**-digits (relative) of a boundary: the search must raise precision
    # until it can tell the two apart, and never answer from an undecided comparison.
    mp = mpmath.MPContext()
    mp.prec = 2 * size.bit_length() + 800
    target = Fraction(Decimal(mp.nstr(_risk(size, count, mp), digits)))
    answer = largest_count(size, target)
    exact_target = mp.mpf(target.numerator) / target.denominator  # 2**-900 relative at worst
    assert _risk(size, answer.count, mp) <= exact_target < _risk(size, answer.count + 1, mp)
    assert answer.count in (count - 1, count)


def test_length_boundary_with_a_target_copied_from_the_risk() -> None:
    # 62 symbols, 1e9 identifiers: length 17 has risk about 1.69e-13 (mpmath reference);
    # a target equal to that risk to 150 digits must still give a verified boundary.
    mp = mpmath.MPContext()
    mp.prec = 1200
    size = 62**17
    target = Fraction(Decimal(mp.nstr(_risk(size, 10**9, mp), 150)))
    answer = shortest_length(62, 10**9, target)
    exact_target = mp.mpf(target.numerator) / target.denominator
    assert _risk(62**answer.length, 10**9, mp) <= exact_target
    assert _risk(62 ** (answer.length - 1), 10**9, mp) > exact_target


# --- max_risk next to 1 (reviewed defect: a float rounding of max_risk reached 1.0) ---------


def _nines(digits: int) -> Fraction:
    """0.99...9 with ``digits`` nines, as the caller writes it (up to 198 in 200 characters)."""
    return Fraction("0." + "9" * digits)


def _keeps_budget(size: int, count: int, target: Fraction) -> bool:
    """risk(count, size) <= target from mpmath log-gamma, compared on ln(1 - risk)."""
    if count <= 1:
        return True
    if count > size:
        return False
    mp = mpmath.MPContext()
    mp.prec = 2 * size.bit_length() + 2 * target.denominator.bit_length() + 600
    ln_keep = mp.loggamma(size + 1) - mp.loggamma(size - count + 1) - count * mp.log(size)
    rest = 1 - target
    return bool(ln_keep >= mp.log(mp.mpf(rest.numerator) / rest.denominator))


def test_length_for_a_target_that_rounds_to_one_as_a_float() -> None:
    # float(0.99999999999999999) == 1.0, where log1p(-1) used to raise; reference: mpmath
    target = _nines(17)
    assert float(target) == 1.0
    answer = shortest_length(64, 10**9, target)
    assert _keeps_budget(64**answer.length, 10**9, target)
    assert not _keeps_budget(64 ** (answer.length - 1), 10**9, target)


@pytest.mark.parametrize("digits", [17, 40, 100, 198])
@pytest.mark.parametrize(
    "size",
    [2, 3, 365, 1000, 1023, 1024, 1025, 2**16, 10**6, 2**20, 2**64, 2**1024, 3**5000,
     2**8191, 2**8192],
)
def test_capacity_for_targets_next_to_one(size: int, digits: int) -> None:
    # reference: mpmath log-gamma; risk(n) <= r < risk(n + 1) with r = 1 - 10**-digits
    target = _nines(digits)
    answer = largest_count(size, target)
    assert _keeps_budget(size, answer.count, target)
    assert not _keeps_budget(size, answer.count + 1, target)


def test_two_values_take_two_identifiers_at_any_target_below_one() -> None:
    # two draws from two values collide with probability exactly 1/2; three must (pigeonhole)
    answer = largest_count(2, _nines(198))
    assert answer.count == 2
    assert answer.one_more.exact == 1


@pytest.mark.parametrize("digits", [17, 198])
@pytest.mark.parametrize("alphabet", [2, 10, 64, 2**16])
@pytest.mark.parametrize("count", [2, 10**9, 10**60, 2**4000])
def test_lengths_for_targets_next_to_one(alphabet: int, count: int, digits: int) -> None:
    # reference: mpmath log-gamma on both sides of the answer
    target = _nines(digits)
    answer = shortest_length(alphabet, count, target)
    assert _keeps_budget(alphabet**answer.length, count, target)
    if answer.length > 1:
        assert not _keeps_budget(alphabet ** (answer.length - 1), count, target)


# --- bounded cost (reviewed defect: ~1,100 boundary checks for 2^8191 at 198 nines) ---------


@pytest.mark.parametrize(
    "target",
    [Fraction(1, 10**300), Fraction(1, 10**18), Fraction(1, 2), _nines(10), _nines(40),
     _nines(198), Fraction(int("1" + "7" * 198), 10**199)],
)
@pytest.mark.parametrize(
    "size", [2, 365, 1000, 1024, 5000, 2**20, 2**64, 2**1024, 3**5000, 2**8191, 2**8192]
)
def test_capacity_search_takes_a_handful_of_comparisons(size: int, target: Fraction) -> None:
    # The first guess (closed form, then Newton) lands within one of the boundary, so the
    # search proves it with at most four comparisons; the reviewed request took ~1,100.
    boundary = certified_boundary(CountFamily(size), target)
    assert boundary is not None
    assert boundary.cost.comparisons <= 4
    assert boundary.cost.intervals + boundary.cost.exact <= 4
    assert abs(boundary.cost.guess - boundary.index) <= 2


@pytest.mark.parametrize(
    "target", [Fraction(1, 10**300), Fraction(1, 10**12), Fraction(1, 2), _nines(198)]
)
@pytest.mark.parametrize("alphabet", [2, 10, 62, 64, 2**16 - 1])
@pytest.mark.parametrize("count", [2, 1000, 10**9, 10**60, 2**3000])
def test_length_search_takes_a_handful_of_comparisons(
    alphabet: int, count: int, target: Fraction
) -> None:
    boundary = certified_boundary(
        LengthFamily(alphabet, count, longest_length(alphabet)), target)
    if boundary is None:  # no length within 2**8192 values suffices
        assert _keeps_budget(2**8192, count, target) is False
        return
    assert boundary.cost.comparisons <= 3
    assert abs(boundary.cost.guess - boundary.index) <= 1


# --- the longest length (one copy, shared with the domain layer) ---------------------------


@settings(max_examples=200, deadline=None)
@given(st.integers(2, 2**16), st.integers(0, 9000))
@example(2, 8192)
@example(64, 8192)
@example(2**16, 8192)
@example(10, 8192)
@example(3, 0)
def test_longest_length_against_sympy(alphabet: int, max_size_bits: int) -> None:
    # reference: sympy.integer_log, the floor of log_alphabet(2**max_size_bits) exactly
    expected, _ = sympy.integer_log(2**max_size_bits, alphabet)
    assert longest_length(alphabet, max_size_bits) == expected


def test_longest_length_needs_two_symbols() -> None:
    with pytest.raises(DomainError) as caught:
        longest_length(1)
    assert caught.value.field == "alphabet_size"
