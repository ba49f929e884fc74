"""Parsing of counts, sizes and risk targets: exact values, stated ranges, bounded cost."""

from __future__ import annotations

from decimal import Decimal
from fractions import Fraction

import pytest
from hypothesis import example, given
from hypothesis import strategies as st

from urnbound.core.errors import DomainError
from urnbound.core.limits import MAX_COUNT, MIN_RISK
from urnbound.domain.numbers import (
    MAX_SIZE,
    parse_count,
    parse_int_in_range,
    parse_risk,
    parse_size,
)

COUNT_RULE = (
    "count must be a whole number from 0 to 2^8192, "
    "written as digits or in scientific notation such as 1e9"
)
RISK_RULE = "max_risk must be a decimal number from 1e-300 up to but not including 1"


def _count_error(text: str | int, **kwargs: int | str) -> DomainError:
    with pytest.raises(DomainError) as caught:
        parse_count(text, **kwargs)  # type: ignore[arg-type]
    return caught.value


@pytest.mark.parametrize(
    ("text", "value"),
    [
        ("0", 0),
        ("42", 42),
        (" 42 ", 42),
        ("\t42\n", 42),
        ("+7", 7),
        ("007", 7),
        ("1e9", 10**9),
        ("1E6", 10**6),
        ("1e+6", 10**6),
        ("2.5e12", 2_500_000_000_000),
        ("1.0", 1),
        ("1.", 1),
        (".5e1", 5),
        ("1230.0e-1", 123),
        ("120e-1", 12),
        ("0e999999999", 0),
        ("1e60", 10**60),
        ("1e2466", 10**2466),
        (str(MAX_COUNT), MAX_COUNT),
        (12, 12),
        (MAX_COUNT, MAX_COUNT),
    ],
)
def test_count_accepted(text: str | int, value: int) -> None:
    assert parse_count(text) == value


@pytest.mark.parametrize(
    ("text", "reason"),
    [
        ("1.5", "fractional part"),
        ("2.5", "fractional part"),
        ("1e-3", "fractional part"),
        ("-1", "below 0"),
        ("-1e999999999", "below 0"),
        ("nan", "not a number"),
        ("NaN", "not a number"),
        ("inf", "not a number"),
        ("Infinity", "not a number"),
        ("", "empty"),
        ("   ", "empty"),
        ("0x10", "not a number"),
        ("1_000", "not a number"),
        ("1,000", "not a number"),
        ("1 000", "not a number"),
        ("e9", "not a number"),
        ("1e", "not a number"),
        ("1e9.5", "not a number"),
        ("++1", "not a number"),
        ("\u0661\u0662", "not a number"),  # Arabic-Indic digits: ASCII only
        ("\uff11", "not a number"),  # fullwidth one
        ("1e2467", "above 2^8192"),  # 2^8192 ~ 1.09e2466
        (str(MAX_COUNT + 1), "above 2^8192"),
        ("1e999999999", "above 2^8192"),
        ("9" * 2600, "above 2^8192"),
        ("1" + "0" * 2599, "above 2^8192"),
        ("1" * 2601, "more than 2600 characters"),
        (-1, "below 0"),
        (MAX_COUNT + 1, "above 2^8192"),
    ],
)
def test_count_rejected_with_rule(text: str | int, reason: str) -> None:
    error = _count_error(text)
    assert error.field == "count"
    assert error.detail.startswith(COUNT_RULE)
    assert reason in error.detail


@pytest.mark.parametrize("value", [True, False, 1.0, None, b"1"])
def test_count_of_wrong_type(value: object) -> None:
    error = _count_error(value)  # type: ignore[arg-type]
    assert error.field == "count"
    assert "of type" in error.detail


def test_count_field_and_bounds_follow_the_caller() -> None:
    error = _count_error("11", field="n", minimum=1, maximum=10)
    assert error.field == "n"
    assert error.detail.startswith("n must be a whole number from 1 to 10,")
    assert parse_count("1e1", field="n", minimum=1, maximum=10) == 10


def test_huge_exponent_is_refused_before_building_the_number() -> None:
    # 10**(10**18) could never be built; reaching the error proves the exponent check ran first.
    error = _count_error("1e1000000000000000000")
    assert "above 2^8192" in error.detail


@given(st.integers(min_value=0, max_value=MAX_COUNT))
@example(0)
@example(MAX_COUNT)
def test_digits_round_trip(n: int) -> None:
    assert parse_count(str(n)) == n
    assert parse_count(f"+{n}") == n


@given(
    st.integers(min_value=0, max_value=10**20),
    st.integers(min_value=0, max_value=40),
    st.sampled_from(["e", "E", "e+"]),
)
def test_scientific_round_trip(mantissa: int, exponent: int, marker: str) -> None:
    assert parse_count(f"{mantissa}{marker}{exponent}") == mantissa * 10**exponent


@given(st.decimals(allow_nan=False, allow_infinity=False, min_value=0, max_value=10**30))
def test_agrees_with_stdlib_decimal(number: Decimal) -> None:
    # The stdlib Decimal reads the same notation exactly: an independent reference.
    text = str(number)
    if number == number.to_integral_value():
        assert parse_count(text) == int(number)
    else:
        with pytest.raises(DomainError):
            parse_count(text)


