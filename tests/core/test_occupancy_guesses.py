"""The float estimates behind first guesses, against mpmath: close enough to place a guess.

Nothing certified rests on them (a guess only decides where a search starts), so they
are held to a few parts in a million, not to the engine's bounds. References: the
regularized incomplete gamma functions of mpmath at 300 digits (the upper tail is
formed as 1 - Q, so tails down to 1e-250 keep their digits), P(Poisson(y) <= c) =
Q(c + 1, y) and P(Poisson(y) >= a) = 1 - Q(a, y) (DLMF 8.4.10); binomial tails by
DLMF 8.17.8 with mpmath's hypergeometric series; ln C(n, j) by mpmath's binomial.
"""

from __future__ import annotations

import math

import mpmath
import pytest

from urnbound.core import occupancy_guesses as guesses

WORK = mpmath.MPContext()
WORK.dps = 300

# (c, y): series from below, the bulk (Lugannani-Rice), 1 minus the upper series.
POISSON = [(2, 7.4), (5, 7.4), (90_000, 1e5), (99_000, 1e5), (100_063, 1e5),
           (100_315, 101_000.0), (101_000, 1e5), (110_000, 1e5), (200, 150.0), (3, 0.5)]


@pytest.mark.parametrize(("c", "y"), POISSON)
def test_poisson_tails_in_floats(c: int, y: float) -> None:
    below = WORK.gammainc(c + 1, y, WORK.inf, regularized=True)
    assert math.exp(guesses.log_poisson_below(c, y)) == pytest.approx(
        float(below), rel=1e-6, abs=0)
    above = 1 - below  # P(>= c + 1), its own side
    assert math.exp(guesses.log_poisson_at_least(c + 1, y)) == pytest.approx(
        float(above), rel=1e-6, abs=0)


@pytest.mark.parametrize(("count", "j"), [(10**15, 1_000), (10**7, 3), (3 * 10**13, 99),
                                          (10**17, 101_000), (2 * 10**6, 10**6), (40, 7)])
def test_log_choose_in_floats(count: int, j: int) -> None:
    reference = float(WORK.log(WORK.binomial(count, j)))
    assert guesses.log_choose(count, j) == pytest.approx(reference, rel=1e-12, abs=0)


@pytest.mark.parametrize(("buckets", "count", "k"),
                         [(1_000, 10**8, 101_903), (1_000, 10**8, 100_316),
                          (100, 10**6, 10_010), (10**6, 10**11, 102_529)])
def test_binomial_upper_tail_in_floats(buckets: int, count: int, k: int) -> None:
    a, b, x = k, count - k + 1, WORK.mpf(1) / buckets
    tail = (x**a * (1 - x) ** b / (a * WORK.beta(a, b))
            * WORK.hyp2f1(a + b, 1, a + 1, x, maxterms=10**7))
    estimate = guesses.log_expected_at_least(buckets, count, k)
    assert estimate == pytest.approx(float(WORK.log(buckets * tail)), rel=1e-6, abs=0)
