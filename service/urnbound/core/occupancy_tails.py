"""Bonferroni brackets of P(some bucket breaks the rule) from exact one- and two-bucket tails.

n items on N buckets; E_i is "bucket i breaks the rule" (it holds k or more items, for
"below k"; fewer than a, for "at least a"). With S_r the sum of P(E_i1 and ... E_ir) over
the r-sets of buckets, the partial sums of inclusion-exclusion lie alternately above and
below the chance of the union (Bonferroni's inequalities):

    S1 - S2  <=  P(some E_i)  <=  S1 - S2 + S3  <=  S1.

* S1 = N p1 with p1 = P(E_1), a tail of Binomial(n, 1/N) (``balls``).
* S2 = C(N, 2) p2 with p2 = P(E_1 and E_2). Given X_1 = i, X_2 is Binomial(n - i, 1/(N-1)),
  so p2 = sum over the breaking i of P(X_1 = i) T_i, T_i = P(Binomial(n - i, 1/(N-1))
  breaks the rule). The sum starts at the edge (i = k, or i = a - 1) and moves away from
  it; the weights follow by their ratios and T_i by Pascal's rule (one item fewer or more
  changes the tail by 1/(N - 1) times one binomial term), a few ball operations a term.
  The weights' ratios fall along the sum and T_i does not grow, so once a ratio r < 1 is
  reached the rest is below the last term times r / (1 - r), which goes into the radius.
* S3 <= C(N, 3) p1 p2: the counts of a multinomial are negatively associated, so for the
  disjoint buckets {1, 2} and {3} and events that are both increasing in the counts
  (below k) or both decreasing (at least a), P(E_1 and E_2 and E_3) <= p2 p1.
  The same property gives p2 <= p1**2.

Two brackets follow. First order, [S1 - C(N, 2) p1**2, S1]: one tail, a relative width
below S1 / 2. Second order, [S1 - S2, S1 - S2 + C(N, 3) p1 p2]: a relative width near
S1**2 / 6, at the cost of the sum for p2. :func:`tail_plan` forecasts both widths and the
sum's length from floats, so that the engine takes whichever is cheap and tight enough.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from flint import arb, ctx

from urnbound.core import balls
from urnbound.core.errors import NoConvergence
from urnbound.core.occupancy_results import BELOW, Rule

#: Most terms of the sum for p2 (its loop raises NoConvergence past them).
MAX_PAIR_TERMS = 2_000
#: Bits the forecast of the sum's length assumes (the engine's first precision and guard).
PLAN_BITS = 104


@dataclass(frozen=True, slots=True)
class TailPlan:
    """A float forecast of the two brackets: how tight each gets and what p2 costs.

    :ivar log_first: natural log of an estimate of S1 from above (the term at the edge
        and a geometric bound on the rest of the tail).
    :ivar pair_terms: terms the sum for p2 is expected to need (at most its span).
    """

    log_first: float
    pair_terms: int

    @property
    def first_order_bound(self) -> float:
        """About S1 / 2, the first-order bracket's relative width (inf past the float range)."""
        return _exp_or_inf(self.log_first) / 2

    @property
    def second_order_bound(self) -> float:
        """About S1**2 / 6, the second-order bracket's relative width (inf past the floats)."""
        return _exp_or_inf(2 * self.log_first) / 6


def _exp_or_inf(x: float) -> float:
    """e**x, or inf where it overflows (S1 far above 1: no bracket is of any use there).

    >>> _exp_or_inf(1e6)
    inf
    """
    return math.exp(x) if x < 709.0 else math.inf


def breaking_chance(buckets: int, count: int, rule: Rule) -> arb:
    """p1 = P(bucket 1 breaks the rule): a binomial tail with its relative accuracy.

    Below k: P(Binomial(n, 1/N) >= k). At least a: P(Binomial(n, 1/N) < a).

    >>> with balls.precision(96):
    ...     float(breaking_chance(4, 3, Rule("at_least", 1)).mid())  # (3/4)**3
    0.421875
    """
    p = arb(1) / buckets
    if rule.kind == BELOW:
        return balls.binomial_at_least(count, p, rule.level)
    return balls.binomial_below(count, p, rule.level)


