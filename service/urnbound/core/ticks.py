"""Collision risk of time-ordered identifiers: the tick model, with a proven error bound.

A time-ordered identifier carries a timestamp of tick length tau and r random bits drawn
afresh for every identifier, so two identifiers can be equal only within one tick. With
arrivals a Poisson process, the count in one tick is Poisson with mean mu, and given n
arrivals the chance that all are distinct is ff(M, n) / M**n for M = 2**r values. Summed
over n (the binomial theorem),

    P(no collision in one tick) = sum_n e**-mu mu**n / n! * ff(M, n) / M**n
                                = e**-mu (1 + mu/M)**M = exp(-M g(mu/M)),

with g(x) = x - log1p(x) >= 0. Ticks are independent, so over ``ticks`` ticks of mean mu
the logarithm is l = -ticks M g(mu/M). A load may be split into classes of ticks
(a burst: a share of the ticks at a higher mean), and then l = -M sum_c ticks_c g(mu_c/M).

Evaluation at w bits (u = 2**-w, every libmp operation rounded to nearest):

* g(x) for x <= 2**-16 is the alternating series x**2/2 - x**3/3 + ... (terms fall by a
  factor x: a few units); above, x - log1p(x) with the logarithm at w + 40 bits, which
  covers the cancellation (x / g(x) <= 2**17 there). x = mu/M rounded costs at most twice
  its rounding (the condition x g'(x) / g(x) = x**2 / ((1 + x) g(x)) is at most 2). So g
  is within 6u relative; ticks rounded and the product, 2u; the sum of non-negative terms,
  u per term; M a power of two, exact. Bound stated: (8 + classes) u relative on l.
* P(no collision) = exp(l) and P(collision) = 1 - exp(l), each with its bound, from l and
  its relative bound (``core/logprob.py``).

w is the target, plus the bits of |l| (exp needs l absolutely), plus guard bits, and is
doubled until both floats are decided. Tails stay relative: a risk of 1e-300 or a
no-collision chance of exp(-1e40) keep their relative accuracy. The expected number of
equal pairs, sum_c ticks_c mu_c**2 / (2M) (E[n(n-1)] = mu**2 for a Poisson count), is exact;
the expected duplicates, sum_c ticks_c M (x_c - 1 + e**-x_c), carry a bound of the same
kind (16u relative, the series or expm1 at extra bits).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction

from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core import reporting
from urnbound.core.errors import DomainError, NoConvergence
from urnbound.core.exact import magnitude_of_fraction
from urnbound.core.logprob import from_log
from urnbound.core.precision import Real
from urnbound.core.results import Magnitude, Method
from urnbound.core.search import (
    RiskInterval,
    certified_boundary,
    hazard,
    interval_verdict,
    log2_of_real,
)

#: The method name of every tick-model answer.
TICK_MODEL: Method = "tick-model"
#: First relative accuracy asked, in bits, and the last before giving up.
TARGET_BITS = 64
LAST_BITS = 1024
#: Guard bits on top of the target and the magnitude of l.
GUARD_BITS = 16


@dataclass(frozen=True, slots=True)
class TickLoad:
    """``ticks`` ticks (a rational number of them), each with Poisson mean ``mean``."""

    ticks: Fraction
    mean: Fraction


@dataclass(frozen=True, slots=True)
class TickRisk:
    """Risk that two time-ordered identifiers coincide within some tick.

    :ivar collision: P(some tick holds two equal identifiers).
    :ivar no_collision: its complement, with its own relative accuracy.
    :ivar expected_colliding_pairs: sum of ticks mu**2 / (2M), exact.
    :ivar expected_duplicates: expected identifiers that repeat an earlier one in their
        tick, with its bound.
    :ivar reciprocal_risk: 1 / collision ("one in X"), ``None`` for a risk of 0.
    :ivar relative_error_bound: the larger of the two probabilities' bounds.
    :ivar precision_bits: the working precision that decided both floats.
    """

    random_bits: int
    loads: tuple[TickLoad, ...]
    collision: Magnitude
    no_collision: Magnitude
    expected_colliding_pairs: Magnitude
    expected_duplicates: Magnitude
    reciprocal_risk: Magnitude | None
    relative_error_bound: float
    precision_bits: int
    method: Method = TICK_MODEL


def steady_loads(rate: Fraction, tick: Fraction, duration: Fraction,
                 burst: Fraction = Fraction(1), burst_share: Fraction = Fraction(0)
                 ) -> tuple[TickLoad, ...]:
    """The tick classes of a mean ``rate`` over ``duration``, busiest ``burst_share`` at
    ``burst`` times the mean and the rest slower, so that the mean rate is kept.

    :raises DomainError: (field ``burst``) when burst * burst_share > 1 (the other ticks
        would need a negative rate), or burst < 1.

    >>> steady_loads(Fraction(1000), Fraction(1, 1000), Fraction(10))
    (TickLoad(ticks=Fraction(10000, 1), mean=Fraction(1, 1)),)
    >>> [(l.ticks, l.mean) for l in steady_loads(Fraction(10), Fraction(1), Fraction(100),
    ...                                          Fraction(4), Fraction(1, 8))]
    [(Fraction(25, 2), Fraction(40, 1)), (Fraction(175, 2), Fraction(40, 7))]
    """
    ticks, mean = duration / tick, rate * tick
    if burst < 1:
        raise DomainError("burst must be at least 1 (the peak over the mean rate)", field="burst")
    if burst == 1 or burst_share == 0:
        return (TickLoad(ticks, mean),)
    if burst * burst_share > 1:
        raise DomainError("burst x burst_share must be at most 1: the busiest share of ticks "
                          "cannot carry more than the whole load", field="burst")
    busy = TickLoad(ticks * burst_share, mean * burst)
    if burst_share == 1:
        return (busy,)
    rest = TickLoad(ticks * (1 - burst_share), mean * (1 - burst * burst_share) / (1 - burst_share))
    return (busy, rest) if rest.mean > 0 else (busy,)


def tick_risk(random_bits: int, loads: Sequence[TickLoad]) -> TickRisk:
    """The tick model's risk for ``random_bits`` random bits per tick and these loads.

    >>> r = tick_risk(74, steady_loads(Fraction(10**6), Fraction(1, 1000), Fraction(31536000)))
    >>> r.collision.decimal
    '8.3475062111461937124e-7'
    """
    loads = _checked(random_bits, loads)
    answer = mp.first_decided(lambda bits: _reported(random_bits, loads, bits), TARGET_BITS,
                              LAST_BITS)
    if answer is None:
        raise NoConvergence("the tick-model risk lies too close to a rounding boundary")
    return answer


def tick_interval(random_bits: int, loads: Sequence[TickLoad], bits: int) -> RiskInterval:
    """The risk and its complement with their bounds at ``bits`` (for certified searches)."""
    bounded = _bounded(random_bits, tuple(loads), bits)
    return RiskInterval(bounded[2], bounded[3], bounded[0], bounded[1], bounded[5])


def _checked(random_bits: int, loads: Sequence[TickLoad]) -> tuple[TickLoad, ...]:
    if random_bits < 0:
        raise DomainError("random_bits must be at least 0", field="random_bits")
    if any(load.ticks < 0 or load.mean < 0 for load in loads):
        raise DomainError("ticks and means must be non-negative", field="rate")
    return tuple(load for load in loads if load.ticks > 0 and load.mean > 0)


def _reported(random_bits: int, loads: tuple[TickLoad, ...], bits: int) -> TickRisk | None:
    if not loads:
        zero = magnitude_of_fraction(0, 1)
        one = magnitude_of_fraction(1, 1)
        return TickRisk(random_bits, loads, zero, one, zero, zero, None, 0.0, 0)
    miss, miss_error, hit, hit_error, log_miss, work = _bounded(random_bits, loads, bits)
    hit_log10 = None
    if mp.magnitude_bits(hit) >= 0:
        hit_log10 = reporting.log10_of_complement(miss)
    collision = reporting.bounded_magnitude(hit, hit_error, hit_log10)
    no_collision = reporting.bounded_magnitude_of_log(miss, log_miss, miss_error)
    duplicates = _duplicates(random_bits, loads, bits)
    if collision is None or no_collision is None or duplicates is None:
        return None
    reciprocal = _reciprocal(hit, hit_error, collision.log10, work)
    if reciprocal is None:
        return None
    return TickRisk(random_bits, loads, collision, no_collision, _pairs(random_bits, loads),
                    duplicates, reciprocal, max(collision.relative_error_bound,
                                                no_collision.relative_error_bound), work)


def _reciprocal(hit: Real, error: Real, log10: float | None, work: int) -> Magnitude | None:
    """1 / hit: off by e / (1 - e) <= e (1 + 2e) for e <= 1/2, plus its rounding."""
    if not mp.less(error, libmp.from_man_exp(1, -1)):
        return None
    up = libmp.round_ceiling
    spread = libmp.mpf_mul(error, libmp.mpf_add(mp.ONE, libmp.mpf_shift(error, 1), 64, up),
                           64, up)
    total = mp.add_up(spread, libmp.from_man_exp(1, 1 - work))
    return reporting.bounded_magnitude(mp.div(mp.ONE, hit, work), total,
                                       None if log10 is None else 0.0 - log10)


def _pairs(random_bits: int, loads: tuple[TickLoad, ...]) -> Magnitude:
    total = sum((load.ticks * load.mean**2 for load in loads), Fraction(0)) / 2 ** (random_bits + 1)
    return magnitude_of_fraction(total.numerator, total.denominator)


def _magnitude_bits(random_bits: int, loads: tuple[TickLoad, ...]) -> int:
    """An upper bound on log2 |l|: M g(x) <= mu min(1, x) for each tick."""
    top = 0
    for load in loads:
        ticks = load.ticks.numerator.bit_length() - load.ticks.denominator.bit_length() + 1
        mean = load.mean.numerator.bit_length() - load.mean.denominator.bit_length() + 1
        top = max(top, ticks + mean + min(0, mean - random_bits) + 1)
    return top + len(loads).bit_length()


def _bounded(random_bits: int, loads: tuple[TickLoad, ...], target: int
             ) -> tuple[Real, Real, Real, Real, Real, int]:
    """(miss, its bound, hit, its bound, l, w): the module docstring's evaluation."""
    work = target + max(0, _magnitude_bits(random_bits, loads)) + GUARD_BITS
    total = mp.ZERO
    for load in loads:
        ratio = mp.scale2(mp.real(load.mean, work), -random_bits)
        term = mp.mul(mp.real(load.ticks, work), excess(ratio, work), work)
        total = mp.add(total, term, work)
    log_miss = mp.neg(mp.scale2(total, random_bits))
    found = from_log(log_miss, libmp.from_man_exp(8 + len(loads), -work), target)
    return (found.probability, found.probability_error, found.complement,
            found.complement_error, log_miss, found.prec)


