"""Reporting of computed reals: float64, 20-digit decimal text that never underflows, log10."""

from __future__ import annotations

import math

import gmpy2
from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core.precision import Real
from urnbound.core.results import Magnitude

#: Significant digits of every decimal text the service prints.
DECIMAL_DIGITS = 20
#: Largest relative error of rounding a value to DECIMAL_DIGITS significant digits.
DECIMAL_ROUNDING = 5e-20
_LOWEST_DIGITS = 10 ** (DECIMAL_DIGITS - 1)
_TEN = gmpy2.mpz(10)
#: Beyond this decimal exponent, decimal text is formed by mpmath's general conversion.
_INTEGER_DECIMAL_LIMIT = 20_000


def decimal_text(a: Real, log10_hint: float | None = None) -> str:
    """Scientific text with DECIMAL_DIGITS significant digits, never underflowing.

    Correctly rounded (half to even) from the binary value, by integer arithmetic,
    while the decimal exponent is moderate; beyond that, from mpmath's conversion
    with six guard digits.

    >>> decimal_text(mp.ratio(1, 3, 200))
    '3.3333333333333333333e-1'
    >>> decimal_text(mp.ratio(1, 8, 53))
    '1.2500000000000000000e-1'

    :param log10_hint: log10 of the value when already known (within 1); saves a step.
    """
    if mp.is_zero(a):
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
            return scientific_text(str(digits), decimal_exponent, "-" if sign else "")
    return _decimal_text_general(a)  # unreachable: the estimate is within one


def _rounded_digits(mantissa: int, exponent: int, shift: int) -> int:
    """round(mantissa * 2**exponent * 10**shift), half to even, in integers."""
    numerator = gmpy2.mpz(mantissa) * _TEN ** max(shift, 0)
    denominator = _TEN ** max(-shift, 0)
    if exponent >= 0:
        numerator <<= exponent
    else:
        denominator <<= -exponent
    return rounded_quotient(numerator, denominator)


def rounded_quotient(numerator: int, denominator: int) -> int:
    """numerator / denominator rounded to the nearest integer, half to even.

    >>> rounded_quotient(5, 2), rounded_quotient(7, 2), rounded_quotient(8, 3)
    (2, 4, 3)
    """
    quotient, remainder = divmod(numerator, denominator)
    twice = 2 * remainder
    if twice > denominator or (twice == denominator and quotient % 2 == 1):
        quotient += 1
    return int(quotient)


def scientific_text(digits: str, exponent: int, sign: str = "") -> str:
    """'d.ddd...e<exponent>' from a digit string whose first digit is not zero.

    >>> scientific_text("12500", -1)
    '1.2500e-1'
    """
    return f"{sign}{digits[0]}.{digits[1:]}e{exponent}"


def _decimal_text_general(a: Real) -> str:
    sign, digits, exponent = libmp.to_digits_exp(a, DECIMAL_DIGITS + 6)
    kept = int(digits[:DECIMAL_DIGITS]) + (1 if digits[DECIMAL_DIGITS] >= "5" else 0)
    text = str(kept)
    if len(text) > DECIMAL_DIGITS:
        text = text[:DECIMAL_DIGITS]
        exponent += 1
    return scientific_text(text, exponent, sign)


_LOG10_2 = math.log10(2)


def log10_value(a: Real, prec: int = 64) -> float:
    """Base-10 logarithm of a positive value, as a float.

    With a = f * 2**e and 1/2 <= f < 1, it is log10(f) + e * log10(2) in float
    arithmetic, where both terms carry a relative error near 2**-53 and do not
    cancel for |e| > 2. Within the float range it is log10 of the float value (away
    from 1 the logarithm is far from zero, so the float's rounding stays relative),
    and for 1/2 <= a < 2 it is log1p(a - 1) / ln 10 with a - 1 formed exactly.

    >>> log10_value(mp.ratio(1, 1000, 80))
    -3.0
    >>> log10_value(mp.ratio(10**30 + 1, 10**30, 200))
    4.342944819032518e-31
    """
    _sign, mantissa, exponent, bits = a
    binary_exponent = int(exponent + bits)
    if abs(binary_exponent) > 2**1000:
        return math.inf if binary_exponent > 0 else -math.inf
    if binary_exponent in (0, 1):
        offset = mp.to_float(mp.sub(a, mp.ONE, int(bits) + 2))
        return math.log1p(offset) / _LN10 + 0.0  # + 0.0: log10(1) is +0.0, never -0.0
    if -1020 <= binary_exponent <= 1020:  # a normal float, away from 1: no cancellation
        return math.log10(mp.to_float(a))
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
    """Report a non-negative real known exactly (a binary value): every figure rounded once.

    >>> magnitude_of_real(mp.ratio(1, 8, 53))
    Magnitude(value=0.125, decimal='1.2500000000000000000e-1', log10=-0.9030899869919435, \
relative_error_bound=0.0)
    """
    if mp.is_zero(a):
        return Magnitude(0.0, "0", None)
    log10 = log10_value(a)
    return Magnitude(mp.to_float(a), decimal_text(a, log10), log10)


