"""``bounded_magnitude``'s shortcuts give what its definition gives, and what mpmath gives.

``reporting.bounded_magnitude`` decides the float with ``interval_float`` and then, within
the normal float range, takes log10 of that float instead of converting the value again;
``interval_float`` reads ``error < 1/2`` off the tuple before asking mpmath's comparison.
Here every report is checked against the definition written out from the unchanged parts
(``interval_float``, ``log10_value``, ``decimal_text``, ``text_bound``), and its float and
log10 against mpmath's own conversion and logarithm at 300 bits.
"""

from __future__ import annotations

import math

import mpmath
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core import reporting
from urnbound.core.results import Magnitude

#: The smallest normal float64 (IEEE 754 binary64: 2**-1022).
SMALLEST_NORMAL = 2.0**-1022


def by_definition(value: tuple[object, ...], error: tuple[object, ...]) -> Magnitude | None:
    rounded = reporting.interval_float(value, error)
    if rounded is None:
        return None
    log10 = reporting.log10_value(value)
    return Magnitude(rounded, reporting.decimal_text(value, log10), log10,
                     reporting.text_bound(error))


values = st.builds(lambda m, e: libmp.from_man_exp(m, e, 200),
                   st.integers(min_value=1, max_value=2**130),
                   st.integers(min_value=-1300, max_value=1100))
errors = st.builds(lambda m, e: libmp.from_man_exp(m, e, 53),
                   st.integers(min_value=1, max_value=2**20),
                   st.integers(min_value=-200, max_value=0))


@settings(max_examples=400, deadline=None)
@given(values, errors)
def test_the_report_is_its_definition(value: tuple[object, ...], error: tuple[object, ...]) -> None:
    ours = reporting.bounded_magnitude(value, error)
    assert ours == by_definition(value, error)
    if ours is not None and SMALLEST_NORMAL <= ours.value < math.inf:
        # Reference: mpmath's conversion (round to nearest, normal floats: rounded once)
        # and its log10 at 300 bits.
        ctx = mpmath.MPContext()
        ctx.prec = 300
        x = ctx.make_mpf(value)
        assert ours.value == float(libmp.to_float(value, rnd=libmp.round_nearest))
        assert ours.log10 == pytest.approx(float(ctx.log10(x)), rel=2**-50, abs=0)


@pytest.mark.parametrize(("man", "exp"), [(1, -1), (1, -2), (3, -2), (2**52 + 1, -53),
                                          (1, 0), (0, 0), (7, -4), (2**60 - 1, -61)])
def test_the_half_test_agrees_with_mpmath(man: int, exp: int) -> None:
    error = libmp.from_man_exp(man, exp)
    # Reference: mpmath's comparison mpf_lt; the shortcut may only ever say "below".
    if reporting._below_half(error):
        assert mp.less(error, libmp.from_man_exp(1, -1))
    if mp.less(mp.ZERO, error) and mp.less(error, libmp.from_man_exp(1, -1)):
        assert reporting._below_half(error) or man == 0


def test_values_near_one_and_past_the_floats_take_the_general_logarithm() -> None:
    # Near 1 (log1p of the exact offset) and past 2**1020: the definition's own branches.
    for value in (mp.ratio(10**30 + 1, 10**30, 200), mp.ratio(10**30 - 1, 10**30, 200),
                  libmp.from_man_exp(3, 1500), libmp.from_man_exp(5, -1500)):
        error = libmp.from_man_exp(1, -150)
        assert reporting.bounded_magnitude(value, error) == by_definition(value, error)
