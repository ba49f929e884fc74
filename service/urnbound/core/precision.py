"""Explicit-precision real arithmetic on mpmath's low-level floats, and their reporting.

Every function takes the binary precision it works at as an argument; nothing here
reads or changes a global context. Values are mpmath ``libmp`` tuples (type ``Real``):
immutable, arbitrary exponent range, so nothing underflows or overflows.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from fractions import Fraction
from typing import Any

import gmpy2
from mpmath import libmp

from urnbound.core.results import Magnitude

Real = Any  # an mpmath libmp float tuple (sign, mantissa, exponent, bitcount)

#: Significant digits of every decimal text the service prints.
DECIMAL_DIGITS = 20
#: Largest relative error of rounding a value to DECIMAL_DIGITS significant digits.
DECIMAL_ROUNDING = 5e-20

ZERO: Real = libmp.fzero
ONE: Real = libmp.fone
NEAREST = libmp.round_nearest


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
    """Nearest float64; ``0.0`` on underflow and ``inf`` on overflow.

    >>> to_float(real(Fraction(1, 3), 200)) == 1 / 3
    True
    """
    sign, mantissa, exponent, bits = a
    if not mantissa:
        return 0.0
    top = exponent + bits
    if top < -1100:
        return -0.0 if sign else 0.0
    if top > 1025:
        return -math.inf if sign else math.inf
    if top <= -1020:  # subnormal results: let mpmath round them
        return float(libmp.to_float(a, rnd=NEAREST))
    if bits > 64:  # keep 64 bits and a sticky bit: float() then rounds as the full value would
        cut = int(bits) - 64
        kept = mantissa >> cut
        mantissa = kept | 1 if (kept << cut) != mantissa else kept
        exponent += cut
    try:
        value = math.ldexp(float(mantissa), int(exponent))
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
    raise ArithmeticError("power series did not converge")  # unreachable for |x| < 2**-16


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
    shift = max(0, value.bit_length() - 60)
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


_LOWEST_DIGITS = 10 ** (DECIMAL_DIGITS - 1)
_TEN = gmpy2.mpz(10)
#: Beyond this decimal exponent, decimal text is formed by mpmath's general conversion.
_INTEGER_DECIMAL_LIMIT = 20_000


def decimal_text(a: Real, log10_hint: float | None = None) -> str:
    """Scientific text with DECIMAL_DIGITS significant digits, never underflowing.

    Correctly rounded (half to even) from the binary value, by integer arithmetic,
    while the decimal exponent is moderate; beyond that, from mpmath's conversion
    with six guard digits.

    >>> decimal_text(real(Fraction(1, 3), 200))
    '3.3333333333333333333e-1'
    >>> decimal_text(real(Fraction(1, 8), 53))
    '1.2500000000000000000e-1'

    :param log10_hint: log10 of the value when already known (within 1); saves a step.
    """
    if is_zero(a):
        return "0"
    sign, mantissa, exponent, bits = a
    if abs(exponent + bits) > 4 * _INTEGER_DECIMAL_LIMIT:
        return _decimal_text_general(a)
    if log10_hint is None or not math.isfinite(log10_hint):
        log10_hint = _rough_log10(int(mantissa), int(exponent + bits), int(bits))
    estimate = math.floor(log10_hint)
    for decimal_exponent in (estimate, estimate - 1, estimate + 1):
        shift = DECIMAL_DIGITS - 1 - decimal_exponent
        digits = _rounded_digits(int(mantissa), int(exponent), shift)
        if _LOWEST_DIGITS <= digits < _LOWEST_DIGITS * 10:
            text = str(digits)
            return f"{'-' if sign else ''}{text[0]}.{text[1:]}e{decimal_exponent}"
    return _decimal_text_general(a)  # unreachable: the estimate is within one


def _rounded_digits(mantissa: int, exponent: int, shift: int) -> int:
    """round(mantissa * 2**exponent * 10**shift), half to even, in integers."""
    numerator = gmpy2.mpz(mantissa) * _TEN ** max(shift, 0)
    denominator = _TEN ** max(-shift, 0)
    if exponent >= 0:
        numerator <<= exponent
    else:
        denominator <<= -exponent
    quotient, remainder = divmod(numerator, denominator)
    twice = 2 * remainder
    if twice > denominator or (twice == denominator and quotient % 2 == 1):
        quotient += 1
    return int(quotient)


def _decimal_text_general(a: Real) -> str:
    sign, digits, exponent = libmp.to_digits_exp(a, DECIMAL_DIGITS + 6)
    kept = int(digits[:DECIMAL_DIGITS]) + (1 if digits[DECIMAL_DIGITS] >= "5" else 0)
    text = str(kept)
    if len(text) > DECIMAL_DIGITS:
        text = text[:DECIMAL_DIGITS]
        exponent += 1
    return f"{sign}{text[0]}.{text[1:]}e{exponent}"


_LOG10_2 = math.log10(2)


def log10_value(a: Real, prec: int = 64) -> float:
    """Base-10 logarithm of a positive value, as a float.

    With a = f * 2**e and 1/2 <= f < 1, it is log10(f) + e * log10(2) in float
    arithmetic, where both terms carry a relative error near 2**-53 and do not
    cancel for |e| > 2. Within the float range it is log10 of the float value (away
    from 1 the logarithm is far from zero, so the float's rounding stays relative),
    and for 1/2 <= a < 2 it is log1p(a - 1) / ln 10 with a - 1 formed exactly.

    >>> log10_value(real(Fraction(1, 1000), 80))
    -3.0
    >>> log10_value(real(1 + Fraction(1, 10**30), 200))
    4.342944819032518e-31
    """
    _sign, mantissa, exponent, bits = a
    binary_exponent = int(exponent + bits)
    if abs(binary_exponent) > 2**1000:
        return math.inf if binary_exponent > 0 else -math.inf
    if binary_exponent in (0, 1):
        offset = to_float(sub(a, ONE, int(bits) + 2))
        return math.log1p(offset) / _LN10
    if -1020 <= binary_exponent <= 1020:  # a normal float, away from 1: no cancellation
        return math.log10(to_float(a))
    return _rough_log10(int(mantissa), binary_exponent, int(bits))


_LN10 = math.log(10)


def _rough_log10(mantissa: int, binary_exponent: int, bits: int) -> float:
    """log10(f) + e log10(2) for mantissa / 2**bits = f, a = f * 2**e: good unless e is tiny."""
    if abs(binary_exponent) > 2**1000:
        return math.inf if binary_exponent > 0 else -math.inf
    shift = max(0, bits - 64)
    fraction = math.ldexp(float(mantissa >> shift), -(bits - shift))
    return math.log10(fraction) + binary_exponent * _LOG10_2


def magnitude_of_real(a: Real) -> Magnitude:
    """Report a non-negative real computed to working precision."""
    if is_zero(a):
        return Magnitude(0.0, "0", None)
    log10 = log10_value(a)
    return Magnitude(to_float(a), decimal_text(a, log10), log10)


def magnitude_of_log(a: Real, log_a: Real) -> Magnitude:
    """Report a positive real whose natural logarithm is known more accurately.

    log10 is ln(a) / ln 10 in float arithmetic (one rounding of ln(a), one division),
    or at 64 bits when ln(a) itself is past the float range.
    """
    natural = to_float(log_a)
    log10 = natural / _LN10 if math.isfinite(natural) else to_float(div(log_a, ln10(64), 64))
    _sign, _mantissa, exponent, bits = a
    if abs(exponent + bits) > 4 * _INTEGER_DECIMAL_LIMIT:
        return Magnitude(to_float(a), _decimal_text_from_log(log_a), log10)
    return Magnitude(to_float(a), decimal_text(a, log10), log10)


def _decimal_text_from_log(log_a: Real) -> str:
    """Decimal text of exp(log_a) for a huge |log_a|, from log10 = e + f, 0 <= f < 1.

    The mantissa is 10**f = exp(f ln 10), with f taken to 96 bits after the integer
    part e: the text is as accurate as log_a itself (absolute error d in log_a is a
    relative error expm1(d) in the value) plus one rounding to 20 digits.
    """
    prec = magnitude_bits(log_a) + 96
    tenth_power = div(log_a, ln10(prec), prec)
    whole = int(libmp.to_int(tenth_power, libmp.round_floor))
    fraction = sub(tenth_power, real(whole, prec), 96)
    mantissa = exp(mul(fraction, ln10(96), 96), 96)
    digits = _rounded_digits(int(mantissa[1]), int(mantissa[2]), DECIMAL_DIGITS - 1)
    if digits >= _LOWEST_DIGITS * 10:  # 10**f rounded up to 10
        digits, whole = digits // 10, whole + 1
    text = str(digits)
    return f"{text[0]}.{text[1:]}e{whole}"


def add_up(a: Real, b: Real, prec: int = 53) -> Real:
    """a + b rounded upwards: for accumulating error bounds."""
    return libmp.mpf_add(a, b, prec, libmp.round_up)
