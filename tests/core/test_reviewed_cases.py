"""Questions a review found wrong, each held against mpmath or sympy by relative error only."""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import pytest

from urnbound.core.pairwise import collision_risk
from urnbound.core.results import Magnitude

from ._reference import (
    high_precision_risk,
    ln_of_text,
    nearest_float,
    relative_gap,
    rounding_is_settled,
)

#: The agreement the issue asks for, relative.
REQUIRED_RELATIVE = 1e-15
#: Half a unit in the 20th significant digit, relative.
TEXT_HALF_UNIT = 5e-20
LARGEST_FLOAT = 1.7976931348623157e308
SMALLEST_NORMAL = 2.2250738585072014e-308


def check_text(mp: mpmath.ctx_mp.MPContext, ours: Magnitude, ln_ref: mpmath.mpf, bound: float,
               what: str) -> None:
    """The decimal text within the reported bound (its own rounding included) and 1e-15."""
    gap = relative_gap(mp, ln_of_text(mp, ours.decimal), ln_ref)
    assert gap <= bound, f"{what}: text {ours.decimal} off by {gap:.3e} > bound {bound:.3e}"
    assert gap <= REQUIRED_RELATIVE, f"{what}: text {ours.decimal} off by {gap:.3e}"


def check_log10(mp: mpmath.ctx_mp.MPContext, ours: Magnitude, ln_ref: mpmath.mpf,
                what: str) -> None:
    """log10 to 1e-15 relative, without any absolute allowance; -inf past the float range."""
    ref = ln_ref / mp.ln10
    assert ours.log10 is not None, what
    if ref < -LARGEST_FLOAT:
        assert ours.log10 == -math.inf, what
        return
    if abs(ref) < SMALLEST_NORMAL:  # a subnormal or zero float: its own rounding is the limit
        assert rounding_is_settled(mp, ref, 60), what
        assert ours.log10 == nearest_float(ref), f"{what}: log10 {ours.log10!r} vs {ref}"
        assert math.copysign(1.0, ours.log10) == 1.0 or ours.log10 != 0.0, what
        return
    gap = abs(mp.mpf(ours.log10) / ref - 1)
    assert gap <= REQUIRED_RELATIVE, f"{what}: log10 {ours.log10!r} vs {mp.nstr(ref, 20)}"


# The small-ratio form rounded ln Q to ~88 bits relative where exp needs it to ~64 bits
# absolute: these complements were wrong (or their bound overflowed) when |ln Q| >> 1.
SMALL_RATIO_LARGE_LOG = [
    (2**280, 10**55),
    (2**303, 10**60),
    *((2**bits, 10**60) for bits in range(290, 303)),
    (64**49, 10**60),  # alphabet base64, length 49
    (2**279, 10**55),
    (2**8192, 2**4200),
    (2**4096, 2**2100),
    (2**1024, 2**600),
]
# the same regime over a grid: n/N below 2**-95 while n**2 / 2N runs from 2 to 2**8000
SMALL_RATIO_GRID = [
    (2**bits - offset, 3 * 2 ** int(bits * share) + 7)
    for bits in (200, 256, 300, 512, 1024, 2048, 4096, 8192)
    for share in (0.51, 0.55, 0.6, 0.7, 0.8, 0.9, 0.97)
    for offset in (0, 12345)
    if int(bits * share) + 2 < bits - 95
]


@pytest.mark.parametrize(("size", "count"), SMALL_RATIO_LARGE_LOG + SMALL_RATIO_GRID,
                         ids=lambda v: f"~2^{v.bit_length()}")
def test_complement_where_the_ratio_is_tiny_but_the_log_is_large(size: int, count: int) -> None:
    # reference: mpmath at 4 log2 N + 200 bits, loggamma(N+1) - loggamma(N-n+1) - n ln N
    ref = high_precision_risk(size, count)
    ours = collision_risk(size, count)
    assert ref.ln_no_collision is not None
    what = f"N~2^{size.bit_length()} n~2^{count.bit_length()}"
    assert math.isfinite(ours.relative_error_bound), what
    check_text(ref.mp, ours.no_collision, ref.ln_no_collision, ours.relative_error_bound, what)
    check_log10(ref.mp, ours.no_collision, ref.ln_no_collision, what)


# --- log10 of a risk within 1e-30 of 1 --------------------------------------------------


@pytest.mark.parametrize(("size", "count"), [(2**64, 50_000_000_000), (2**64, 10**10),
                                             (2**128, 2**70), (2**200, 2**105)])
