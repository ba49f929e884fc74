"""Pairwise collision risk (the birthday bound) and its related figures, by either path."""

from __future__ import annotations

from fractions import Fraction

import gmpy2
from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core import reporting
from urnbound.core.asymptotic import risk_estimate
from urnbound.core.errors import DomainError
from urnbound.core.exact import (
    decimal_of_fraction,
    digits_estimate,
    exact_risk,
    float_of_fraction,
    magnitude_of_fraction,
)
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT, MAX_FRACTION_DIGITS, MAX_SIZE_BITS
from urnbound.core.precision import Real
from urnbound.core.regimes import choose_method
from urnbound.core.results import ASYMPTOTIC, EXACT, CollisionRisk, Magnitude, RelatedFigures

#: Working precision of the expected-value figures (their cancellation is handled below).
FIGURES_PREC = 96


def collision_risk(
    size: int,
    count: int,
    *,
    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT,
    target_bits: int = 64,
) -> CollisionRisk:
    """Risk that at least two of ``count`` uniform draws from ``size`` values coincide.

    :param size: N, the number of equally likely values, 1 <= N <= 2**8192.
    :param count: n >= 0; n > N gives risk exactly 1.
    :param exact_digit_limit: largest estimated digit count of N**n taken exactly.
    :param target_bits: relative accuracy asked of the asymptotic path.
    :raises DomainError: for a size or count outside those ranges.

    >>> r = collision_risk(365, 23)
    >>> r.method, r.collision.decimal
    ('exact', '5.0729723432398540723e-1')
    """
    _check_question(size, count)
    if choose_method(size, count, exact_digit_limit) == EXACT:
        return _exact_answer(size, count)
    return _asymptotic_answer(size, count, target_bits)


def _check_question(size: int, count: int) -> None:
    too_big = size.bit_length() > MAX_SIZE_BITS + 1 or (
        size.bit_length() == MAX_SIZE_BITS + 1 and size & (size - 1) != 0)
    if size < 1 or too_big:
        raise DomainError(f"size must be a whole number from 1 to 2^{MAX_SIZE_BITS}",
                          field="size")
    if count < 0:
        raise DomainError("count must be a whole number of at least 0", field="count")


def _exact_answer(size: int, count: int) -> CollisionRisk:
    risk = exact_risk(size, count)
    fraction = None
    if max(digits_estimate(risk.denominator), 1) <= MAX_FRACTION_DIGITS + 1:
        if len(str(risk.denominator)) <= MAX_FRACTION_DIGITS:
            fraction = Fraction(risk.collision, risk.denominator)
    return CollisionRisk(
        size=size,
        count=count,
        collision=magnitude_of_fraction(risk.collision, risk.denominator),
        no_collision=magnitude_of_fraction(risk.no_collision, risk.denominator),
        method=EXACT,
        relative_error_bound=0.0,
        exact=fraction,
        precision_bits=0,
    )


def _asymptotic_answer(size: int, count: int, target_bits: int) -> CollisionRisk:
    estimate = risk_estimate(size, count, target_bits)
    bound = max(mp.to_float(estimate.collision_error), mp.to_float(estimate.no_collision_error))
    return CollisionRisk(
        size=size,
        count=count,
        collision=reporting.magnitude_of_real(estimate.collision),
        no_collision=reporting.magnitude_of_log(estimate.no_collision, estimate.log_no_collision),
        method=ASYMPTOTIC,
        relative_error_bound=bound + reporting.DECIMAL_ROUNDING,
        exact=None,
        precision_bits=estimate.prec,
    )


def related_figures(size: int, count: int, risk: CollisionRisk) -> RelatedFigures:
    """Expected colliding pairs, distinct values and duplicates; odds; entropy.

    >>> f = related_figures(365, 23, collision_risk(365, 23))
    >>> f.expected_colliding_pairs.decimal, round(f.expected_duplicates.value, 6)
    ('6.9315068493150684932e-1', 0.680038)
    """
    distinct, duplicates = _expected_distinct_and_duplicates(size, count)
    return RelatedFigures(
        expected_colliding_pairs=magnitude_of_fraction(count * (count - 1), 2 * size),
        expected_distinct=reporting.magnitude_of_real(distinct),
        expected_duplicates=reporting.magnitude_of_real(duplicates),
        reciprocal_risk=_reciprocal(risk.collision),
        entropy_bits=mp.log2_of_int(size),
    )


