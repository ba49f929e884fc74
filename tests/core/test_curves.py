"""Risk curves: the counts they are drawn at, and each risk against published and mpmath values."""

from __future__ import annotations

import mpmath
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from tests.core._reference import exact_risk, high_precision_risk, ln_of_text, relative_gap

from urnbound.core.curves import curve_counts, risk_curve
from urnbound.core.errors import DomainError


def test_birthday_curve_matches_the_published_table() -> None:
    # "Birthday problem" table (Wikipedia): 365 values, 10 / 20 / ... / 70 draws:
    # 11.7 % / 41.1 % / 70.6 % / 89.1 % / 97.0 % / 99.4 % / 99.9 %
    curve = risk_curve(365, 10, 70, 7, "linear")
    assert curve.counts == (10, 20, 30, 40, 50, 60, 70)
    shown = [round(100 * r.collision.value, 1) for r in curve.risks]
    assert shown == [11.7, 41.1, 70.6, 89.1, 97.0, 99.4, 99.9]
    for count, risk in zip(curve.counts, curve.risks, strict=True):
        exact = exact_risk(365, count)  # sympy rationals (tests/core/_reference.py)
        assert risk.exact == exact
    assert curve.methods == ("exact",)


def test_large_curve_risks_match_mpmath() -> None:
    curve = risk_curve(2**128, 10**10, 10**20, 6)
    assert curve.counts == tuple(10**k for k in (10, 12, 14, 16, 18, 20))
    for count, risk in zip(curve.counts, curve.risks, strict=True):
        ref = high_precision_risk(2**128, count)  # mpmath log-gamma at high precision
        assert relative_gap(ref.mp, ln_of_text(ref.mp, risk.collision.decimal),
                            ref.ln_risk) <= 1e-19
        assert relative_gap(ref.mp, ln_of_text(ref.mp, risk.no_collision.decimal),
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
