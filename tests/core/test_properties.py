"""Invariants of the collision risk and its inverse questions, checked with hypothesis."""

from __future__ import annotations

from fractions import Fraction
from math import isqrt

import mpmath
import pytest
import sympy
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from urnbound.core.errors import DomainError
from urnbound.core.inverse import fewest_bits, largest_count, shortest_length
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT, MIN_RISK
from urnbound.core.pairwise import collision_risk, related_figures
from urnbound.core.results import CollisionRisk, Magnitude

from ._reference import exact_risk, parse_decimal, rounded_candidates

PROPERTY_SETTINGS = settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow]
)
#: Half a unit in the 20th significant digit, relative: the rounding of every decimal text.
TEXT_HALF_UNIT = 5e-20

sizes = st.one_of(
    st.integers(1, 10**4),
    st.integers(1, 4096).map(lambda bits: 2**bits),
    st.integers(2, 2**4096),
)
limits = st.sampled_from([DEFAULT_EXACT_DIGIT_LIMIT, 0, 2_000])
targets = st.one_of(
    st.integers(1, 300).map(lambda k: Fraction(1, 10**k)),
    st.integers(1, 10**6).flatmap(lambda q: st.integers(1, q).map(lambda p: Fraction(p, q + 1))),
    st.just(MIN_RISK),
    st.just(1 - Fraction(1, 10**12)),
)


@st.composite
def counts_for(draw: st.DrawFn, size: int) -> int:
    """Counts that reach every regime of the risk for this size: tiny, ~sqrt(N), ~N."""
    root = isqrt(size)
    ranges = [
        (0, 70),
        (0, 64 * root + 1),
        (max(size - 70, 0), size + 1),
        (0, min(size + 1, 10**60)),
    ]
    low, high = ranges[draw(st.integers(0, len(ranges) - 1))]
    return draw(st.integers(low, high))


@st.composite
def questions(draw: st.DrawFn) -> tuple[int, int]:
    size = draw(sizes)
    return size, draw(counts_for(size))


def context_for(text: str) -> mpmath.ctx_mp.MPContext:
    """A private context wide enough to take the log of ``text`` to about 2**-150."""
    mp = mpmath.MPContext()
    mp.prec = 192 + 4 * len(str(abs(parse_decimal(text).exponent)))
    return mp


def ln_magnitude(mag: Magnitude) -> mpmath.mpf | None:
    """Natural log of a reported probability (``None`` for an exact zero), at high precision."""
    if mag.decimal == "0":
        return None
    mp = context_for(mag.decimal)
    parsed = parse_decimal(mag.decimal)
    return mp.log(mp.mpf(parsed.mantissa)) + (parsed.exponent - 19) * mp.ln10


def slack(*risks: CollisionRisk) -> float:
    """Allowed log-gap between figures that carry these bounds plus their text rounding."""
    return sum(2 * (r.relative_error_bound + TEXT_HALF_UNIT) for r in risks) + 1e-30


def at_most(a: Magnitude, b: Magnitude, tol: float) -> bool:
    """a <= b up to a relative tolerance; an exact zero is below everything."""
    la, lb = ln_magnitude(a), ln_magnitude(b)
    if la is None:
        return True
    if lb is None:
        return False
    return bool(la <= lb + tol)


def risk(size: int, count: int, limit: int = DEFAULT_EXACT_DIGIT_LIMIT) -> CollisionRisk:
    return collision_risk(size, count, exact_digit_limit=limit)


@PROPERTY_SETTINGS
@given(questions(), limits, limits)
@example((365, 22), 0, DEFAULT_EXACT_DIGIT_LIMIT)
@example((2, 1), DEFAULT_EXACT_DIGIT_LIMIT, 0)
@example((2**4096, 2**4096), 0, 0)
@example((2**64, 2**32), DEFAULT_EXACT_DIGIT_LIMIT, 0)
def test_risk_never_decreases_as_count_grows(q: tuple[int, int], lim1: int, lim2: int) -> None:
    size, count = q
    a, b = risk(size, count, lim1), risk(size, count + 1, lim2)
    tol = slack(a, b)
    assert at_most(a.collision, b.collision, tol), (a, b)
    assert at_most(b.no_collision, a.no_collision, tol), (a, b)


@PROPERTY_SETTINGS
@given(questions(), st.integers(1, 10**6), st.booleans(), limits, limits)
@example((365, 23), 1, False, DEFAULT_EXACT_DIGIT_LIMIT, 0)
@example((2**64 - 1, 2**32), 1, False, 0, 0)
@example((1, 1), 1, False, 0, 0)
def test_risk_never_increases_as_size_grows(
    q: tuple[int, int], extra: int, double: bool, lim1: int, lim2: int
) -> None:
    size, count = q
    larger = 2 * size if double else size + extra
    a, b = risk(larger, count, lim1), risk(size, count, lim2)
    tol = slack(a, b)
    assert at_most(a.collision, b.collision, tol), (a, b)
    assert at_most(b.no_collision, a.no_collision, tol), (a, b)


