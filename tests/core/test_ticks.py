"""The tick model: direct Poisson summation at high precision, a seeded Monte Carlo run,
tails below 1e-30, monotonicity, and the inverse questions at their boundaries."""

from __future__ import annotations

from fractions import Fraction

import mpmath
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from urnbound.core.errors import DomainError
from urnbound.core.results import Magnitude
from urnbound.core.ticks import (
    TickLoad,
    fewest_tick_bits,
    highest_rate,
    steady_loads,
    tick_risk,
)

PROPERTY_SETTINGS = settings(max_examples=50, deadline=None,
                             suppress_health_check=[HealthCheck.too_slow])


def _context(prec: int = 600) -> mpmath.MPContext:
    ctx = mpmath.MPContext()
    ctx.prec = prec
    return ctx


def _direct_one_tick(ctx: mpmath.MPContext, bits: int, mean: Fraction
                     ) -> tuple[mpmath.mpf, mpmath.mpf]:
    """(risk, no-collision) of one tick by summing over the Poisson count n = 0 .. M.

    Independent of the closed form: P(n arrivals) = e^-mu mu^n / n!, and given n the
    chance that all are distinct is ff(M, n) / M^n (zero past n = M). The risk is summed
    as P(n) (1 - ff/M^n) term by term, so that a tiny risk suffers no cancellation.
    """
    size = 2**bits
    mu = ctx.mpf(mean.numerator) / mean.denominator
    pmf, distinct = ctx.exp(-mu), ctx.mpf(1)
    risk, none = ctx.mpf(0), ctx.mpf(0)
    repeat = ctx.mpf(0)  # 1 - ff(M, n) / M^n, kept without cancellation
    for n in range(size + 1):
        if n > 0:
            pmf = pmf * mu / n
            # 1 - d (1 - (n-1)/M) = (1 - d) + d (n-1)/M
            repeat = repeat + distinct * (n - 1) / size
            distinct = distinct * (size - n + 1) / size
        risk += pmf * repeat
        none += pmf * distinct
    # P(n > M) = P(M + 1, mu), the regularized lower incomplete gamma: always a repeat
    tail = ctx.gammainc(size + 1, 0, mu, regularized=True)
    return risk + tail, none


def _mp(ctx: mpmath.MPContext, value: Fraction) -> mpmath.mpf:
    return ctx.mpf(value.numerator) / value.denominator


def _relative(ctx: mpmath.MPContext, magnitude: Magnitude, true: mpmath.mpf) -> mpmath.mpf:
    return abs(ctx.mpf(magnitude.decimal) - true) / true


@pytest.mark.parametrize(("bits", "mean", "ticks"), [
    (10, Fraction(10), Fraction(1)),  # a crowded tick: risk near 0.05
    (10, Fraction(10), Fraction(1000)),  # risk next to 1: the complement carries it
    (8, Fraction(1, 10), Fraction(10**6)),
    (12, Fraction(1, 10**15), Fraction(3)),  # a tail near 1e-34
    (6, Fraction(200), Fraction(5, 2)),  # more arrivals than values, a partial tick
    (11, Fraction(7, 3), Fraction(10**9)),
])
def test_closed_form_against_direct_poisson_summation(bits: int, mean: Fraction,
                                                      ticks: Fraction) -> None:
    ctx = _context()
    risk_one, none_one = _direct_one_tick(ctx, bits, mean)
    log_none = (ctx.mpf(ticks.numerator) / ticks.denominator) * ctx.log1p(-risk_one)
    risk, none = -ctx.expm1(log_none), ctx.exp(log_none)
    answer = tick_risk(bits, [TickLoad(ticks, mean)])
    assert abs(none_one - ctx.exp(ctx.log1p(-risk_one))) <= ctx.mpf(10) ** -150  # sums agree
    for magnitude, true in ((answer.collision, risk), (answer.no_collision, none)):
        assert _relative(ctx, magnitude, true) <= magnitude.relative_error_bound
        assert float(_relative(ctx, magnitude, true)) < 1e-12  # 1e-12 or better
        assert magnitude.relative_error_bound < 1e-19