def _reciprocal(probability: Magnitude) -> Magnitude | None:
    """1 / p from the reported decimal text, read as an exact fraction and rounded once.

    >>> _reciprocal(Magnitude(0.25, "2.5000000000000000000e-1", -0.6)).decimal
    '4.0000000000000000000e0'
    """
    if probability.log10 is None:
        return None
    mantissa, _, exponent = probability.decimal.partition("e")
    digits = int(mantissa.replace(".", ""))
    shift = int(exponent) - (len(mantissa) - 2)  # p = digits * 10**shift, exactly
    numerator, denominator = 10 ** max(-shift, 0), digits * 10 ** max(shift, 0)
    return Magnitude(float_of_fraction(numerator, denominator),
                     decimal_of_fraction(numerator, denominator), -probability.log10)


def _expected_distinct_and_duplicates(size: int, count: int) -> tuple[Real, Real]:
    """N (1 - (1 - 1/N)**n) and n minus it, each with full relative accuracy.

    With u = 1/N and y = n log1p(-u), duplicates = n N (log1p(-u) + u) + N (expm1(y) - y):
    two terms of opposite sign whose sum is about C(n, 2)/N, never less than half the
    larger term when n >= 2, so no digits are lost even when n << N.
    """
    prec = FIGURES_PREC
    if count <= 1 or size == 1:
        distinct = min(count, size)
        return mp.real(distinct, prec), mp.real(count - distinct, prec)
    fast = _duplicates_by_binomial_series(size, count)
    if fast is not None:
        return fast
    u = mp.real(Fraction(1, size), prec + 8)
    log_keep = mp.log1p_neg(u, prec + 8)
    y = mp.mul(mp.real(count, prec + 8), log_keep, prec + 8)
    big = mp.real(size, prec + 8)
    distinct = mp.mul(big, mp.neg(mp.expm1(y, prec + 8)), prec)
    if mp.magnitude_bits(y) >= 0:  # |y| >= 1/2: duplicates >= 0.2 n, plain subtraction
        return distinct, mp.sub(mp.real(count, prec + 8), distinct, prec)
    first = mp.mul(mp.mul(mp.real(count, prec + 8), big, prec + 8),
                   mp.log1p_plus(u, prec + 8), prec + 8)
    second = mp.mul(big, mp.expm1_minus(y, prec + 8), prec + 8)
    return distinct, mp.add(first, second, prec)


#: The binomial series below is used when n/N < 2**-MIN_SERIES_GAP (few terms needed).
MIN_SERIES_GAP = 7


def _duplicates_by_binomial_series(size: int, count: int) -> tuple[Real, Real] | None:
    """Distinct values and duplicates from C(n,2)/N - C(n,3)/N**2 + C(n,4)/N**3 - ...

    Expanding N (1 - (1 - 1/N)**n) binomially gives duplicates = sum_{j>=2} (-1)**j
    C(n, j) / N**(j-1). For n/N < 2**-7 the terms fall by a factor (n - j)/((j + 1) N)
    < 2**-7, so the series alternates with decreasing terms and its tail is below the
    first omitted term. Terms are exact rationals, floored once each in units of
    2**-scale, with scale chosen so that the sum is at least 2**91 units: the result is
    good to (terms + 1) units, far below 2**-FIGURES_PREC relative. ``None`` when n/N is
    too large for few terms.

    >>> distinct, duplicates = _duplicates_by_binomial_series(2**64, 10**9)
    >>> round(mp.to_float(duplicates), 12)
    0.027105054285
    """
    if size.bit_length() - count.bit_length() - 1 < MIN_SERIES_GAP:
        return None
    pairs = gmpy2.mpz(count) * (count - 1) // 2
    big = gmpy2.mpz(size)
    scale = max(0, 92 - int(pairs.bit_length()) + size.bit_length())
    total = gmpy2.mpz(0)
    binomial, power, sign = pairs, big, 1
    for j in range(2, 64):
        term = (binomial << scale) // power
        if term == 0:
            duplicates = libmp.from_man_exp(int(total), -scale, FIGURES_PREC, mp.NEAREST)
            distinct = libmp.from_man_exp(int((gmpy2.mpz(count) << scale) - total), -scale,
                                          FIGURES_PREC, mp.NEAREST)
            return distinct, duplicates
        total += sign * term
        sign = -sign
        binomial = binomial * (count - j) // (j + 1)
        power *= big
    return None