def test_log10_of_a_risk_near_one_keeps_its_relative_accuracy(size: int, count: int) -> None:
    # reference: mpmath at 4 log2 N + 200 bits; log10(1 - Q) = log1p(-Q) / ln 10. The risk
    # itself is 1 to every bit it carries, so log10 must come from the complement.
    ref = high_precision_risk(size, count)
    assert ref.ln_risk is not None
    ours = collision_risk(size, count)
    assert ours.method == "asymptotic"
    check_log10(ref.mp, ours.collision, ref.ln_risk, f"N~2^{size.bit_length()} n={count}")


# --- every float is the correctly rounded true value --------------------------------------


def check_float(mp: mpmath.ctx_mp.MPContext, ours: Magnitude, ln_ref: mpmath.mpf | None,
                what: str) -> None:
    """The float equals the correct rounding (half to even) of the high-precision reference."""
    if ln_ref is None:
        assert ours.value == 0.0, what
        return
    ref = mp.exp(ln_ref)
    assert rounding_is_settled(mp, ref, 40), f"{what}: reference too close to a float midpoint"
    assert ours.value == nearest_float(ref), f"{what}: {ours.value!r} vs {nearest_float(ref)!r}"


#: subnormal risks (rounded twice before), and a small-ratio risk on a float midpoint
ROUNDING_CASES = [
    (2**1103, 1_009_361_555_372),
    (2**200, 24_296_095_744),
    *((2**bits, 2 ** ((bits - 1040) // 2) + 3 * bits) for bits in range(1100, 1160, 3)),
    *((3**700, 10**k + 7) for k in (20, 21, 22)),
]


@pytest.mark.parametrize(("size", "count"), ROUNDING_CASES, ids=lambda v: f"~2^{v.bit_length()}")
def test_floats_are_correctly_rounded(size: int, count: int) -> None:
    # reference: mpmath at 4 log2 N + 200 bits, rounded to float by exact rational division
    ref = high_precision_risk(size, count)
    for limit in (50_000, 0):
        ours = collision_risk(size, count, exact_digit_limit=limit)
        what = f"N~2^{size.bit_length()} n={count} limit={limit}"
        check_float(ref.mp, ours.collision, ref.ln_risk, f"{what} risk")
        check_float(ref.mp, ours.no_collision, ref.ln_no_collision, f"{what} complement")


def test_a_risk_on_a_float_midpoint_rounds_to_even() -> None:
    # 3 draws from 2**53 values: risk 3/N - 2/N**2 = (3 * 2**52 - 1) * 2**-105 exactly
    # (1 - (1 - 1/N)(1 - 2/N)), a 54-bit odd number: a midpoint between two floats.
    # Half to even picks the one whose last bit is 0: 3 * 2**52 over 2**105 here.
    size = 2**53
    exact = Fraction(3, size) - Fraction(2, size**2)
    assert exact.denominator == 2**105 and (exact.numerator + 1) % 4 == 0
    for limit in (50_000, 0):
        ours = collision_risk(size, 3, exact_digit_limit=limit)
        assert ours.collision.value == float(exact), limit  # Python's division rounds half-even
        assert ours.collision.value == 3 * 2**52 * 2.0**-105, limit


# --- no -0.0 anywhere ---------------------------------------------------------------------


def positive_zero(x: float | None) -> bool:
    return x == 0.0 and math.copysign(1.0, x) == 1.0


@pytest.mark.parametrize(("size", "count"), [(365, 366), (2, 3), (10, 10**6), (2**64, 2**65)])
def test_log10_of_a_certain_collision_is_plus_zero(size: int, count: int) -> None:
    # pigeonhole: more draws than values collide for sure, log10(1) = +0.0
    from urnbound.core.pairwise import related_figures

    ours = collision_risk(size, count)
    assert positive_zero(ours.collision.log10), ours.collision
    figures = related_figures(size, count, ours)
    assert figures.reciprocal_risk is not None
    assert positive_zero(figures.reciprocal_risk.log10), figures.reciprocal_risk


@pytest.mark.parametrize("size", [1, 2, 365, 2**64, 2**8192])
def test_log10_of_the_complement_at_no_draws_is_plus_zero(size: int) -> None:
    # zero or one draw cannot collide: the complement is exactly 1
    for count in (0, 1):
        assert positive_zero(collision_risk(size, count).no_collision.log10), (size, count)


def test_log10_that_underflows_is_plus_zero() -> None:
    # 2**1024 values, 2**520 draws: Q = exp(-2**15) ~ 1e-14231, so log10(1 - Q) ~ -1e-14231
    # is below the smallest float: it must be +0.0, not -0.0 (JSON has no -0.0)
    ours = collision_risk(2**1024, 2**520)
    assert positive_zero(ours.collision.log10), ours.collision
