"""Smallest load and fewest draws, each answer held against an independent boundary.

References, computed here without the engine's code:

* few items: with n < 2k no two buckets can each hold k items, so P(some bucket holds
  >= k) = N P(Binomial(n, 1/N) >= k) exactly (sympy rationals);
* near the bulk: Bonferroni's inequalities with negatively associated counts,
  S1 - C(N, 2) p1**2 <= P <= S1, S1 = N p1, p1 = I_{1/N}(k, n - k + 1) by DLMF 8.17.8
  (mpmath's hypergeometric series at 100 digits): a bracket of relative width S1 / 2,
  which settles the boundary whenever the budget is not within it;
* coverage: inclusion-exclusion over the buckets used fewer than a times,
  P = sum_j (-1)**j C(N, j) P(j given buckets each used < a), the inner chance summed
  over the items s those j buckets hold, [x**s] (sum_{c<a} x**c / c!)**j n! / (n - s)!
  N**-s (1 - j/N)**(n - s), at 600 bits (alternating: summed until the terms fall
  below 2**-500 of the total).
"""

from __future__ import annotations

from fractions import Fraction

import mpmath
import pytest
import sympy

from urnbound.core import occupancy
from urnbound.core.occupancy_inverse import (
    CoverFamily,
    LoadFamily,
    _top_draws,
    fewest_draws,
    smallest_load,
)
from urnbound.core.occupancy_results import AT_LEAST, BELOW, Rule
from urnbound.core.search import certified_boundary

WORK = mpmath.MPContext()
WORK.dps = 100
WIDE = mpmath.MPContext()
WIDE.prec = 600


def _few_items_risk(buckets: int, count: int, k: int) -> Fraction:
    """N P(Binomial(n, 1/N) >= k), exact for 2k > n (module docstring)."""
    p = sympy.Rational(1, buckets)
    exact = buckets * sum(sympy.binomial(count, j) * p**j * (1 - p) ** (count - j)
                          for j in range(k, count + 1))
    return Fraction(int(exact.p), int(exact.q))


@pytest.mark.parametrize("load", [11, 12, 15])
def test_smallest_load_among_few_items(load: int) -> None:
    buckets, count = 10**7, 20
    at, below = _few_items_risk(buckets, count, load), _few_items_risk(buckets, count, load - 1)
    budget = (at + below) / 2  # strictly between: the answer is ``load``
    found = smallest_load(buckets, count, budget)
    assert found.load == load
    assert found.one_lower is not None
    assert Fraction(found.at_load.fails.decimal) == pytest.approx(at, rel=1e-15, abs=0)
    assert Fraction(found.one_lower.fails.decimal) == pytest.approx(below, rel=1e-15, abs=0)


def _union_bound(buckets: int, count: int, k: int) -> mpmath.mpf:
    """S1 = N I_{1/N}(k, n - k + 1) by DLMF 8.17.8."""
    a, b, x = k, count - k + 1, WORK.mpf(1) / buckets
    return buckets * (x**a * (1 - x) ** b / (a * WORK.beta(a, b))
                      * WORK.hyp2f1(a + b, 1, a + 1, x, maxterms=10**7))


def _bracket(buckets: int, count: int, k: int) -> tuple[mpmath.mpf, mpmath.mpf]:
    first = _union_bound(buckets, count, k)
    return first - first**2 * (buckets - 1) / (2 * buckets), first


@pytest.mark.parametrize(("buckets", "count", "budget"),
                         [(1_000, 10**8, Fraction(1, 10**6)),
                          (10**4, 10**9, Fraction(1, 10**3)),
                          (1_000, 10**7, Fraction(1, 10**12))])
def test_smallest_load_near_the_bulk(buckets: int, count: int, budget: Fraction) -> None:
    found = smallest_load(buckets, count, budget)
    limit = WORK.mpf(budget.numerator) / budget.denominator
    low_at, high_at = _bracket(buckets, count, found.load)
    low_below, _ = _bracket(buckets, count, found.load - 1)
    assert high_at <= limit < low_below  # the bracket alone proves the boundary
    assert found.one_lower is not None
    assert low_at <= WORK.mpf(found.at_load.fails.decimal) <= high_at
    assert WORK.mpf(found.one_lower.fails.decimal) > limit


def _covered(buckets: int, count: int, level: int) -> mpmath.mpf:
    """P(every bucket used at least ``level`` times), inclusion-exclusion (module docstring)."""
    ctx = WIDE
    total = ctx.mpf(0)
    factorials = [ctx.factorial(c) for c in range(level)]
    # (sum_{c<a} x**c / c!)**j as exact rationals, raised one factor at a time.
    base = [Fraction(1, int(f)) for f in factorials]
    power = [Fraction(1)]
    log_falling = [ctx.mpf(0)]  # ln(n! / (n - s)!)
    for j in range(buckets + 1):
        if j:
            power = [sum((power[i] * base[s - i] for i in range(max(0, s - level + 1),
                                                                 min(s, len(power) - 1) + 1)),
                         Fraction(0)) for s in range(len(power) + level - 1)]
        while len(log_falling) < len(power):
            log_falling.append(log_falling[-1] + ctx.log(count - len(log_falling) + 1))
        rest = ctx.mpf(buckets - j) / buckets
        inner = ctx.fsum(
            ctx.mpf(c.numerator) / c.denominator * ctx.exp(log_falling[s] - s * ctx.log(buckets))
            * (rest ** (count - s) if j < buckets else (1 if s == count else 0))
            for s, c in enumerate(power) if s <= count)
        term = ctx.binomial(buckets, j) * inner
        total += term if j % 2 == 0 else -term
        if j > 3 and abs(term) < abs(total) * ctx.mpf(2) ** -500:
            break
    return total