#: 5e-20 rounded up: the relative rounding of a value to DECIMAL_DIGITS digits is below it.
_DECIMAL_ROUNDING_UP = math.nextafter(DECIMAL_ROUNDING, 1.0)
#: Bits kept in the ends of an error interval (enough to tell float neighbours apart).
_INTERVAL_BITS = 96


def interval_float(value: Real, error: Real) -> float | None:
    """The float nearest to every real within a relative ``error`` of the true value.

    ``value`` approximates a positive x with |value - x| <= error * x, so x lies in
    [value / (1 + error), value / (1 - error)]; the ends are rounded outwards. When both
    ends round to the same float, that float is the correctly rounded x (rounding to
    nearest is monotonic); otherwise ``None``, and the caller computes x more precisely.

    >>> interval_float(mp.ratio(1, 3, 100), libmp.from_man_exp(1, -90)) == 1 / 3
    True
    >>> interval_float(mp.ratio(1, 3, 100), libmp.from_man_exp(1, -40)) is None
    True
    """
    if not (_below_half(error) or mp.less(error, mp.ONE)):
        return None
    quick = _float_far_from_boundary(value, error)
    if quick is not None:
        return quick
    prec = max(_INTERVAL_BITS, int(value[3]) + 8)
    low = libmp.mpf_div(value, libmp.mpf_add(mp.ONE, error, prec, libmp.round_ceiling),
                        prec, libmp.round_floor)
    high = libmp.mpf_div(value, libmp.mpf_sub(mp.ONE, error, prec, libmp.round_floor),
                         prec, libmp.round_ceiling)
    low_float = mp.to_float(low)
    return low_float if low_float == mp.to_float(high) else None


def _float_far_from_boundary(value: Real, error: Real) -> float | None:
    """The float of x when ``value`` is far enough from every rounding boundary; else ``None``.

    The fast test of :func:`interval_float`, in integers. For positive v = m 2**k and a
    relative error e < 1/2, x lies within 2 e v of v. With the float grid's step u at v
    (2**-1074 below the normal range), v lies a whole number of half-steps plus ``rest``
    from a boundary; the nearest boundary (a midpoint between floats, a quarter step
    below a power of two) is at least min(|rest - u/2|, u/4) away. When 2 e v is below
    that, every candidate x rounds to the float nearest v. ``None`` leaves the decision
    (and the values past the normal range) to the interval test.
    """
    sign, mantissa, exponent, bits = value
    if sign or not mantissa or not (_below_half(error) or mp.less(error, _HALF)):
        return None
    top = int(exponent + bits)
    if top > 1024 or top < -1070:
        return None
    step = max(top - 53, -1074)  # exponent of the float grid's step at v
    shift = step - int(exponent)
    _esign, error_mantissa, error_exponent, _ebits = error
    reach = int(error_mantissa) * int(mantissa)  # 2 e v = reach * 2**(exponent + error_exp + 1)
    reach_shift = int(error_exponent) + 1
    if shift <= 0:  # v is on the grid: the nearest boundary is a quarter step away or more
        kept = int(mantissa)
        distance, distance_shift = 1, step - 2 - int(exponent)
    else:
        kept = int(mantissa) >> shift
        rest = int(mantissa) - (kept << shift)
        half = 1 << (shift - 1)
        if rest > half:
            kept += 1
        distance, distance_shift = min(abs(rest - half), half >> 1), 0
    if not _below(reach, reach_shift, distance, distance_shift):
        return None
    try:
        return math.ldexp(float(kept), step if shift > 0 else int(exponent))
    except OverflowError:
        return None


def _below(a: int, a_shift: int, b: int, b_shift: int) -> bool:
    """a * 2**a_shift < b * 2**b_shift, for non-negative integers.

    Decided from the bit lengths when the magnitudes are far apart, so that a shift of
    millions of bits (an error of 2**-(10**9) next to a value near 1) is never formed.

    >>> _below(1, -10**12, 1, 0), _below(1, 0, 1, -10**12), _below(3, 0, 1, 2)
    (True, False, True)
    """
    if a == 0 or b == 0:
        return b > 0
    top_a, top_b = a.bit_length() + a_shift, b.bit_length() + b_shift
    if top_a < top_b:  # a 2**a_shift < 2**top_a <= 2**(top_b - 1) <= b 2**b_shift
        return True
    if top_b < top_a:
        return False
    if a_shift >= b_shift:
        return (a << (a_shift - b_shift)) < b
    return a < (b << (b_shift - a_shift))


_HALF = libmp.from_man_exp(1, -1)


