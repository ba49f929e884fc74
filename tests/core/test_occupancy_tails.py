"""The Bonferroni brackets of occupancy_tails against independent exact values.

References, none of them the engine's own code:

* every one of the N**n outcomes enumerated (tiny cases): p1, p2, p3 and the union's chance;
* sympy rational arithmetic on the generating function n! [z^n] A(z)**N (small N);
* loads at moderate N: the same count in integers by the recurrence that follows from the
  power's differential equation, B = A**N gives A B' = N A' B (Knuth, TAOCP vol. 2, 4.7,
  "powers of power series", from memory), checked here against enumeration;
* coverage at moderate N: full inclusion-exclusion over the buckets short of a uses, in
  mpmath at 120 digits, P(r given buckets short) = sum_m [z^m] e_{a-1}(z)**r n^(m)
  (N - r)**(n - m) / N**n (e_{a-1} the exponential series cut after z**(a-1)), summed in
  r until the terms are below 1e-80 of the total: its partial sums bracket the chance
  (Bonferroni), so the truncation is below the first term left out.
"""

from __future__ import annotations

import collections
import functools
import itertools
import math
from fractions import Fraction

import mpmath
import pytest
import sympy
from flint import arb
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from urnbound.core import occupancy, occupancy_tails
from urnbound.core.balls import precision
from urnbound.core.occupancy_results import AT_LEAST, BELOW, OccupancyRisk, Rule

WORK = mpmath.MPContext()
WORK.prec = 400
SECOND_ORDER = "second-order inclusion-exclusion"


def _breaks(rule: Rule, load: int) -> bool:
    return load >= rule.level if rule.kind == BELOW else load < rule.level


@functools.cache
def _enumerated(buckets: int, count: int, rule: Rule) -> dict[str, Fraction]:
    """p1, p2, p3 and P(some bucket breaks the rule), counted over every outcome."""
    hits = {"p1": 0, "p2": 0, "p3": 0, "union": 0}
    for outcome in itertools.product(range(buckets), repeat=count):
        loads = [outcome.count(b) for b in range(buckets)]
        broken = [_breaks(rule, load) for load in loads]
        hits["p1"] += broken[0]
        hits["p2"] += broken[0] and broken[1]
        hits["p3"] += broken[0] and broken[1] and len(broken) > 2 and broken[2]
        hits["union"] += any(broken)
    total = buckets**count
    return {name: Fraction(value, total) for name, value in hits.items()}


def _fraction_of(x: arb) -> Fraction:
    """The midpoint of an arb ball as a fraction (its decimal text at 60 digits)."""
    return Fraction(x.mid().str(60, radius=False))


TINY = [(3, 7, Rule(BELOW, 3)), (3, 8, Rule(BELOW, 4)), (4, 7, Rule(BELOW, 3)),
        (5, 6, Rule(BELOW, 3)), (3, 8, Rule(AT_LEAST, 1)), (4, 8, Rule(AT_LEAST, 1)),
        (3, 9, Rule(AT_LEAST, 2)), (4, 8, Rule(AT_LEAST, 2)), (5, 7, Rule(AT_LEAST, 1)),
        (3, 4, Rule(AT_LEAST, 3)), (4, 5, Rule(BELOW, 3))]


@pytest.mark.parametrize(("buckets", "count", "rule"), TINY)
def test_joint_tail_of_two_buckets_against_every_outcome(buckets: int, count: int,
                                                          rule: Rule) -> None:
    exact = _enumerated(buckets, count, rule)  # reference: every outcome counted
    with precision(128):
        pair = occupancy_tails.pair_breaking_chance(buckets, count, rule)
        one = occupancy_tails.breaking_chance(buckets, count, rule)
    assert _fraction_of(pair) == pytest.approx(exact["p2"], rel=1e-30, abs=0)
    assert _fraction_of(one) == pytest.approx(exact["p1"], rel=1e-30, abs=0)


