"""Decimal text, floats and log10 of reported numbers, held against the standard library."""

from __future__ import annotations

import decimal
import math
from fractions import Fraction

from hypothesis import example, given, settings
from hypothesis import strategies as st
from mpmath import libmp

from urnbound.core import reporting
from urnbound.core.exact import decimal_of_fraction, magnitude_of_fraction


def _stdlib_decimal_text(numerator: int, denominator: int) -> str:
    """20 significant digits, half to even, by Python's decimal module (an independent path)."""
    context = decimal.Context(prec=20, rounding=decimal.ROUND_HALF_EVEN, Emin=-(10**8), Emax=10**8)
    exact = decimal.Context(prec=10**5, Emin=-(10**8), Emax=10**8)
    value = context.divide(exact.create_decimal(numerator), exact.create_decimal(denominator))
    sign, digits, exponent = value.as_tuple()
    text = "".join(map(str, digits)).ljust(20, "0")
    return f"{text[0]}.{text[1:]}e{exponent + len(digits) - 1}"


binary_values = st.tuples(st.integers(1, 2**120), st.integers(-3000, 3000))


@settings(max_examples=300, deadline=None)
@given(binary_values)
@example((1, -1))
@example((2**53 + 1, -1100))
@example((5, 0))
def test_decimal_text_is_correctly_rounded(value: tuple[int, int]) -> None:
    mantissa, exponent = value
    numerator, denominator = mantissa << max(exponent, 0), 1 << max(-exponent, 0)
    expected = _stdlib_decimal_text(numerator, denominator)
    assert reporting.decimal_text(libmp.from_man_exp(mantissa, exponent)) == expected
    assert decimal_of_fraction(numerator, denominator) == expected


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 10**40), st.integers(1, 10**40))
def test_fraction_report_matches_float_and_log10(numerator: int, denominator: int) -> None:
    report = magnitude_of_fraction(numerator, denominator)
    assert report.value == numerator / denominator  # Python's int division is correctly rounded
    assert report.log10 is not None
    truth = math.log10(numerator) - math.log10(denominator)
    assert math.isclose(report.log10, truth, rel_tol=1e-12, abs_tol=1e-12)


def test_tiny_values_keep_text_and_log10_when_the_float_underflows() -> None:
    tiny = libmp.from_man_exp(3, -5000)  # 3 * 2**-5000, far below the float range
    report = reporting.magnitude_of_real(tiny)
    assert report.value == 0.0
    assert report.decimal.endswith("e-1505")
    assert report.log10 is not None
    # log10(3) - 5000 log10(2), from the standard library's own logarithms
    assert math.isclose(report.log10, math.log10(3) - 5000 * math.log10(2), rel_tol=1e-14)
    assert Fraction(report.decimal.replace("e", "E")) > 0


# --- the float of a value known to a relative error ----------------------------------------


def _interval_floats(mantissa: int, exponent: int, error: Fraction) -> tuple[float, float]:
    """Floats of both ends of [v/(1+e), v/(1-e)] by Python's exact rational rounding."""
    value = Fraction(mantissa) * Fraction(2) ** exponent

    def rounded(x: Fraction) -> float:
        try:
            return float(x)  # correctly rounded, half to even (the standard library)
        except OverflowError:
            return math.inf

    return rounded(value / (1 + error)), rounded(value / (1 - error))


near_floats = st.one_of(
    # values a few units from a float midpoint, and values anywhere
    st.tuples(st.integers(2**52, 2**53 - 1), st.integers(-1100, 1000), st.integers(-4, 4)).map(
        lambda t: ((2 * t[0] + 1) * 2**40 + t[2], t[1] - 41)),
    st.tuples(st.integers(1, 2**100), st.integers(-1200, 1000)),
)


@settings(max_examples=500, deadline=None)
@given(near_floats, st.integers(40, 130), st.integers(1, 2**20))
@example((2**53, -53), 60, 1)  # 1.0 exactly, a power of two
@example(((2**53 - 1) * 2 + 1, -54), 100, 1)  # a midpoint: never decided
@example((1, -1074), 80, 1)  # the smallest subnormal
def test_interval_float_is_the_float_of_every_value_in_the_interval(
    value: tuple[int, int], error_bits: int, error_mantissa: int
) -> None:
    # reference: Python's Fraction -> float conversion, correctly rounded (half to even);
    # a float is returned only when both ends of the error interval round to it
    mantissa, exponent = value
    error = Fraction(error_mantissa, 2**error_bits)
    real, bound = libmp.from_man_exp(mantissa, exponent), libmp.from_man_exp(error_mantissa,
                                                                             -error_bits)
    low, high = _interval_floats(mantissa, exponent, error)
    for got in (reporting.interval_float(real, bound),
                reporting._float_far_from_boundary(real, bound)):  # the fast test alone too
        if got is not None:
            assert got == low == high, (got, low, high)


def test_the_fast_test_decides_values_far_from_a_boundary() -> None:
    # 1/3 to 2**-80 is some 2**-27 steps from the nearest midpoint: decided without the
    # interval division
    third = libmp.from_rational(1, 3, 120, libmp.round_nearest)
    assert reporting._float_far_from_boundary(third, libmp.from_man_exp(1, -80)) == 1 / 3
    one = libmp.from_man_exp(1, 0)
    assert reporting._float_far_from_boundary(one, libmp.from_man_exp(1, -80)) == 1.0