def test_tails_below_1e_minus_30_keep_their_relative_accuracy() -> None:
    ctx = _context()
    for bits, mean in ((12, Fraction(1, 10**15)), (40, Fraction(1, 10**9))):
        risk_one, _ = _direct_one_tick(ctx, bits, mean) if bits <= 12 else (
            -ctx.expm1(-(2**bits) * (_mp(ctx, mean) / 2**bits
                                      - ctx.log1p(_mp(ctx, mean) / 2**bits))), None)
        answer = tick_risk(bits, [TickLoad(Fraction(1), mean)])
        assert risk_one < 1e-30
        assert float(_relative(ctx, answer.collision, risk_one)) < 1e-12


def test_uuid_v7_year_against_the_closed_form_at_high_precision() -> None:
    # RFC 9562, section 5.7: 74 random bits per millisecond tick. A million identifiers a
    # second for 365 days.
    ctx = _context(800)
    loads = steady_loads(Fraction(10**6), Fraction(1, 1000), Fraction(365 * 86400))
    answer = tick_risk(74, loads)
    x = ctx.mpf(1000) / 2**74
    log_none = -(365 * 86400 * 1000) * 2**74 * (x - ctx.log1p(x))
    assert _relative(ctx, answer.collision, -ctx.expm1(log_none)) <= (
        answer.collision.relative_error_bound)
    # expected pairs: ticks mu^2 / (2M), exact
    assert Fraction(answer.expected_colliding_pairs.decimal) == pytest.approx(
        Fraction(365 * 86400 * 1000 * 1000**2, 2 * 2**74), rel=1e-19, abs=0)
    duplicates = (365 * 86400 * 1000) * 2**74 * (x - 1 + ctx.exp(-x))
    assert _relative(ctx, answer.expected_duplicates, duplicates) <= (
        answer.expected_duplicates.relative_error_bound)
    assert _relative(ctx, answer.reciprocal_risk, 1 / -ctx.expm1(log_none)) <= (
        answer.reciprocal_risk.relative_error_bound)


def test_monte_carlo_with_a_fixed_seed_where_collisions_are_frequent() -> None:
    # numpy, seed 20261202: 200,000 ticks of 2^10 values with Poisson(10) arrivals each
    rng = np.random.default_rng(20261202)
    ticks, size, mean, width = 200_000, 2**10, 10, 40
    counts = rng.poisson(mean, size=ticks)
    assert counts.max() < width
    values = rng.integers(0, size, size=(ticks, width))
    unused = np.arange(width) >= counts[:, None]
    values = np.where(unused, size + np.arange(width), values)  # distinct fillers
    ordered = np.sort(values, axis=1)
    repeated = (ordered[:, 1:] == ordered[:, :-1]).any(axis=1)
    one_tick = float(repeated.mean())
    blocks = float(repeated.reshape(-1, 20).any(axis=1).mean())  # 20 ticks at a time
    model_one = tick_risk(10, [TickLoad(Fraction(1), Fraction(mean))]).collision.value
    model_blocks = tick_risk(10, [TickLoad(Fraction(20), Fraction(mean))]).collision.value
    # about 5 standard errors: sqrt(p (1 - p) / trials) is 2.2 % and 0.8 % relative here
    assert one_tick == pytest.approx(model_one, rel=0.05, abs=0)
    assert blocks == pytest.approx(model_blocks, rel=0.05, abs=0)


def test_burst_loads_keep_the_mean_and_refuse_too_much() -> None:
    loads = steady_loads(Fraction(100), Fraction(1, 10), Fraction(3600), Fraction(5),
                         Fraction(1, 10))
    mean_rate = sum(load.ticks * load.mean for load in loads) / Fraction(3600)
    assert mean_rate == 100
    with pytest.raises(DomainError):
        steady_loads(Fraction(100), Fraction(1), Fraction(10), Fraction(5), Fraction(1, 2))
    with pytest.raises(DomainError):
        steady_loads(Fraction(100), Fraction(1), Fraction(10), Fraction(1, 2), Fraction(1, 2))


FINE = _context(200)  # 60 digits: enough to hold a 20-digit text and its bound apart


def _lower(magnitude: Magnitude) -> mpmath.mpf:
    return FINE.mpf(magnitude.decimal) * (1 - FINE.mpf(magnitude.relative_error_bound))


def _upper(magnitude: Magnitude) -> mpmath.mpf:
    return FINE.mpf(magnitude.decimal) * (1 + FINE.mpf(magnitude.relative_error_bound))


@PROPERTY_SETTINGS
@given(bits=st.integers(1, 200), rate=st.integers(1, 10**12), factor=st.integers(2, 1000),
       tick_ms=st.integers(1, 10**4), seconds=st.integers(1, 10**9),
       burst=st.integers(1, 100), share=st.integers(1, 1000))
