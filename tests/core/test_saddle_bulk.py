"""Loads near the bulk of a large mean (where the saddle point starts from its float
model), against an exact reference on two buckets.

Two buckets hold X and n - X with X ~ Binomial(n, 1/2); for k > n/2 the events X >= k
and X <= n - k are disjoint, so P(some bucket holds >= k) = 2 I_{1/2}(k, n - k + 1)
exactly, here by DLMF 8.17.8 with mpmath's hypergeometric series at 100 digits. Each
reported chance must lie within its own reported bound of it.
"""

from __future__ import annotations

import mpmath
import pytest

from urnbound.core.occupancy import occupancy_risk
from urnbound.core.occupancy_results import BELOW, Rule

WORK = mpmath.MPContext()
WORK.dps = 100


def _overflow(count: int, k: int) -> mpmath.mpf:
    a, b, x = k, count - k + 1, WORK.mpf(1) / 2
    return 2 * (x**a * (1 - x) ** b / (a * WORK.beta(a, b))
                * WORK.hyp2f1(a + b, 1, a + 1, x, maxterms=10**7))


@pytest.mark.parametrize("k", [100_100, 100_158, 100_316, 100_632, 101_000])
def test_two_buckets_at_a_mean_of_1e5(k: int) -> None:
    count = 200_000
    answer = occupancy_risk(2, count, Rule(BELOW, k))
    fails = _overflow(count, k)
    for figure, reference in ((answer.fails, fails), (answer.holds, 1 - fails)):
        error = abs(WORK.mpf(figure.decimal) / reference - 1)
        assert error <= max(figure.relative_error_bound, 1e-19)