@pytest.mark.parametrize(("buckets", "count", "rule"), TINY)
def test_negative_association_bounds_hold_on_every_outcome(buckets: int, count: int,
                                                           rule: Rule) -> None:
    # The inequalities the brackets rest on, on exact counts: p2 <= p1**2, p3 <= p1 p2,
    # and the union between S1 - S2 and S1 - S2 + S3 (Bonferroni).
    exact = _enumerated(buckets, count, rule)
    p1, p2, p3 = exact["p1"], exact["p2"], exact["p3"]
    assert p2 <= p1**2
    assert p3 <= p1 * p2
    s1, s2, s3 = buckets * p1, math.comb(buckets, 2) * p2, math.comb(buckets, 3) * p3
    assert s1 - s2 <= exact["union"] <= s1 - s2 + s3


def _sympy_fails(buckets: int, count: int, rule: Rule) -> sympy.Rational:
    """1 - n! [z^n] A(z)**N / N**n in sympy rationals (A cut at degree n)."""
    z = sympy.symbols("z")
    allowed = range(rule.level) if rule.kind == BELOW else range(rule.level, count + 1)
    series = sympy.Poly(sum(z**j / sympy.factorial(j) for j in allowed), z)
    power = sympy.Poly(1, z)
    for _ in range(buckets):
        power = sympy.Poly((power * series).as_expr(), z)
        power = sympy.Poly(sum(c * z**e[0] for e, c in power.terms() if e[0] <= count), z)
    holds = power.coeff_monomial(z**count) * sympy.factorial(count) / sympy.Integer(buckets)**count
    return 1 - holds


def _errors(answer: OccupancyRisk, fails: mpmath.mpf) -> float:
    holds = 1 - fails
    worst = 0.0
    for figure, true in ((answer.fails, fails), (answer.holds, holds)):
        worst = max(worst, float(abs(WORK.mpf(figure.decimal) - true) / true))
    return worst


@pytest.mark.parametrize(("buckets", "count", "rule"), [
    (3, 4, Rule(BELOW, 3)), (6, 9, Rule(BELOW, 4)), (12, 14, Rule(BELOW, 4)),
    (8, 40, Rule(AT_LEAST, 1)), (5, 40, Rule(AT_LEAST, 2)), (10, 60, Rule(AT_LEAST, 1)),
    (4, 45, Rule(AT_LEAST, 4)),
])
def test_second_order_answer_against_sympy_rationals(buckets: int, count: int,
                                                     rule: Rule) -> None:
    fails = _sympy_fails(buckets, count, rule)  # reference: sympy generating function
    answer = occupancy._second_order_answer(buckets, count, rule)
    assert answer is not None and answer.method == SECOND_ORDER
    true = WORK.mpf(fails.p) / fails.q
    assert _errors(answer, true) <= answer.relative_error_bound
    assert Fraction(answer.fails.decimal) == pytest.approx(
        Fraction(int(fails.p), int(fails.q)), rel=answer.relative_error_bound, abs=0)


# --- moderate N: the newly reached regime ---------------------------------------------------


def _below_count(buckets: int, count: int, level: int) -> int:
    """n! [z^n] A**N for A = sum_{j<k} z**j / j!, in integers (c_m = m! [z^m] A**N).

    From A B' = N A' B: m c_m = sum_{j=1}^{k-1} ((N + 1) j - m) C(m, j) c_{m-j}.
    """
    recent = collections.deque([1], maxlen=level - 1)  # c_{m-1}, c_{m-2}, ...
    for m in range(1, count + 1):
        total = sum(((buckets + 1) * j - m) * math.comb(m, j) * recent[j - 1]
                    for j in range(1, min(m, level - 1) + 1))
        value, rest = divmod(total, m)
        assert rest == 0
        recent.appendleft(value)
    return recent[0]


@pytest.mark.parametrize(("buckets", "count", "level"), [(3, 7, 3), (4, 7, 3), (3, 8, 4),
                                                         (5, 6, 3), (2, 9, 6)])
def test_integer_recurrence_counts_every_outcome(buckets: int, count: int, level: int) -> None:
    # The reference for moderate N, itself checked against every outcome counted.
    union = _enumerated(buckets, count, Rule(BELOW, level))["union"]
    assert Fraction(_below_count(buckets, count, level), buckets**count) == 1 - union


def _loads_fails(buckets: int, count: int, level: int) -> mpmath.mpf:
    allowed = _below_count(buckets, count, level)
    total = buckets**count
    return WORK.mpf(total - allowed) / total


