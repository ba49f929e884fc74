"""The budget projection against independent computations: sympy floors, mpmath risks.

The count issued by time t is held against the closed forms written out again here
(issued + rate t; issued + rate Y (g^(t/Y) - 1) / ln g) evaluated by sympy (exact
rationals) or mpmath at 200 digits in a private context; the risk at each count against
the pairwise risk from mpmath's log-gamma at high precision (tests/core/_reference.py);
the moment the budget runs out against both, one second either side.
"""

from __future__ import annotations

from fractions import Fraction

import mpmath
import pytest
import sympy
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st
from tests.core._reference import high_precision_risk, ln_of_text, relative_gap

from urnbound.core.errors import DomainError
from urnbound.core.projection import (
    YEAR_SECONDS,
    IssueSchedule,
    project_budget,
    series_moments,
)

DAY = 86_400


def reference_count(schedule: IssueSchedule, seconds: Fraction) -> int:
    """floor(c(t)) from the closed form: sympy for a steady rate, else mpmath 200 digits past
    the count's own."""
    if schedule.growth == 1 or seconds == 0:
        value = sympy.Rational(schedule.issued) + sympy.Rational(
            schedule.rate.numerator, schedule.rate.denominator) * sympy.Rational(
            seconds.numerator, seconds.denominator)
        return int(sympy.floor(value))
    digits = len(str(int(closed_form(schedule, seconds, 30))))
    return int(closed_form(schedule, seconds, digits + 200))


def closed_form(schedule: IssueSchedule, seconds: Fraction, dps: int) -> mpmath.mpf:
    """floor(issued + rate Y (g^(t/Y) - 1) / ln g) in a private mpmath context at ``dps``."""
    mp = mpmath.MPContext()
    mp.dps = dps
    g = mp.mpf(schedule.growth.numerator) / schedule.growth.denominator
    rate = mp.mpf(schedule.rate.numerator) / schedule.rate.denominator
    t = mp.mpf(seconds.numerator) / seconds.denominator
    value = schedule.issued + rate * YEAR_SECONDS * (mp.power(g, t / YEAR_SECONDS) - 1) / mp.log(g)
    return mp.floor(value)


def reference_risk_exceeds(size: int, count: int, max_risk: Fraction) -> bool:
    """risk(count) > max_risk, from mpmath's log-gamma at high precision."""
    ref = high_precision_risk(size, count)
    if ref.ln_risk is None:
        return False
    mp = ref.mp
    return bool(ref.ln_risk > mp.log(mp.mpf(max_risk.numerator)) - mp.log(max_risk.denominator))


def assert_risk_matches(size: int, count: int, decimal: str) -> None:
    ref = high_precision_risk(size, count)
    if ref.ln_risk is None:
        assert decimal == "0"
        return
    assert relative_gap(ref.mp, ln_of_text(ref.mp, decimal), ref.ln_risk) <= 1e-19


# --- the count over time ---------------------------------------------------------------


def test_steady_rate_counts_are_issued_plus_rate_times_t() -> None:
    schedule = IssueSchedule(4 * 10**7, Fraction(2 * 10**6, DAY))
    for seconds in (Fraction(0), Fraction(1), Fraction(DAY), Fraction(12345, 7),
                    Fraction(730 * DAY)):
        assert schedule.count_at(seconds) == reference_count(schedule, seconds)
    # two million a day for 730 days on top of forty million: 1.5e9 exactly
    assert schedule.count_at(Fraction(730 * DAY)) == 1_500_000_000


@pytest.mark.parametrize("growth", [Fraction(2), Fraction(3, 2), Fraction(1, 2), Fraction(10),
                                    Fraction(1, 1000), 1 + Fraction(1, 10**12)])
@pytest.mark.parametrize("seconds", [Fraction(1, 10**9), Fraction(1), Fraction(DAY),
                                     Fraction(YEAR_SECONDS), Fraction(37 * YEAR_SECONDS, 3)])
def test_growth_counts_follow_the_closed_form(growth: Fraction, seconds: Fraction) -> None:
    schedule = IssueSchedule(1000, Fraction(25, 2), growth)
    assert schedule.count_at(seconds) == reference_count(schedule, seconds)


def test_doubling_for_a_year_issues_rate_times_year_over_ln_2() -> None:
    # growth 2: integral of 2^(t/Y) over one year is Y / ln 2 (per unit rate)
    schedule = IssueSchedule(0, Fraction(1), Fraction(2))
    mp = mpmath.MPContext()
    mp.dps = 50
    assert schedule.count_at(Fraction(YEAR_SECONDS)) == int(mp.floor(YEAR_SECONDS / mp.log(2)))


