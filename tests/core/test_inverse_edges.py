"""Inverse answers when max_risk agrees with a boundary risk to nearly every digit given."""

from __future__ import annotations

from decimal import Decimal
from fractions import Fraction

import mpmath
import pytest

from urnbound.core.inverse import largest_count, shortest_length


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
