"""Budgets of time-ordered layouts against the tick model's closed form in mpmath.

With mu = rate x tick identifiers a tick and M = 2^random_bits values, P(no collision over
a duration d) = exp(-(d / tick) M (x - log1p(x))), x = mu / M (the Poisson tick model,
core/ticks.py); here it is evaluated in a private mpmath context at 60 digits.
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import pytest
from tests.core._reference import ln_of_text

from urnbound.core.projection import IssueSchedule
from urnbound.core.tick_budgets import project_tick_budget

MS = Fraction(1, 1000)


def reference_ln_risk(bits: int, tick: Fraction, rate: Fraction, duration: Fraction
                      ) -> tuple[mpmath.ctx_mp.MPContext, mpmath.mpf]:
    """ln P(collision) over ``duration`` by the closed form, and its context."""
    mp = mpmath.MPContext()
    mp.dps = 60
    size = mp.mpf(2) ** bits
    x = mp.mpf(rate.numerator) * tick.numerator / (rate.denominator * tick.denominator) / size
    ticks = mp.mpf(duration.numerator) / duration.denominator * tick.denominator / tick.numerator
    ln_none = -ticks * size * (x - mp.log1p(x))
    return mp, mp.log(-mp.expm1(ln_none))


def exceeds(bits: int, tick: Fraction, rate: Fraction, duration: Fraction,
            max_risk: Fraction) -> bool:
    mp, ln_risk = reference_ln_risk(bits, tick, rate, duration)
    return bool(ln_risk > mp.log(mp.mpf(max_risk.numerator) / max_risk.denominator))


@pytest.mark.parametrize(("bits", "rate", "issued", "max_risk"), [
    (74, Fraction(10**6), 0, Fraction(1, 10**9)),  # uuid-v7 layout
    (74, Fraction(5 * 10**4), 10**12, Fraction(1, 10**9)),
    (40, Fraction(300), 10**6, Fraction(1, 100)),
    (20, Fraction(3, 2), 0, Fraction(1, 10**3)),
])
def test_risks_and_the_moment_follow_the_tick_model(bits: int, rate: Fraction, issued: int,
                                                    max_risk: Fraction) -> None:
    schedule = IssueSchedule(issued, rate)
    horizon = Fraction(3650 * 86_400)
    projection = project_tick_budget(bits, MS, schedule, horizon, max_risk, 5)
    past = Fraction(issued) / rate  # the issued ones at the same rate before now
    for point in projection.series:
        assert point.count == issued + int(rate * point.seconds)
        if point.risk.collision.log10 is None:
            assert past + point.seconds == 0
            continue
        mp, ln_ref = reference_ln_risk(bits, MS, rate, past + point.seconds)
        ours = ln_of_text(mp, point.risk.collision.decimal)
        assert float(abs(mp.expm1(ours - ln_ref))) <= 1e-15
    found = projection.exhausted
    assert found is not None
    if found.already:
        assert exceeds(bits, MS, rate, past, max_risk)
        return
    seconds = found.seconds
    assert not exceeds(bits, MS, rate, past + seconds - 1, max_risk)
    assert exceeds(bits, MS, rate, past + seconds, max_risk)
    assert projection.capacity.count == issued + int(rate * (seconds - 1))


def test_a_horizon_ending_first_still_gives_the_capacity() -> None:
    schedule = IssueSchedule(0, Fraction(1000))
    projection = project_tick_budget(74, MS, schedule, Fraction(86_400), Fraction(1, 10**9), 2)
    assert projection.exhausted is None
    # first over budget after d = t / lambda, lambda = rate^2 tick / (2 M): ~3.8e10 s
    capacity = projection.capacity.count
    assert capacity == pytest.approx(1000 * 1e-9 * 2 * 2**74 / (1000**2 * 1e-3),
                                     rel=1e-6, abs=0)


def test_a_past_too_long_for_a_float_is_already_over() -> None:
    schedule = IssueSchedule(10**2000, Fraction(37, 10))
    projection = project_tick_budget(16, Fraction(1), schedule, Fraction(1), Fraction(1, 2), 2)
    assert projection.exhausted is not None and projection.exhausted.already


def test_the_growing_search_starts_near_its_boundary_in_a_vast_layout() -> None:
    # 2^7422 values a minute tick, a rate that doubles and more each year: at the rate now the
    # budget would last some 2^7400 s, past the floats, and the guess once answered with its
    # last second (where the series needs thousands of terms at thousands of bits). The leading
    # order, hazard ~ (rate tau)^2 / (2 M tau) per second, solved in logarithms, lands within
    # a few per cent of the certified moment.
    from urnbound.core.search import certified_boundary
    from urnbound.core.tick_budgets import GrowingTickSeconds
    from urnbound.core.tick_growth import GrowingTicks

    ticks = GrowingTicks(7422, Fraction(60), Fraction(172, 10**5), Fraction(289, 100),
                         Fraction(0))
    family = GrowingTickSeconds(ticks, math.floor(ticks.last_second()) - 1)
    max_risk = Fraction(1, 10**9)
    guess = family.first_guess(max_risk)
    boundary = certified_boundary(family, max_risk)
    assert boundary is not None and boundary.neighbour is not None
    assert guess < family.highest // 2
    assert guess == pytest.approx(boundary.neighbour, rel=0.05, abs=0)