def test_growth_to_the_largest_horizon_is_still_exact() -> None:
    schedule = IssueSchedule(7, Fraction(10**30), Fraction(10))
    seconds = Fraction(1000 * YEAR_SECONDS)
    count = schedule.count_at(seconds)
    assert count == reference_count(schedule, seconds)
    assert 3000 < count.bit_length() < 3500  # ~1e30 * Y * 10^1000 / ln 10


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    issued=st.integers(0, 10**20),
    rate=st.fractions(Fraction(1, 10**6), Fraction(10**9)),
    growth=st.fractions(Fraction(1, 100), Fraction(10)).filter(lambda g: g > 0),
    seconds=st.integers(0, 50 * YEAR_SECONDS),
)
@example(issued=0, rate=Fraction(1), growth=Fraction(1), seconds=0)
def test_counts_match_the_reference_and_never_fall(
    issued: int, rate: Fraction, growth: Fraction, seconds: int
) -> None:
    schedule = IssueSchedule(issued, rate, growth)
    now = schedule.count_at(Fraction(seconds))
    assert now == reference_count(schedule, Fraction(seconds))
    assert schedule.count_at(Fraction(seconds + 1)) >= now >= issued


@pytest.mark.parametrize(("issued", "rate", "growth", "field"), [
    (-1, Fraction(1), Fraction(1), "issued"),
    (0, Fraction(0), Fraction(1), "rate"),
    (0, Fraction(1), Fraction(0), "growth"),
    (0, Fraction(1), Fraction(-2), "growth"),
])
def test_bad_schedules_are_refused_naming_the_field(
    issued: int, rate: Fraction, growth: Fraction, field: str
) -> None:
    with pytest.raises(DomainError) as caught:
        IssueSchedule(issued, rate, growth)
    assert caught.value.field == field


def test_moments_are_evenly_spaced_to_the_nanosecond() -> None:
    moments = series_moments(Fraction(730 * DAY), 50)
    assert len(moments) == 50 and moments[0] == 0 and moments[-1] == 730 * DAY
    step = Fraction(730 * DAY, 49)
    for i, moment in enumerate(moments):
        assert 0 <= step * i - moment < Fraction(1, 10**9)
        assert (moment * 10**9).denominator == 1


# --- the projection ------------------------------------------------------------------


def test_steady_projection_risks_are_the_pairwise_risks_at_each_count() -> None:
    size = 2**64
    schedule = IssueSchedule(4 * 10**7, Fraction(2 * 10**6, DAY))
    projection = project_budget(size, schedule, Fraction(730 * DAY), Fraction(1, 10**3), 9)
    for point in projection.series:
        assert point.count == reference_count(schedule, point.seconds)
        assert_risk_matches(size, point.count, point.risk.collision.decimal)
    assert projection.now.count == 4 * 10**7
    assert projection.at_horizon.count == 1_500_000_000


def test_growth_projection_risks_are_the_pairwise_risks_at_each_count() -> None:
    size = 36**10
    schedule = IssueSchedule(10**5, Fraction(3), Fraction(3, 2))
    projection = project_budget(size, schedule, Fraction(3 * YEAR_SECONDS), Fraction(1, 10**2), 7)
    for point in projection.series:
        assert point.count == reference_count(schedule, point.seconds)
        assert_risk_matches(size, point.count, point.risk.collision.decimal)


@pytest.mark.parametrize(("size", "schedule", "max_risk"), [
    (2**64, IssueSchedule(0, Fraction(1000)), Fraction(1, 10**6)),
    (2**64, IssueSchedule(4 * 10**7, Fraction(2 * 10**6, DAY)), Fraction(1, 10**3)),
    (2**64, IssueSchedule(4 * 10**7, Fraction(2 * 10**6, DAY), Fraction(2)), Fraction(1, 10**3)),
    (2**122, IssueSchedule(10**12, Fraction(10**9), Fraction(3, 2)), Fraction(1, 10**9)),
    (62**8, IssueSchedule(0, Fraction(7, 3), Fraction(1, 2)), Fraction(1, 10**4)),
    (365, IssueSchedule(0, Fraction(1, 3600)), Fraction(1, 2)),  # birthday bound: 23rd draw
])
def test_exhaustion_brackets_the_boundary_one_second_either_side(
    size: int, schedule: IssueSchedule, max_risk: Fraction
) -> None:
    horizon = Fraction(40 * YEAR_SECONDS)
    projection = project_budget(size, schedule, horizon, max_risk, 2)
    found = projection.exhausted
    assert found is not None and not found.already and found.before is not None
    seconds = found.seconds
    assert seconds.denominator == 1 and 0 < seconds <= horizon
    before, at = reference_count(schedule, seconds - 1), reference_count(schedule, seconds)
    assert (found.before.count, found.at.count) == (before, at)
    assert not reference_risk_exceeds(size, before, max_risk)
    assert reference_risk_exceeds(size, at, max_risk)
    assert reference_risk_exceeds(size, reference_count(schedule, seconds + 1), max_risk)
    # the capacity splits the two counts
    assert before <= projection.capacity.count < at