def _alternating_unit(k: int, prec: int) -> Real:
    value = mp.div(mp.ONE, mp.real(k, prec + 8), prec + 8)
    return value if k % 2 == 0 else mp.neg(value)


def excess(x: Real, prec: int) -> Real:
    """g(x) = x - log1p(x) for x >= 0 with full relative accuracy (module docstring).

    >>> mp.to_float(excess(mp.real(Fraction(1, 10**20), 80), 80))
    5e-41
    >>> round(mp.to_float(excess(mp.ONE, 80)), 12)
    0.30685281944
    """
    if mp.is_zero(x):
        return mp.ZERO
    if mp.magnitude_bits(x) <= -mp.SERIES_BITS:
        return mp.power_series(x, 2, lambda k: _alternating_unit(k, prec), prec)
    work = prec + 2 * mp.SERIES_BITS + 8
    return mp.sub(x, mp.log(mp.add(mp.ONE, x, work), work), prec)


def _duplicates(random_bits: int, loads: tuple[TickLoad, ...], target: int) -> Magnitude | None:
    """sum_c ticks_c M (x_c - 1 + e**-x_c), each part within 8u, the sum within 16u."""
    saturated = _saturated_duplicates(random_bits, loads)
    if saturated is not None:
        return saturated
    work = target + GUARD_BITS
    total = mp.ZERO
    for load in loads:
        ratio = mp.scale2(mp.real(load.mean, work), -random_bits)
        part = mp.expm1_minus(mp.neg(ratio), work)
        total = mp.add(total, mp.mul(mp.real(load.ticks, work), part, work), work)
    value = mp.scale2(total, random_bits)
    return reporting.bounded_magnitude(value, libmp.from_man_exp(16, -work))


