"""Tick-model risk of time-ordered identifiers issued at a growing rate, with a proven bound.

Arrivals are a Poisson process of intensity rate(s) = rate0 growth**(s/Y) (Y the year of
``growth_counts.YEAR_SECONDS``). A tick of length tau with mean u and M = 2**r values has
log-survival -g(u), g(u) = u - M log(1 + u/M) (``core/ticks.py``); as in the steady model
ticks are fractional, so the hazard accrued over [0, t] is H = integral g(rate(s) tau) ds / tau.
The identifiers issued before now are taken as issued at rate0 over the ``past`` seconds
before now, adding (past/tau) g(u0). With x0 = u0 / M = rate0 tau / M, a = (t/Y) ln growth
and g(u) = M sum_{k>=2} (-1)**k (u/M)**k / k, the integral of each power is
u0**k t phi(k a), phi(z) = expm1(z)/z (= (Y / ln growth) (F(u_t) - F(u_0)) for
F(u) = u + M Li2(-u/M), without its cancellation), so

    H = M sum_{k>=2} (-1)**k x0**k / k * (t/tau phi(k a) + past/tau)        (1)

whose weights w_k are positive. phi((k+1)a) <= max(1, e**a) phi(k a) (phi(z) is the
integral of e**(zv) over [0, 1]), so the terms fall in size by at least
xmax = x0 max(1, e**a), the largest u/M met: the series alternates with decreasing terms.
It is summed only while xmax <= 1/2 (a rate per tick up to half the values per tick; past
that the layout refuses the question, field ``horizon``, or ``rate`` when it holds now).

Evaluation at w bits (u = 2**-w, every libmp operation rounded to nearest, logarithm and
expm1 within one unit): x0 within u, x0**k within (2k - 1) u; ln growth from growth at
w + (bits of 1/|growth - 1|) + 8 bits, within 2u, so a within 4u and z = k a within 5u
absolutely |z| 5u; |d ln phi / dz| <= min(1, 1/|z|) (the mean of v under weights e**(zv)),
so phi is off by at most 2u (its own roundings) + 11u max(1, |z|) (the input, z > 0) or
13u (z <= 0); w_k adds 3u; the term's two products and 1/k add 3u. Each term is thus
within e_k = 2 (2k + 8 + 11 max(1, k |a|)) u (the factor 2 covers second-order terms,
e_k <= 2**-20 being required); the additions within u |T_2| each (partial sums lie in
(0, T_2]); the tail after the last term T_K at most |T_{K+1}| <= 2 |T_K|. With E the sum
of these (rounded up), S - E > 0 bounds the true sum from below and E / (S - E) is the
stated relative bound on H, hence on l = -H; the probabilities follow from l
(``core/logprob.py``). The precision doubles until both floats are decided.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core import reporting
from urnbound.core.errors import DomainError, NoConvergence
from urnbound.core.exact import magnitude_of_fraction
from urnbound.core.growth_counts import YEAR_SECONDS
from urnbound.core.logprob import LogProbability, from_log
from urnbound.core.precision import Real
from urnbound.core.results import Magnitude, Method
from urnbound.core.search import RiskInterval
from urnbound.core.ticks import GUARD_BITS, LAST_BITS, TARGET_BITS, TICK_MODEL

#: The largest u/M (identifiers per tick over values per tick) the series is summed at.
HIGHEST_LOAD = Fraction(1, 2)
_UP = libmp.round_ceiling


@dataclass(frozen=True, slots=True)
class GrowingTicks:
    """Identifiers in ticks of ``tick`` seconds with ``random_bits`` random bits each, at
    ``rate`` a second now multiplied by ``growth`` a year, after ``past`` seconds at
    ``rate`` before now (the identifiers already issued)."""

    random_bits: int
    tick: Fraction
    rate: Fraction
    growth: Fraction
    past: Fraction

    @property
    def load_now(self) -> Fraction:
        """x0 = rate tick / M."""
        return self.rate * self.tick / Fraction(2**self.random_bits)

    def last_second(self) -> float:
        """The moment u/M reaches HIGHEST_LOAD (1 - 2**-19), in floats (inf when it never
        does): the series' own check, HIGHEST_LOAD (1 - 2**-20) with a 64-bit x, passes
        up to there."""
        log_growth = math.log1p(float(self.growth - 1))
        if log_growth <= 0:
            return math.inf
        log_room = _ln(HIGHEST_LOAD) + math.log1p(-(2.0**-19)) - _ln(self.load_now)
        return YEAR_SECONDS * log_room / log_growth


@dataclass(frozen=True, slots=True)
class GrowingTickRisk:
    """The tick-model risk at a growing rate over the ticks up to some moment.

    :ivar collision: P(some tick holds two equal identifiers).
    :ivar no_collision: its complement, with its own relative accuracy.
    :ivar relative_error_bound: the larger of the two probabilities' bounds.
    :ivar precision_bits: the working precision that decided both floats.
    """

    random_bits: int
    seconds: Fraction
    collision: Magnitude
    no_collision: Magnitude
    relative_error_bound: float
    precision_bits: int
    method: Method = TICK_MODEL


def growing_tick_risk(ticks: GrowingTicks, seconds: Fraction) -> GrowingTickRisk:
    """The risk over the ticks up to ``seconds`` from now (module docstring, (1)).

    :raises DomainError: (field ``horizon``, or ``rate`` when it holds now) when the rate per
        tick passes half the values per tick by then.

    >>> ticks = GrowingTicks(74, Fraction(1, 1000), Fraction(10**6), Fraction(3, 2), Fraction(0))
    >>> growing_tick_risk(ticks, Fraction(YEAR_SECONDS)).collision.decimal
    '1.2867174261453422261e-6'
    """
    if seconds < 0:
        raise DomainError("a moment before now", field="horizon")
    answer = mp.first_decided(lambda bits: _reported(ticks, seconds, bits), TARGET_BITS,
                              LAST_BITS)
    if answer is None:
        raise NoConvergence("the tick-model risk lies too close to a rounding boundary")
    return answer


def growing_tick_interval(ticks: GrowingTicks, seconds: Fraction, bits: int) -> RiskInterval:
    """The risk and its complement with their bounds at ``bits`` (for certified searches).

    The precision doubles from ``bits`` while the series' own bound is too wide to use.
    """
    found = mp.first_decided(lambda work: _probabilities(ticks, seconds, work), bits,
                             max(bits, LAST_BITS))
    if found is None:
        raise NoConvergence("the growing tick series' bound stays too wide")
    return RiskInterval(found.complement, found.complement_error, found.probability,
                        found.probability_error, found.prec)


def _reported(ticks: GrowingTicks, seconds: Fraction, bits: int) -> GrowingTickRisk | None:
    if ticks.past + seconds == 0:
        zero, one = magnitude_of_fraction(0, 1), magnitude_of_fraction(1, 1)
        return GrowingTickRisk(ticks.random_bits, seconds, zero, one, 0.0, 0)
    found = _probabilities(ticks, seconds, bits)
    if found is None:
        return None
    hit, miss = found.complement, found.probability
    hit_log10 = None
    if mp.magnitude_bits(hit) >= 0:
        hit_log10 = reporting.log10_of_complement(miss)
    collision = reporting.bounded_magnitude(hit, found.complement_error, hit_log10)
    no_collision = reporting.bounded_magnitude_of_log(miss, found.log_probability,
                                                      found.probability_error)
    if collision is None or no_collision is None:
        return None
    bound = max(collision.relative_error_bound, no_collision.relative_error_bound)
    return GrowingTickRisk(ticks.random_bits, seconds, collision, no_collision, bound,
                           found.prec)


def _probabilities(ticks: GrowingTicks, seconds: Fraction, target: int
                   ) -> LogProbability | None:
    """q = exp(-H) and 1 - q with their bounds, or ``None`` when the bound is too wide."""
    if ticks.past + seconds == 0:
        raise DomainError("no identifiers, no risk", field="horizon")  # pragma: no cover
    exponent = _rough_exponent(ticks, seconds)
    a_bits = max(1, math.ceil(abs(exponent))).bit_length()
    work = target + GUARD_BITS + a_bits + 8 + _hazard_bits(ticks, seconds, exponent)
    summed = _hazard_over_m(ticks, seconds, work)
    if summed is None:
        return None
    total, error = summed
    log_miss = mp.neg(mp.scale2(total, ticks.random_bits))
    return from_log(log_miss, error, target)


def _hazard_bits(ticks: GrowingTicks, seconds: Fraction, exponent: float) -> int:
    """About log2 H, at least 0: exp(-H) needs H to as many bits past the point.

    H <= ((past + t) / tau) u_max min(1, x_max) with u_max = u0 max(1, e**a) (M g(x) <=
    u min(1, x)); from bit lengths, so that no float overflows.
    """
    duration, load = ticks.past + seconds, ticks.rate * ticks.tick
    rise = max(0.0, exponent) / math.log(2)
    mean_bits = _bits(load) + rise
    top = _bits(duration) - _bits(ticks.tick) + mean_bits + min(
        0.0, mean_bits - ticks.random_bits) + 2
    return max(0, math.ceil(top))


def _bits(value: Fraction) -> int:
    """An integer within 1 of log2 ``value`` > 0, from bit lengths."""
    return value.numerator.bit_length() - value.denominator.bit_length()


def _rough_exponent(ticks: GrowingTicks, seconds: Fraction) -> float:
    """a = (t/Y) ln growth in floats (for the working precision only)."""
    return float(seconds) / YEAR_SECONDS * math.log1p(float(ticks.growth - 1))


def _log_growth(growth: Fraction, work: int) -> Real:
    """ln growth within 2u: growth rounded at the bits its closeness to 1 costs, plus 8."""
    near = growth - 1
    extra = 8 if near == 0 or abs(near) >= 1 else (
        near.denominator.bit_length() - abs(near.numerator).bit_length() + 9)
    return mp.log(mp.real(growth, work + extra), work)


def _checked_exponent(ticks: GrowingTicks, seconds: Fraction, work: int) -> tuple[Real, Real]:
    """(x0, a) at ``work`` bits, once xmax <= HIGHEST_LOAD is checked (with a margin)."""
    x0 = mp.scale2(mp.real(ticks.rate * ticks.tick, work), -ticks.random_bits)
    a = mp.mul(mp.real(seconds / YEAR_SECONDS, work), _log_growth(ticks.growth, work), work)
    if not mp.less(x0, mp.real(HIGHEST_LOAD, 64)):
        raise DomainError(over_half_now(ticks), field="rate")
    if mp.less(mp.ZERO, a):
        highest = libmp.mpf_mul(x0, libmp.mpf_exp(a, 64), 64)
        if not mp.less(highest, libmp.mpf_mul(mp.real(HIGHEST_LOAD, 64),
                                              libmp.from_rational(2**20 - 1, 2**20, 64), 64)):
            raise DomainError(past_half(ticks), field="horizon")
    return x0, a


def over_half_now(ticks: GrowingTicks) -> str:
    """The refusal of a rate whose identifiers per tick pass HIGHEST_LOAD now."""
    return ("with growth, a time-ordered layout is projected while the identifiers per tick "
            f"stay within half the 2^{ticks.random_bits} values per tick: at this rate they "
            "exceed it now; give a lower rate (or leave out growth)")


def past_half(ticks: GrowingTicks, start: Fraction = Fraction(0)) -> str:
    """The refusal of a horizon past ``GrowingTicks.last_second`` (``start`` seconds into
    the schedule: the days counted from there)."""
    days = (ticks.last_second() - float(start)) / 86_400
    return (f"at growth {float(ticks.growth):g} the identifiers per tick pass half the "
            f"2^{ticks.random_bits} values per tick after about {days:.4g} days; the tick "
            f"model with growth is projected up to there: give a horizon up to "
            f"P{max(0, math.floor(days))}D")


def _hazard_over_m(ticks: GrowingTicks, seconds: Fraction, work: int
                   ) -> tuple[Real, Real] | None:
    """(S, its relative bound) for S = H / M, the series (1) (module docstring)."""
    x0, a = _checked_exponent(ticks, seconds, work)
    steps = mp.real(seconds / ticks.tick, work)
    before = mp.real(ticks.past / ticks.tick, work)
    a_size = libmp.mpf_abs(a)
    positive = mp.less(mp.ZERO, a)
    unit = libmp.from_man_exp(1, -work)
    total, error, first, power = mp.ZERO, mp.ZERO, mp.ZERO, mp.mul(x0, x0, work)
    for k in range(2, 4 * work + 64):
        term = mp.mul(mp.mul(power, mp.div(mp.ONE, mp.real(k, work), work), work),
                      _weight(steps, before, k, a, work), work)
        term_size = libmp.mpf_abs(term)
        first = first if k > 2 else term_size
        total = mp.add(total, term if k % 2 == 0 else mp.neg(term), work)
        error = mp.add_up(error, libmp.mpf_mul(term_size, _term_bound(k, a_size, positive,
                                                                     unit), 64, _UP))
        if mp.is_zero(term) or mp.magnitude_bits(term) < mp.magnitude_bits(total) - work - 4:
            return _relative(total, error, first, term_size, k, unit)
        power = mp.mul(power, x0, work)
    raise NoConvergence("the growing tick series did not converge")  # xmax <= 1/2: unreachable


def _weight(steps: Real, before: Real, k: int, a: Real, work: int) -> Real:
    """w_k = (t/tau) phi(k a) + past/tau."""
    z = mp.mul(mp.real(k, work), a, work)
    phi = mp.ONE if mp.is_zero(z) else mp.div(mp.expm1(z, work + 8), z, work + 8)
    return mp.add(mp.mul(steps, phi, work), before, work)


def _term_bound(k: int, a_size: Real, positive: bool, unit: Real) -> Real:
    """e_k = 2 (2k + 8 + 11 max(1, k|a|)) u (z > 0), or with 13 for 11 max(1, ..) otherwise."""
    spread = libmp.mpf_mul(libmp.from_int(k), a_size, 64, _UP)
    input_part = (libmp.mpf_mul(libmp.from_int(11), _larger(spread, mp.ONE), 64, _UP)
                  if positive else libmp.from_int(13))
    count = libmp.mpf_add(libmp.from_int(2 * k + 8), input_part, 64, _UP)
    return libmp.mpf_mul(libmp.mpf_shift(count, 1), unit, 64, _UP)


def _larger(a: Real, b: Real) -> Real:
    return b if mp.less(a, b) else a


def _relative(total: Real, error: Real, first: Real, last: Real, terms: int, unit: Real
              ) -> tuple[Real, Real] | None:
    """S and E / (S - E): E the terms' bounds plus the additions' and the tail's."""
    additions = libmp.mpf_mul(libmp.from_int(2 * terms), libmp.mpf_mul(first, unit, 64, _UP),
                              64, _UP)
    error = mp.add_up(mp.add_up(error, additions), libmp.mpf_shift(last, 1))
    if not mp.less(libmp.mpf_shift(error, 1), total):
        return None
    floor = libmp.mpf_sub(total, error, 64, libmp.round_floor)
    relative = libmp.mpf_div(error, floor, 64, _UP)
    if not mp.less(relative, libmp.from_man_exp(1, -20)):
        return None
    return total, relative


def _ln(value: Fraction) -> float:
    return (mp.log2_of_int(value.numerator) - mp.log2_of_int(value.denominator)) * math.log(2)