def _coverage_fails(buckets: int, count: int, level: int) -> mpmath.mpf:
    """P(some bucket used fewer than a times) by full inclusion-exclusion over buckets."""
    ctx = mpmath.MPContext()
    ctx.prec = 400
    cut = [ctx.mpf(1) / math.factorial(j) for j in range(level)]
    power = [ctx.mpf(1)]  # coefficients of e_{a-1}(z)**r
    total = ctx.mpf(0)
    for r in range(1, buckets + 1):
        power = [sum(power[i] * cut[m - i] for i in range(len(power)) if 0 <= m - i < level)
                 for m in range(len(power) + level - 1)]
        rest = ctx.mpf(buckets - r) / buckets
        short = ctx.mpf(0)
        for m, coefficient in enumerate(power):
            if m > count:
                break
            falling = ctx.mpf(math.perm(count, m))
            short += coefficient * falling * rest ** (count - m) / ctx.mpf(buckets) ** m
        term = math.comb(buckets, r) * short
        total += term if r % 2 else -term
        if term < ctx.mpf(10) ** -80 * abs(total):
            break
    return WORK.mpf(total)


def _count_for(buckets: int, rule: Rule, log10_chance: float) -> int:
    """The n at which a float estimate of S1 = N P(bucket 1 breaks) is about the chance."""
    def log_first(n: int) -> float:
        p = 1 / buckets
        if rule.kind == BELOW:
            terms = range(rule.level, min(n, rule.level + 60) + 1)
        else:
            terms = range(max(0, rule.level - 60), rule.level)
        logs = [math.lgamma(n + 1) - math.lgamma(j + 1) - math.lgamma(n - j + 1)
                + j * math.log(p) + (n - j) * math.log1p(-p) for j in terms if j <= n]
        peak = max(logs)
        return math.log(buckets) + peak + math.log(sum(math.exp(x - peak) for x in logs))

    low, high = rule.level, rule.level
    rising = rule.kind == BELOW
    while (log_first(high) < log10_chance * math.log(10)) == rising:
        high *= 2
    while high - low > 1:  # the crossing, by bisection
        middle = (low + high) // 2
        if (log_first(middle) < log10_chance * math.log(10)) == rising:
            low = middle
        else:
            high = middle
    return high


CHANCES = (-3, -4, -5, -6, -8, -10, -12)
#: (N, level) pairs whose smallest S1, N**(1 - k) at n = k, is below 1e-13 (loads); a
#: load of 30 at fewer chances (its reference count takes a second or more each).
LOAD_POINTS = [(buckets, level, chance) for buckets, level in
               ((300, 10), (1000, 6), (2000, 5), (10**4, 5), (10**5, 4), (10**7, 3))
               for chance in CHANCES] + [(1000, 30, -6), (1000, 30, -12)]
COVERAGE_POINTS = [(buckets, level, chance) for buckets, level in
                   ((50, 1), (1000, 1), (1000, 2), (10**5, 1), (10**4, 4))
                   for chance in CHANCES]


def _grid_point(buckets: int, level: int, chance: int,
                kind: str) -> tuple[int, Rule, mpmath.mpf]:
    rule = Rule(kind, level)
    count = _count_for(buckets, rule, chance)
    if kind == BELOW:
        return count, rule, _loads_fails(buckets, count, level)
    return count, rule, _coverage_fails(buckets, count, level)


@pytest.mark.parametrize(("buckets", "level", "chance"), LOAD_POINTS)
def test_loads_bracket_never_exceeds_its_bound(buckets: int, level: int, chance: int) -> None:
    count, rule, fails = _grid_point(buckets, level, chance, BELOW)
    _check_grid_point(buckets, count, rule, fails)


@pytest.mark.parametrize(("buckets", "level", "chance"), COVERAGE_POINTS)
def test_coverage_bracket_never_exceeds_its_bound(buckets: int, level: int,
                                                  chance: int) -> None:
    count, rule, fails = _grid_point(buckets, level, chance, AT_LEAST)
    _check_grid_point(buckets, count, rule, fails)