def _saturated_duplicates(random_bits: int, loads: tuple[TickLoad, ...]) -> Magnitude | None:
    """The expected duplicates V + d when every tick is so full that d is below every gap.

    With M = 2**random_bits, V = sum ticks (mean - M) is rational and d = sum ticks M e**-x
    (x = mean / M) positive. Every rounding boundary of a float or a 20-digit text near V
    is a multiple of 2**-a 10**-c with 2**a 10**c dividing D = 2**max(0, 60 - e)
    10**max(0, 25 - E) (e and E lower bounds of log2 V and log10 V), so a boundary other
    than V is at least 1 / (q D) away from V = p / q. When d < t = 1 / (2 q D), V + d and
    V + t round alike, even where V is itself a boundary (a tie only d's sign breaks, which
    no precision decides: at one value per tick and 4e7 per tick, V is an odd integer next
    to 2**53). The figure is then V + t, formed exactly. ``None`` when d may be larger.
    """
    if any(load.mean <= 2**random_bits for load in loads):
        return None
    total = sum((load.ticks * (load.mean - 2**random_bits) for load in loads), Fraction(0))
    if total <= 0:
        return None
    numerator, denominator = total.numerator, total.denominator
    two = numerator.bit_length() - denominator.bit_length() - 1
    ten = len(str(numerator)) - len(str(denominator)) - 2
    gap_denominator = 2 * denominator * 2 ** max(0, 60 - two) * 10 ** max(0, 25 - ten)
    # d <= ticks M 2**-floor(1.4426 x) (log2 e > 1.4426), summed over the loads.
    slack_bits = max(
        math.ceil(load.ticks).bit_length() + random_bits + len(loads).bit_length()
        - math.floor(Fraction(14426, 10000) * load.mean / 2**random_bits)
        for load in loads)
    if slack_bits >= -gap_denominator.bit_length():
        return None
    above = total + Fraction(1, gap_denominator)
    return magnitude_of_fraction(above.numerator, above.denominator)