@pytest.mark.parametrize(
    ("text", "value"),
    [("2", 2), ("1e6", 10**6), (str(MAX_SIZE), MAX_SIZE), (MAX_SIZE, MAX_SIZE)],
)
def test_size_accepted(text: str | int, value: int) -> None:
    assert parse_size(text) == value


@pytest.mark.parametrize(
    ("text", "reason"),
    [
        ("1", "below 2"),
        ("0", "below 2"),
        (str(MAX_SIZE + 1), "above 2^8192"),
        ("1e2467", "above 2^8192"),
        ("1e99999999999", "above 2^8192"),
        ("9" * 2601, "more than 2600 characters"),
    ],
)
def test_size_rejected(text: str, reason: str) -> None:
    with pytest.raises(DomainError) as caught:
        parse_size(text)
    assert caught.value.field == "size"
    assert caught.value.detail.startswith("size must be a whole number from 2 to 2^8192")
    assert reason in caught.value.detail


def test_size_just_below_the_limit_in_scientific_notation() -> None:
    # 2**8192 = 1.0907481356...e2466 (checked against Python's exact integer).
    assert str(MAX_SIZE).startswith("10907481356")
    assert parse_size("1.09e2466") == 109 * 10**2464
    with pytest.raises(DomainError):
        parse_size("1.091e2466")


@pytest.mark.parametrize(("text", "value"), [("1", 1), ("8192", 8192), (" 64 ", 64), (22, 22)])
def test_int_in_range_accepted(text: str | int, value: int) -> None:
    assert parse_int_in_range(text, "bits", 1, 8192) == value


@pytest.mark.parametrize("text", ["0", "8193", "1e3", "6.4e1", "", "abc", "1.0", True])
def test_int_in_range_rejected(text: str | bool) -> None:
    with pytest.raises(DomainError) as caught:
        parse_int_in_range(text, "bits", 1, 8192)
    assert caught.value.field == "bits"
    assert caught.value.detail.startswith("bits must be a whole number from 1 to 8192")


@pytest.mark.parametrize(
    ("text", "value"),
    [
        ("0.5", Fraction(1, 2)),
        ("0.25", Fraction(1, 4)),
        ("1e-9", Fraction(1, 10**9)),
        ("1E-9", Fraction(1, 10**9)),
        ("2.5e-3", Fraction(1, 400)),
        (".1", Fraction(1, 10)),
        ("+0.001", Fraction(1, 1000)),
        (" 0.1 ", Fraction(1, 10)),
        ("1e-300", MIN_RISK),
        ("10e-301", MIN_RISK),
        ("0.0000001e-293", MIN_RISK),
        ("0.999999999999999999999999999999", 1 - Fraction(1, 10**30)),
        ("9.99e-1", Fraction(999, 1000)),
        ("0.1000000000", Fraction(1, 10)),
    ],
)
def test_risk_accepted_exactly(text: str, value: Fraction) -> None:
    assert parse_risk(text) == value


@pytest.mark.parametrize(
    ("text", "reason"),
    [
        ("0", "below 1e-300"),
        ("0.0", "below 1e-300"),
        ("-0", "below 1e-300"),
        ("1e-301", "below 1e-300"),
        ("9.99999e-301", "below 1e-300"),
        ("1e-99999999999", "below 1e-300"),
        ("1", "1 or more"),
        ("1.0", "1 or more"),
        ("1.5", "1 or more"),
        ("1e999999999", "1 or more"),
        ("10e-1", "1 or more"),
        ("-0.1", "negative"),
        ("nan", "not a decimal number"),
        ("inf", "not a decimal number"),
        ("1/2", "not a decimal number"),
        ("50%", "not a decimal number"),
        ("0x1p-3", "not a decimal number"),
        ("0.000_1", "not a decimal number"),
        ("", "empty"),
        ("0." + "0" * 198 + "1", "more than 200 characters"),
    ],
)
def test_risk_rejected_with_rule(text: str, reason: str) -> None:
    with pytest.raises(DomainError) as caught:
        parse_risk(text)
    assert caught.value.field == "max_risk"
    assert caught.value.detail.startswith(RISK_RULE)
    assert reason in caught.value.detail


def test_risk_field_follows_the_caller_and_refuses_non_text() -> None:
    with pytest.raises(DomainError) as caught:
        parse_risk(0.5)  # type: ignore[arg-type]
    assert caught.value.field == "max_risk"
    with pytest.raises(DomainError) as caught:
        parse_risk("2", field="target")
    assert caught.value.field == "target"


@given(
    st.integers(min_value=1, max_value=10**30),
    st.integers(min_value=-340, max_value=5),
)
def test_risk_agrees_with_stdlib_decimal(mantissa: int, exponent: int) -> None:
    # Fraction(Decimal(text)) converts decimal text exactly: an independent reference.
    text = f"{mantissa}e{exponent}"
    expected = Fraction(Decimal(text))
    if MIN_RISK <= expected < 1:
        assert parse_risk(text) == expected
    else:
        with pytest.raises(DomainError):
            parse_risk(text)