def _check_grid_point(buckets: int, count: int, rule: Rule, fails: mpmath.mpf) -> None:
    """The bracket and the engine's answer both within their bounds of the reference.

    The bracket is also as tight as its forecast: about S1**2 / 6 (S1 near the chance),
    so within the engine's target wherever the chance is below about 1e-6.
    """
    assert 10.0**-13 < fails < 10.0**-2.5  # the grid covers 1e-3 .. 1e-12
    answer = occupancy._second_order_answer(buckets, count, rule)
    assert answer is not None and answer.method == SECOND_ORDER
    assert _errors(answer, fails) <= answer.relative_error_bound
    chance = float(fails)
    assert answer.relative_error_bound <= max(chance**2 / 4, 2.0**-64)
    if chance < 1e-6:
        assert answer.relative_error_bound <= occupancy.TARGET_BOUND
    engine = occupancy.occupancy_risk(buckets, count, rule)
    assert _errors(engine, fails) <= max(engine.relative_error_bound, 1e-19)


def test_the_engine_takes_the_second_order_bracket_in_its_regime() -> None:
    # Chances from 1e-6 to 1e-10, which the first-order bracket cannot answer within the
    # target (it needs S1 below about 2**-39): the engine now answers them by the
    # second-order one, unless the exact count is cheaper still.
    methods = []
    points = [(*point, BELOW) for point in LOAD_POINTS]
    for buckets, level, chance, kind in points + [(*p, AT_LEAST) for p in COVERAGE_POINTS]:
        if chance in (-6, -8, -10):
            rule = Rule(kind, level)
            count = _count_for(buckets, rule, chance)
            methods.append(occupancy.occupancy_risk(buckets, count, rule).method)
    assert set(methods) == {SECOND_ORDER, "exact"}
    assert methods.count(SECOND_ORDER) >= len(methods) * 2 // 3


# --- properties -------------------------------------------------------------------------------

SETTINGS = settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _pair_and_square(buckets: int, count: int, rule: Rule) -> tuple[float, float]:
    with precision(96):
        pair = occupancy_tails.pair_breaking_chance(buckets, count, rule)
        one = occupancy_tails.breaking_chance(buckets, count, rule)
        return float(pair.lower()), float((one**2).upper())


@SETTINGS
@given(st.integers(3, 10**7), st.floats(0.0, 3.0), st.integers(3, 12))
@example(1000, 0.57, 10)
def test_pair_tail_rises_with_the_count_and_stays_below_the_square(
        buckets: int, share: float, level: int) -> None:
    count = level + int(share * buckets)
    rule = Rule(BELOW, level)
    plan = occupancy_tails.tail_plan(buckets, count + 1, rule)
    if plan is None or plan.pair_terms > occupancy.MOST_PAIR_TERMS:
        return  # near the bulk: the engine never forms the sum there
    with precision(96):
        before = occupancy_tails.pair_breaking_chance(buckets, count, rule)
        after = occupancy_tails.pair_breaking_chance(buckets, count + 1, rule)
        assert before.lower() <= after.upper()
    pair, square = _pair_and_square(buckets, count, rule)
    assert pair <= square


@SETTINGS
@given(st.integers(3, 10**6), st.floats(1.0, 40.0), st.integers(1, 6))
@example(1000, 20.7, 1)
def test_pair_coverage_tail_falls_with_the_count_and_stays_below_the_square(
        buckets: int, share: float, level: int) -> None:
    count = int(share * buckets) + level * buckets
    rule = Rule(AT_LEAST, level)
    with precision(96):
        before = occupancy_tails.pair_breaking_chance(buckets, count, rule)
        after = occupancy_tails.pair_breaking_chance(buckets, count + 1, rule)
        assert after.lower() <= before.upper()
    pair, square = _pair_and_square(buckets, count, rule)
    assert pair <= square


@SETTINGS
@given(st.integers(200, 10**9), st.floats(-11.5, -3.0), st.integers(3, 8))
def test_brackets_rise_with_the_count(buckets: int, log10_chance: float, level: int) -> None:
    # P(some bucket reaches k) rises with n, so the bracket at n + 1 never lies wholly
    # below the bracket at n.
    rule = Rule(BELOW, level)
    count = _count_for(buckets, rule, log10_chance)
    before = occupancy._second_order_answer(buckets, count, rule)
    after = occupancy._second_order_answer(buckets, count + 1, rule)
    assert before is not None and after is not None
    low = Fraction(before.fails.decimal) * (1 - Fraction(before.relative_error_bound))
    high = Fraction(after.fails.decimal) * (1 + Fraction(after.relative_error_bound))
    assert low <= high
