"""Batch counts of a growing schedule against the closed form at high precision (mpmath).

The closed form issued + rate Y (g^(t/Y) - 1) / ln g is evaluated by mpmath in a private
context at 200 digits past the count's own (``test_projection.closed_form``); each MPFR
enclosure must hold it, and each decided floor must be its floor.
"""

from __future__ import annotations

from fractions import Fraction

import mpmath
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st
from tests.core.test_projection import reference_count

from urnbound.core.growth_counts import YEAR_SECONDS, _Enclosure, growth_counts
from urnbound.core.projection import IssueSchedule, series_moments

DAY = 86_400


def reference_value(schedule: IssueSchedule, seconds: Fraction, dps: int) -> mpmath.mpf:
    """c(t) itself (not its floor) from the closed form, in a private context."""
    mp = mpmath.MPContext()
    mp.dps = dps
    g = mp.mpf(schedule.growth.numerator) / schedule.growth.denominator
    rate = mp.mpf(schedule.rate.numerator) / schedule.rate.denominator
    t = mp.mpf(seconds.numerator) / seconds.denominator
    log_g = mp.log(g)
    return schedule.issued + rate * YEAR_SECONDS * mp.expm1(t / YEAR_SECONDS * log_g) / log_g


def assert_enclosed_and_counted(schedule: IssueSchedule, moments: list[Fraction]) -> None:
    bits = schedule.first_bits(max(moments))
    enclosure = _Enclosure(schedule.issued, schedule.rate, schedule.growth, bits)
    counts = growth_counts(schedule.issued, schedule.rate, schedule.growth, moments, bits)
    for moment, count in zip(moments, counts, strict=True):
        if moment == 0:
            assert count is None  # left to count_at, which answers it exactly
            continue
        low, high = (Fraction(*end.as_integer_ratio()) for end in enclosure.bounds(moment))
        dps = bits // 3 + 200
        value = reference_value(schedule, moment, dps)
        mp = value.context
        assert mp.mpf(low.numerator) / low.denominator <= value
        assert value <= mp.mpf(high.numerator) / high.denominator
        if count is not None:
            assert count == reference_count(schedule, moment)


@pytest.mark.parametrize("growth", [Fraction(2), Fraction(3, 2), Fraction(1, 2), Fraction(10),
                                    Fraction(1, 1000), 1 + Fraction(1, 10**12),
                                    1 - Fraction(1, 10**15)])
def test_series_counts_are_enclosed_and_floored_exactly(growth: Fraction) -> None:
    schedule = IssueSchedule(4 * 10**7, Fraction(2 * 10**6, DAY), growth)
    moments = list(series_moments(Fraction(730 * DAY), 40))
    assert_enclosed_and_counted(schedule, moments)
    counts = growth_counts(schedule.issued, schedule.rate, growth, moments,
                           schedule.first_bits(moments[-1]))
    assert sum(count is None for count in counts) == 1  # only t = 0


@pytest.mark.parametrize("schedule", [
    IssueSchedule(0, Fraction(10**39), Fraction(10)),  # 1e30 per ns, ten times a year
    IssueSchedule(10**2000, Fraction(10**39), Fraction(10)),
    IssueSchedule(0, Fraction(10**39), Fraction(1, 10**7)),
    IssueSchedule(0, Fraction(1, 10**9 * 1000 * YEAR_SECONDS), 1 + Fraction(1, 10**22)),
])
def test_extreme_schedules_are_enclosed(schedule: IssueSchedule) -> None:
    assert_enclosed_and_counted(schedule, list(series_moments(Fraction(1000 * YEAR_SECONDS), 7)))


def test_a_year_of_doubling_from_one_a_second() -> None:
    # integral of 2^(t/Y) over a year is Y / ln 2 = 45,496,830.6... (closed form, mpmath)
    assert growth_counts(0, Fraction(1), Fraction(2), [Fraction(YEAR_SECONDS)], 128) == [
        reference_count(IssueSchedule(0, Fraction(1), Fraction(2)), Fraction(YEAR_SECONDS))]


def test_a_count_too_close_to_a_whole_number_is_left_open() -> None:
    # A billion a second, halving yearly, after one nanosecond: c = phi(x) with
    # x = -1e-9 ln 2 / Y ~ -2.2e-17, so c ~ 1 - 1.1e-17 (closed form, mpmath): floor 0,
    # within 2**-56 of 1. At 50 bits the enclosure cannot tell; at 64 it can.
    schedule = IssueSchedule(0, Fraction(10**9), Fraction(1, 2))
    moment = Fraction(1, 10**9)
    value = reference_value(schedule, moment, 60)
    assert 0 < 1 - value < value.context.mpf(2) ** -56
    assert growth_counts(0, schedule.rate, schedule.growth, [moment], 50) == [None]
    assert growth_counts(0, schedule.rate, schedule.growth, [moment], 64) == [0]
    assert schedule.count_at(moment) == reference_count(schedule, moment) == 0


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    issued=st.integers(0, 10**20),
    rate=st.fractions(Fraction(1, 10**6), Fraction(10**9)),
    growth=st.fractions(Fraction(1, 100), Fraction(10)).filter(lambda g: g > 0 and g != 1),
    nanoseconds=st.integers(1, 50 * YEAR_SECONDS * 10**9),
)
@example(issued=0, rate=Fraction(1), growth=Fraction(1, 2), nanoseconds=1)
def test_random_schedules_are_enclosed_and_counted(
    issued: int, rate: Fraction, growth: Fraction, nanoseconds: int
) -> None:
    schedule = IssueSchedule(issued, rate, growth)
    assert_enclosed_and_counted(schedule, [Fraction(nanoseconds, 10**9)])
