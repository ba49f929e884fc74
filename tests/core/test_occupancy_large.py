"""The occupancy engine at N up to 10^7, over the whole range of n, against independent sums.

References, computed here with mpmath at 600 bits and sharing no code with the engine:

* no value used three times: the sum over occupancy types, P = sum over m2 of
  N! n! / (m2! m1! m0! 2^m2 N^n) with m1 = n - 2 m2 values used once and m0 unused,
  all terms positive (summed outwards from the largest until they are negligible);
* few items, k-fold: for n < 2k no two values can each be used k times, so
  P(some value used >= k times) = N P(Binomial(n, 1/N) >= k) exactly (sympy rationals);
* coverage: inclusion-exclusion, P(every value used) = sum_j (-1)^j C(N, j) (1 - j/N)^n,
  summed until its alternating terms fall below 2^-500 of the sum; and for two uses the
  same over the values used at most once (``_used_twice``).

Each check asks for 1e-9 relative accuracy on both the probability and its complement.
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import pytest
import sympy

from urnbound.core.occupancy import occupancy_risk
from urnbound.core.occupancy_results import AT_LEAST, BELOW, OccupancyRisk, Rule

WORK = mpmath.MPContext()
WORK.prec = 600
TOLERANCE = 1e-9


def _no_triple(buckets: int, count: int) -> mpmath.mpf:
    """P(no value used three times) by the sum over occupancy types (module docstring)."""
    ctx = WORK
    low, high = max(0, count - buckets), count // 2

    def log_term(m2: int) -> mpmath.mpf:
        m1, m0 = count - 2 * m2, buckets - count + m2
        return (ctx.loggamma(buckets + 1) + ctx.loggamma(count + 1) - ctx.loggamma(m2 + 1)
                - ctx.loggamma(m1 + 1) - ctx.loggamma(m0 + 1) - m2 * ctx.log(2)
                - count * ctx.log(buckets))

    def ratio(m2: int) -> float:  # term(m2 + 1) / term(m2), falling in m2
        m1, m0 = count - 2 * m2, buckets - count + m2
        return m1 * (m1 - 1) / (2 * (m2 + 1) * (m0 + 1))

    mode = low
    top = high
    while top - mode > 1:  # the last m2 whose ratio is still >= 1
        middle = (mode + top) // 2
        if ratio(middle) >= 1:
            mode = middle
        else:
            top = middle
    peak = log_term(mode)
    total = ctx.mpf(1)
    term, m2 = ctx.mpf(1), mode
    while m2 < high:  # upwards: term(m2 + 1) = term(m2) ratio(m2), exactly formed
        m1, m0 = count - 2 * m2, buckets - count + m2
        term *= ctx.mpf(m1 * (m1 - 1)) / (2 * (m2 + 1) * (m0 + 1))
        total += term
        m2 += 1
        if term < ctx.mpf(2) ** -620:
            break
    term, m2 = ctx.mpf(1), mode
    while m2 > low:  # downwards: term(m2 - 1) = term(m2) / ratio(m2 - 1)
        m1, m0 = count - 2 * (m2 - 1), buckets - count + m2 - 1
        term /= ctx.mpf(m1 * (m1 - 1)) / (2 * m2 * (m0 + 1))
        total += term
        m2 -= 1
        if term < ctx.mpf(2) ** -620:
            break
    return total * ctx.exp(peak)


def _covered(buckets: int, count: int) -> mpmath.mpf:
    """P(every value used) by inclusion-exclusion until its terms are negligible."""
    ctx = WORK
    total = ctx.mpf(0)
    term = ctx.mpf(1)
    for j in range(buckets + 1):
        total += term if j % 2 == 0 else -term
        if j > 3 and term < ctx.mpf(2) ** -560 * abs(total):
            return total
        step = ctx.mpf(buckets - j) / (j + 1)
        term *= step * ctx.exp(count * ctx.log1p(-ctx.mpf(1) / (buckets - j)))
    return total


def _check(answer: OccupancyRisk, holds: mpmath.mpf) -> None:
    fails = 1 - holds
    for figure, true in ((answer.holds, holds), (answer.fails, fails)):
        error = abs(WORK.mpf(figure.decimal) - true) / true
        assert error <= max(answer.relative_error_bound, 1e-19)
        assert error <= TOLERANCE


@pytest.mark.parametrize("count", [20, 300, 3_000, 30_000, 300_000, 3_000_000,
                                   15_000_000, 19_990_000, 19_999_990])
def test_no_triple_among_ten_million(count: int) -> None:
    answer = occupancy_risk(10**7, count, Rule(BELOW, 3))
    _check(answer, _no_triple(10**7, count))


@pytest.mark.parametrize(("buckets", "count"), [(10**5, 150_000), (10**6, 40_000),
                                                (1_000, 1_999)])
def test_no_triple_at_other_scales(buckets: int, count: int) -> None:
    _check(occupancy_risk(buckets, count, Rule(BELOW, 3)), _no_triple(buckets, count))


@pytest.mark.parametrize(("level", "count"), [(4, 4), (4, 7), (5, 9), (3, 5)])
def test_tails_below_1e_20(level: int, count: int) -> None:
    buckets = 10**7
    p = sympy.Rational(1, buckets)
    exact = buckets * sum(sympy.binomial(count, j) * p**j * (1 - p) ** (count - j)
                          for j in range(level, count + 1))
    risk = Fraction(int(exact.p), int(exact.q))
    answer = occupancy_risk(buckets, count, Rule(BELOW, level))
    assert Fraction(answer.fails.decimal) == pytest.approx(risk, rel=TOLERANCE, abs=0)
    assert Fraction(answer.holds.decimal) == pytest.approx(1 - risk, rel=TOLERANCE, abs=0)
    if level == 4 and count == 4:
        assert answer.fails.log10 == pytest.approx(-21, rel=1e-12, abs=0)  # 1 / N^3


@pytest.mark.parametrize("shift", [-4.0, -2.0, 0.0, 2.0, 5.0, 12.0, 30.0])
def test_coverage_of_ten_million(shift: float) -> None:
    buckets = 10**7
    count = round(buckets * (math.log(buckets) + shift))
    _check(occupancy_risk(buckets, count, Rule(AT_LEAST, 1)), _covered(buckets, count))


def test_coverage_tails_on_both_sides_reach_below_1e_20() -> None:
    buckets = 10**6
    low = round(buckets * (math.log(buckets) - 4))  # covered near e^(-e^4) ~ 2e-24
    high = round(buckets * (math.log(buckets) + 50))  # not covered near e^-50 ~ 2e-22
    low_answer = occupancy_risk(buckets, low, Rule(AT_LEAST, 1))
    high_answer = occupancy_risk(buckets, high, Rule(AT_LEAST, 1))
    assert low_answer.holds.log10 < -20 and high_answer.fails.log10 < -20
    _check(low_answer, _covered(buckets, low))
    _check(high_answer, _covered(buckets, high))


def _used_twice(buckets: int, count: int) -> mpmath.mpf:
    """P(every value used at least twice) by inclusion-exclusion over values used at most once.

    For a set of t values each used 0 or 1 times, j of them once:
    C(t, j) n (n-1) ... (n-j+1) N^-j (1 - t/N)^(n-j). Summed over t until the alternating
    outer terms fall below 2^-500 of the sum.
    """
    ctx = WORK
    total = ctx.mpf(0)
    choose_outer = ctx.mpf(1)  # C(N, t)
    for t in range(buckets + 1):
        inner = ctx.mpf(0)
        choose_inner = ctx.mpf(1)  # C(t, j)
        falling = ctx.mpf(1)  # n (n-1) ... (n-j+1) / N^j
        for j in range(t + 1):
            inner += (choose_inner * falling
                      * ctx.exp((count - j) * ctx.log1p(-ctx.mpf(t) / buckets)))
            choose_inner = choose_inner * (t - j) / (j + 1)
            falling = falling * (count - j) / buckets
        term = choose_outer * inner
        total += term if t % 2 == 0 else -term
        if t > 3 and term < ctx.mpf(2) ** -500 * abs(total):
            return total
        choose_outer = choose_outer * (buckets - t) / (t + 1)
    return total


@pytest.mark.parametrize("shift", [-1.0, 1.0, 4.0, 20.0])
def test_every_value_used_twice_among_a_million(shift: float) -> None:
    # N (ln N + ln ln N + c) draws put the chance in its middle for large N (from memory,
    # context only); the check is against the inclusion-exclusion above.
    buckets = 10**6
    count = round(buckets * (math.log(buckets) + math.log(math.log(buckets)) + shift))
    _check(occupancy_risk(buckets, count, Rule(AT_LEAST, 2)), _used_twice(buckets, count))


@pytest.mark.parametrize("shift", [-4.0, -1.0, 1.0, 4.0, 20.0, 60.0])
def test_every_value_used_twice_among_ten_million(shift: float) -> None:
    # The same check at N = 10^7, from a covered chance near 4e-24 (shift -4) to an uncovered
    # one near 4e-26 (shift 60): tails below 1e-20 on both sides, against the
    # inclusion-exclusion of _used_twice.
    buckets = 10**7
    count = round(buckets * (math.log(buckets) + math.log(math.log(buckets)) + shift))
    answer = occupancy_risk(buckets, count, Rule(AT_LEAST, 2))
    if shift in (-4.0, 60.0):
        assert min(answer.holds.log10, answer.fails.log10) < -20
    _check(answer, _used_twice(buckets, count))
