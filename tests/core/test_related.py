"""Related figures (pairs, distinct values, duplicates, odds, entropy) against sympy and mpmath."""

from __future__ import annotations

import math
from fractions import Fraction
from math import isqrt

import mpmath
import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from urnbound.core.pairwise import collision_risk, related_figures
from urnbound.core.results import Magnitude, RelatedFigures

from ._reference import (
    SMALLEST_NORMAL,
    high_precision_risk,
    ln_of_text,
    nearest_float,
    parse_decimal,
    relative_gap,
    rounded_candidates,
    rounding_is_settled,
)

#: Agreement asked of every figure, relative.
REQUIRED_RELATIVE = 1e-15
LARGEST_FLOAT = 1.7976931348623157e308


def figures(size: int, count: int) -> RelatedFigures:
    return related_figures(size, count, collision_risk(size, count))


def figure_context(size: int, count: int) -> mpmath.ctx_mp.MPContext:
    """Private context wide enough for n - N(1 - (1 - 1/N)**n) without cancellation loss."""
    mp = mpmath.MPContext()
    mp.prec = 2 * size.bit_length() + 2 * max(count, 1).bit_length() + 200
    return mp


def check_figure(mp: mpmath.ctx_mp.MPContext, ours: Magnitude, ref: mpmath.mpf, what: str) -> None:
    """A reported figure against a high-precision reference value (zero means exact zero)."""
    if ref == 0:
        assert ours.decimal == "0", what
        assert ours.value == 0.0 and ours.log10 is None, what
        return
    ln_ref = mp.log(ref)
    gap = relative_gap(mp, ln_of_text(mp, ours.decimal), ln_ref)
    assert gap <= REQUIRED_RELATIVE, f"{what}: {ours.decimal} vs {mp.nstr(ref, 25)}"
    if ref > LARGEST_FLOAT:
        assert ours.value == math.inf, what
    elif ref >= SMALLEST_NORMAL:
        assert abs(mp.mpf(ours.value) / ref - 1) <= REQUIRED_RELATIVE, f"{what}: {ours.value!r}"
    else:
        assert abs(mp.mpf(ours.value) - ref) <= 2 * 2.0**-1074, f"{what}: {ours.value!r}"
    log10_ref = ln_ref / mp.ln10
    assert ours.log10 is not None, what
    tol = REQUIRED_RELATIVE * max(1.0, float(abs(log10_ref)))
    assert abs(mp.mpf(ours.log10) - log10_ref) <= tol, f"{what}: log10 {ours.log10!r}"


# --- exact small cases (sympy rationals) ------------------------------------------------------


def exact_distinct(size: int, count: int) -> Fraction:
    """N(1 - (1 - 1/N)**n) as a sympy rational."""
    n_ = sympy.Integer(size)
    value = n_ * (1 - (1 - 1 / n_) ** count)
    return Fraction(int(value.p), int(value.q))


def exact_pairs(size: int, count: int) -> Fraction:
    value = sympy.Rational(sympy.binomial(count, 2), size)
    return Fraction(int(value.p), int(value.q))


def as_mpf(mp: mpmath.ctx_mp.MPContext, x: Fraction) -> mpmath.mpf:
    return mp.mpf(x.numerator) / x.denominator