def pair_breaking_chance(buckets: int, count: int, rule: Rule) -> arb:
    """p2 = P(buckets 1 and 2 both break the rule), for N >= 3, with its relative accuracy.

    >>> with balls.precision(96):
    ...     float(pair_breaking_chance(4, 3, Rule("at_least", 1)).mid())  # (2/4)**3
    0.125

    :raises ValueError: for fewer than three buckets.
    :raises NoConvergence: when the sum needs more than ``MAX_PAIR_TERMS`` terms.
    """
    if buckets < 3:
        raise ValueError("the two-bucket tail is formed for three buckets or more")
    p = arb(1) / buckets
    q = arb(1) / (buckets - 1)
    if rule.kind == BELOW:
        k = rule.level
        if 2 * k > count:
            return arb(0)
        return _pair_sum(count, p, q, _Walk(start=k, stop=count - k, direction=1, edge=k - 1),
                         balls.binomial_at_least(count - k, q, k))
    top = rule.level - 1
    if count - top < rule.level:  # too few items for Pascal's rule from the edge
        return _below_direct(count, p, q, rule.level)
    return _pair_sum(count, p, q, _Walk(start=top, stop=0, direction=-1, edge=top),
                     balls.binomial_below(count - top, q, rule.level))


@dataclass(frozen=True, slots=True)
class _Walk:
    """Where the sum for p2 runs: X_1 = i from ``start`` to ``stop`` by ``direction``
    (+1 for a cap k: i = k .. n - k; -1 for a floor a: i = a - 1 .. 0), and the inner
    tail's edge count c (k - 1, or a - 1)."""

    start: int
    stop: int
    direction: int
    edge: int

    def inner_trials(self, count: int, i: int) -> int:
        """m_i with T_i - T_{i + d} = q P(Binomial(m_i, q) = c): n - i - 1, or n - i."""
        return count - i - 1 if self.direction > 0 else count - i


def _pair_sum(count: int, p: arb, q: arb, walk: _Walk, inner: arb) -> arb:
    """sum over the walk's i of P(Bin(n, p) = i) T_i, ``inner`` = T_start, the tail of
    Bin(n - start, q) beyond the rule (module docstring).

    Both rules step the same way: the weight by the binomial ratio P(= i + d) / P(= i),
    T by Pascal's rule T_{i+d} = T_i - q P(Bin(m_i, q) = c), and that term by its own
    ratio as m_i moves by -d; once the weights' ratio is below 1 the rest is bounded.
    """
    n, d, c = count, walk.direction, walk.edge
    weight = balls.binomial_pmf(n, walk.start, p)
    trials = walk.inner_trials(n, walk.start)
    step = q * balls.binomial_pmf(trials, c, q)
    odds, keep = (p / (1 - p)) if d > 0 else ((1 - p) / p), 1 - q
    total = arb(0)
    floor = arb(2) ** -(ctx.prec + 8)
    i = walk.start
    for _ in range(MAX_PAIR_TERMS + 1):
        total += weight * inner
        if i == walk.stop:
            return total
        ratio = (odds * (n - i) / (i + 1)) if d > 0 else (odds * i / (n - i + 1))
        rest = _rest_bound(weight * inner, ratio)
        if rest is not None and rest.upper() < (floor * total).lower():
            return balls.widened(total, rest)
        weight *= ratio
        inner -= step
        # P(Bin(m - 1, q) = c) / P(Bin(m, q) = c) = (m - c) / (m (1 - q)), and its inverse
        step = (step * (trials - c) / (trials * keep)) if d > 0 else (
            step * (trials + 1) * keep / (trials + 1 - c))
        trials -= d
        i += d
    raise NoConvergence("the two-bucket tail needs too many terms")


def _below_direct(n: int, p: arb, q: arb, a: int) -> arb:
    """The same sum term by term, for n < 2a - 1 (the engine has n >= a N there)."""
    if a > MAX_PAIR_TERMS:
        raise NoConvergence("the two-bucket tail needs too many terms")
    total = arb(0)
    for i in range(min(a, n + 1)):
        total += balls.binomial_pmf(n, i, p) * balls.binomial_below(n - i, q, a)
    return total


