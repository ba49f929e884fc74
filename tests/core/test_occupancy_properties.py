"""Monotonicity of the occupancy answers in n, k, N and a, checked with hypothesis.

Each answer is known to within its reported bound, so a comparison allows for both
bounds: x <= y is checked as x (1 - e_x) <= y (1 + e_y), on the decimal texts.
"""

from __future__ import annotations

from fractions import Fraction

from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from urnbound.core.occupancy import occupancy_risk
from urnbound.core.occupancy_results import AT_LEAST, BELOW, Rule
from urnbound.core.results import Magnitude

SETTINGS = settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])

buckets = st.one_of(st.integers(1, 400), st.integers(400, 10**7), st.integers(10**7, 10**12))


def _parts(figure: Magnitude) -> tuple[Fraction, int]:
    """The decimal text as (mantissa, exponent), never building 10**exponent."""
    if figure.decimal == "0":
        return Fraction(0), 0
    mantissa, _, exponent = figure.decimal.partition("e")
    return Fraction(mantissa), int(exponent)


def _at_most(x: Magnitude, y: Magnitude) -> bool:
    """x <= y up to both bounds (and the last digit of each text)."""
    (xm, xe), (ym, ye) = _parts(x), _parts(y)
    if xm == 0:
        return True
    if ym == 0:
        return False
    if xe != ye:
        return xe < ye if abs(xe - ye) > 1 else xm * 10 ** (xe - min(xe, ye)) <= (
            ym * 10 ** (ye - min(xe, ye)) * (1 + Fraction(1, 10**9)))
    low = xm * (1 - Fraction(x.relative_error_bound) - Fraction(1, 10**19))
    high = ym * (1 + Fraction(y.relative_error_bound) + Fraction(1, 10**19))
    return low <= high


def _count_for(size: int, fraction: float) -> int:
    return max(0, int(fraction * size))


@SETTINGS
@given(buckets, st.floats(0.0, 2.2), st.integers(3, 6))
@example(365, 87 / 365, 3)
def test_overflow_rises_with_the_count(size: int, share: float, level: int) -> None:
    count = _count_for(size, share) + level - 3
    before = occupancy_risk(size, count, Rule(BELOW, level))
    after = occupancy_risk(size, count + 1, Rule(BELOW, level))
    assert _at_most(before.fails, after.fails)
    assert _at_most(after.holds, before.holds)


@SETTINGS
@given(buckets, st.floats(0.0, 3.0), st.integers(3, 8))
def test_overflow_falls_with_the_load(size: int, share: float, level: int) -> None:
    count = _count_for(size, share)
    higher = occupancy_risk(size, count, Rule(BELOW, level + 1))
    lower = occupancy_risk(size, count, Rule(BELOW, level))
    assert _at_most(higher.fails, lower.fails)


@SETTINGS
@given(st.integers(2, 10**9), st.integers(0, 10**6), st.integers(3, 5))
@example(365, 88, 3)
def test_overflow_falls_with_more_buckets(size: int, count: int, level: int) -> None:
    more = occupancy_risk(size + 1, count, Rule(BELOW, level))
    fewer = occupancy_risk(size, count, Rule(BELOW, level))
    assert _at_most(more.fails, fewer.fails)


@SETTINGS
@given(st.integers(1, 10**6), st.floats(0.5, 40.0), st.integers(1, 4))
@example(50, 4.5, 1)
def test_coverage_rises_with_the_draws(size: int, share: float, level: int) -> None:
    count = _count_for(size, share)
    before = occupancy_risk(size, count, Rule(AT_LEAST, level))
    after = occupancy_risk(size, count + 1, Rule(AT_LEAST, level))
    assert _at_most(before.holds, after.holds)
    assert _at_most(after.fails, before.fails)


@SETTINGS
@given(st.integers(1, 10**6), st.floats(0.5, 40.0), st.integers(1, 4))
def test_coverage_falls_as_more_uses_are_asked(size: int, share: float, level: int) -> None:
    count = _count_for(size, share)
    more = occupancy_risk(size, count, Rule(AT_LEAST, level + 1))
    fewer = occupancy_risk(size, count, Rule(AT_LEAST, level))
    assert _at_most(more.holds, fewer.holds)


@SETTINGS
@given(st.integers(1, 10**6), st.integers(0, 10**7), st.integers(1, 3))
def test_coverage_falls_with_more_buckets(size: int, count: int, level: int) -> None:
    more = occupancy_risk(size + 1, count, Rule(AT_LEAST, level))
    fewer = occupancy_risk(size, count, Rule(AT_LEAST, level))
    assert _at_most(more.holds, fewer.holds)
