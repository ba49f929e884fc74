"""ISO 8601 durations and rates: the accepted forms, exact values, and every refusal named."""

from __future__ import annotations

from fractions import Fraction

import pytest

from urnbound.core.errors import DomainError
from urnbound.domain.durations import duration_text, parse_duration
from urnbound.domain.rates import parse_rate


@pytest.mark.parametrize(("text", "seconds"), [
    # ISO 8601-1:2019, section 5.5.2.4: designators W, D, T, H, M, S
    ("P365D", 365 * 86400),
    ("P1W", 7 * 86400),
    ("PT1H30M", 5400),
    ("PT0.001S", Fraction(1, 1000)),
    ("PT0,5S", Fraction(1, 2)),  # a comma is the standard's preferred decimal sign
    ("P1DT12H", 36 * 3600),
    ("PT0.000000001S", Fraction(1, 10**9)),
    (" P2D ", 2 * 86400),
])
def test_accepted_durations_are_exact(text: str, seconds: Fraction | int) -> None:
    assert parse_duration(text, field="window") == seconds


@pytest.mark.parametrize(("text", "reason"), [
    ("P1Y", "years or months"),
    ("P2M", "years or months"),
    ("-P1D", "signed duration"),
    ("+P1D", "signed duration"),
    ("P", "not an ISO 8601 duration"),
    ("PT", "not an ISO 8601 duration"),
    ("P1DT", "not an ISO 8601 duration"),
    ("P1W2D", "not an ISO 8601 duration"),
    ("PT1.5H", "not an ISO 8601 duration"),
    ("p1d", "not an ISO 8601 duration"),
    ("1D", "not an ISO 8601 duration"),
    ("P1H", "not an ISO 8601 duration"),
    ("PT1S1M", "not an ISO 8601 duration"),
    ("P0D", "zero duration"),
    ("PT0.0000000001S", "more than 9 digits"),
    ("P9999999999999999D", "more than 15 digits"),
    ("P20000000D", "above 10^12 seconds"),
    ("", "empty"),
    ("P" + "1" * 300 + "D", "more than 200 characters"),
])
def test_refused_durations_name_the_field_and_the_form(text: str, reason: str) -> None:
    with pytest.raises(DomainError) as caught:
        parse_duration(text, field="window")
    assert caught.value.field == "window"
    assert reason in caught.value.detail
    assert "ISO 8601 duration such as P365D" in caught.value.detail


def test_duration_text_writes_seconds_back() -> None:
    assert duration_text(Fraction(1, 1000)) == "PT0.001S"
    assert parse_duration(duration_text(Fraction(123456789, 10**9)), field="tick") == (
        Fraction(123456789, 10**9))


@pytest.mark.parametrize(("text", "value"), [
    ("1e4", 10**4), ("0.25", Fraction(1, 4)), (".5", Fraction(1, 2)), ("1e30", 10**30),
    ("1e-9", Fraction(1, 10**9)), ("+3", 3),
])
def test_rates_are_exact(text: str, value: Fraction | int) -> None:
    assert parse_rate(text, field="guess_rate") == value


@pytest.mark.parametrize(("text", "reason"), [
    ("-1", "negative"), ("0", "below 1e-9"), ("1e31", "above 1e30"), ("1e99999", "not a decimal"),
    ("abc", "not a decimal"), ("", "empty"), ("1,000", "not a decimal"),
])
def test_refused_rates_name_the_field(text: str, reason: str) -> None:
    with pytest.raises(DomainError) as caught:
        parse_rate(text, field="guess_rate")
    assert caught.value.field == "guess_rate" and reason in caught.value.detail