@pytest.mark.parametrize("size", [1, 2, 3, 5, 10, 23, 64, 365, 1000])
def test_small_sizes_against_sympy(size: int) -> None:
    # reference: sympy exact rationals for C(n,2)/N, N(1 - (1 - 1/N)**n), n minus that, 1/risk
    counts = sorted({*range(0, min(size, 30) + 3), isqrt(size), size // 2, size, size + 1})
    for count in counts:
        what = f"N={size} n={count}"
        mp = figure_context(size, count)
        ours = figures(size, count)
        distinct = exact_distinct(size, count)
        pairs = exact_pairs(size, count)
        check_figure(mp, ours.expected_distinct, as_mpf(mp, distinct), f"{what} distinct")
        check_figure(mp, ours.expected_duplicates, as_mpf(mp, count - distinct), f"{what} dups")
        check_figure(mp, ours.expected_colliding_pairs, as_mpf(mp, pairs), f"{what} pairs")
        if pairs:
            parsed = parse_decimal(ours.expected_colliding_pairs.decimal)
            # C(n,2)/N is reported exactly, then correctly rounded
            assert (parsed.mantissa, parsed.exponent) in rounded_candidates(pairs), what
        risk = 1 - sympy.Rational(sympy.ff(size, count), sympy.Integer(size) ** count)
        if risk == 0:
            assert ours.reciprocal_risk is None, what
        else:
            assert ours.reciprocal_risk is not None, what
            inverse = Fraction(int(risk.q), int(risk.p))
            check_figure(mp, ours.reciprocal_risk, as_mpf(mp, inverse), f"{what} reciprocal_risk")


def test_birthday_figures_for_23_of_365() -> None:
    # reference: sympy exact rationals; 23 people over 365 days (encyclopedia table,
    # "Birthday problem": risk 0.5072972) -> one in 1.97, 253/365 expected pairs
    ours = figures(365, 23)
    assert ours.reciprocal_risk is not None and round(ours.reciprocal_risk.value, 3) == 1.971
    pairs = Fraction(ours.expected_colliding_pairs.decimal)
    assert abs(pairs - Fraction(253, 365)) < Fraction(1, 10**20)
    assert ours.entropy_bits == pytest.approx(math.log2(365), rel=1e-15, abs=0)


# --- large sizes (mpmath in a private context) -----------------------------------------------

LARGE = [2**32, 10**12, 2**64, 2**128, 3**200, 2**1024, 2**4096]


def large_counts(size: int) -> list[int]:
    root = isqrt(size)
    picks = {0, 1, 2, 3, 1000, root // 10, root, 10 * root, size // 2, size, 10**60}
    return sorted(c for c in picks if c >= 0)


LARGE_POINTS = [(size, count) for size in LARGE for count in large_counts(size)]


def point_id(point: tuple[int, int]) -> str:
    size, count = point
    return f"2^{size.bit_length() - 1}~{count.bit_length()}bits"


@pytest.mark.parametrize("point", LARGE_POINTS, ids=point_id)
def test_large_sizes_against_mpmath(point: tuple[int, int]) -> None:
    check_against_mpmath(point)


@st.composite
def random_points(draw: st.DrawFn) -> tuple[int, int]:
    """Any size from 1 to 2**8192 and a count up to 10**60 in one of its regimes."""
    size = draw(st.integers(0, 8192).flatmap(lambda b: st.integers(2 ** max(b - 1, 0), 2**b)))
    ranges = [(0, 100), (0, 40 * isqrt(size)), (max(size - 100, 0), size + 100), (0, 10**60)]
    low, high = ranges[draw(st.integers(0, len(ranges) - 1))]
    return size, draw(st.integers(low, high))


@settings(max_examples=60, deadline=None)
@given(random_points())
def test_random_points_against_mpmath(point: tuple[int, int]) -> None:
    check_against_mpmath(point)


def check_against_mpmath(point: tuple[int, int]) -> None:
    # reference: mpmath, private context at 2 log2 N + 2 log2 n + 200 bits:
    # distinct = -N expm1(n log1p(-1/N)), duplicates = n - distinct, pairs = n(n-1)/(2N)
    size, count = point
    what = f"N~2^{size.bit_length()} n~2^{count.bit_length()}"
    mp = figure_context(size, count)
    ours = figures(size, count)
    distinct = -mp.mpf(size) * mp.expm1(count * mp.log1p(-1 / mp.mpf(size)))
    if count <= 1:
        distinct = mp.mpf(count)
    check_figure(mp, ours.expected_distinct, distinct, f"{what} distinct")
    check_figure(mp, ours.expected_duplicates, count - distinct, f"{what} duplicates")
    pairs = mp.mpf(count) * (count - 1) / (2 * mp.mpf(size))
    check_figure(mp, ours.expected_colliding_pairs, pairs, f"{what} pairs")
    ref = high_precision_risk(size, count)
    if ref.ln_risk is None:
        assert ours.reciprocal_risk is None, what
    else:
        assert ours.reciprocal_risk is not None, what
        reciprocal = ref.mp.exp(-ref.ln_risk)
        check_figure(ref.mp, ours.reciprocal_risk, reciprocal, f"{what} reciprocal_risk")


@pytest.mark.parametrize("bits", [1, 2, 53, 64, 122, 128, 1023, 1024, 4096, 8192])
def test_entropy_of_a_power_of_two_is_its_bit_count(bits: int) -> None:
    # log2(2**b) = b exactly
    assert figures(2**bits, 2).entropy_bits == float(bits)


@pytest.mark.parametrize("size", [3, 10, 365, 10**12, 3**200, 2**4096 - 1, 7**2900])
def test_entropy_bits_against_mpmath(size: int) -> None:
    # reference: mpmath log2 at 4 log2 N + 200 bits
    mp = mpmath.MPContext()
    mp.prec = 4 * size.bit_length() + 200
    ref = mp.log(mp.mpf(size), 2)
    assert abs(figures(size, 2).entropy_bits / ref - 1) <= 2**-52


def test_reciprocal_risk_is_one_for_a_certain_collision() -> None:
    # pigeonhole: 366 draws from 365 values collide for sure, odds one in one
    ours = figures(365, 366)
    assert ours.reciprocal_risk is not None
    assert Fraction(ours.reciprocal_risk.decimal) == 1
    assert ours.reciprocal_risk.value == 1.0 and ours.reciprocal_risk.log10 == 0.0


# --- the reciprocal risk ------------------------------------------------------------------

RECIPROCAL_EXACT_POINTS = [
    (size, count) for size in (*range(2, 21), 365, 1000, 2**64, 2**128)
    for count in range(2, min(size, 20) + 2)
]


@pytest.mark.parametrize(("size", "count"), RECIPROCAL_EXACT_POINTS)
def test_reciprocal_risk_is_correctly_rounded_on_the_exact_path(size: int, count: int) -> None:
    # reference: sympy exact rationals; 1 / risk rounded once, to float by Python's exact
    # division (half to even) and to 20 significant digits
    risk = 1 - sympy.Rational(sympy.ff(size, count), sympy.Integer(size) ** count)
    inverse = Fraction(int(risk.q), int(risk.p))
    ours = collision_risk(size, count)
    assert ours.method == "exact"
    reciprocal = related_figures(size, count, ours).reciprocal_risk
    assert reciprocal is not None
    assert reciprocal.value == float(inverse), (size, count)
    parsed = parse_decimal(reciprocal.decimal)
    assert (parsed.mantissa, parsed.exponent) in rounded_candidates(inverse), (size, count)
    assert reciprocal.relative_error_bound == 0.0


@pytest.mark.parametrize(("size", "count"), [
    (2**64, 5 * 10**9), (2**64, 10**9), (2**122, 2**61), (2**1103, 1_009_361_555_372),
    (2**200, 24_296_095_744), (2**512, 2**256), (2**4096, 2**2048 * 3), (2**8192, 2**4096),
])
def test_reciprocal_risk_stays_within_its_bound_on_the_asymptotic_path(
    size: int, count: int
) -> None:
    # reference: mpmath at 4 log2 N + 200 bits, 1 / (1 - exp(lnG(N+1) - lnG(N-n+1) - n ln N))
    ref = high_precision_risk(size, count)
    assert ref.ln_risk is not None
    ours = collision_risk(size, count, exact_digit_limit=0)
    assert ours.method == "asymptotic"
    reciprocal = related_figures(size, count, ours).reciprocal_risk
    assert reciprocal is not None
    gap = relative_gap(ref.mp, ln_of_text(ref.mp, reciprocal.decimal), -ref.ln_risk)
    assert gap <= reciprocal.relative_error_bound <= 1e-18, (gap, reciprocal)
    exact_value = ref.mp.exp(-ref.ln_risk)
    assert rounding_is_settled(ref.mp, exact_value, 40)
    assert reciprocal.value == nearest_float(exact_value), reciprocal


# --- saturation: every value all but surely used -------------------------------------------


@pytest.mark.parametrize(("size", "count"), [
    (2, 56_065_531_834_126_054),  # n - N = 4 (2**53 + ...) + ...: a float midpoint; was a 500
    (2, 2**60 + 2 + 2**6),  # n - N = 2**60 + 2**6: a float midpoint (ulp 2**8)
    (3, 10**30 + 3),  # n - N = 10**30 exactly, a 20-digit text tie candidate
    # n - N one below a 20-digit text midpoint of 71 digits: the truth rounds down (a
    # relative offset of 2**-160 would cross the midpoint; an absolute one must be used)
    (2, 2 + (123456789012345678905 * 10**50) - 1),
    (2**64, 2**64 * 200 + 1),
    (2**64, 2**64 * 94 + 2**64 // 2),  # just past the saturation threshold 0.7 (65 + 70)
    (10**6 + 3, (10**6 + 3) * 10**9),
])
def test_saturated_figures_round_as_the_true_values(size: int, count: int) -> None:
    # reference: Python's exact rational rounding (Fraction -> float, half to even) of
    # v + t and N - t for a positive t below v 2**-68: the true excess N (1 - 1/N)**n is
    # below 2**-70 here (n/N >= 0.7 (log2 N + 70)), so every such t rounds as the truth does
    ours = figures(size, count)
    tiny = Fraction(1, 2**150)
    duplicates = Fraction(count - size) + tiny
    distinct = Fraction(size) - tiny
    assert ours.expected_duplicates.value == float(duplicates)
    assert ours.expected_distinct.value == float(distinct)
    for mag, value in ((ours.expected_duplicates, duplicates), (ours.expected_distinct, distinct)):
        parsed = parse_decimal(mag.decimal)
        assert (parsed.mantissa, parsed.exponent) in rounded_candidates(value), mag


def test_a_float_tie_just_short_of_saturation_is_decided_by_precision() -> None:
    # n - N = (2m + 1) 2**17 near 89 * 2**64, with m even: exactly halfway between the
    # floats m 2**18 and (m + 1) 2**18 (half to even would pick the first); the true excess
    # N (1 - 1/N)**n ~ 2**-66 > 0 breaks the tie upwards, which some 140 bits decide
    # reference: Python's exact rational rounding of (n - N) + t for any 0 < t < 2**-70
    size = 2**64
    excess = (2 * (89 * 2**46) + 1) << 17
    count = size + excess
    assert not 10 * count >= 7 * size * (size.bit_length() + 70)  # not saturated
    ours = figures(size, count)
    truth = Fraction(excess) + Fraction(1, 2**80)
    assert ours.expected_duplicates.value == float(truth) != float(excess)
    parsed = parse_decimal(ours.expected_duplicates.decimal)
    assert (parsed.mantissa, parsed.exponent) in rounded_candidates(truth)
