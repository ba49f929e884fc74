"""Risk curves: the counts they are drawn at, and each risk against published and mpmath values."""

from __future__ import annotations

from fractions import Fraction

import mpmath
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from tests.core._reference import (
    exact_risk,
    fraction_of_text,
    high_precision_risk,
    ln_of_text,
    relative_gap,
    rounded_candidates,
)

from urnbound.core.curves import curve_counts, occupancy_curve, risk_curve
from urnbound.core.errors import DomainError
from urnbound.core.occupancy_results import AT_LEAST, BELOW, Rule


def test_birthday_curve_matches_the_published_table() -> None:
    # "Birthday problem" table (Wikipedia): 365 values, 10 / 20 / ... / 70 draws:
    # 11.7 % / 41.1 % / 70.6 % / 89.1 % / 97.0 % / 99.4 % / 99.9 %
    curve = risk_curve(365, 10, 70, 7, "linear")
    assert curve.counts == (10, 20, 30, 40, 50, 60, 70)
    shown = [round(100 * p.risk.value, 1) for p in curve.points]
    assert shown == [11.7, 41.1, 70.6, 89.1, 97.0, 99.4, 99.9]
    for point in curve.points:
        # sympy rationals (tests/core/_reference.py), the decimal text correctly rounded
        assert fraction_of_text(point.risk.decimal) in rounded_values(exact_risk(365, point.count))
    assert curve.methods == ("exact",)


def test_large_curve_risks_match_mpmath() -> None:
    curve = risk_curve(2**128, 10**10, 10**20, 6)
    assert curve.counts == tuple(10**k for k in (10, 12, 14, 16, 18, 20))
    for point in curve.points:
        ref = high_precision_risk(2**128, point.count)  # mpmath log-gamma at high precision
        assert relative_gap(ref.mp, ln_of_text(ref.mp, point.risk.decimal),
                            ref.ln_risk) <= 1e-19
        assert relative_gap(ref.mp, ln_of_text(ref.mp, point.complement.decimal),
                            ref.ln_no_collision) <= 1e-19


def test_log_spacing_reaches_counts_past_the_float_range() -> None:
    counts = curve_counts(1, 2**4000, 5)
    # 2^(4000 i / 4): powers of two to within one
    for i, count in enumerate(counts):
        assert abs(count - 2 ** (1000 * i)) <= 1


@settings(max_examples=60, deadline=None)
@given(low=st.integers(1, 10**30), span=st.integers(1, 10**40), points=st.integers(2, 500),
       spacing=st.sampled_from(["log", "linear"]))
def test_counts_rise_strictly_from_low_to_high(low: int, span: int, points: int,
                                               spacing: str) -> None:
    counts = curve_counts(low, low + span, points, spacing)
    assert counts[0] == low and counts[-1] == low + span
    assert all(a < b for a, b in zip(counts, counts[1:], strict=False))
    assert len(counts) <= points
    if spacing == "log" and len(counts) == points:
        # count i is low (high/low)^(i/(k-1)) to within one (mpmath at 200 digits)
        mp = mpmath.MPContext()
        mp.dps = 200
        ratio = mp.mpf(low + span) / low
        for i, count in enumerate(counts):
            assert abs(count - low * mp.power(ratio, mp.mpf(i) / (points - 1))) <= 1


@pytest.mark.parametrize(("low", "high", "spacing", "field"), [
    (5, 5, "log", "to"), (9, 3, "linear", "to"), (0, 10, "log", "from"),
    (1, 10, "cubic", "spacing"),
])
def test_bad_ranges_name_their_field(low: int, high: int, spacing: str, field: str) -> None:
    with pytest.raises(DomainError) as caught:
        curve_counts(low, high, 10, spacing)
    assert caught.value.field == field


def rounded_values(x: Fraction) -> set[Fraction]:
    """The 20-digit roundings of ``x`` the core may print (tests/core/_reference.py)."""
    return {Fraction(m) * Fraction(10) ** (e - 19) for m, e in rounded_candidates(x)}


def test_occupancy_curve_three_sharing_a_day() -> None:
    # Diaconis and Mosteller (1989): 88 people for P(some day shared by three) >= 1/2
    curve = occupancy_curve(365, 87, 88, 2, "linear", Rule(BELOW, 3))
    assert [p.count for p in curve.points] == [87, 88]
    assert curve.points[0].risk.value < 0.5 <= curve.points[1].risk.value


def test_coverage_curve_is_the_complement_of_the_surjection_count() -> None:
    # P(all k values seen in n draws) = S2(n, k) k! / k^n (OEIS A008277): S2(10, 5) = 42525
    curve = occupancy_curve(5, 5, 10, 2, "linear", Rule(AT_LEAST, 1))
    seen = Fraction(42525 * 120, 5**10)
    assert fraction_of_text(curve.points[-1].complement.decimal) in rounded_values(seen)
    assert fraction_of_text(curve.points[-1].risk.decimal) in rounded_values(1 - seen)
