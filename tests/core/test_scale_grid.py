"""Counts up to the space at N = 2^512, 2^1024 and 2^4096: every figure against mpmath.

The grid walks n from 2^200 to N + 1 in steps of a few bits of n (both on and off powers
of two), plus the points where the regime changes: sqrt(N), N/2 and the last counts before
the pigeonhole. At each point the risk, its complement and the related figures are held
against mpmath in a private context at 4 log2 N + 200 bits or more, to 1e-15 relative and
to each figure's own reported bound.
"""

from __future__ import annotations

from math import isqrt

import mpmath
import pytest

from urnbound.core.pairwise import collision_risk, related_figures
from urnbound.core.results import Magnitude

from ._reference import high_precision_risk, ln_of_text, relative_gap
from .test_against_references import check_against

#: The agreement asked of every figure, relative.
REQUIRED_RELATIVE = 1e-15
#: Half a unit in the 20th significant digit, relative: the rounding of the decimal text.
TEXT_HALF_UNIT = 5e-20
#: Number of rungs in the ladder of counts from 2^200 to N.
RUNGS = 12


def ladder(bits: int) -> list[int]:
    """Counts from 2^200 to N + 1 for N = 2^bits, on and off powers of two."""
    size = 2**bits
    root = isqrt(size)
    step = (bits - 200) / RUNGS
    picks = {2 ** round(200 + k * step) for k in range(RUNGS + 1)}
    picks |= {3 * 2 ** round(199 + k * step) + 1 for k in range(RUNGS)}
    picks |= {root - 1, root, root + 1, 7 * root // 3, 40 * root, size // 2, size // 3 * 2,
              size - 2**100, size - 1000, size - 1, size, size + 1}
    return sorted(n for n in picks if 2**200 <= n <= size + 1)


SIZES_BITS = (512, 1024, 4096)
POINTS = [(bits, count) for bits in SIZES_BITS for count in ladder(bits)]


def point_id(bits: int, count: int) -> str:
    size = 2**bits
    for offset in (-1, 0, 1, 1000):
        if count == size - offset:
            return f"2^{bits}-N{-offset:+d}" if offset else f"2^{bits}-N"
    return f"2^{bits}-n~2^{count.bit_length() - 1}-{count % 1000}"


def figure_reference(mp: mpmath.ctx_mp.MPContext, size: int, count: int) -> dict[str, mpmath.mpf]:
    """Expected pairs, distinct values and duplicates in mpmath (independently of the core).

    pairs = n(n-1)/(2N); distinct = -N expm1(n log1p(-1/N)); duplicates = n - distinct.
    """
    big = mp.mpf(size)
    distinct = -big * mp.expm1(count * mp.log1p(-1 / big))
    return {
        "expected_colliding_pairs": mp.mpf(count) * (count - 1) / (2 * big),
        "expected_distinct": distinct,
        "expected_duplicates": count - distinct,
    }


def check_figure(mp: mpmath.ctx_mp.MPContext, ours: Magnitude, ref: mpmath.mpf, what: str) -> None:
    """A figure's decimal text within 1e-15 and within its own bound; its log10 too."""
    ln_ref = mp.log(ref)
    gap = relative_gap(mp, ln_of_text(mp, ours.decimal), ln_ref)
    assert gap <= REQUIRED_RELATIVE, f"{what}: {ours.decimal} vs {mp.nstr(ref, 25)}"
    assert gap <= ours.relative_error_bound + TEXT_HALF_UNIT, (
        f"{what}: gap {gap:.3e} exceeds the reported bound {ours.relative_error_bound:.3e}")
    assert ours.log10 is not None, what
    log10_ref = ln_ref / mp.ln10
    tol = REQUIRED_RELATIVE * max(1.0, float(abs(log10_ref)))
    assert abs(mp.mpf(ours.log10) - log10_ref) <= tol, f"{what}: log10 {ours.log10!r}"


@pytest.mark.parametrize(("bits", "count"), POINTS, ids=[point_id(*p) for p in POINTS])
def test_scale_grid_against_mpmath(bits: int, count: int) -> None:
    # reference: mpmath, private context at 4 log2 N + 200 bits (or 2 log2 N + 2 log2 n + 200
    # for the figures): ln P(no collision) = lnG(N+1) - lnG(N-n+1) - n ln N, the risk
    # -expm1 of it; the related figures from the closed forms in figure_reference
    size = 2**bits
    ref = high_precision_risk(size, count)
    risk = collision_risk(size, count)
    check_against(risk, ref, size, count)
    figures = related_figures(size, count, risk)
    mp = mpmath.MPContext()
    mp.prec = 2 * size.bit_length() + 2 * count.bit_length() + 200
    what = f"N=2^{bits} n~2^{count.bit_length() - 1}"
    for name, value in figure_reference(mp, size, count).items():
        check_figure(mp, getattr(figures, name), value, f"{what} {name}")
    assert ref.ln_risk is not None
    reciprocal = figures.reciprocal_risk
    assert reciprocal is not None
    check_figure(ref.mp, reciprocal, ref.mp.exp(-ref.ln_risk), f"{what} reciprocal_risk")