@PROPERTY_SETTINGS
@given(questions(), limits)
@example((365, 23), 0)
@example((2**4096, 2), 0)
@example((2**128, 2**70), 0)
def test_risk_and_complement_sum_to_one(q: tuple[int, int], limit: int) -> None:
    size, count = q
    r = risk(size, count, limit)
    mp = mpmath.MPContext()
    mp.prec = 256
    lc, ln = ln_magnitude(r.collision), ln_magnitude(r.no_collision)
    c = mp.mpf(0) if lc is None else mp.exp(lc)
    nc = mp.mpf(0) if ln is None else mp.exp(ln)
    tol = (c + nc) * (r.relative_error_bound + TEXT_HALF_UNIT) + mp.mpf(2) ** -200
    assert abs(c + nc - 1) <= tol, r


@PROPERTY_SETTINGS
@given(questions())
@example((365, 23))
@example((2**64, 2**33))
def test_paths_agree_within_their_bounds(q: tuple[int, int]) -> None:
    # the default answer and the one forced onto the expansion describe the same number
    size, count = q
    a, b = risk(size, count), risk(size, count, 0)
    tol = slack(a, b)
    for x, y in ((a.collision, b.collision), (a.no_collision, b.no_collision)):
        assert at_most(x, y, tol) and at_most(y, x, tol), (a, b)


@PROPERTY_SETTINGS
@given(st.integers(1, 10**6), st.integers(0, 3000))
@example(365, 23)
@example(1, 0)
@example(2, 1)
def test_expected_colliding_pairs_is_binomial_over_size(size: int, count: int) -> None:
    # reference: sympy exact binomial(n, 2) / N, correctly rounded to 20 digits
    figures = related_figures(size, count, risk(size, count))
    pairs = sympy.Rational(sympy.binomial(count, 2), size)
    exact = Fraction(int(pairs.p), int(pairs.q))
    if exact == 0:
        assert figures.expected_colliding_pairs.decimal == "0"
        return
    parsed = parse_decimal(figures.expected_colliding_pairs.decimal)
    assert (parsed.mantissa, parsed.exponent) in rounded_candidates(exact)


# --- inverse questions against the forward path ---------------------------------------------


def clearly_above(mag: Magnitude, r: CollisionRisk, target: Fraction) -> bool:
    """The reported figure is above ``target`` even at the low end of its error."""
    ln = ln_magnitude(mag)
    if ln is None:
        return False
    mp = mpmath.MPContext()
    mp.prec = 256
    low = ln + mp.log1p(-(r.relative_error_bound + TEXT_HALF_UNIT))
    return bool(low > mp.log(mp.mpf(target.numerator)) - mp.log(mp.mpf(target.denominator)))


def clearly_below(mag: Magnitude, r: CollisionRisk, target: Fraction) -> bool:
    ln = ln_magnitude(mag)
    if ln is None:
        return True
    mp = mpmath.MPContext()
    mp.prec = 256
    high = ln + mp.log1p(r.relative_error_bound + TEXT_HALF_UNIT)
    return bool(high < mp.log(mp.mpf(target.numerator)) - mp.log(mp.mpf(target.denominator)))


alphabet_sizes = st.one_of(st.sampled_from([2, 10, 16, 32, 36, 62, 64]), st.integers(2, 2**16))
big_counts = st.one_of(st.integers(0, 100), st.integers(0, 10**60))


@PROPERTY_SETTINGS
@given(alphabet_sizes, big_counts, targets)
@example(2, 0, Fraction(1, 2))
@example(2, 2, Fraction(1, 2))
@example(2, 2, Fraction(1, 2) - MIN_RISK)
@example(64, 10**60, MIN_RISK)
@example(62, 10**9, Fraction(1, 10**12))
def test_shortest_length_sits_on_the_boundary(m: int, n: int, target: Fraction) -> None:
    answer = shortest_length(m, n, target)
    length = answer.length
    assert length >= 1
    assert (answer.alphabet_size, answer.count, answer.max_risk) == (m, n, target)
    fwd = risk(m**length, n)
    assert answer.at_length.size == m**length
    assert not clearly_above(fwd.collision, fwd, target), (m, n, target, fwd)
    if length == 1:
        assert answer.one_shorter is None
        return
    assert answer.one_shorter is not None and answer.one_shorter.size == m ** (length - 1)
    shorter = risk(m ** (length - 1), n)
    assert not clearly_below(shorter.collision, shorter, target), (m, n, target, shorter)


