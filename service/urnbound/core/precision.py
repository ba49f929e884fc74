"""Explicit-precision real arithmetic on mpmath's low-level floats.

Every function takes the binary precision it works at as an argument; nothing here
reads or changes a global context. Values are mpmath ``libmp`` tuples (type ``Real``):
immutable, arbitrary exponent range, so nothing underflows or overflows.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from fractions import Fraction
from typing import Any, TypeVar

from mpmath import libmp

from urnbound.core.errors import NoConvergence

Real = Any  # an mpmath libmp float tuple (sign, mantissa, exponent, bitcount)

ZERO: Real = libmp.fzero
ONE: Real = libmp.fone
NEAREST = libmp.round_nearest

T = TypeVar("T")


def real(value: int | Fraction, prec: int) -> Real:
    """Round an integer or fraction to ``prec`` bits.

    >>> to_float(real(Fraction(1, 4), 53))
    0.25
    """
    if isinstance(value, Fraction):
        return libmp.from_rational(value.numerator, value.denominator, prec, NEAREST)
    return libmp.from_int(int(value), prec, NEAREST)


def ratio(numerator: int, denominator: int, prec: int) -> Real:
    """numerator / denominator rounded to ``prec`` bits, without reducing the fraction.

    >>> to_float(ratio(6, 8, 53))
    0.75
    """
    return libmp.from_rational(int(numerator), int(denominator), prec, NEAREST)


def add(a: Real, b: Real, prec: int) -> Real:
    return libmp.mpf_add(a, b, prec, NEAREST)


def sub(a: Real, b: Real, prec: int) -> Real:
    return libmp.mpf_sub(a, b, prec, NEAREST)


def mul(a: Real, b: Real, prec: int) -> Real:
    return libmp.mpf_mul(a, b, prec, NEAREST)


def div(a: Real, b: Real, prec: int) -> Real:
    return libmp.mpf_div(a, b, prec, NEAREST)


def neg(a: Real) -> Real:
    return libmp.mpf_neg(a)


def absolute(a: Real) -> Real:
    return libmp.mpf_abs(a)


def log(a: Real, prec: int) -> Real:
    return libmp.mpf_log(a, prec, NEAREST)


def exp(a: Real, prec: int) -> Real:
    return libmp.mpf_exp(a, prec, NEAREST)


def ln10(prec: int) -> Real:
    return libmp.mpf_ln10(prec)


def is_zero(a: Real) -> bool:
    return bool(a == libmp.fzero)


def magnitude_bits(a: Real) -> int:
    """Exponent e with 2**(e-1) <= |a| < 2**e; a very negative number for zero.

    >>> magnitude_bits(real(8, 53))
    4
    """
    if is_zero(a):
        return -(10**9)
    return int(a[2] + a[3])


def less(a: Real, b: Real) -> bool:
    return bool(libmp.mpf_lt(a, b))


def scale2(a: Real, power: int) -> Real:
    """a * 2**power, exactly."""
    return libmp.mpf_shift(a, power)


def to_float(a: Real) -> float:
    """The float64 nearest to ``a`` (half to even), subnormals included; ``inf`` past the range.

    Rounded once, in integers, to the float grid at a's binary exponent: 53 bits for
    normal results, the step 2**-1074 below 2**-1022.

    >>> to_float(real(Fraction(1, 3), 200)) == 1 / 3
    True
    >>> to_float(libmp.from_man_exp(3, -1076)), to_float(libmp.from_man_exp(1, -1075))
    (5e-324, 0.0)
    """
    sign, mantissa, exponent, bits = a
    if not mantissa:
        return 0.0 if a == libmp.fzero else float(libmp.to_float(a))
    top = int(exponent + bits)  # 2**(top-1) <= |a| < 2**top
    if top > 1024:
        return -math.inf if sign else math.inf
    if top < -1074:  # below half the smallest subnormal
        return -0.0 if sign else 0.0
    step = max(top - 53, -1074)  # exponent of the last bit kept
    shift = step - int(exponent)
    if shift > 0:
        kept = int(mantissa) >> shift
        rest = int(mantissa) - (kept << shift)
        half = 1 << (shift - 1)
        if rest > half or (rest == half and kept & 1):
            kept += 1
    else:
        kept = int(mantissa) << -shift
    try:
        value = math.ldexp(float(kept), step)  # kept <= 2**53: exact
    except OverflowError:  # rounds up past the largest float
        value = math.inf
    return -value if sign else value


#: Below 2**-SERIES_BITS the functions below sum their Taylor series; above it they use
#: the closed form with 2 * SERIES_BITS + 8 extra bits (cancellation is at most 2/x).
SERIES_BITS = 16


def power_series(x: Real, first: int, coefficient: Callable[[int], Real], prec: int) -> Real:
    """sum_{k>=first} coefficient(k) * x**k for |x| < 2**-SERIES_BITS and |coefficient| <= 1.

    Terms fall by a factor |x| at least, so once a term is below 2**-(prec+4) of the sum
    the tail is below 2|x| times that: the result is accurate to a few units in ``prec``.
    """
    work = prec + 8
    power = ONE
    for _ in range(first):
        power = mul(power, x, work)
    total = ZERO
    for k in range(first, first + 4 * prec + 8):
        term = mul(coefficient(k), power, work)
        total = add(total, term, work)
        if is_zero(term) or magnitude_bits(term) < magnitude_bits(total) - prec - 4:
            return libmp.mpf_pos(total, prec, NEAREST)
        power = mul(power, x, work)
    raise NoConvergence("power series did not converge")  # unreachable for |x| < 2**-16


def _unit_fraction(k: int, prec: int) -> Real:
    return div(ONE, real(k, prec), prec)


def log1p_neg(x: Real, prec: int) -> Real:
    """log(1 - x) for 0 <= x < 1 with full relative accuracy, also for tiny x.

    >>> to_float(log1p_neg(real(Fraction(1, 2), 80), 80)) == math.log(0.5)
    True
    >>> to_float(log1p_neg(real(Fraction(1, 10**40), 80), 80))
    -1e-40
    """
    if is_zero(x):
        return ZERO
    if magnitude_bits(x) > -SERIES_BITS:
        return log(sub(ONE, x, prec + 2 * SERIES_BITS + 8), prec)
    return neg(power_series(x, 1, lambda k: _unit_fraction(k, prec + 8), prec))


def log1p_plus(x: Real, prec: int) -> Real:
    """log(1 - x) + x = -(x**2/2 + x**3/3 + ...) for 0 <= x <= 1/2, full relative accuracy.

    >>> to_float(log1p_plus(real(Fraction(1, 10**10), 80), 80))
    -5.000000000333333e-21
    """
    if is_zero(x):
        return ZERO
    if magnitude_bits(x) > -SERIES_BITS:
        extra = prec + 2 * SERIES_BITS + 8
        return add(log1p_neg(x, extra), x, prec)
    return neg(power_series(x, 2, lambda k: _unit_fraction(k, prec + 8), prec))


def expm1_minus(y: Real, prec: int) -> Real:
    """exp(y) - 1 - y = y**2/2! + y**3/3! + ... with full relative accuracy.

    >>> to_float(expm1_minus(real(Fraction(-1, 10**10), 80), 80))
    4.999999999833333e-21
    """
    if is_zero(y):
        return ZERO
    if magnitude_bits(y) > -SERIES_BITS:
        extra = prec + 2 * SERIES_BITS + 8
        return sub(expm1(y, extra), y, prec)
    return power_series(y, 2, lambda k: real(Fraction(1, math.factorial(k)), prec + 8), prec)


def log2_of_int(value: int) -> float:
    """log2 of a positive integer of any size, as a float.

    >>> log2_of_int(2**8192)
    8192.0
    """
    shift = max(0, value.bit_length() - 64)  # only the top 64 bits reach the float step
    return math.log2(value >> shift) + shift


def expm1(y: Real, prec: int) -> Real:
    """exp(y) - 1 with full relative accuracy, also for tiny |y|.

    >>> to_float(expm1(real(Fraction(-1, 10**30), 80), 80))
    -1e-30
    """
    if is_zero(y):
        return ZERO
    bits = magnitude_bits(y)
    if bits < -prec - 4:
        return y
    work = prec + max(0, -bits) + 12
    return sub(exp(y, work), ONE, prec)


def add_up(a: Real, b: Real, prec: int = 53) -> Real:
    """a + b rounded upwards: for accumulating error bounds."""
    return libmp.mpf_add(a, b, prec, libmp.round_up)


def first_decided(evaluate: Callable[[int], T | None], first_bits: int,
                  last_bits: int) -> T | None:
    """The first answer ``evaluate(bits)`` gives for bits = first, 2 first, ... <= last.

    ``evaluate`` returns ``None`` when its float is undecided at that precision, or raises
    NoConvergence when the method cannot reach it; both lead to the next precision. ``None``
    when no precision up to ``last_bits`` decided (the caller then tries another method).

    >>> first_decided(lambda bits: bits if bits >= 100 else None, 64, 512)
    128
    """
    bits = first_bits
    while bits <= last_bits:
        try:
            answer = evaluate(bits)
        except NoConvergence:
            answer = None
        if answer is not None:
            return answer
        bits *= 2
    return None