def test_risk_grows_with_rate_duration_and_burst_and_falls_with_bits(
        bits: int, rate: int, factor: int, tick_ms: int, seconds: int, burst: int,
        share: int) -> None:
    tick = Fraction(tick_ms, 1000)
    share_fraction = Fraction(1, max(share, burst))

    def risk(bits_: int, rate_: int, seconds_: int, burst_: int) -> Magnitude:
        return tick_risk(bits_, steady_loads(Fraction(rate_), tick, Fraction(seconds_),
                                             Fraction(burst_), share_fraction)).collision

    base = risk(bits, rate, seconds, 1)
    for more in (risk(bits, rate * factor, seconds, 1), risk(bits, rate, seconds * factor, 1),
                 risk(bits, rate, seconds, burst), risk(max(bits - 1, 1), rate, seconds, 1)):
        assert _lower(base) <= _upper(more)


@pytest.mark.parametrize(("rate", "seconds", "target"), [
    (10**6, 365 * 86400, Fraction(1, 10**9)), (10**3, 86400, Fraction(1, 2)),
    (10**9, 10**9, Fraction(1, 10**300)),
])
def test_fewest_tick_bits_is_tight(rate: int, seconds: int, target: Fraction) -> None:
    loads = steady_loads(Fraction(rate), Fraction(1, 1000), Fraction(seconds))
    bits = fewest_tick_bits(loads, target, 8192)
    assert bits is not None
    limit = _mp(FINE, target)
    assert _lower(tick_risk(bits, loads).collision) <= limit
    assert _upper(tick_risk(bits - 1, loads).collision) > limit
    ctx = _context(2 * bits + 400)  # the closed form (mpmath), past the cancellation of x

    def true_risk(random_bits: int) -> mpmath.mpf:
        x = ctx.mpf(rate) / 1000 / 2**random_bits
        return -ctx.expm1(-(seconds * 1000) * 2**random_bits * (x - ctx.log1p(x)))

    assert true_risk(bits) <= _mp(ctx, target) < true_risk(bits - 1)


@PROPERTY_SETTINGS
@given(bits=st.integers(8, 160), seconds=st.integers(1, 10**9), exponent=st.integers(1, 60))
def test_highest_rate_agrees_with_the_forward_risk_at_its_boundary(bits: int, seconds: int,
                                                                   exponent: int) -> None:
    target, tick = Fraction(1, 10**exponent), Fraction(1, 1000)
    rate = highest_rate(bits, tick, Fraction(seconds), target, 10**30)
    assert rate < 10**30
    at = tick_risk(bits, steady_loads(Fraction(rate), tick, Fraction(seconds)))
    more = tick_risk(bits, steady_loads(Fraction(rate + 1), tick, Fraction(seconds)))
    limit = _mp(FINE, target)
    # the reported risks do not contradict the boundary ...
    assert _lower(at.collision) <= limit <= _upper(more.collision)
    # ... and the closed form at 400 bits (mpmath) confirms it on both sides
    ctx = _context(400)

    def true_risk(per_second: int) -> mpmath.mpf:
        x = ctx.mpf(per_second) / 1000 / 2**bits
        return -ctx.expm1(-(seconds * 1000) * 2**bits * (x - ctx.log1p(x)))

    assert true_risk(rate) <= _mp(ctx, target) < true_risk(rate + 1)


def test_expected_duplicates_on_a_float_tie_break_upwards() -> None:
    # One random bit, 39,825,437.519 identifiers per tick over 226,167,000 ticks (a case
    # hypothesis found): the duplicates are V + d with V = 226167 * 39825435519, an odd
    # integer past 2**53 (a tie between two floats), and 0 < d < 2**-(10**7). The true
    # value rounds up; the reference is Python's correctly rounded rational division.
    loads = (TickLoad(ticks=Fraction(226_167_000), mean=Fraction(39_825_437_519, 1000)),)
    answer = tick_risk(1, loads)
    exact = 226_167 * 39_825_435_519
    assert exact > 2**53 and exact % 2 == 1
    assert answer.expected_duplicates.value == float(Fraction(exact) + Fraction(1, 10**100))
    assert answer.expected_duplicates.decimal == "9.0071992750256730000e15"
    assert answer.collision.decimal == "1.0000000000000000000e0"
