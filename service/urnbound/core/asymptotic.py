"""Large-scale collision risk: a uniform Stirling expansion with an explicit error bound.

With M = N - n and x = n/N, the logarithm of the no-collision probability is

    L = ln N! - ln M! - n ln N = -(M + 1/2) log1p(-x) - n + D,
    D = R(N) - R(M),  R(z) = sum_{j>=1} B_2j / (2j (2j-1) z**(2j-1)),

the Stirling series of ln z! (the 1/2 ln 2 pi terms cancel). Nothing here assumes
n << sqrt(N): the form holds for every ratio x in (0, 1].

Cancellation. For small x the two leading terms nearly cancel (L ~ -n x / 2 while each
term is ~ n). Below x = 2**-16 they are therefore summed as one positive series,

    -(M + 1/2) log1p(-x) - n = -sum_{k>=2} n x**(k-1) / (k (k-1)) + (1/2) sum_{k>=1} x**k / k,

whose terms fall by a factor x; the tail after a term t is below t * x / (1 - x).
Above 2**-16 the closed form is evaluated with 2*16 + 8 extra bits, which absorb the
cancellation factor 2/x.

Remainder. For real z > 0 the Stirling remainder after K terms has the sign of, and is
smaller than, the first omitted term (DLMF 5.11.ii). So truncating D after K terms
leaves an error below |c_{K+1}| (N**-(2K+1) + M**-(2K+1)) <= 2 |c_{K+1}| M**-(2K+1).
Terms are added until that bound falls under 2**-(target+8) min(1, |L|). When M is too small
for that (n close to N), ln M! is taken exactly from the integer M! instead
(``small-remainder`` form).

Rounding. Every term is formed at a known precision and carries at most a few units in
its last place; each partial sum therefore bounds its rounding error by 2**(c - prec)
times the sum of the absolute values of what went into it (c = 4 to 8, stated per
form, generous against the handful of roundings per term). The reported bound is
truncation plus rounding, rounded upwards.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core.errors import NoConvergence
from urnbound.core.precision import Real

#: Below this ratio n/N the leading terms are summed as a series (see module docstring).
SERIES_RATIO_BITS = 16
#: Extra bits of the closed form above that ratio: cancellation 2/x plus guard.
CLOSED_FORM_EXTRA_BITS = 2 * SERIES_RATIO_BITS + 8
#: Stirling terms tried before falling back to the exact ln M!.
MAX_STIRLING_TERMS = 40
#: Largest M whose factorial the fallback forms exactly (cost ~ M log M bits).
MAX_EXACT_FACTORIAL = 20_000
#: Guard bits on top of the target and the magnitude of L.
GUARD_BITS = 24
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
class _Sum:
    """A partial sum of L with a bound on its rounding and truncation error."""

    total: Real
    error: Real


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
    work = _working_precision(size, count, target_bits)
    rest = size - count
    if rest >= 1:
        estimate = _stirling_form(size, count, target_bits, work)
        if estimate is not None:
            return estimate
    if rest > MAX_EXACT_FACTORIAL:
        raise NoConvergence("no expansion reached the requested accuracy")
    return _small_remainder_form(size, count, work)


def _working_precision(size: int, count: int, target_bits: int) -> int:
    """Bits that keep |L| * 2**-work below 2**-target (cancellation is handled per form)."""
    return target_bits + max(0, _log2_magnitude(size, count)) + GUARD_BITS


def _log2_magnitude(size: int, count: int) -> int:
    """A rough log2 |L| (within a few bits), from float arithmetic on the exponents."""
    log2_size = _log2(size)
    log2_count = _log2(count)
    ratio_log2 = log2_count - log2_size
    if ratio_log2 < -10:
        return math.ceil(2 * log2_count - log2_size)
    ratio = 2.0**ratio_log2
    f = -(1.0 - ratio) * math.log1p(-ratio) - ratio if ratio < 1 else -1.0
    return math.ceil(log2_size + math.log2(max(abs(f), 1e-300)) + 1)


def _log2(value: int) -> float:
    shift = max(0, value.bit_length() - 60)
    return math.log2(value >> shift) + shift


def _stirling_form(size: int, count: int, target_bits: int, work: int) -> LogNoCollision | None:
    """L = -(M+1/2) log1p(-x) - n + D; ``None`` when D's remainder cannot be made small."""
    rest = size - count
    ratio_bits = count.bit_length() - size.bit_length()
    if ratio_bits < -SERIES_RATIO_BITS:
        main = _leading_series(size, count, work)
    else:
        main = _leading_closed_form(size, count, work + CLOSED_FORM_EXTRA_BITS)
    # |L| >= |main| / 2 (D is tiny against it). P(no collision) = exp(L) needs an absolute
    # error in L below 2**-target; the risk -expm1(L) needs a relative one when |L| < 1.
    floor = mp.scale2(mp.absolute(main.total), -1)
    if mp.less(mp.ONE, floor):
        floor = mp.ONE
    tolerance = mp.scale2(floor, -(target_bits + 8))
    correction = _stirling_difference(size, rest, tolerance, work)
    if correction is None:
        return None
    value = mp.add(main.total, correction.total, work)
    error = mp.add_up(mp.add_up(main.error, correction.error), mp.scale2(mp.absolute(value), -work))
    return LogNoCollision(value, error, work)


