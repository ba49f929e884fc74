"""Occupancy questions at the edges of the accepted ranges, found by a random search of the API.

Each of these answered 500 once: a float overflow in the tail plan, a shift of millions of
bits in the float rounding test, a saddle-point start from a mean load below the floats,
a precision raise skipped because low-precision rounding looked like truncation, and a
coverage search whose one interval per count was asked with the search's loose bound.

Reference for the huge spaces: with a mean load lambda far below 1 (a condition each case
meets by far), the chance that no
value is used k times is P = exp(N ln P(Poisson(lambda) < k)) up to a relative change of
ln P near lambda**(k-1) / (k-1)! (the conditioning of the saddle point; far below 1e-100
here), so log10 P is -N Q(k, lambda) / ln 10 to that accuracy, with Q the regularized upper
incomplete gamma function (the Poisson tail), taken from mpmath at high precision.
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import pytest

from urnbound.core.errors import DomainError
from urnbound.core.occupancy import occupancy_risk
from urnbound.core.occupancy_inverse import fewest_draws
from urnbound.core.occupancy_results import AT_LEAST, BELOW, Rule

WORK = mpmath.MPContext()
WORK.prec = 4000


def _log10_of_text(text: str) -> mpmath.mpf:
    mantissa, _, exponent = text.partition("e")
    return WORK.log10(WORK.mpf(mantissa)) + int(exponent)


@pytest.mark.parametrize(("bits", "count", "level"), [
    (3465, 10**1040, 120),  # the tail plan's forecast overflowed floats
    (7841, 10**1971, 5),  # the mean load, about 1e-389, is below the floats
    (4257, 10**1150, 7),
])
def test_no_value_used_k_times_among_huge_spaces(bits: int, count: int, level: int) -> None:
    buckets = 2**bits
    answer = occupancy_risk(buckets, count, Rule(BELOW, level))
    assert answer.fails.decimal == "1.0000000000000000000e0"
    mean = WORK.mpf(count) / buckets
    tail = WORK.gammainc(level, 0, mean, regularized=True)  # P(Poisson(mean) >= level)
    expected = buckets * WORK.log1p(-tail) / WORK.log(10)
    ours = _log10_of_text(answer.holds.decimal)
    assert abs(ours / expected - 1) < WORK.mpf(10) ** -15


def test_a_chance_known_to_no_digit_is_refused_naming_the_count() -> None:
    # ln P near -4.9e952 with a truncation estimate near 1e372: e^L has no known digit.
    with pytest.raises(DomainError) as refused:
        occupancy_risk(2**5738, 10**1534, Rule(BELOW, 4))
    assert refused.value.field == "count"
    assert "known to no digit" in refused.value.detail


def test_fewest_draws_for_a_target_next_to_one_is_proven_on_both_sides() -> None:
    target = Fraction(999_999_999, 10**9)
    answer = fewest_draws(967_500_399, 2, target)
    at = occupancy_risk(967_500_399, answer.draws, Rule(AT_LEAST, 2))
    before = occupancy_risk(967_500_399, answer.draws - 1, Rule(AT_LEAST, 2))
    assert Fraction(at.holds.decimal) >= target > Fraction(before.holds.decimal)


@pytest.mark.parametrize(("count", "rule"), [
    (3000, Rule(AT_LEAST, 755)), (3000, Rule(AT_LEAST, 1450)), (1766, Rule(AT_LEAST, 755)),
    (5000, Rule(BELOW, 2600)), (5000, Rule(BELOW, 2501)), (4001, Rule(BELOW, 3990)),
    (20_000, Rule(AT_LEAST, 3)), (5000, Rule(BELOW, 4990)),  # wide windows: 1 - fails
])
def test_two_buckets_against_exact_binomial_sums(count: int, rule: Rule) -> None:
    # Two buckets: the first holds Binomial(n, 1/2) items, the rule asks lo <= X <= n - lo;
    # the two tails outside, 2 sum_{j<lo} C(n, j) / 2^n, summed exactly in Python integers.
    lo = count - rule.level + 1 if rule.kind == BELOW else rule.level
    holds = 1 - Fraction(2 * sum(math.comb(count, j) for j in range(lo)), 2**count)
    answer = occupancy_risk(2, count, rule)
    assert answer.method in ("two-bucket binomial", "exact")  # exact where it is cheap
    for figure, true in ((answer.holds, holds), (answer.fails, 1 - holds)):
        error = abs(Fraction(figure.decimal) - true) / true
        assert error <= max(answer.relative_error_bound, 5e-20)  # exact: 20-digit rounding
        assert figure.value == float(true)  # Python's correctly rounded rational division


def test_a_chance_past_huge_exponents_takes_its_text_from_the_logarithm() -> None:
    # 2^7791 values, 1e2300 identifiers (a mean load near 5e-46), no value used four
    # times: |ln P| near 1e2161, the text formed from ln P (as the pairwise risk's is),
    # checked against the Poisson-limit logarithm of the module docstring.
    buckets, count, level = 2**7791, 10**2300, 4
    answer = occupancy_risk(buckets, count, Rule(BELOW, level))
    mean = WORK.mpf(count) / buckets
    tail = WORK.gammainc(level, 0, mean, regularized=True)
    expected = buckets * WORK.log1p(-tail) / WORK.log(10)
    assert abs(_log10_of_text(answer.holds.decimal) / expected - 1) < WORK.mpf(10) ** -15
