"""Large-scale collision risk: a uniform Stirling expansion with an explicit error bound.

With M = N - n and x = n/N, the logarithm of the no-collision probability is

    L = ln N! - ln M! - n ln N = -(M + 1/2) log1p(-x) - n + D,
    D = R(N) - R(M),  R(z) = sum_{j>=1} B_2j / (2j (2j-1) z**(2j-1)),

the Stirling series of ln z! (the 1/2 ln 2 pi terms cancel). Nothing here assumes
n << sqrt(N): the form holds for every ratio x in (0, 1].

Fixed point. The parts of L are summed as integers in units of 2**-scale, one unit
being 2**-(target + GUARD_BITS) * min(1, |L|): exp(L) needs L to an absolute
2**-target, and the risk -expm1(L) needs it to a relative 2**-target when |L| < 1.
Fixed point makes cancellation harmless: each part is rounded once, to an absolute
unit, whatever the size of its neighbours.

Leading terms. For small x the two leading terms nearly cancel (L ~ -n x / 2 while
each is ~ n). When x < 2**-16 and few terms suffice they are summed as one series,

    -(M + 1/2) log1p(-x) - n = -sum_{k>=2} n x**(k-1) / (k (k-1)) + (1/2) sum_{k>=1} x**k / k,

with exact integer numerators, each term floored once; terms fall by a factor x, so
once a term floors to zero the tail is under one unit. Otherwise the closed form is
used, its logarithm taken at scale + log2 N + 16 bits so that even after multiplying
by M + 1/2 it is good to a unit.

Remainder. For real z > 0 the Stirling remainder after K terms has the sign of, and is
smaller than, the first omitted term (DLMF 5.11.ii). So truncating D after K terms
leaves an error below |c_{K+1}| (N**-(2K+1) + M**-(2K+1)) <= 2 |c_{K+1}| M**-(2K+1);
terms are added until that is below MAX_TRUNCATION_UNITS units. When n << N the whole
of D is below one unit (Robbins 1955: 1/(12z+1) < R(z) < 1/(12z), so |D| < n/(6NM)),
and it is then bounded rather than summed. When M is small
(n close to N), ln M! is taken from the integer M! instead (``small-remainder`` form,
in floating point with a bound of a few units in the last place per term).

When n/N is below 2**-(target + GUARD_BITS + 2), all of this collapses to its first
term, L = -n(n-1)/(2N), to within the working accuracy (``_tiny_ratio_form`` states the
bound); that is the common case of a large space.

The reported error bound is the sum of the per-term rounding units and the
truncation, converted to relative bounds on the probability and its complement in
``risk_estimate``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import gmpy2
from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core.errors import NoConvergence
from urnbound.core.precision import Real

#: Below this ratio n/N the leading terms are summed as a series (see module docstring).
SERIES_RATIO_BITS = 16
#: Most terms the leading series may take; past that the closed form is cheaper.
MAX_SERIES_TERMS = 6
#: Below this M = N - n the Stirling series of ln M! is not tried (ln M! is formed exactly).
MIN_STIRLING_REST = 256
#: Stirling terms tried before falling back to the exact ln M!.
MAX_STIRLING_TERMS = 40
#: Largest M whose factorial the fallback forms exactly (cost ~ M log M bits).
MAX_EXACT_FACTORIAL = 20_000
#: Guard bits on top of the target and the magnitude of L.
GUARD_BITS = 24
#: Stop adding Stirling terms once the truncation is below this many units of 2**-scale.
MAX_TRUNCATION_UNITS = 2 ** (GUARD_BITS - 16)
#: Smallest space the expansion is used for (below, exact arithmetic is always cheap).
MIN_SIZE = 1024


@dataclass(frozen=True, slots=True)
class LogNoCollision:
    """ln P(no collision) with a bound on its absolute error.

    :ivar value: L, at ``prec`` bits.
    :ivar error: an upper bound on |L_computed - L_true|.
    :ivar prec: working precision in bits.
    """

    value: Real
    error: Real
    prec: int


@dataclass(frozen=True, slots=True)
class _Fixed:
    """A partial sum of L in units of 2**-scale, with a bound on its error in units."""

    total: int
    error: int


def log_no_collision(size: int, count: int, target_bits: int = 64) -> LogNoCollision:
    """ln P(no collision) for 2 <= count <= size, size >= MIN_SIZE.

    The absolute error bound is about 2**-target_bits * min(1, |L|), so that both the
    probability exp(L) and its complement -expm1(L) have ``target_bits`` of relative
    accuracy.

    >>> est = log_no_collision(2**64, 5_000_000_000)
    >>> round(-mp.to_float(est.value), 6)
    0.677626
    """
    if count < 2 or count > size or size < MIN_SIZE:
        raise ValueError("the expansion needs 2 <= count <= size and size >= MIN_SIZE")
    magnitude = _log2_magnitude(size, count)
    # Floating-point forms: |L| * 2**-work stays below 2**-(target + GUARD_BITS).
    work = target_bits + max(0, magnitude) + GUARD_BITS
    rest = size - count
    tiny = _tiny_ratio_form(size, count, target_bits)
    if tiny is not None:
        return tiny
    if rest >= MIN_STIRLING_REST:
        # Fixed point: one unit is 2**-(target + GUARD_BITS) * min(1, |L|).
        scale = target_bits + GUARD_BITS + max(0, -magnitude)
        estimate = _stirling_form(size, count, scale, work)
        if estimate is not None:
            return estimate
    if rest > MAX_EXACT_FACTORIAL:
        raise NoConvergence("no expansion reached the requested accuracy")
    return _small_remainder_form(size, count, work)


def _log2_magnitude(size: int, count: int) -> int:
    """A rough log2 |L| (within a few bits), from float arithmetic on the exponents."""
    log2_size = mp.log2_of_int(size)
    log2_count = mp.log2_of_int(count)
    ratio_log2 = log2_count - log2_size
    if ratio_log2 < -10:
        return math.ceil(2 * log2_count - log2_size)
    ratio = 2.0**ratio_log2
    f = -(1.0 - ratio) * math.log1p(-ratio) - ratio if ratio < 1 else -1.0
    return math.ceil(log2_size + math.log2(max(abs(f), 1e-300)) + 1)


def _tiny_ratio_form(size: int, count: int, target_bits: int) -> LogNoCollision | None:
    """L = -n(n-1)/(2N) (1 + e) when x = n/N is small enough for the accuracy asked, else ``None``.

    The caller needs L to an absolute 2**-E min(1, |L|), E = target + GUARD_BITS, that is
    to a relative 2**-(E + max(0, log2 |L|)): exp(L) is only as good as L is absolutely.
    With |L| < 2**m (m from the bit lengths of n(n-1) and N), prec = E + 2 + max(0, m).

    The leading series (module docstring) is -(n-1)x/2 plus a rest below n x**2, which is
    4x relative to it; D is below n/(6NM) (Robbins), 1/(3(n-1)M) relative. With
    x < 2**-(prec+2), 1/M below 2**-prec, and one rounding of the fraction to prec bits,
    the relative error is below 3 * 2**-prec (1 + 2**-prec) < 2**(2-prec), so the absolute
    error is below 2**(2 + m - prec) <= 2**-E min(1, 2**m).

    >>> est = _tiny_ratio_form(2**8192, 10**60, 64)
    >>> round(mp.to_float(mp.scale2(est.value, 8192)) / -5e119, 12)
    1.0
    >>> _tiny_ratio_form(2**303, 10**60, 64) is None  # |L| ~ 2**96: x is not small enough
    True
    """
    pairs_twice = count * (count - 1)
    log2_bound = pairs_twice.bit_length() - size.bit_length()  # |L| < 2**log2_bound
    prec = target_bits + GUARD_BITS + 2 + max(0, log2_bound)
    if size.bit_length() - count.bit_length() - 1 < prec + 2:  # x < 2**-(gap) needed
        return None
    value = libmp.from_rational(-pairs_twice, 2 * size, prec, mp.NEAREST)
    error = libmp.mpf_shift(mp.absolute(value), 2 - prec)
    return LogNoCollision(value, error, prec)


def _stirling_form(size: int, count: int, scale: int, work: int) -> LogNoCollision | None:
    """L = -(M+1/2) log1p(-x) - n + D in fixed point; ``None`` if D's remainder stays large.

    All parts are summed as integers in units of 2**-scale, chosen by the caller so that
    one unit is 2**-(target + GUARD_BITS) min(1, |L|): exp(L) needs an absolute error in
    L below 2**-target, and -expm1(L) a relative one when |L| < 1.
    """
    rest = size - count
    if _series_terms(size, count, scale) <= MAX_SERIES_TERMS:
        main = _leading_series(size, count, scale)
    else:
        main = _leading_closed_form(size, count, scale)
    correction = _stirling_difference(size, rest, scale)
    if correction is None:
        return None
    value = libmp.from_man_exp(main.total + correction.total, -scale)
    error = libmp.from_man_exp(main.error + correction.error, -scale)
    return LogNoCollision(value, error, max(work, scale + mp.magnitude_bits(value)))


def _series_terms(size: int, count: int, scale: int) -> int:
    """Terms the leading series needs: its k-th term is about n x**(k-1) / k**2."""
    gap = size.bit_length() - count.bit_length() - 1  # x < 2**-gap
    if gap < SERIES_RATIO_BITS:
        return MAX_SERIES_TERMS + 1
    return (count.bit_length() + scale) // gap + 2


def _leading_series(size: int, count: int, scale: int) -> _Fixed:
    """-sum_{k>=2} n**k / (k(k-1) N**(k-1)) + sum_{k>=1} n**k / (2k N**k), for x < 2**-16.

    Each term is floored once (one unit each). Terms fall by a factor x, so once the
    larger one floors to zero the tail is below x / (1 - x) < 1 unit.
    """
    count, size = gmpy2.mpz(count), gmpy2.mpz(size)  # GMP division: far faster on big ints
    total = (count << scale) // (2 * size)
    error = 2
    count_power, size_power = count, size  # n**(k-1), N**(k-1)
    for k in range(2, MAX_SERIES_TERMS + 2):
        count_power *= count
        shifted = count_power << scale
        first = shifted // (k * (k - 1) * size_power)
        size_power *= size
        second = shifted // (2 * k * size_power)
        total += second - first
        error += 2
        if first == 0:
            return _Fixed(int(total), error)
    raise NoConvergence("leading series did not converge")


def _leading_closed_form(size: int, count: int, scale: int) -> _Fixed:
    """-(M + 1/2) log(M/N) - n, when the series is long, with log at scale + log2 N + 16 bits.

    Rounding M/N costs (M + 1/2) 2**-(prec+8) absolutely (log is ill-conditioned near
    1), the log and the product |first| 2**-prec each, the conversion one unit: with
    |first| < N and prec as chosen, all four stay below 4 units.
    """
    rest = size - count
    prec = scale + size.bit_length() + 16
    log_ratio = mp.log(libmp.from_rational(rest, size, prec + 8, mp.NEAREST), prec)
    weight = libmp.from_man_exp(2 * rest + 1, -1)
    first = int(libmp.to_fixed(mp.neg(mp.mul(weight, log_ratio, prec)), scale))
    return _Fixed(first - (count << scale), 4)


def _stirling_difference(size: int, rest: int, scale: int) -> _Fixed | None:
    """D = R(N) - R(M) in units of 2**-scale, or ``None`` if its remainder stays large.

    Term j is c_j (M**p - N**p) / (N**p M**p) with p = 2j - 1, floored once. After it,
    the truncation is below 2 |c_(j+1)| / M**(p+2) (first omitted terms of R(N), R(M)).
    """
    if (size - rest).bit_length() + scale <= size.bit_length() + rest.bit_length():
        # Robbins (1955): 1/(12z+1) < R(z) < 1/(12z), so |D| < n / (6 N M) < one unit here.
        return _Fixed(0, 1)
    total = gmpy2.mpz(0)
    error = 0
    big_power, small_power = gmpy2.mpz(size), gmpy2.mpz(rest)
    big_square, small_square = big_power * big_power, small_power * small_power
    for j in range(1, MAX_STIRLING_TERMS + 1):
        numerator, denominator = _stirling_coefficient(j)
        difference = numerator * (small_power - big_power)
        total += (difference << scale) // (denominator * big_power * small_power)
        error += 1
        following, following_denominator = _stirling_coefficient(j + 1)
        small_power *= small_square
        truncation = (2 * abs(following) << scale) // (following_denominator * small_power) + 1
        if truncation <= MAX_TRUNCATION_UNITS:
            return _Fixed(int(total), error + int(truncation))
        big_power *= big_square
    return None


def _stirling_coefficient(j: int) -> tuple[int, int]:
    """B_2j / (2j (2j-1)), the j-th Stirling coefficient, as (numerator, denominator)."""
    return _STIRLING_COEFFICIENTS[j - 1]


def _coefficient_table(terms: int) -> tuple[tuple[int, int], ...]:
    table = []
    for j in range(1, terms + 1):
        numerator, denominator = libmp.bernfrac(2 * j)
        table.append((int(numerator), int(denominator) * 2 * j * (2 * j - 1)))
    return tuple(table)


#: Stirling coefficients for j = 1 .. MAX_STIRLING_TERMS + 1 (an immutable constant).
_STIRLING_COEFFICIENTS = _coefficient_table(MAX_STIRLING_TERMS + 1)


def _stirling_coefficient_real(j: int, prec: int) -> Real:
    numerator, denominator = _stirling_coefficient(j)
    return mp.real(Fraction(numerator, denominator), prec)


def _inverse_power(value: Real, power: int, prec: int) -> Real:
    return libmp.mpf_pow_int(value, -power, prec, mp.NEAREST)


def _small_remainder_form(size: int, count: int, work: int) -> LogNoCollision:
    """L = (M+1/2) ln N - N + ln(2 pi)/2 + R(N) - ln M!, with ln M! from the integer M!.

    Used when M = N - n is too small for the Stirling series of ln M!. The terms are of
    size N ln N while |L| is of size N, so log2(ln N) + 8 more bits are carried.
    """
    rest = size - count
    prec = work + size.bit_length().bit_length() + 8
    big = mp.real(size, prec)
    log_big = mp.log(big, prec)
    terms = [
        mp.mul(mp.scale2(mp.real(2 * rest + 1, prec), -1), log_big, prec),
        mp.neg(big),
        mp.scale2(mp.log(mp.scale2(libmp.mpf_pi(prec), 1), prec), -1),
        mp.neg(mp.log(mp.real(math.factorial(rest), prec), prec)),
    ]
    series, truncation = _stirling_series(big, prec)
    terms.append(series)
    total = mp.ZERO
    absolute = mp.ZERO
    for term in terms:
        total = mp.add(total, term, prec)
        absolute = mp.add(absolute, mp.absolute(term), prec)
    rounding = mp.scale2(absolute, 8 - prec)
    return LogNoCollision(total, mp.add_up(truncation, rounding), prec)


def _stirling_series(z: Real, prec: int) -> tuple[Real, Real]:
    """R(z) for z >= MIN_SIZE and the bound |first omitted term| on its remainder."""
    total = mp.ZERO
    goal = -prec - 8
    for j in range(1, MAX_STIRLING_TERMS + 1):
        term = mp.mul(_stirling_coefficient_real(j, prec), _inverse_power(z, 2 * j - 1, prec), prec)
        total = mp.add(total, term, prec)
        following = mp.mul(_stirling_coefficient_real(j + 1, prec),
                           _inverse_power(z, 2 * j + 1, prec), prec)
        if mp.magnitude_bits(following) < goal:
            return total, mp.absolute(following)
    raise NoConvergence("Stirling series of ln N! did not converge")


@dataclass(frozen=True, slots=True)
class RiskEstimate:
    """Collision risk and its complement from L, each with a relative error bound.

    :ivar collision: 1 - exp(L) = -expm1(L).
    :ivar no_collision: exp(L).
    :ivar log_no_collision: L itself.
    :ivar collision_error: bound on |computed - true| / true for ``collision``.
    :ivar no_collision_error: the same for ``no_collision``.
    """

    collision: Real
    no_collision: Real
    log_no_collision: Real
    collision_error: Real
    no_collision_error: Real
    prec: int


def risk_estimate(size: int, count: int, target_bits: int = 64) -> RiskEstimate:
    """Risk and complement with ``target_bits`` of relative accuracy each.

    An error e in L moves exp(L) by a factor exp(e) and 1 - exp(L) by
    exp(L) * expm1(e), so the relative bounds are expm1(e) and
    (exp(L) / (1 - exp(L))) * expm1(e), plus the final rounding at ``out`` bits.
    Each factor is bounded by the next power of two above it (the bound may be up to
    four times loose in that part, which is some 2**-80 of the answer).

    >>> r = risk_estimate(2**64, 5_000_000_000)
    >>> round(mp.to_float(r.collision), 6)
    0.492179
    """
    log_estimate = log_no_collision(size, count, target_bits)
    out = target_bits + GUARD_BITS
    value = log_estimate.value
    no_collision, collision = _exp_and_complement(value, out)
    spread = _expm1_bound_bits(log_estimate.error)
    ratio = mp.magnitude_bits(no_collision) - mp.magnitude_bits(collision) + 1
    final_rounding = libmp.from_man_exp(1, 2 - out)
    return RiskEstimate(
        collision=collision,
        no_collision=no_collision,
        log_no_collision=value,
        collision_error=mp.add_up(libmp.from_man_exp(1, spread + ratio), final_rounding),
        no_collision_error=mp.add_up(libmp.from_man_exp(1, spread), final_rounding),
        prec=log_estimate.prec,
    )


def _exp_and_complement(value: Real, out: int) -> tuple[Real, Real]:
    """exp(L) and 1 - exp(L) for L < 0, each to ``out`` bits, from one exponential.

    exp is formed with -log2|L| extra bits, so that 1 - exp(L) keeps ``out`` bits
    when L is small; below 2**-(out+4), 1 - exp(L) = -L (1 + L/2 + ...) is -L to
    within a relative 2**-(out+4).
    """
    bits = mp.magnitude_bits(value)
    if bits < -out - 4:
        return mp.add(mp.ONE, value, out), mp.neg(value)
    wide = mp.exp(value, out + max(0, -bits) + 12)
    return libmp.mpf_pos(wide, out, mp.NEAREST), mp.sub(mp.ONE, wide, out)


def _expm1_bound_bits(error: Real) -> int:
    """k with expm1(e) < 2**k for the error bound e >= 0.

    For e < 1/2, expm1(e) < e (1 + e) < 2e < 2**(mag(e) + 1); above, exp(e) < 2**(2e).

    >>> _expm1_bound_bits(libmp.from_man_exp(3, -70))  # 3 * 2**-70 < 2**-68
    -67
    """
    bits = mp.magnitude_bits(error)
    if bits < 0:
        return bits + 1
    return 2 * int(libmp.to_int(error, libmp.round_ceiling)) + 1
