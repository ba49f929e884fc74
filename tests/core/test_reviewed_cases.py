"""Questions a review found wrong, each held against mpmath or sympy by relative error only."""

from __future__ import annotations

import math

import mpmath
import pytest

from urnbound.core.pairwise import collision_risk
from urnbound.core.results import Magnitude

from ._reference import (
    high_precision_risk,
    ln_of_text,
    relative_gap,
)

#: The agreement the issue asks for, relative.
REQUIRED_RELATIVE = 1e-15
#: Half a unit in the 20th significant digit, relative.
TEXT_HALF_UNIT = 5e-20
LARGEST_FLOAT = 1.7976931348623157e308


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
