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
from urnbound.core.occupancy_exact import allowed_outcomes
from urnbound.core.occupancy_inverse import (
    CoverFamily,
    LoadFamily,
    _log_of_complement,
    _top_draws,
    fewest_draws,
    smallest_load,
)
from urnbound.core.occupancy_results import AT_LEAST, BELOW, OccupancyRisk, Rule
from urnbound.core.search import certified_boundary

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


# --- the speed cases of the occupancy engine (each once over 5 ms, one a 500) -------------


def _excess_reference(buckets: int, count: int, level: int) -> mpmath.mpf:
    """P(no bucket reaches ``level``) near a full filling, from exact integers and mpmath.

    With c = k - 1 and the deficit m = c N - n, write each bucket's count as c - i: the
    outcomes number n! [z^n] (sum_{j<=c} z^j/j!)^N = n! [w^m] (sum_i w^i/(c-i)!)^N, and
    c!/(c-i)! = c (c-1) ... (c-i+1) is an integer, so [w^m] B(w)^N with those integer
    coefficients is formed here by repeated convolution in Python integers (m is small),
    and P = n! [w^m] B^N / (c!^N N^n) in logarithms by mpmath at 4,000 bits.
    """
    top = level - 1
    gap = top * buckets - count
    base = [1]
    for i in range(1, min(top, gap) + 1):
        base.append(base[-1] * (top - i + 1))
    power = [1] + [0] * gap
    for _ in range(buckets):
        power = [sum(power[j - i] * base[i] for i in range(min(j, len(base) - 1) + 1))
                 for j in range(gap + 1)]
    ctx = WORK
    log_p = (ctx.loggamma(count + 1) - buckets * ctx.loggamma(level) - count * ctx.log(buckets)
             + ctx.log(power[gap]))
    return ctx.exp(log_p)


def _check_both(answer: OccupancyRisk, holds: mpmath.mpf) -> None:
    """The answer's texts hold P and 1 - P within its bound (and 20-digit rounding)."""
    for figure, true in ((answer.holds, holds), (answer.fails, 1 - holds)):
        error = abs(WORK.mpf(figure.decimal) / true - 1)
        assert error <= max(answer.relative_error_bound, 5e-20)


def test_a_gap_of_twice_the_buckets_from_a_full_filling_is_answered_by_the_recurrence() -> None:
    # 5 buckets, 500,000 items, none at 100,003 (a deficit of 10 from the fullest filling):
    # no method applied (the excess recurrence was kept to gaps below N) and /v1/loads with
    # max_risk=0.999999 answered 500. Its terms may be negative past N; the balls hold.
    answer = occupancy_risk(5, 500_000, Rule(BELOW, 100_003))
    assert answer.method == "recurrence"
    _check_both(answer, _excess_reference(5, 500_000, 100_003))


def test_the_smallest_load_next_to_a_full_filling_is_proven() -> None:
    # /v1/loads?buckets=5&count=500000&max_risk=0.999999 was the 500 above.
    found = smallest_load(5, 500_000, Fraction(999_999, 10**6))
    at = _excess_reference(5, 500_000, found.load)
    below = _excess_reference(5, 500_000, found.load - 1)
    assert 1 - at <= mpmath.mpf(999_999) / 10**6 < 1 - below
    _check_both(found.at_load, at)


@pytest.mark.parametrize(("buckets", "count", "level"), [
    (10, 1000, 140),  # the exact integers took 6 to 8 ms here (their cost model: 19e6)
    (5, 1000, 260),
    (3, 1000, 400),
])
def test_few_buckets_with_a_large_cap_by_squared_ball_polynomials(buckets: int, count: int,
                                                                  level: int) -> None:
    answer = occupancy_risk(buckets, count, Rule(BELOW, level))
    assert answer.method == "polynomial power"
    _check_both(answer, _excess_reference(buckets, count, level))


