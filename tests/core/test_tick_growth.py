"""Tick-model risks and budgets at a growing rate against mpmath quadrature.

The reference is independent of the core's series: the hazard is the integral of the
per-tick hazard g(u) = u - M log1p(u/M) over the ticks (Poisson arrivals; the tick model
of core/ticks.py), H = integral_0^t g(rate0 growth^(s/Y) tau) ds / tau + (past/tau)
g(rate0 tau), by mpmath's tanh-sinh quadrature (mpmath.quad) at 80 digits in a private
context; risk = -expm1(-H). The counts come from the closed form
issued + rate0 Y (growth^(t/Y) - 1) / ln growth at 80 digits.
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import pytest
from tests.core._reference import ln_of_text, nearest_float, rounding_is_settled

from urnbound.core.errors import DomainError
from urnbound.core.growth_counts import YEAR_SECONDS
from urnbound.core.projection import IssueSchedule
from urnbound.core.results import Magnitude
from urnbound.core.tick_budgets import TICK_SEARCH_SECONDS, project_tick_budget
from urnbound.core.tick_growth import GrowingTicks, growing_tick_risk
from urnbound.core.tick_series import TickBatch, batch_bound, growing_series_risks
from urnbound.core.ticks import steady_loads, tick_risk

MS = Fraction(1, 1000)
DAY = 86_400


def context() -> mpmath.ctx_mp.MPContext:
    mp = mpmath.MPContext()
    mp.dps = 80
    return mp


def fraction(mp: mpmath.ctx_mp.MPContext, value: Fraction) -> mpmath.mpf:
    return mp.mpf(value.numerator) / value.denominator


def reference_hazard(mp: mpmath.ctx_mp.MPContext, ticks: GrowingTicks, seconds: Fraction
                     ) -> mpmath.mpf:
    """H by quadrature of g(rate(s) tau) / tau over [0, t], plus the past term."""
    size = mp.mpf(2) ** ticks.random_bits
    tau, rate0 = fraction(mp, ticks.tick), fraction(mp, ticks.rate)
    log_growth = mp.log(fraction(mp, ticks.growth))

    def g(u: mpmath.mpf) -> mpmath.mpf:
        return u - size * mp.log1p(u / size)

    def integrand(s: mpmath.mpf) -> mpmath.mpf:
        return g(rate0 * mp.exp(s / YEAR_SECONDS * log_growth) * tau) / tau

    end = fraction(mp, seconds)
    future = mp.quad(integrand, mp.linspace(0, end, 5)) if end > 0 else mp.mpf(0)
    return future + fraction(mp, ticks.past) / tau * g(rate0 * tau)


def reference_risk(mp: mpmath.ctx_mp.MPContext, ticks: GrowingTicks, seconds: Fraction
                   ) -> tuple[mpmath.mpf, mpmath.mpf]:
    """(risk, 1 - risk) from the quadrature hazard."""
    hazard = reference_hazard(mp, ticks, seconds)
    return -mp.expm1(-hazard), mp.exp(-hazard)


def assert_reported(mp: mpmath.ctx_mp.MPContext, reported: Magnitude, reference: mpmath.mpf
                    ) -> None:
    """Decimal text within the reported bound, the float the nearest to the reference."""
    gap = abs(mp.expm1(ln_of_text(mp, reported.decimal) - mp.log(reference)))
    assert float(gap) <= reported.relative_error_bound
    if mp.log10(reference) < -330:  # past the float range: it underflows
        assert reported.value == 0.0
    elif rounding_is_settled(mp, reference, 40):
        assert reported.value == nearest_float(reference)


CASES = [  # (random bits, tick, rate now, growth, issued)
    (74, MS, Fraction(10**6), Fraction(3, 2), 0),  # the uuid-v7 layout
    (74, MS, Fraction(5 * 10**4), Fraction(2), 10**12),
    (74, MS, Fraction(10**6), Fraction(1, 2), 10**9),
    (40, MS, Fraction(300), Fraction(3, 2), 10**6),
    (20, Fraction(1), Fraction(3, 2), Fraction(2), 0),
    (12, Fraction(1), Fraction(600), Fraction(11, 10), 50),  # u/M = 0.15: many terms
    (12, Fraction(1), Fraction(600), Fraction(2), 50),  # u/M up to 0.29 within a year
    (12, Fraction(1), Fraction(1900), Fraction(101, 100), 50),  # u/M = 0.46: some 130 terms
    (64, Fraction(1), Fraction(7 * 2**60), Fraction(1, 2), 0),  # u/M = 0.44, falling
]


@pytest.mark.parametrize(("bits", "tick", "rate", "growth", "issued"), CASES)
@pytest.mark.parametrize("seconds", [Fraction(1), Fraction(7 * DAY), Fraction(3 * 365 * DAY)])
def test_the_risk_is_the_integrated_hazard(bits: int, tick: Fraction, rate: Fraction,
                                           growth: Fraction, issued: int,
                                           seconds: Fraction) -> None:
    ticks = GrowingTicks(bits, tick, rate, growth, Fraction(issued) / rate)
    if seconds > ticks.last_second():  # past half the values per tick: refused
        with pytest.raises(DomainError) as caught:
            growing_tick_risk(ticks, seconds)
        assert caught.value.field == "horizon"
        return
    mp = context()
    risk, complement = reference_risk(mp, ticks, seconds)
    ours = growing_tick_risk(ticks, seconds)
    assert_reported(mp, ours.collision, risk)
    assert_reported(mp, ours.no_collision, complement)
    assert ours.relative_error_bound < 1e-15
    assert ours.method == "tick-model"


def test_growth_one_is_the_steady_model() -> None:
    # the series at growth 1 against the steady closed form of core/ticks.py
    # (exp(-(d/tau) M (x - log1p x))), each within its own reported bound
    for bits, rate, past in [(74, Fraction(10**6), Fraction(5)), (16, Fraction(40), 0)]:
        ticks = GrowingTicks(bits, MS, rate, Fraction(1), Fraction(past))
        ours = growing_tick_risk(ticks, Fraction(3 * DAY))
        steady = tick_risk(bits, steady_loads(rate, MS, Fraction(past) + 3 * DAY))
        ratio = Fraction(ours.collision.decimal) / Fraction(steady.collision.decimal)
        allowed = ours.collision.relative_error_bound + steady.collision.relative_error_bound
        assert abs(ratio - 1) <= allowed * 1.01


def test_a_projection_at_growth_one_keeps_the_steady_answer() -> None:
    steady = project_tick_budget(74, MS, IssueSchedule(10**9, Fraction(10**6)),
                                 Fraction(365 * DAY), Fraction(1, 10**9), 5)
    again = project_tick_budget(74, MS, IssueSchedule(10**9, Fraction(10**6), Fraction(1)),
                                Fraction(365 * DAY), Fraction(1, 10**9), 5)
    assert again == steady


def reference_count(mp: mpmath.ctx_mp.MPContext, schedule: IssueSchedule,
                    seconds: Fraction) -> int:
    """floor(issued + rate Y (g^(t/Y) - 1) / ln g) at 80 digits (issue 9's closed form)."""
    log_growth = mp.log(fraction(mp, schedule.growth))
    years = fraction(mp, seconds) / YEAR_SECONDS
    rate = fraction(mp, schedule.rate)
    return int(mp.floor(schedule.issued + rate * YEAR_SECONDS * mp.expm1(years * log_growth)
                        / log_growth))


def exceeds(mp: mpmath.ctx_mp.MPContext, ticks: GrowingTicks, seconds: int,
            max_risk: Fraction) -> bool:
    return bool(reference_risk(mp, ticks, Fraction(seconds))[0] > fraction(mp, max_risk))


@pytest.mark.parametrize(("bits", "rate", "growth", "issued", "max_risk"), [
    (74, Fraction(10**6), Fraction(3, 2), 0, Fraction(1, 10**9)),  # uuid-v7 layout
    (74, Fraction(10**6), Fraction(2), 10**12, Fraction(1, 10**6)),
    (74, Fraction(10**6), Fraction(1, 2), 0, Fraction(1, 10**9)),
    (40, Fraction(300), Fraction(3, 2), 10**6, Fraction(1, 100)),
    (20, Fraction(3, 2), Fraction(2), 0, Fraction(1, 10**3)),
    (20, Fraction(3, 2), Fraction(1, 2), 0, Fraction(1, 10**3)),
])
def test_counts_risks_and_the_moment_follow_the_reference(
    bits: int, rate: Fraction, growth: Fraction, issued: int, max_risk: Fraction
) -> None:
    schedule = IssueSchedule(issued, rate, growth)
    horizon = Fraction(10 * 365 * DAY)
    projection = project_tick_budget(bits, MS, schedule, horizon, max_risk, 5)
    ticks = GrowingTicks(bits, MS, rate, growth, Fraction(issued) / rate)
    mp = context()
    for point in projection.series:
        assert point.count == reference_count(mp, schedule, point.seconds)
        if point.risk.collision.log10 is None:
            assert issued == 0 and point.seconds == 0
            continue
        assert_reported(mp, point.risk.collision, reference_risk(mp, ticks, point.seconds)[0])
    found = projection.exhausted
    assert found is not None and not found.already
    seconds = int(found.seconds)
    assert not exceeds(mp, ticks, seconds - 1, max_risk)
    assert exceeds(mp, ticks, seconds, max_risk)
    assert projection.capacity.count == reference_count(mp, schedule, Fraction(seconds - 1))
    assert found.at.count == reference_count(mp, schedule, Fraction(seconds))


def test_a_falling_rate_whose_risk_stays_bounded_never_runs_out() -> None:
    # growth 1/2: at leading order the hazard tends to rate0^2 tau / (2M) Y / (2 ln 2);
    # a budget above the limit of the reference is never reached
    rate, bits = Fraction(2000), 40
    schedule = IssueSchedule(0, rate, Fraction(1, 2))
    ticks = GrowingTicks(bits, MS, rate, Fraction(1, 2), Fraction(0))
    mp = context()
    limit = -mp.expm1(-reference_hazard(mp, ticks, Fraction(200 * 365 * DAY)))
    max_risk = Fraction(11, 10) * Fraction(str(mpmath.nstr(limit, 15)))
    projection = project_tick_budget(bits, MS, schedule, Fraction(30 * 365 * DAY), max_risk, 3)
    assert projection.exhausted is None
    assert not projection.capacity.bounded
    assert projection.capacity.count == reference_count(mp, schedule,
                                                        Fraction(TICK_SEARCH_SECONDS))


def test_a_horizon_past_half_the_values_per_tick_is_refused() -> None:
    # 1e6 a second at 74 bits: u/M = 5.3e-20 now; growth 10 reaches 1/2 after about
    # log10(1 / (2 u/M)) = 19 years
    schedule = IssueSchedule(0, Fraction(10**6), Fraction(10))
    with pytest.raises(DomainError) as caught:
        project_tick_budget(74, MS, schedule, Fraction(40 * 365 * DAY), Fraction(1, 10**9), 2)
    assert caught.value.field == "horizon"
    assert "give a horizon up to P" in caught.value.detail
    days = int(caught.value.detail.rsplit("P", 1)[1].rstrip("D"))
    expected = 365 * math.log10(2**74 / (2 * 10**6 * 1e-3))
    assert days == pytest.approx(expected, rel=1e-3, abs=0)
    within = project_tick_budget(74, MS, schedule, Fraction(days * DAY), Fraction(1, 2), 2)
    assert within.exhausted is not None


def test_a_rate_over_half_the_values_per_tick_now_is_refused() -> None:
    schedule = IssueSchedule(0, Fraction(10**6), Fraction(3, 2))
    with pytest.raises(DomainError) as caught:
        project_tick_budget(8, MS, schedule, Fraction(DAY), Fraction(1, 10**9), 2)
    assert caught.value.field == "rate"
    assert "half the 2^8 values per tick" in caught.value.detail


@pytest.mark.parametrize(("bits", "tick", "rate", "growth", "issued"), CASES)
def test_the_series_batch_is_within_its_bound(bits: int, tick: Fraction, rate: Fraction,
                                              growth: Fraction, issued: int) -> None:
    ticks = GrowingTicks(bits, tick, rate, growth, Fraction(issued) / rate)
    last = Fraction(2 * 365 * DAY)
    if ticks.last_second() < last:
        last = Fraction(math.floor(ticks.last_second()))
    moments = [Fraction(0), Fraction(1, 10**9), Fraction(1), last / 7, last / 2, last]
    found = growing_series_risks(ticks, moments, list(range(len(moments))))
    assert found[0] is None
    batch = TickBatch.for_moments(ticks, last)
    if batch is None:  # u/M too near 1/2 for the batch: every moment is left to the caller
        assert all(risk is None for risk in found)
        return
    assert batch.bound < Fraction(1, 2**100)
    mp = context()
    for moment, risk in zip(moments[1:], found[1:], strict=True):
        assert risk is not None and risk.method == "tick-model"
        assert risk.relative_error_bound == batch.text_bound
        truth = reference_risk(mp, ticks, moment)[0]
        assert_reported(mp, risk.collision, truth)
        # the module docstring's e on the MPFR risk itself, before any reporting
        with batch.ctx:
            raw = batch.risk(batch.log_no_collision(moment)).as_integer_ratio()
        gap = abs(mp.mpf(raw[0]) / raw[1] / truth - 1)
        assert gap <= mp.mpf(batch.bound.numerator) / batch.bound.denominator


def test_the_batch_bound_grows_with_the_terms_and_the_exponent() -> None:
    # e = (8 (2K + 6 + 14 max(1, K A)) + 3K + 3) u (1 + 2^-20), by hand for K = 3, A = 2
    assert batch_bound(3, Fraction(2)) == Fraction(8 * (6 + 6 + 14 * 6) + 12, 2**128) * (
        1 + Fraction(1, 2**20))
    assert batch_bound(3, Fraction(1, 10)) == Fraction(8 * (6 + 6 + 14) + 12, 2**128) * (
        1 + Fraction(1, 2**20))


def test_a_past_too_long_for_a_float_is_already_over_with_growth() -> None:
    schedule = IssueSchedule(10**2000, Fraction(37, 10), Fraction(2))
    projection = project_tick_budget(16, Fraction(1), schedule, Fraction(1), Fraction(1, 2), 2)
    assert projection.exhausted is not None and projection.exhausted.already
    # the past alone: 10^2000 / 3.7 ticks at a mean of 3.7 over 2^16 values, so the
    # chance of no collision is about e^-(1e1995): the risk's float is 1
    assert projection.now.risk.collision.value == 1.0
    assert projection.at_horizon.risk.collision.value == 1.0