@pytest.mark.parametrize(("buckets", "level", "target"),
                         [(1_000, 1, Fraction(1, 2)), (1_000, 1, Fraction(1, 10**9)),
                          (1_000, 3, Fraction(1, 10**9)), (200, 2, Fraction(99, 100))])
def test_fewest_draws_against_inclusion_exclusion(buckets: int, level: int,
                                                  target: Fraction) -> None:
    found = fewest_draws(buckets, level, target)
    goal = WIDE.mpf(target.numerator) / target.denominator
    at, fewer = _covered(buckets, found.draws, level), _covered(buckets, found.draws - 1, level)
    assert at >= goal > fewer
    for figure, reference in ((found.at_draws.holds, at), (found.one_fewer.holds, fewer)):
        # within the figure's own proven bound (and the float's rounding)
        allowed = max(figure.relative_error_bound, 1e-15)
        assert float(figure.decimal) == pytest.approx(float(reference), rel=allowed, abs=0)


@pytest.mark.parametrize(("buckets", "count", "budget"),
                         [(1_000, 10**8, Fraction(1, 10**6)), (10**9, 10**9, Fraction(1, 10**9)),
                          (365, 88, Fraction(1, 2)), (10**4, 10**5, Fraction(1, 10**20))])
def test_load_search_asks_the_engine_at_most_three_times(buckets: int, count: int,
                                                         budget: Fraction) -> None:
    # The guess lands on the boundary or next to it, and the reported figures come from
    # answers the search already has (no engine answer is asked for twice).
    family = LoadFamily(buckets, count)
    boundary = certified_boundary(family, budget)
    assert boundary is not None
    family.final(boundary.index)
    family.final(boundary.index - 1)
    assert len(family.found) <= 3


@pytest.mark.parametrize(("buckets", "level", "target"),
                         [(10**12, 1, Fraction(1, 2)), (1_000, 3, Fraction(1, 10**9))])
def test_cover_search_keeps_its_answers(buckets: int, level: int, target: Fraction) -> None:
    family = CoverFamily(buckets, level, _top_draws(buckets, level, 1 - target))
    boundary = certified_boundary(family, 1 - target)
    assert boundary is not None
    before = dict(family.found)
    found = family.final(boundary.index), family.final(boundary.index - 1)
    assert len(family.found) <= 4
    for index, answer in zip((boundary.index, boundary.index - 1), found, strict=True):
        # a kept answer is reported only when it is the engine's full-target answer
        assert answer == occupancy.occupancy_risk(buckets, index, Rule(AT_LEAST, level))
        assert index in before or index in family.found


@pytest.mark.parametrize("load", [101_902, 101_903])
def test_first_order_bracket_skipped_only_where_it_loses(load: int) -> None:
    # Near the bulk the saddle point's bound (~2e-11) is far below what the first-order
    # bracket reaches (about S1 / 4 = 2.5e-7): the engine does not compute the bracket.
    buckets, count, rule = 1_000, 10**8, Rule(BELOW, load)
    answer = occupancy.occupancy_risk(buckets, count, rule)
    bracket = occupancy._tail_answer(buckets, count, rule)
    assert bracket is not None
    assert occupancy._bracket_loses(buckets, [answer])
    assert bracket.relative_error_bound > answer.relative_error_bound


@pytest.mark.parametrize(("count", "budget"), [(20_000, Fraction(1, 2)),
                                               (20_000, Fraction(1, 10**6)),
                                               (200_000, Fraction(999_999, 10**6))])
def test_smallest_load_on_two_buckets(count: int, budget: Fraction) -> None:
    # Two buckets hold X and n - X, X ~ Binomial(n, 1/2); for k > n/2 the events X >= k
    # and X <= n - k are disjoint, so the risk is exactly 2 P(X >= k) = S1 (DLMF 8.17.8).
    found = smallest_load(2, count, budget)
    limit = WORK.mpf(budget.numerator) / budget.denominator
    assert 2 * found.load > count
    assert _union_bound(2, count, found.load) <= limit
    if 2 * (found.load - 1) > count:
        assert limit < _union_bound(2, count, found.load - 1)
    else:  # a load of n/2 is reached surely (pigeonhole)
        assert found.one_lower is not None and found.one_lower.fails.decimal.startswith("1.0")