def test_coverage_near_a_full_filling_by_squared_ball_polynomials() -> None:
    # 3 buckets each used at least 300 times among 1,000 draws: an excess of 100, past the
    # recurrence's steps. Reference: n! [z^m] (sum_i z^i/(a+i)!)^N / N^n with the integer
    # coefficients (a+m)!/(a+i)!, convolved in Python integers, as above.
    buckets, count, level = 3, 1000, 300
    excess = count - level * buckets
    base = [math.factorial(level + excess) // math.factorial(level + i) for i in range(excess + 1)]
    power = [1] + [0] * excess
    for _ in range(buckets):
        power = [sum(power[j - i] * base[i] for i in range(j + 1)) for j in range(excess + 1)]
    holds = Fraction(math.factorial(count) * power[excess],
                     math.factorial(level + excess) ** buckets * buckets**count)
    answer = occupancy_risk(buckets, count, Rule(AT_LEAST, level))
    assert answer.method == "polynomial power"
    _check_both(answer, WORK.mpf(holds.numerator) / holds.denominator)


def test_the_float_target_next_to_one_keeps_its_digits() -> None:
    # The coverage search's Newton step took ln(float(0.999999999)), off by 1e-16: some
    # 10**5 draws at 10**12 buckets, and a search over them (13 ms). ln(1 - 1e-9) from
    # mpmath at 50 digits.
    ctx = mpmath.MPContext()
    ctx.dps = 50
    expected = float(ctx.log1p(-ctx.mpf(1) / 10**9))
    assert _log_of_complement(Fraction(1, 10**9)) == pytest.approx(expected, rel=1e-15, abs=0)


def test_fewest_draws_next_to_one_over_a_trillion_buckets_asks_few_answers() -> None:
    # The regression of the float target above: the guess is within a few draws, and the
    # search keeps at most six answers (it kept 45). The boundary is the search's own proof.
    target = Fraction(999_999_999, 10**9)
    family = CoverFamily(10**12, 300, _top_draws(10**12, 300, 1 - target))
    boundary = certified_boundary(family, 1 - target)
    assert boundary is not None and boundary.index == fewest_draws(10**12, 300, target).draws
    assert len(family.found) <= 6


@pytest.mark.parametrize(("buckets", "count"), [(5, 500_000), (20, 2_000_000), (3, 300_000)])
def test_the_smallest_load_over_few_buckets_asks_two_answers(buckets: int, count: int) -> None:
    # Few buckets at a mean load of 1e5 with max_risk 1/2: the clumping heuristic's guess
    # was some 40 loads off and the search asked five answers (each a saddle point with
    # incomplete gamma functions of that size, 18 to 21 ms); the float saddle point now
    # places the guess. The boundary is proven by the search from the engine's intervals.
    family = LoadFamily(buckets, count)
    boundary = certified_boundary(family, Fraction(1, 2))
    assert boundary is not None
    family.final(boundary.index)
    family.final(boundary.index - 1)
    assert len(family.found) <= 3


@pytest.mark.parametrize(("buckets", "count", "rule"), [
    (2, 3000, Rule(BELOW, 1600)),  # 16 ms, most of it forming 200 factorials of ~1,500
    (2, 3000, Rule(AT_LEAST, 1400)),
    (2, 60, Rule(BELOW, 40)),
])
def test_exact_counts_of_two_buckets_against_binomial_sums(buckets: int, count: int,
                                                           rule: Rule) -> None:
    # Two buckets: the first holds j items with C(n, j) outcomes; the rule asks
    # lo <= j <= n - lo (lo = n - k + 1 below k, lo = a at least a): a sum of binomials.
    lo = count - rule.level + 1 if rule.kind == BELOW else rule.level
    assert allowed_outcomes(buckets, count, rule).allowed == sum(
        math.comb(count, j) for j in range(lo, count - lo + 1))


def test_exact_counts_of_three_buckets_against_multinomial_sums() -> None:
    # Three buckets, 40 items, every bucket at least 5 and (separately) below 18: the
    # multinomial coefficients n! / (i! j! l!) summed over the allowed (i, j, l).
    count = 40
    rules = ((Rule(AT_LEAST, 5), lambda c: c >= 5), (Rule(BELOW, 18), lambda c: c < 18))
    for rule, allowed in rules:
        expected = sum(math.comb(count, i) * math.comb(count - i, j)
                       for i in range(count + 1) for j in range(count - i + 1)
                       if allowed(i) and allowed(j) and allowed(count - i - j))
        assert allowed_outcomes(3, count, rule).allowed == expected


def test_coverage_at_exactly_a_uses_each_is_exact_without_a_long_reduction() -> None:
    # 686 buckets, 25,382 = 37 * 686 draws, each bucket used at least 37 times: only the
    # fillings with exactly 37 each, n! / (37!^686 686^n), about 1.8e-810. The exact answer
    # took 85 ms (Python's gcd and division of 2^239,000-size integers); log10 from
    # mpmath's log-gamma at 4,000 bits.
    buckets, level = 686, 37
    count = buckets * level
    answer = occupancy_risk(buckets, count, Rule(AT_LEAST, level))
    assert answer.method == "exact"
    expected = (WORK.loggamma(count + 1) - buckets * WORK.loggamma(level + 1)
                - count * WORK.log(buckets)) / WORK.log(10)
    assert abs(_log10_of_text(answer.holds.decimal) - expected) < WORK.mpf(10) ** -18
    assert answer.fails.decimal == "1.0000000000000000000e0"


@pytest.mark.parametrize(("buckets", "level", "target"), [
    (52, 499, Fraction(1, 10**9)),  # 126 ms: the heuristic's guess and Newton step missed
    (686, 37, Fraction(1, 10**100)),  # 138 ms, one answer of them exact at 85 ms
    (26, 1000, Fraction(1, 10**9)),
])
def test_fewest_draws_over_few_buckets_each_used_often_asks_few_answers(
        buckets: int, level: int, target: Fraction) -> None:
    # Found by the random search: the float saddle point now places the guess, so the
    # search settles next to it. The boundary is the search's own proof; here, that the
    # reported figures straddle the target and that few answers were asked.
    family = CoverFamily(buckets, level, _top_draws(buckets, level, 1 - target))
    boundary = certified_boundary(family, 1 - target)
    assert boundary is not None
    found = fewest_draws(buckets, level, target)
    assert found.draws == boundary.index
    at, fewer = found.at_draws.holds.decimal, found.one_fewer.holds.decimal
    assert Fraction(at) >= target > Fraction(fewer)
    assert len(family.found) <= 8


@pytest.mark.parametrize(("kind", "level"), [("at_least", 11), ("below", 3)])
def test_poisson_tails_at_thousands_of_bits_against_mpmath(kind: str, level: int) -> None:
    # k-fold collisions among 2^8110 values and 1e2441 identifiers work at some 8,200 bits:
    # the ratio series took 13 ms a tail there (hundreds of terms), now the incomplete
    # gamma function (141 -> 20 ms an answer). Reference: mpmath's regularized incomplete
    # gamma function at 8,600 bits (P(Poisson(y) >= k) = P(k, y), the lower one).
    from flint import arb

    from urnbound.core import balls
    from urnbound.core.balls import precision

    ctx = mpmath.MPContext()
    ctx.prec = 8600
    with precision(8200):
        mean = arb(45) / 100 if kind == "at_least" else arb(45)
        found = (balls.poisson_at_least(level, mean) if kind == "at_least"
                 else balls.poisson_below(level, mean))
        text = found.mid().str(2400, radius=False)
        assert found.rel_accuracy_bits() > 8000
    y = ctx.mpf(45) / 100 if kind == "at_least" else ctx.mpf(45)
    expected = (ctx.gammainc(level, 0, y, regularized=True) if kind == "at_least"
                else ctx.gammainc(level, y, ctx.inf, regularized=True))
    assert abs(ctx.mpf(text) / expected - 1) < ctx.mpf(10) ** -2390


def test_the_reciprocal_of_a_chance_past_huge_exponents_is_formed_from_its_digits() -> None:
    # collisions?bits=7162&count=1e16&multiplicity=249: the chance is about 4e-531189 and
    # its reciprocal took 49 ms (the 10^531208 of its text's fraction made an integer).
    # Reference: 1 / (the decimal text) by mpmath at 4,000 bits, within the bound.
    from urnbound.core.occupancy import reciprocal

    answer = occupancy_risk(2**7162, 10**16, Rule(BELOW, 249))
    found = reciprocal(answer.fails)
    assert found is not None
    expected = 1 / WORK.mpf(answer.fails.decimal)
    bound = answer.fails.relative_error_bound
    error = abs(WORK.mpf(found.decimal) / expected - 1)
    assert error <= bound / (1 - bound) * (1 + 1e-9) + 5e-20


@pytest.mark.parametrize(("bits", "count", "level"), [
    (7725, 10**2276, 9),  # 63 ms: the saddle point doubled its bits to 25,296 in vain
    (6848, 10**2060, 109),
])
def test_chances_known_to_no_digit_are_refused_without_futile_precision(
        bits: int, count: int, level: int) -> None:
    # ln P near -6e1874 with a truncation estimate near 6e1475 at every precision: P has no
    # digit to give, as in the refusal above. The refusal's figure, 10^(ln P / ln 10),
    # against the Poisson-limit logarithm of the module docstring (its relative change near
    # lambda^(k-1)/(k-1)!: far below 1e-50 for both, beside the 6 digits shown).
    with pytest.raises(DomainError) as refused:
        occupancy_risk(2**bits, count, Rule(BELOW, level))
    assert refused.value.field == "count"
    assert "known to no digit" in refused.value.detail
    mean = WORK.mpf(count) / 2**bits
    tail = WORK.gammainc(level, 0, mean, regularized=True)
    expected = 2**bits * WORK.log1p(-tail) / WORK.log(10)
    shown = WORK.mpf(refused.value.detail.split("10^(")[1].split(")")[0])
    assert abs(shown / expected - 1) < WORK.mpf(10) ** -5


@pytest.mark.parametrize(("buckets", "count"), [(5, 500_000), (20, 2_000_000), (365, 23),
                                                (10**4, 10**7)])
def test_the_likely_maximum_against_incomplete_beta_tails(buckets: int, count: int) -> None:
    # The smallest j with N P(Binomial(n, 1/N) > j) < 1/2, settled now from one bulk tail
    # and the terms between (each step's tail had cost 0.5 ms at a mean load of 1e5).
    # Reference: N P(Binomial(n, p) > j) summed term by term in mpmath at 60 digits from
    # P(= j + 1) (log-gamma) by the terms' ratios (n - i) p / ((i + 1) (1 - p)), until a
    # term is below 1e-70 of the sum (the ratios fall, so the rest is smaller still).
    from urnbound.core.occupancy_figures import likely_maximum

    ctx = mpmath.MPContext()
    ctx.dps = 60
    p = ctx.mpf(1) / buckets

    def expected_above(j: int) -> mpmath.mpf:
        i = j + 1
        term = ctx.exp(ctx.loggamma(count + 1) - ctx.loggamma(i + 1)
                       - ctx.loggamma(count - i + 1) + i * ctx.log(p)
                       + (count - i) * ctx.log1p(-p))
        total = ctx.mpf(0)
        while i <= count and term > total * ctx.mpf(10) ** -70:
            total += term
            term = term * (count - i) * p / ((i + 1) * (1 - p))
            i += 1
        return buckets * total

    top = likely_maximum(buckets, count)
    assert expected_above(top) < ctx.mpf(1) / 2 <= expected_above(top - 1)
