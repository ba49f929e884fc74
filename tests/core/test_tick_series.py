"""The steady tick batch against the tick model's closed form in mpmath at high precision.

With mu = rate x tick identifiers a tick and M = 2^random_bits values, P(no collision over
a duration d) = exp(-(d / tick) M (x - log1p(x))), x = mu / M (the Poisson tick model,
core/ticks.py). The reference evaluates that closed form in a private mpmath context at
2 random_bits + 400 bits, which covers the cancellation of x - log1p(x) for every x here.
"""

from __future__ import annotations

from fractions import Fraction

import mpmath
import pytest
from tests.core._reference import ln_of_text

from urnbound.core.series_risk import PREC
from urnbound.core.tick_series import STEADY_UNITS, SteadyTickBatch, steady_series_risks
from urnbound.core.ticks import steady_loads, tick_risk

MS = Fraction(1, 1000)
DAY = 86_400

CASES = [  # (random bits, tick, rate a second, identifiers issued before now)
    (74, MS, Fraction(10**6), 0),  # the uuid-v7 layout at a million a second
    (74, MS, Fraction(10**6), 10**12),
    (74, MS, Fraction(7, 3), 0),  # x near 1e-25: risks near 1e-40
    (40, MS, Fraction(300), 10**6),
    (20, Fraction(1), Fraction(3, 2), 0),
    (12, Fraction(1), Fraction(600), 50),  # x = 0.15
    (8, MS, Fraction(10**6), 0),  # x = 3.9: a thousand per tick over 256 values
    (4, Fraction(1), Fraction(10**9), 0),  # x = 6e7: every tick full
    (8192, MS, Fraction(10**6), 10**15),  # x = 2^-8182: the series of g, risks below 1e-2400
    (128, Fraction(1, 10**9), Fraction(10**9), 0),  # nanosecond ticks, one a tick
]
MOMENTS = [Fraction(1, 10**9), Fraction(1), Fraction(3, 7) * DAY, Fraction(365 * DAY),
           Fraction(10**6 * 365 * DAY)]


def reference(bits: int, tick: Fraction, rate: Fraction, duration: Fraction
              ) -> tuple[mpmath.ctx_mp.MPContext, mpmath.mpf]:
    """P(collision) over ``duration`` by the closed form, and its context."""
    mp = mpmath.MPContext()
    mp.prec = 2 * bits + 400
    size = mp.mpf(2) ** bits
    x = mp.mpf(rate.numerator) * tick.numerator / (rate.denominator * tick.denominator) / size
    ticks = mp.mpf(duration.numerator) / duration.denominator * tick.denominator / tick.numerator
    return mp, -mp.expm1(-ticks * size * (x - mp.log1p(x)))


@pytest.mark.parametrize(("bits", "tick", "rate", "issued"), CASES)
def test_every_risk_of_the_batch_is_within_its_bound(bits: int, tick: Fraction,
                                                     rate: Fraction, issued: int) -> None:
    past = Fraction(issued) / rate
    batch = SteadyTickBatch(bits, rate * tick, tick, past)
    assert batch.bound == Fraction(STEADY_UNITS, 2**PREC)
    for moment in MOMENTS:
        with batch.ctx:
            raw = batch.risk(batch.log_no_collision(moment))
        mp, truth = reference(bits, tick, rate, past + moment)
        ours = mp.mpf(raw.as_integer_ratio()[0]) / raw.as_integer_ratio()[1]
        # the module docstring's e = 6 u on the MPFR risk itself, before any reporting
        assert abs(ours / truth - 1) <= mp.mpf(STEADY_UNITS) / 2**PREC


@pytest.mark.parametrize(("bits", "tick", "rate", "issued"), CASES)
def test_the_reported_risks_are_within_the_stated_bound(bits: int, tick: Fraction,
                                                        rate: Fraction, issued: int) -> None:
    past = Fraction(issued) / rate
    counts = list(range(len(MOMENTS)))
    for moment, found in zip(MOMENTS, steady_series_risks(bits, tick, rate, past, MOMENTS,
                                                          counts), strict=True):
        assert found is not None and found.method == "tick-model"
        mp, truth = reference(bits, tick, rate, past + moment)
        gap = abs(mp.expm1(ln_of_text(mp, found.collision.decimal) - mp.log(truth)))
        assert gap <= found.relative_error_bound
        if found.collision.log10 is not None and truth < mp.mpf(1) / 2:
            assert found.collision.log10 == pytest.approx(float(mp.log10(truth)), rel=1e-15,
                                                          abs=0)


def test_nothing_issued_yet_is_left_to_the_certified_path() -> None:
    found = steady_series_risks(74, MS, Fraction(10**6), Fraction(0),
                                [Fraction(0), Fraction(1)], [0, 10**6])
    assert found[0] is None and found[1] is not None


@pytest.mark.parametrize("seconds", [Fraction(1), Fraction(DAY), Fraction(3650 * DAY)])
def test_the_batch_agrees_with_the_single_answer(seconds: Fraction) -> None:
    # the same figure by two evaluations: the batch at 128 bits, tick_risk's own precision
    rate = Fraction(5 * 10**4)
    batch = steady_series_risks(74, MS, rate, Fraction(0), [seconds], [0])[0]
    single = tick_risk(74, steady_loads(rate, MS, seconds))
    assert batch is not None
    assert batch.collision.value == single.collision.value
    assert batch.collision.decimal == single.collision.decimal

