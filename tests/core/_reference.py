"""Independent reference values that the core's tests hold the core against.

Nothing here imports the core: the exact values come from sympy rationals and
the large-scale values from mpmath at high precision in a private context.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from fractions import Fraction

import mpmath
import sympy

#: The core's decimal text: one leading digit, 19 more, a decimal exponent.
DECIMAL_TEXT = re.compile(r"^([1-9])\.([0-9]{19})e([+-]?[0-9]+)$")
#: Largest gap between a real number and its 20-significant-digit rounding, relative.
TEXT_ROUNDING = Fraction(5, 10**20)
#: Smallest positive normal float64.
SMALLEST_NORMAL = 2.2250738585072014e-308


@dataclass(frozen=True, slots=True)
class ParsedDecimal:
    """The core's decimal text split into an integer mantissa and an exponent.

    The value is ``mantissa * 10**(exponent - 19)``.
    """

    mantissa: int
    exponent: int


def parse_decimal(text: str) -> ParsedDecimal:
    """Split a non-zero decimal text of the core into integer parts.

    >>> parse_decimal("5.0729723432398540080e-1")
    ParsedDecimal(mantissa=50729723432398540080, exponent=-1)
    """
    match = DECIMAL_TEXT.match(text)
    assert match is not None, f"not 20 significant digits in scientific form: {text!r}"
    return ParsedDecimal(int(match.group(1) + match.group(2)), int(match.group(3)))


def fraction_of_text(text: str) -> Fraction:
    """Exact value of a decimal text whose exponent is of modest size.

    >>> fraction_of_text("2.5000000000000000000e-1")
    Fraction(1, 4)
    """
    if text == "0":
        return Fraction(0)
    parsed = parse_decimal(text)
    assert abs(parsed.exponent) < 5000, "exponent too large for an exact fraction"
    return Fraction(parsed.mantissa) * Fraction(10) ** (parsed.exponent - 19)


def floor_log10(x: Fraction) -> int:
    """The integer e with 10**e <= x < 10**(e+1), for x > 0.

    >>> floor_log10(Fraction(1, 1000)), floor_log10(Fraction(999)), floor_log10(Fraction(1000))
    (-3, 2, 3)
    """
    bits = x.numerator.bit_length() - x.denominator.bit_length()
    e = math.floor(bits * 0.30102999566398120) - 1
    while Fraction(10) ** (e + 1) <= x:
        e += 1
    while Fraction(10) ** e > x:
        e -= 1
    return e


def rounded_candidates(x: Fraction, digits: int = 20) -> set[tuple[int, int]]:
    """The (mantissa, exponent) pairs a correct rounding of ``x`` to ``digits`` may give.

    Two pairs on an exact tie (either neighbour is accepted), one otherwise.

    >>> sorted(rounded_candidates(Fraction(1, 3), 3))
    [(333, -1)]
    >>> sorted(rounded_candidates(Fraction(1235, 1000), 3))
    [(123, 0), (124, 0)]
    >>> sorted(rounded_candidates(Fraction(9999, 1000), 3))
    [(100, 1)]
    """
    assert x > 0
    e = floor_log10(x)
    scaled = x * Fraction(10) ** (digits - 1 - e)
    low = math.floor(scaled)
    rest = scaled - low
    if rest < Fraction(1, 2):
        picks = [low]
    elif rest > Fraction(1, 2):
        picks = [low + 1]
    else:
        picks = [low, low + 1]
    out = set()
    for m in picks:
        if m == 10**digits:
            out.add((10 ** (digits - 1), e + 1))
        else:
            out.add((m, e))
    return out


def exact_no_collision(size: int, count: int) -> Fraction:
    """P(all distinct) = N(N-1)...(N-n+1) / N**n, by sympy's falling factorial.

    >>> exact_no_collision(365, 2)
    Fraction(364, 365)
    """
    if count > size:
        return Fraction(0)
    value = sympy.Rational(sympy.ff(size, count), sympy.Integer(size) ** count)
    return Fraction(int(value.p), int(value.q))


def exact_risk(size: int, count: int) -> Fraction:
    """P(some two of ``count`` uniform draws from ``size`` values coincide), exactly.

    >>> exact_risk(2, 2), exact_risk(3, 4)
    (Fraction(1, 2), Fraction(1, 1))
    """
    return 1 - exact_no_collision(size, count)


def reference_context(size: int) -> mpmath.ctx_mp.MPContext:
    """A private mpmath context at 4*log2(N) + 200 bits or more."""
    mp = mpmath.MPContext()
    mp.prec = 4 * size.bit_length() + 200
    return mp


@dataclass(frozen=True, slots=True)
class HighPrecisionRisk:
    """Risk and complement as natural logs in a private high-precision context.

    ``ln_risk`` / ``ln_no_collision`` are ``None`` for an exact zero.
    """

    mp: mpmath.ctx_mp.MPContext
    ln_risk: mpmath.mpf | None
    ln_no_collision: mpmath.mpf | None


def ln_no_collision_direct(mp: mpmath.ctx_mp.MPContext, size: int, count: int) -> mpmath.mpf:
    """ln prod_{i<n} (1 - i/N), summed term by term with log1p."""
    n_mp = mp.mpf(size)
    return mp.fsum(mp.log1p(-mp.mpf(i) / n_mp) for i in range(1, count))


def ln_no_collision_gamma(mp: mpmath.ctx_mp.MPContext, size: int, count: int) -> mpmath.mpf:
    """ln(N! / ((N-n)! N**n)) by log-gamma."""
    return (
        mp.loggamma(mp.mpf(size) + 1)
        - mp.loggamma(mp.mpf(size - count) + 1)
        - count * mp.log(mp.mpf(size))
    )


def high_precision_risk(size: int, count: int) -> HighPrecisionRisk:
    """Risk and complement from mpmath: direct product for small n, log-gamma otherwise."""
    mp = reference_context(size)
    if count <= 1:
        return HighPrecisionRisk(mp, None, mp.mpf(0))
    if count > size:
        return HighPrecisionRisk(mp, mp.mpf(0), None)
    if count <= 64:
        ln_nc = ln_no_collision_direct(mp, size, count)
    else:
        ln_nc = ln_no_collision_gamma(mp, size, count)
    # ln(1 - e**L): by log1p where the risk is near 1, so it keeps its relative accuracy
    ln_risk = mp.log1p(-mp.exp(ln_nc)) if ln_nc < -1 else mp.log(-mp.expm1(ln_nc))
    return HighPrecisionRisk(mp, ln_risk, ln_nc)


def ln_of_fraction(mp: mpmath.ctx_mp.MPContext, x: Fraction) -> mpmath.mpf | None:
    """Natural log of a non-negative fraction, ``None`` for zero."""
    if x == 0:
        return None
    return mp.log(mp.mpf(x.numerator)) - mp.log(mp.mpf(x.denominator))


def exact_high_precision_risk(mp: mpmath.ctx_mp.MPContext, risk: Fraction) -> HighPrecisionRisk:
    """The logs of an exact risk and of its complement, in the given context."""
    return HighPrecisionRisk(mp, ln_of_fraction(mp, risk), ln_of_fraction(mp, 1 - risk))


def ln_of_text(mp: mpmath.ctx_mp.MPContext, text: str) -> mpmath.mpf:
    """Natural log of a non-zero decimal text, safe for exponents of any size."""
    parsed = parse_decimal(text)
    return mp.log(mp.mpf(parsed.mantissa)) + (parsed.exponent - 19) * mp.ln10


def relative_gap(mp: mpmath.ctx_mp.MPContext, ln_ours: mpmath.mpf, ln_ref: mpmath.mpf) -> float:
    """|ours - ref| / ref computed from the two natural logs."""
    return float(abs(mp.expm1(ln_ours - ln_ref)))


def nearest_float(x: mpmath.mpf) -> float:
    """The float64 nearest to a (high-precision) mpmath value, subnormals included.

    Through Python's exact rational division, which rounds correctly (half to even), so
    independently of mpmath's own float conversion.
    """
    mantissa, exponent = x.man_exp
    if mantissa == 0:
        return 0.0
    exact = Fraction(int(mantissa)) * Fraction(2) ** int(exponent)
    try:
        return float(exact)
    except OverflowError:
        return math.inf if exact > 0 else -math.inf


def rounding_is_settled(mp: mpmath.ctx_mp.MPContext, x: mpmath.mpf, slack_bits: int) -> bool:
    """True when x moved by a relative 2**-(prec - slack_bits) still rounds to one float.

    Guards tests that compare with the correct rounding of a reference: the reference
    is itself only good to its working precision.
    """
    eps = mp.mpf(2) ** (slack_bits - mp.prec)
    return nearest_float(x * (1 - eps)) == nearest_float(x * (1 + eps))