# --- inverse questions -----------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class RateFamily:
    """The tick-model risk over whole rates per second 0 .. highest (rising in the rate)."""

    random_bits: int
    tick: Fraction
    duration: Fraction
    highest: int
    burst: Fraction = Fraction(1)
    burst_share: Fraction = Fraction(0)

    @property
    def lowest(self) -> int:
        return 0

    @property
    def rising(self) -> bool:
        return True

    def loads(self, rate: int) -> tuple[TickLoad, ...]:
        return steady_loads(Fraction(rate), self.tick, self.duration, self.burst,
                            self.burst_share)

    def first_guess(self, max_risk: Fraction) -> int:
        """rate = sqrt(2 M t / (tau D)) from l ~ -(D/tau) (rate tau)**2 / (2M) = -t."""
        log2_rate = (self.random_bits + 1 + log2_of_real(hazard(max_risk, 64))
                     - math.log2(self.tick) - math.log2(self.duration)) / 2
        return int(2 ** min(log2_rate, 110.0))

    def known(self, index: int) -> Fraction | None:
        return Fraction(0) if index == 0 else None

    def start_bits(self, index: int) -> int:
        return 64 + index.bit_length()

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        return tick_interval(self.random_bits, _checked(self.random_bits, self.loads(index)),
                             bits)

    def exact_first(self, index: int) -> bool:
        return False

    def exact_allowed(self, index: int) -> bool:
        return False

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:  # pragma: no cover
        raise NoConvergence("the tick model has no exact path")