@PROPERTY_SETTINGS
@given(st.integers(2, 40), st.integers(0, 60), targets)
@example(2, 2, Fraction(1, 2))
@example(2, 3, Fraction(3, 4))
@example(10, 2, Fraction(1, 10))
@example(365, 23, Fraction(1, 2))
def test_shortest_length_exactly_against_sympy(m: int, n: int, target: Fraction) -> None:
    # reference: sympy exact rationals; risk(m**L) <= r < risk(m**(L-1))
    length = shortest_length(m, n, target).length
    assert exact_risk(m**length, n) <= target
    if length > 1:
        assert exact_risk(m ** (length - 1), n) > target


@PROPERTY_SETTINGS
@given(st.integers(0, 60), targets)
@example(2, Fraction(1, 2))
@example(23, Fraction(1, 2))
@example(0, MIN_RISK)
def test_fewest_bits_is_the_binary_length(n: int, target: Fraction) -> None:
    # reference: sympy exact rationals over 2**b values
    answer = fewest_bits(n, target)
    assert answer.alphabet_size == 2
    assert answer.length == shortest_length(2, n, target).length
    assert exact_risk(2**answer.length, n) <= target
    if answer.length > 1:
        assert exact_risk(2 ** (answer.length - 1), n) > target


@PROPERTY_SETTINGS
@given(sizes, targets)
@example(1, Fraction(1, 2))
@example(2, Fraction(1, 2))
@example(2, Fraction(1, 2) - MIN_RISK)
@example(365, Fraction(1, 2))
@example(2**4096, MIN_RISK)
@example(2**122, Fraction(1, 2))
def test_largest_count_sits_on_the_boundary(size: int, target: Fraction) -> None:
    answer = largest_count(size, target)
    n = answer.count
    assert 1 <= n <= size
    assert (answer.size, answer.max_risk) == (size, target)
    assert (answer.at_count.count, answer.one_more.count) == (n, n + 1)
    here, beyond = risk(size, n), risk(size, n + 1)
    assert not clearly_above(here.collision, here, target), (size, target, here)
    assert not clearly_below(beyond.collision, beyond, target), (size, target, beyond)
    if n <= 400:
        # reference: sympy exact rationals, risk(n) <= r < risk(n + 1)
        assert exact_risk(size, n) <= target < exact_risk(size, n + 1)


@PROPERTY_SETTINGS
@given(st.integers(1, 3000), targets)
@example(365, Fraction(1, 2))
@example(1, MIN_RISK)
@example(3, Fraction(2, 9))
def test_largest_count_exactly_against_sympy(size: int, target: Fraction) -> None:
    # reference: sympy exact rationals, risk(n) <= r < risk(n + 1)
    n = largest_count(size, target).count
    assert exact_risk(size, n) <= target < exact_risk(size, n + 1)


def test_no_length_fits_under_a_small_size_cap() -> None:
    # 10**9 identifiers need about 99 bits for 1e-12 (risk ~ n**2 / 2N): a 64-bit cap fails
    with pytest.raises(DomainError) as caught:
        shortest_length(2, 10**9, Fraction(1, 10**12), max_size_bits=64)
    assert caught.value.field == "count"


@pytest.mark.parametrize(("size", "count", "field"), [(0, 2, "size"), (10, -1, "count")])
def test_questions_outside_the_domain_are_refused(size: int, count: int, field: str) -> None:
    with pytest.raises(DomainError) as caught:
        collision_risk(size, count)
    assert caught.value.field == field


def test_targets_equal_to_the_risk_are_met() -> None:
    # "at most r" is inclusive and compared exactly; references are sympy exact rationals
    at_23 = exact_risk(365, 23)
    assert largest_count(365, at_23).count == 23
    assert largest_count(365, at_23 - MIN_RISK).count == 22
    # two draws from 2**L values collide with probability exactly 2**-L
    assert shortest_length(2, 2, Fraction(1, 2**10)).length == 10
    assert shortest_length(2, 2, Fraction(1, 2**10) - MIN_RISK).length == 11
    # three draws: 1 - (1 - 1/N)(1 - 2/N) = 3/N - 2/N**2
    three = Fraction(3, 2**20) - Fraction(2, 2**40)
    assert three == exact_risk(2**20, 3)
    assert fewest_bits(3, three).length == 20
    assert fewest_bits(3, three - MIN_RISK).length == 21
    big = 2**200
    assert largest_count(big, Fraction(3, big) - Fraction(2, big**2)).count == 3
    assert largest_count(big, Fraction(3, big) - Fraction(2, big**2) - MIN_RISK).count == 2