def _rest_bound(term: arb, ratio: arb) -> arb | None:
    """term * r / (1 - r), a bound on the rest of a sum whose ratios fall from r < 1."""
    if not ratio.upper() < 1:
        return None
    return term * ratio / (1 - ratio)


def first_order_bracket(buckets: int, count: int, rule: Rule) -> arb | None:
    """A ball holding [S1 - C(N, 2) p1**2, S1]; ``None`` unless S1 < 1/2.

    >>> with balls.precision(96):
    ...     print(first_order_bracket(10**6, 20, Rule("below", 3)).str(3, radius=False))
    1.14e-9
    """
    first = buckets * breaking_chance(buckets, count, rule)
    if not first.upper() < 0.5:
        return None
    second = first**2 * (buckets - 1) / (2 * buckets)
    return balls.between(first - arb(second.upper()), first)


def second_order_bracket(buckets: int, count: int, rule: Rule) -> arb | None:
    """A ball holding [S1 - S2, S1 - S2 + C(N, 3) p1 p2]; ``None`` unless S1 < 1/2, N >= 3.

    Twenty items on a million buckets, some bucket used three times (the first-order
    bracket is about 3e-10 wide in relative terms, this one about 6e-20):

    >>> with balls.precision(96):
    ...     fails = second_order_bracket(10**6, 20, Rule("below", 3))
    ...     fails.str(15, radius=False), float(fails.rad() / fails.mid()) < 1e-19
    ('1.13998546470543e-9', True)
    """
    if buckets < 3:
        return None
    chance = breaking_chance(buckets, count, rule)
    first = buckets * chance
    if not first.upper() < 0.5:
        return None
    pair = pair_breaking_chance(buckets, count, rule)
    second = pair * (buckets * (buckets - 1) // 2)
    third = chance * pair * (buckets * (buckets - 1) * (buckets - 2) // 6)
    low = first - second
    high = low + arb(third.upper()) if third.upper() < second.lower() else first
    return balls.between(low, high)


def tail_plan(buckets: int, count: int, rule: Rule) -> TailPlan | None:
    """Forecast the brackets from floats; ``None`` near the bulk (breaking is not rare).

    ln of the binomial term at the edge plus a geometric tail where the terms fall fast.
    Only the order of the methods depends on it, never a figure.

    :raises OverflowError, ValueError: for counts too large for the float estimate.

    >>> plan = tail_plan(10**7, 20, Rule("below", 3))
    >>> f"{plan.first_order_bound:.0e}", plan.pair_terms
    ('6e-12', 6)
    """
    if rule.kind == BELOW:
        j = rule.level
        ratio = (count - j) / ((j + 1) * (buckets - 1)) if buckets > 1 else math.inf
        span = count - 2 * j + 1
    else:
        j = rule.level - 1
        ratio = j * (buckets - 1) / (count - j + 1) if count > j else 0.0
        span = rule.level
    if ratio >= balls.SERIES_RATIO or j > count or buckets == 1:
        return None
    log_first = math.log(buckets) + _log_edge_term(buckets, count, j) - math.log1p(-ratio)
    if ratio > 0:
        needed = math.ceil(PLAN_BITS * math.log(2.0) / -math.log(ratio)) + 1
    else:
        needed = 1
    return TailPlan(log_first, max(1, min(needed, span)))


def _log_edge_term(buckets: int, count: int, j: int) -> float:
    """ln P(Binomial(n, 1/N) = j) in floats."""
    if j <= balls.MAX_PRODUCT_TERMS:
        log_choose = sum(math.log(count - i) for i in range(j)) - math.lgamma(j + 1)
    else:
        log_choose = (math.lgamma(count + 1) - math.lgamma(j + 1)
                      - math.lgamma(count - j + 1))
    if buckets < 2**50:  # then a count that is not trivially answered fits a float
        rest = (count - j) * math.log1p(-1 / buckets)
    else:
        rest = -((count - j) / buckets)  # integer division to a float: no overflow
    return log_choose - j * math.log(buckets) + rest
