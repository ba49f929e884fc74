"""Tick budgets' series: the tick-model risks of many moments in one MPFR batch.

A budget's series asks the risk at up to 500 moments; ``ticks.tick_risk`` and
``tick_growth.growing_tick_risk`` certify each on its own (about 120 us). Here every moment
t > 0 up to the last, T, is evaluated with MPFR (gmpy2) at ``PREC`` bits, rounding to
nearest (each operation off by at most u = 2**-PREC relative), and one bound e, proven for
the whole batch, serves every moment; a moment whose float is undecided at e, and a moment
with nothing issued, take the certified path. Floats and texts are reported under e as
``series_risk.ReportedBatch`` reports them.

Steady rate. The hazard is linear in the duration: L = -((past + t) / tau) M g(x), with
x = rate tau / M and g(x) = x - log1p(x) (``core/ticks.py``). g is formed once by
``ticks.excess`` at PREC + 16 bits from x rounded there, within 6 * 2**-(PREC+16) < u/8000
relative (``core/ticks.py``), and rounded once to PREC: within (1 + 2**-12) u. Per moment,
s = (past + t) / tau rounded once (u) and the product s g once more (u); M, a power of two,
scales exactly. So L is off by d <= 3.01u relative; a relative error d of L moves the risk
1 - e**L by a factor within exp(d / (1 - d)) (d ln(1 - e**L) / dL = 1 / (e**|L| - 1) <=
1 / |L|), and expm1 rounds once more:

    e = 6u  (4.1u and room for every second-order term)

bounds every risk of a steady batch, whatever the load (x up to any size: ``ticks.excess``
keeps g's relative accuracy for every x >= 0).

Growing rate. Every moment is evaluated by the series (1) of ``core/tick_growth.py``.

Terms. The batch sums K terms, K the least >= 2 with xmax**(K-1) <= 2**-(PREC + 4) for
xmax the largest u/M met (at T when the rate grows, now when it falls; the caller keeps
it within 1/2, and K above ``MAX_TERMS`` leaves the batch out). |a| = (t/Y) |ln g| is at
most A = (T/Y) (g - 1) for g > 1, (T/Y) (1/g - 1) for g < 1 (ln g <= g - 1).

Error bound. x0**k / k, formed once by products: (2k + 1) u. ln g from log1p(g - 1) when
|g - 1| < 1/2, else log(g), g (or g - 1) rounded once: condition at most 2.5, so 4u; t/Y
one rounding, a = (t/Y) ln g 6u, z = k a 7u, absolutely 7u |z|. phi(z) = expm1(z) / z two
roundings, and |d ln phi / dz| <= min(1, 1/|z|) (``core/tick_growth.py``), so phi is off by
(2 + 14 max(1, |z|)) u; w = fma(t/tau, phi, past/tau), t/tau rounded, one rounding: 2u
more; the term's product, u. Each term is within e_K = 2 (2K + 6 + 14 max(1, K A)) u (the
factor 2 covers second-order terms; K A <= 2**40 is required). The terms alternate and
fall by xmax <= 1/2, so S >= T_2 / 2 and sum |T_k| <= 2 T_2 <= 4 S: the terms' errors
come to 4 e_K S, the K - 2 additions (partial sums within [S, 1.01 T_2]) to 2.1 K u S,
the tail after K terms (at most xmax**(K-1) T_2) to 2**-(PREC+3) S. L = -2**r S is exact;
a relative error d of L moves the risk 1 - e**L by a factor within exp(d / (1 - d))
(d ln(1 - e**L) / dL = 1 / (e**|L| - 1) <= 1 / |L|), and expm1 rounds once more. So

    e = (8 (2K + 6 + 14 max(1, K A)) + 3K + 3) u (1 + 2**-20)

bounds every risk of a growing batch.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from fractions import Fraction

import gmpy2

from urnbound.core import precision as mp
from urnbound.core.growth_counts import YEAR_SECONDS
from urnbound.core.series_risk import PREC, TAIL_BITS, ReportedBatch, SeriesRisk
from urnbound.core.tick_growth import GrowingTicks
from urnbound.core.ticks import TICK_MODEL, excess

#: Most terms a batch sums: u/M up to 1/2, the caller's limit, needs PREC + 5 = 133.
MAX_TERMS = 140


#: e of a steady batch, in units of 2**-PREC (module docstring).
STEADY_UNITS = 6


def steady_series_risks(random_bits: int, tick: Fraction, rate: Fraction, past: Fraction,
                        moments: Sequence[Fraction], counts: Sequence[int]
                        ) -> list[SeriesRisk | None]:
    """The risk at each moment (with its count) at a steady rate, ``None`` where nothing is
    issued yet and where undecided.

    >>> found = steady_series_risks(74, Fraction(1, 1000), Fraction(10**6), Fraction(0),
    ...                             [Fraction(0), Fraction(31536000)], [0, 31536 * 10**9])
    >>> found[0], found[1].collision.decimal
    (None, '8.3475062111461937124e-7')
    """
    batch = SteadyTickBatch(random_bits, rate * tick, tick, past)
    found: list[SeriesRisk | None] = []
    with batch.ctx:  # the current context: what the decimal digits round by
        for moment, count in zip(moments, counts, strict=True):
            collision = None if past + moment <= 0 else batch.risk_magnitude(
                batch.log_no_collision(moment))
            found.append(None if collision is None else
                         SeriesRisk(count, collision, TICK_MODEL, batch.text_bound))
    return found


class SteadyTickBatch(ReportedBatch):
    """One batch of one steady rate: g(x) rounded once, shared by every moment."""

    def __init__(self, random_bits: int, mean: Fraction, tick: Fraction, past: Fraction
                 ) -> None:
        super().__init__(Fraction(STEADY_UNITS, 2**PREC), PREC)
        work = PREC + 16
        ratio = mp.scale2(mp.real(mean, work), -random_bits)
        _sign, mantissa, exponent, _bits = excess(ratio, work)  # g >= 0
        self.excess = self.ctx.mul_2exp(self.ctx.add(gmpy2.mpz(mantissa), self.zero), exponent)
        self.random_bits, self.tick, self.past = random_bits, tick, past

    def log_no_collision(self, moment: Fraction) -> gmpy2.mpfr:
        """L = -((past + t) / tau) M g(x) at ``moment``, rounded to nearest."""
        ctx = self.ctx
        steps = (self.past + moment) / self.tick
        rounded = ctx.add(gmpy2.mpq(steps.numerator, steps.denominator), self.zero)
        return ctx.minus(ctx.mul_2exp(ctx.mul(rounded, self.excess), self.random_bits))


def growing_series_risks(ticks: GrowingTicks, moments: Sequence[Fraction],
                         counts: Sequence[int]) -> list[SeriesRisk | None]:
    """The risk at each moment (with its count), ``None`` at 0 and where undecided.

    >>> ticks = GrowingTicks(74, Fraction(1, 1000), Fraction(10**6), Fraction(3, 2), Fraction(0))
    >>> found = growing_series_risks(ticks, [Fraction(0), Fraction(YEAR_SECONDS)], [0, 1])
    >>> found[0], found[1].collision.decimal
    (None, '1.2867174261453422261e-6')
    """
    later = [moment for moment in moments if moment > 0]
    batch = TickBatch.for_moments(ticks, max(later)) if later else None
    if batch is None:
        return [None] * len(moments)
    found: list[SeriesRisk | None] = []
    with batch.ctx:  # the current context: what the decimal digits round by
        for moment, count in zip(moments, counts, strict=True):
            collision = None if moment <= 0 else batch.risk_magnitude(
                batch.log_no_collision(moment))
            found.append(None if collision is None else
                         SeriesRisk(count, collision, TICK_MODEL, batch.text_bound))
    return found


def batch_terms(ticks: GrowingTicks, last: Fraction) -> int | None:
    """K (module docstring), or ``None`` past ``MAX_TERMS``."""
    log2_now = math.log2(ticks.load_now.numerator) - math.log2(ticks.load_now.denominator)
    rise = max(0.0, float(last) / YEAR_SECONDS * math.log1p(float(ticks.growth - 1)))
    log2_highest = log2_now + rise / math.log(2) + 2.0**-20  # a little above xmax
    if log2_highest >= -0.5:
        return None
    terms = max(2, 1 + math.ceil((PREC + TAIL_BITS) / -log2_highest))
    return terms if terms <= MAX_TERMS else None


def exponent_bound(ticks: GrowingTicks, last: Fraction) -> Fraction:
    """A >= |a| at every moment up to ``last``, in rationals (ln g <= g - 1)."""
    growth = ticks.growth
    log_bound = growth - 1 if growth >= 1 else 1 / growth - 1
    return last / YEAR_SECONDS * log_bound


def batch_bound(terms: int, exponent: Fraction, prec: int = PREC) -> Fraction:
    """e of the module docstring for K = ``terms`` and A = ``exponent``."""
    spread = max(Fraction(1), terms * exponent)
    units = 8 * (2 * terms + 6 + 14 * spread) + 3 * terms + 3
    return units / Fraction(2**prec) * (1 + Fraction(1, 2**20))


class TickBatch(ReportedBatch):
    """One batch of one growing schedule: x0**k / k, ln g and past/tau (never shared)."""

    @classmethod
    def for_moments(cls, ticks: GrowingTicks, last: Fraction) -> TickBatch | None:
        """The batch for moments up to ``last``, or ``None`` when it would not apply."""
        terms = batch_terms(ticks, last)
        exponent = exponent_bound(ticks, last)
        if terms is None or terms * exponent > 2**40:
            return None
        return cls(ticks, terms, batch_bound(terms, exponent))

    def __init__(self, ticks: GrowingTicks, terms: int, bound: Fraction) -> None:
        super().__init__(bound, PREC)
        ctx = self.ctx
        self.ticks = ticks
        load = ticks.load_now
        x0 = ctx.add(gmpy2.mpq(load.numerator, load.denominator), self.zero)
        factors, power = [], ctx.mul(x0, x0)
        for k in range(2, terms + 1):
            factors.append(ctx.mul(power, ctx.div(1, k)))
            power = ctx.mul(power, x0)
        self.factors = tuple(factors)
        near = ticks.growth - 1
        if abs(near) < Fraction(1, 2):
            self.log_growth = ctx.log1p(ctx.add(gmpy2.mpq(near.numerator, near.denominator),
                                                self.zero))
        else:
            self.log_growth = ctx.log(ctx.add(gmpy2.mpq(ticks.growth.numerator,
                                                        ticks.growth.denominator), self.zero))
        before = ticks.past / ticks.tick
        self.before = ctx.add(gmpy2.mpq(before.numerator, before.denominator), self.zero)

    def log_no_collision(self, moment: Fraction) -> gmpy2.mpfr:
        """L = -M S at ``moment`` > 0 (the series (1) to K terms), rounded to nearest."""
        ctx = self.ctx
        years = ctx.add(gmpy2.mpq(moment.numerator, moment.denominator * YEAR_SECONDS),
                        self.zero)
        a = ctx.mul(years, self.log_growth)
        steps_fraction = moment / self.ticks.tick
        steps = ctx.add(gmpy2.mpq(steps_fraction.numerator, steps_fraction.denominator),
                        self.zero)
        total = self.zero
        for k, factor in enumerate(self.factors, start=2):
            z = ctx.mul(a, k)
            phi = ctx.div(ctx.expm1(z), z) if z else gmpy2.mpfr(1)
            term = ctx.mul(factor, ctx.fma(steps, phi, self.before))
            total = ctx.add(total, term) if k % 2 == 0 else ctx.sub(total, term)
        return ctx.minus(gmpy2.mul_2exp(total, self.ticks.random_bits))