def _below_half(error: Real) -> bool:
    """A sure sign that 0 < error < 1/2, read off the tuple: ``False`` leaves it to mpf_lt.

    A positive finite m 2**e with m below 2**b (b its bit count) is below 2**(e + b),
    at most 1/2 when e + b <= -1.

    >>> _below_half(libmp.from_man_exp(3, -3)), _below_half(libmp.from_man_exp(1, -1))
    (True, False)
    """
    sign, mantissa, exponent, bits = error
    return not sign and bool(mantissa) and exponent + bits <= -1


def text_bound(error: Real) -> float:
    """Bound on the relative error of the DECIMAL_DIGITS text of a value ``error`` off.

    The text t rounds v with |t - v| <= 5e-20 v and |v - x| <= error x, so
    |t - x| <= (error + 5e-20 (1 + error)) x; each float step below rounds upwards.

    >>> text_bound(mp.ZERO) > 5e-20
    True
    """
    bound = math.nextafter(float(libmp.to_float(error, rnd=libmp.round_ceiling)), math.inf)
    return math.nextafter(bound + _DECIMAL_ROUNDING_UP * (1.0 + bound), math.inf)


def bounded_magnitude(value: Real, error: Real, log10: float | None = None) -> Magnitude | None:
    """Report a positive real known to a relative ``error``; ``None`` if its float is undecided.

    :param log10: its base-10 logarithm when formed more accurately elsewhere (for a value
        near 1, from its complement); else taken from ``value``.
    """
    rounded = interval_float(value, error)
    if rounded is None:
        return None
    if log10 is None:
        log10 = _log10_of_rounded(value, rounded)
    return Magnitude(rounded, decimal_text(value, log10), log10, text_bound(error))


def _log10_of_rounded(value: Real, rounded: float) -> float:
    """``log10_value(value)``, given ``rounded``, the float nearest to ``value``.

    ``interval_float`` decided ``rounded`` for every real in an interval that holds
    ``value`` itself, so ``rounded`` is ``to_float(value)``, the float that
    ``log10_value`` takes the logarithm of within the normal range (away from 1).
    """
    binary_exponent = int(value[2] + value[3])
    if binary_exponent not in (0, 1) and -1020 <= binary_exponent <= 1020:
        return math.log10(rounded)
    return log10_value(value)


def bounded_magnitude_of_log(value: Real, log_value: Real, error: Real) -> Magnitude | None:
    """Report exp(log_value) = value, known to a relative ``error``, whatever its exponent.

    log10 is ln(value) / ln 10 (one rounding of ln(value), one division), or at 64 bits
    when ln(value) is past the float range; past about 10**24000 in size the decimal
    text is formed from the logarithm.
    """
    rounded = interval_float(value, error)
    if rounded is None:
        return None
    natural = mp.to_float(log_value)
    if math.isfinite(natural):
        log10 = natural / _LN10 + 0.0
    else:
        log10 = mp.to_float(mp.div(log_value, mp.ln10(64), 64))
    _sign, _mantissa, exponent, bits = value
    if abs(exponent + bits) > 4 * _INTEGER_DECIMAL_LIMIT:
        text = _decimal_text_from_log(log_value)
    else:
        text = decimal_text(value, log10)
    return Magnitude(rounded, text, log10, text_bound(error))


def log10_of_complement(complement: Real, prec: int = 80) -> float:
    """log10(1 - c) for 0 <= c <= 1/2, from c, with full relative accuracy near c = 0.

    >>> log10_of_complement(mp.ratio(1, 10**30, 80))
    -4.342944819032518e-31
    >>> math.copysign(1.0, log10_of_complement(mp.ZERO))
    1.0
    """
    natural = mp.log1p_neg(complement, prec)
    return mp.to_float(mp.div(natural, mp.ln10(prec), prec)) + 0.0


def _decimal_text_from_log(log_a: Real) -> str:
    """Decimal text of exp(log_a) for a huge |log_a|, from log10 = e + f, 0 <= f < 1.

    The mantissa is 10**f = exp(f ln 10), with f taken to 96 bits after the integer
    part e: the text is as accurate as log_a itself (absolute error d in log_a is a
    relative error expm1(d) in the value), plus some 2**-120 relative from the steps
    below, plus one rounding to 20 digits.
    """
    prec = mp.magnitude_bits(log_a) + 128
    tenth_power = mp.div(log_a, mp.ln10(prec), prec)
    whole = int(libmp.to_int(tenth_power, libmp.round_floor))
    fraction = mp.sub(tenth_power, mp.real(whole, prec), 128)
    mantissa = mp.exp(mp.mul(fraction, mp.ln10(128), 128), 128)
    digits = _rounded_digits(int(mantissa[1]), int(mantissa[2]), DECIMAL_DIGITS - 1)
    if digits >= _LOWEST_DIGITS * 10:  # 10**f rounded up to 10
        digits, whole = digits // 10, whole + 1
    return scientific_text(str(digits), whole)