def test_birthday_budget_runs_out_with_the_twenty_third_draw() -> None:
    # 365 values, P >= 1/2 first at 23 draws (OEIS A033810: a(365) = 23); one draw an hour
    projection = project_budget(365, IssueSchedule(0, Fraction(1, 3600)), Fraction(DAY * 2),
                                Fraction(1, 2), 2)
    assert projection.exhausted is not None
    assert projection.exhausted.seconds == 23 * 3600
    assert projection.exhausted.at.count == 23 and projection.capacity.count == 22


def test_already_over_is_second_zero_with_the_flag() -> None:
    projection = project_budget(10**9, IssueSchedule(10**5, Fraction(1)), Fraction(DAY),
                                Fraction(1, 10**6), 3)
    found = projection.exhausted
    assert found is not None and found.already and found.seconds == 0 and found.before is None
    assert projection.headroom == 0
    assert projection.capacity_used == Fraction(10**5, projection.capacity.count) > 1


def test_a_horizon_that_ends_first_gives_no_exhaustion() -> None:
    projection = project_budget(2**122, IssueSchedule(10**6, Fraction(10**3)),
                                Fraction(365 * DAY), Fraction(1, 10**9), 4)
    assert projection.exhausted is None
    assert projection.headroom == projection.capacity.count - 10**6
    assert projection.at_horizon.count <= projection.capacity.count


def test_a_crossing_inside_the_last_fraction_of_a_second_is_the_horizon() -> None:
    # 365 values, two draws a second: the 23rd draw comes at 11.5 s, between whole seconds.
    schedule = IssueSchedule(0, Fraction(2))
    projection = project_budget(365, schedule, Fraction(47, 4), Fraction(1, 2), 2)
    assert projection.exhausted is not None
    assert projection.exhausted.seconds == Fraction(47, 4)
    assert projection.exhausted.at.count == 23
    assert projection.exhausted.before is not None and projection.exhausted.before.count == 21
    projection = project_budget(365, schedule, Fraction(25, 2), Fraction(1, 2), 2)
    assert projection.exhausted is not None and projection.exhausted.seconds == 12


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    bits=st.integers(20, 128),
    rate=st.fractions(Fraction(1, 100), Fraction(10**6)),
    growth=st.sampled_from([Fraction(1), Fraction(2), Fraction(1, 2), Fraction(11, 10)]),
    exponent=st.integers(1, 12),
)
def test_risks_rise_over_time_and_a_faster_rate_runs_out_no_later(
    bits: int, rate: Fraction, growth: Fraction, exponent: int
) -> None:
    size, max_risk, horizon = 2**bits, Fraction(1, 10**exponent), Fraction(20 * YEAR_SECONDS)
    slow = project_budget(size, IssueSchedule(0, rate, growth), horizon, max_risk, 12)
    fast = project_budget(size, IssueSchedule(0, 2 * rate, growth), horizon, max_risk, 12)
    for projection in (slow, fast):
        logs = [p.risk.collision.log10 for p in projection.series]
        finite = [x for x in logs if x is not None]
        assert finite == sorted(finite)
        counts = [p.count for p in projection.series]
        assert counts == sorted(counts)
    if slow.exhausted is not None:
        assert fast.exhausted is not None and fast.exhausted.seconds <= slow.exhausted.seconds
    for mine, faster in zip(slow.series, fast.series, strict=True):
        assert faster.count >= mine.count


def test_capacity_used_is_issued_over_capacity() -> None:
    projection = project_budget(2**64, IssueSchedule(3 * 10**6, Fraction(1)), Fraction(DAY),
                                Fraction(1, 10**6), 2)
    # "Birthday attack" table (Wikipedia): 64 bits, P = 1e-6: 6,100,000 (two digits)
    assert float(f"{projection.capacity.count:.1e}") == 6.1e6
    assert projection.capacity_used == Fraction(3 * 10**6, projection.capacity.count)
    assert projection.headroom == projection.capacity.count - 3 * 10**6


@pytest.mark.parametrize("schedule", [
    IssueSchedule(0, Fraction(10**39), Fraction(10)),  # 1e30 per ns, ten times a year
    IssueSchedule(10**2000, Fraction(10**39), Fraction(10)),
    IssueSchedule(0, Fraction(10**39), Fraction(1, 10**7)),
    IssueSchedule(0, Fraction(1, 10**9 * 1000 * YEAR_SECONDS), 1 + Fraction(1, 10**22)),
])
def test_extreme_schedules_are_answered_and_counted_exactly(schedule: IssueSchedule) -> None:
    horizon = Fraction(1000 * YEAR_SECONDS)
    projection = project_budget(2**8192, schedule, horizon, Fraction(1, 10**300), 3)
    for point in projection.series:
        assert point.count == reference_count(schedule, point.seconds)
    if projection.exhausted is not None and not projection.exhausted.already:
        assert projection.exhausted.before is not None
        assert projection.exhausted.before.count <= projection.capacity.count
        assert projection.exhausted.at.count > projection.capacity.count