@dataclass(frozen=True, slots=True)
class BitsFamily:
    """The tick-model risk over random bits per tick 1 .. highest (falling in the bits)."""

    loads_of: tuple[TickLoad, ...]
    highest: int

    @property
    def lowest(self) -> int:
        return 1

    @property
    def rising(self) -> bool:
        return False

    def first_guess(self, max_risk: Fraction) -> int:
        """r = log2(sum ticks mu**2 / (2 t)): where the leading term meets the hazard."""
        pairs = sum((load.ticks * load.mean**2 for load in self.loads_of), Fraction(0)) / 2
        if pairs <= 0:
            return 1
        return math.ceil(math.log2(pairs) - log2_of_real(hazard(max_risk, 64)))

    def known(self, index: int) -> Fraction | None:
        return Fraction(0) if not self.loads_of else None

    def start_bits(self, index: int) -> int:
        return 64

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        return tick_interval(index, self.loads_of, bits)

    def exact_first(self, index: int) -> bool:
        return False

    def exact_allowed(self, index: int) -> bool:
        return False

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:  # pragma: no cover
        raise NoConvergence("the tick model has no exact path")


def fewest_tick_bits(loads: Sequence[TickLoad], max_risk: Fraction, highest: int
                     ) -> int | None:
    """Fewest random bits per tick keeping the tick-model risk within ``max_risk``.

    ``None`` when even ``highest`` bits do not.

    >>> fewest_tick_bits(steady_loads(Fraction(10**6), Fraction(1, 1000), Fraction(31536000)),
    ...                  Fraction(1, 10**9), 8192)
    84
    """
    family = BitsFamily(_checked(1, loads), highest)
    boundary = certified_boundary(family, max_risk)
    return None if boundary is None else boundary.index


def highest_rate(random_bits: int, tick: Fraction, duration: Fraction, max_risk: Fraction,
                 highest: int, burst: Fraction = Fraction(1),
                 burst_share: Fraction = Fraction(0)) -> int:
    """The highest whole rate per second keeping the tick-model risk within ``max_risk``.

    >>> highest_rate(74, Fraction(1, 1000), Fraction(31536000), Fraction(1, 10**9), 10**30)
    34611
    """
    family = RateFamily(random_bits, tick, duration, highest, burst, burst_share)
    boundary = certified_boundary(family, max_risk)
    if boundary is None:  # pragma: no cover - rate 0 has risk 0 and always passes
        raise NoConvergence("no rate passes, yet rate 0 never collides")
    return boundary.index


def tick_risk_at_most(random_bits: int, loads: Sequence[TickLoad], max_risk: Fraction) -> bool:
    """risk <= max_risk, decided from intervals at doubling precision (no exact path).

    :raises NoConvergence: when no interval up to LAST_BITS decides.

    >>> loads = steady_loads(Fraction(10**6), Fraction(1, 1000), Fraction(31536000))
    >>> tick_risk_at_most(74, loads, Fraction(1, 10**6)), tick_risk_at_most(74, loads,
    ...                                                                    Fraction(1, 10**7))
    (True, False)
    """
    checked = _checked(random_bits, loads)
    if not checked:
        return True
    bits = TARGET_BITS
    while bits <= LAST_BITS:
        verdict = interval_verdict(tick_interval(random_bits, checked, bits), max_risk)
        if verdict is not None:
            return verdict
        bits *= 2
    raise NoConvergence("the tick-model risk lies too close to max_risk to decide")
