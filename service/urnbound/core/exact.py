"""Exact rational collision risk and correctly rounded reporting of fractions.

The probability that n uniform draws from N values are all distinct is the ratio
N(N-1)...(N-n+1) / N**n. Here it is formed with exact integers (gmpy2), reduced, and
reported with a decimal text correctly rounded from the fraction itself.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import gmpy2

from urnbound.core import precision as mp
from urnbound.core.errors import NoConvergence
from urnbound.core.reporting import (
    DECIMAL_DIGITS,
    log10_of_complement,
    log10_value,
    rounded_quotient,
    scientific_text,
)
from urnbound.core.results import Magnitude

_LOG10_2 = math.log10(2)


@dataclass(frozen=True, slots=True)
class ExactRisk:
    """Risk and complement as fractions over a common reduced denominator.

    :ivar collision: numerator of P(some two draws coincide).
    :ivar no_collision: numerator of P(all draws distinct).
    :ivar denominator: shared denominator; the two numerators sum to it.
    """

    collision: int
    no_collision: int
    denominator: int


def falling_factorial(top: int, terms: int) -> int:
    """top * (top-1) * ... * (top-terms+1), by balanced splitting.

    >>> falling_factorial(10, 3)
    720
    >>> falling_factorial(5, 0)
    1
    """
    return int(_product_down(gmpy2.mpz(top), terms))


def _product_down(top: gmpy2.mpz, terms: int) -> gmpy2.mpz:
    if terms <= 16:
        result = gmpy2.mpz(1)
        for i in range(terms):
            result *= top - i
        return result
    half = terms // 2
    return _product_down(top, half) * _product_down(top - half, terms - half)


def exact_risk(size: int, count: int) -> ExactRisk:
    """The collision risk of ``count`` draws from ``size`` values as a reduced fraction.

    >>> r = exact_risk(365, 23)
    >>> round(r.collision / r.denominator, 7)
    0.5072972
    """
    if count <= 1:
        return ExactRisk(0, 1, 1)
    if count > size:
        return ExactRisk(1, 0, 1)
    distinct = gmpy2.mpz(falling_factorial(size, count))
    total = gmpy2.mpz(size) ** count
    common = gmpy2.gcd(distinct, total)
    distinct //= common
    total //= common
    return ExactRisk(int(total - distinct), int(distinct), int(total))


def expected_distinct(size: int, count: int) -> tuple[int, int]:
    """N (1 - (1 - 1/N)**n) = (N**n - (N-1)**n) / N**(n-1) as (numerator, denominator).

    >>> expected_distinct(365, 2)
    (729, 365)
    """
    if count == 0:
        return 0, 1
    big = gmpy2.mpz(size)
    denominator = big ** (count - 1)
    return int(denominator * big - (big - 1) ** count), int(denominator)


def risk_at_most(size: int, count: int, bound: Fraction) -> bool:
    """risk(count, size) <= bound, decided exactly without reducing any fraction.

    >>> risk_at_most(365, 23, Fraction(1, 2)), risk_at_most(365, 22, Fraction(1, 2))
    (False, True)
    """
    if count <= 1 or count > size:
        return count <= 1 or bound >= 1
    distinct = gmpy2.mpz(falling_factorial(size, count))
    total = gmpy2.mpz(size) ** count
    return bool((total - distinct) * bound.denominator <= bound.numerator * total)


def digits_estimate(value: int) -> int:
    """Upper estimate of the number of decimal digits of a positive integer."""
    return int(value.bit_length() * _LOG10_2) + 1


def decimal_exponent(numerator: int, denominator: int) -> int:
    """e with 10**e <= numerator/denominator < 10**(e+1), for a positive fraction.

    >>> decimal_exponent(1, 3), decimal_exponent(10, 1), decimal_exponent(99, 10)
    (-1, 1, 0)
    """
    guess = math.floor((numerator.bit_length() - denominator.bit_length()) * _LOG10_2)
    num, den = gmpy2.mpz(numerator), gmpy2.mpz(denominator)
    for _ in range(8):
        low_ok = num * _ten_power(-guess) >= den * _ten_power(guess)
        high_ok = num * _ten_power(-guess - 1) < den * _ten_power(guess + 1)
        if low_ok and high_ok:
            return guess
        guess += 1 if low_ok else -1
    raise NoConvergence("decimal exponent search did not settle")  # bit estimate is within 2


def _ten_power(exponent: int) -> gmpy2.mpz:
    """10**max(exponent, 0): the side of a comparison that carries the power."""
    return gmpy2.mpz(10) ** max(exponent, 0)


def decimal_of_fraction(numerator: int, denominator: int) -> str:
    """Scientific text correctly rounded (half to even) to 20 significant digits.

    >>> decimal_of_fraction(1, 3)
    '3.3333333333333333333e-1'
    >>> decimal_of_fraction(2, 3)
    '6.6666666666666666667e-1'
    """
    if numerator == 0:
        return "0"
    exponent = decimal_exponent(numerator, denominator)
    shift = DECIMAL_DIGITS - 1 - exponent
    num = gmpy2.mpz(numerator) * _ten_power(shift)
    den = gmpy2.mpz(denominator) * _ten_power(-shift)
    text = str(rounded_quotient(num, den))
    if len(text) > DECIMAL_DIGITS:
        text, exponent = text[: DECIMAL_DIGITS], exponent + 1
    return scientific_text(text, exponent)


def log10_of_fraction(numerator: int, denominator: int) -> float:
    """log10 of a positive fraction, accurate also when the fraction is close to 1.

    Within 1/4 of 1 it is log1p(-c) / ln 10 from the complement c = 1 - p rounded to
    80 bits, which keeps its relative accuracy (and gives +0.0 for p = 1); elsewhere the
    fraction is rounded to 64 bits and its logarithm taken from the binary exponent.

    >>> log10_of_fraction(999, 1000)
    -0.0004345117740176913
    >>> math.copysign(1.0, log10_of_fraction(7, 7))
    1.0
    """
    complement = denominator - numerator
    if 0 <= 4 * complement < denominator:
        return log10_of_complement(mp.ratio(complement, denominator, 80))
    return log10_value(mp.ratio(numerator, denominator, 64))




def magnitude_of_fraction(numerator: int, denominator: int) -> Magnitude:
    """Report a non-negative fraction: correctly rounded float and decimal text.

    >>> magnitude_of_fraction(1, 8)
    Magnitude(value=0.125, decimal='1.2500000000000000000e-1', log10=-0.9030899869919435, \
relative_error_bound=0.0)
    """
    if numerator == 0:
        return Magnitude(0.0, "0", None)
    value = float_of_fraction(numerator, denominator)
    return Magnitude(value, decimal_of_fraction(numerator, denominator),
                     log10_of_fraction(numerator, denominator))


def float_of_fraction(numerator: int, denominator: int) -> float:
    """Correctly rounded float64 (Python's int division), ``inf`` past the float range.

    >>> float_of_fraction(1, 3) == 1 / 3, float_of_fraction(10**400, 1)
    (True, inf)
    """
    try:
        return numerator / denominator
    except OverflowError:
        return math.inf
