"""Binomial tails near the bulk of the law (the fixed-point series), against mpmath.

Reference: the regularized incomplete beta function, P(Binomial(n, p) >= k) = I_p(k, n - k + 1),
written as I_x(a, b) = x**a (1 - x)**b / (a B(a, b)) 2F1(a + b, 1; a + 1; x) (DLMF 8.17.8)
and evaluated by mpmath's own hypergeometric series at 100 digits: no code shared with
``balls``. The lower tail is 1 - I_p(a, n - a + 1), formed at those 60 digits, where it is
not small (the cases here keep it above 1e-12, so at least 85 digits survive).
"""

from __future__ import annotations

from fractions import Fraction

import mpmath
import pytest
from flint import arb
from hypothesis import given
from hypothesis import strategies as st

from urnbound.core import balls
from urnbound.core.balls import precision

WORK = mpmath.MPContext()
WORK.dps = 100


def _upper_tail(trials: int, buckets: int, k: int) -> mpmath.mpf:
    """I_{1/N}(k, n - k + 1) by DLMF 8.17.8 (module docstring)."""
    a, b, x = k, trials - k + 1, WORK.mpf(1) / buckets
    return (x**a * (1 - x) ** b / (a * WORK.beta(a, b))
            * WORK.hyp2f1(a + b, 1, a + 1, x, maxterms=10**7))


def _inside(ball: arb, value: mpmath.mpf) -> bool:
    """The ball holds the reference (its 85-digit text, read at 600 bits)."""
    text = WORK.nstr(value, 85, min_fixed=1, max_fixed=0)
    with precision(600):
        return bool(ball.contains(arb(text)))


# (items, buckets, k): first ratios from 0.9 to just below 1, means up to 10**5 (the
# largest mean load the service takes), tails from 1e-9 to near 1/2.
BULK = [(10**8, 1_000, 101_903), (10**8, 1_000, 100_316), (10**9, 10_000, 100_100),
        (10**11, 10**6, 102_529), (10**6, 100, 10_010), (4_000, 2, 2_010), (5_000, 50, 104)]


@pytest.mark.parametrize(("trials", "buckets", "k"), BULK)
@pytest.mark.parametrize("bits", [96, 128, 256])
def test_upper_tail_near_the_bulk(trials: int, buckets: int, k: int, bits: int) -> None:
    reference = _upper_tail(trials, buckets, k)
    with precision(bits):
        p = arb(1) / buckets
        ratio = (trials - k) * p / ((k + 1) * (1 - p))
        assert balls.SERIES_RATIO <= float(ratio.mid()) < 1  # the fixed-point path
        found = balls.binomial_at_least(trials, p, k)
    assert _inside(found, reference)
    assert found.rel_accuracy_bits() >= bits - 24
    assert float(found.mid()) == pytest.approx(float(reference), rel=2.0**-50, abs=0)


@pytest.mark.parametrize(("trials", "buckets", "k"), BULK)
def test_lower_tail_near_the_bulk(trials: int, buckets: int, k: int) -> None:
    a = 2 * (trials // buckets) - k  # as far below the mean as k is above it
    reference = 1 - _upper_tail(trials, buckets, a)
    with precision(128):
        p = arb(1) / buckets
        ratio = (a - 1) * (1 - p) / ((trials - a + 2) * p)
        assert balls.SERIES_RATIO <= float(ratio.mid()) < 1
        found = balls.binomial_below(trials, p, a)
    assert _inside(found, reference)
    assert found.rel_accuracy_bits() >= 100


@given(st.integers(0, 60), st.integers(0, 60), st.fractions(Fraction(1, 50), Fraction(3, 1)))
def test_fixed_series_against_exact_sums(top: int, base: int, rho: Fraction) -> None:
    # The series' definition summed in exact rationals (it ends at j = top).
    terms, term = [Fraction(1)], Fraction(1)
    for j in range(1, top + 1):
        term *= rho * (top - j + 1) / (base + j)
        terms.append(term)
    with precision(80):
        ball = arb(rho.numerator) / rho.denominator
        found = balls._fixed_ratio_sum(top, base, ball)
    if found is None:  # refused: only for a first ratio at (or, rounded, near) 1 or more
        assert rho * top >= (base + 1) * (1 - Fraction(1, 2**70))
        return
    exact = sum(terms, Fraction(0))
    with precision(400):
        assert found.contains(arb(exact.numerator) / exact.denominator)
    assert found.rel_accuracy_bits() >= 60


def test_fixed_series_declines_past_its_term_limit() -> None:
    # Mean 10**7, one standard deviation above it: some 40,000 terms are needed.
    trials, buckets = 10**10, 1_000
    k = 10**7 + 3_163
    with precision(96):
        p = arb(1) / buckets
        assert balls._fixed_ratio_sum(trials - k, k, p / (1 - p)) is None


@pytest.mark.parametrize(("top", "base"), [(50, 60), (400, 300), (3_000, 2_990)])
def test_fixed_series_at_an_irrational_ratio(top: int, base: int) -> None:
    # rho = sqrt(2) / 3 has no short fraction in its ball: the series runs at its binary
    # midpoint. Reference: the terms summed by mpmath at 100 digits.
    rho = WORK.sqrt(2) / 3
    term, total = WORK.mpf(1), WORK.mpf(1)
    for j in range(1, top + 1):
        term *= rho * (top - j + 1) / (base + j)
        total += term
    with precision(96):
        found = balls._fixed_ratio_sum(top, base, arb(2).sqrt() / 3)
    assert found is not None
    assert _inside(found, total)
    assert found.rel_accuracy_bits() >= 80


@pytest.mark.parametrize(("trials", "buckets", "k"), [
    (3402, 5, 2),  # a chance within 1e-326 of 1 (loads: some of 5 buckets holds 2)
    (20_000, 7, 2_800),  # k just below the mean 2,857
    (94_373, 35, 1),
])
def test_upper_tail_far_below_the_mean_is_one_minus_the_left_tail(trials: int, buckets: int,
                                                                  k: int) -> None:
    # Reference: the left tail sum_{j<k} C(n, j) (N-1)^(n-j) / N^n, and 1 - it, summed
    # term by term in mpmath at 2000 bits.
    ctx = mpmath.MPContext()
    ctx.prec = 2000
    left = sum(ctx.binomial(trials, j) * ctx.mpf(buckets - 1) ** (trials - j)
               for j in range(k)) / ctx.mpf(buckets) ** trials
    with precision(128):
        ours = balls.binomial_at_least(trials, arb(1) / buckets, k)
        below = balls.binomial_below(trials, arb(1) / buckets, k)
    truth = 1 - left
    for ball, value in ((ours, truth), (below, left)):
        mid = ctx.mpf(ball.mid().str(60, radius=False))
        assert abs(mid - value) <= 2 * ctx.mpf(ball.rad().str(5, radius=False)) + value * 1e-50
    assert ctx.mpf(ours.rad().str(5, radius=False)) < truth * ctx.mpf(2) ** -100