def _leading_series(size: int, count: int, work: int) -> _Sum:
    """-sum_{k>=2} n x**(k-1)/(k(k-1)) + (1/2) sum_{k>=1} x**k/k, for x < 2**-16."""
    prec = work + 8
    x = mp.real(Fraction(count, size), prec)
    n = mp.real(count, prec)
    total = mp.scale2(x, -1)  # k = 1 of the second sum
    absolute = total
    power = mp.ONE  # x**(k-1)
    for k in range(2, 4 * work + 8):
        power = mp.mul(power, x, prec)
        first = mp.div(mp.mul(n, power, prec), mp.real(k * (k - 1), prec), prec)
        second = mp.div(mp.mul(power, x, prec), mp.real(2 * k, prec), prec)
        term = mp.sub(second, first, prec)
        total = mp.add(total, term, prec)
        absolute = mp.add(absolute, mp.add(first, second, prec), prec)
        if mp.magnitude_bits(first) < mp.magnitude_bits(total) - work - 4:
            # tail < 2x * (last terms) < 2**-(work+19) |total|: inside the bound below
            return _Sum(total, mp.scale2(absolute, 6 - prec))
    raise NoConvergence("leading series did not converge")


def _leading_closed_form(size: int, count: int, prec: int) -> _Sum:
    """-(M + 1/2) log(M/N) - n, evaluated at ``prec`` bits (extra bits absorb cancellation).

    Rounding M/N costs (M + 1/2) 2**-(prec+8) in absolute terms (log is ill-conditioned near
    1); the log, the product and the difference a few units of |first| + n each.
    """
    rest = size - count
    log_ratio = mp.log(mp.real(Fraction(rest, size), prec + 8), prec)
    weight = mp.scale2(mp.real(2 * rest + 1, prec), -1)
    first = mp.neg(mp.mul(weight, log_ratio, prec))
    second = mp.real(count, prec)
    total = mp.sub(first, second, prec)
    spread = mp.add(mp.add(weight, mp.absolute(first), prec), second, prec)
    return _Sum(total, mp.scale2(spread, 4 - prec))


def _stirling_difference(size: int, rest: int, tolerance: Real, work: int) -> _Sum | None:
    """D = R(N) - R(M) with its truncation and rounding bound, or ``None``.

    Each term is a power (a handful of roundings per bit of the exponent) and a product,
    so 2**8 units of its magnitude bound its rounding.
    """
    big = mp.real(size, work)
    small = mp.real(rest, work)
    total = mp.ZERO
    absolute = mp.ZERO
    for j in range(1, MAX_STIRLING_TERMS + 1):
        coefficient = _stirling_coefficient(j, work)
        power = 2 * j - 1
        term_big = mp.mul(coefficient, _inverse_power(big, power, work), work)
        term_small = mp.mul(coefficient, _inverse_power(small, power, work), work)
        total = mp.add(total, mp.sub(term_big, term_small, work), work)
        spread = mp.add(mp.absolute(term_big), mp.absolute(term_small), work)
        absolute = mp.add(absolute, spread, work)
        next_coefficient = mp.absolute(_stirling_coefficient(j + 1, work))
        truncation = mp.scale2(
            mp.mul(next_coefficient, _inverse_power(small, power + 2, work), work), 1)
        if not mp.less(tolerance, truncation):
            return _Sum(total, mp.add_up(truncation, mp.scale2(absolute, 8 - work)))
    return None


def _stirling_coefficient(j: int, prec: int) -> Real:
    """B_2j / (2j (2j-1)), the j-th coefficient of the Stirling series."""
    bernoulli = libmp.mpf_bernoulli(2 * j, prec + 8)
    return mp.div(bernoulli, mp.real(2 * j * (2 * j - 1), prec), prec)


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
        term = mp.mul(_stirling_coefficient(j, prec), _inverse_power(z, 2 * j - 1, prec), prec)
        total = mp.add(total, term, prec)
        following = mp.mul(_stirling_coefficient(j + 1, prec),
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

    >>> r = risk_estimate(2**64, 5_000_000_000)
    >>> round(mp.to_float(r.collision), 6)
    0.492179
    """
    log_estimate = log_no_collision(size, count, target_bits)
    out = target_bits + GUARD_BITS
    value = log_estimate.value
    no_collision = mp.exp(value, out)
    collision = mp.neg(mp.expm1(value, out))
    spread = _expm1_bound(log_estimate.error)
    final_rounding = mp.scale2(mp.ONE, 2 - out)
    ratio = mp.div(no_collision, collision, 53)
    return RiskEstimate(
        collision=collision,
        no_collision=no_collision,
        log_no_collision=value,
        collision_error=mp.add_up(mp.mul(ratio, spread, 53), final_rounding),
        no_collision_error=mp.add_up(spread, final_rounding),
        prec=log_estimate.prec,
    )


def _expm1_bound(error: Real) -> Real:
    """An upper bound on expm1(e) for 0 <= e: e * (1 + e) when e <= 1, else exp(e)."""
    if mp.less(mp.ONE, error):
        return mp.exp(error, 53)
    return mp.mul(error, mp.add_up(mp.ONE, error), 60)
