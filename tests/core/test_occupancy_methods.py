"""Each approximate occupancy method against exact values: its reported bound is never exceeded."""

from __future__ import annotations

from fractions import Fraction

import mpmath
import pytest
import sympy
from flint import arb

from urnbound.core import occupancy, saddle
from urnbound.core.balls import precision
from urnbound.core.occupancy_exact import allowed_outcomes, exact_cost
from urnbound.core.occupancy_results import AT_LEAST, BELOW, OccupancyRisk, Rule

WORK = mpmath.MPContext()
WORK.prec = 600


def _exact(buckets: int, count: int, rule: Rule) -> tuple[mpmath.mpf, mpmath.mpf]:
    found = allowed_outcomes(buckets, count, rule)
    total = WORK.mpf(found.total)
    return WORK.mpf(found.allowed) / total, WORK.mpf(found.total - found.allowed) / total


def _errors(answer: OccupancyRisk, holds: mpmath.mpf, fails: mpmath.mpf) -> float:
    worst = 0.0
    for figure, true in ((answer.holds, holds), (answer.fails, fails)):
        if true == 0:
            assert figure.decimal == "0"
            continue
        worst = max(worst, float(abs(WORK.mpf(figure.decimal) - true) / true))
    return worst


#: Exact counts are the reference; points whose exact cost would be large are left out
#: (the large-N checks in test_occupancy_large.py use other references).
CANDIDATES = (
    [(365, n, Rule(BELOW, 3)) for n in (40, 88, 150, 300, 500, 650, 700, 725)]
    + [(1000, n, Rule(BELOW, 4)) for n in (60, 400, 2600, 2950, 2995)]
    + [(2000, n, Rule(BELOW, 6)) for n in (30, 9990)]
    + [(300, n, Rule(BELOW, 6)) for n in (100, 400, 1000, 1450, 1495)]
    + [(200, n, Rule(AT_LEAST, 1)) for n in (203, 230, 600, 1000, 1500, 3000, 6000)]
    + [(60, n, Rule(AT_LEAST, 2)) for n in (125, 150, 250, 400, 800)]
    + [(300, n, Rule(AT_LEAST, 2)) for n in (610, 650)]
    + [(40, n, Rule(AT_LEAST, 3)) for n in (125, 200, 300, 500)]
    + [(100, n, Rule(AT_LEAST, 3)) for n in (310, 400)]
)
GRID = [point for point in CANDIDATES if exact_cost(*point) <= 150_000_000]


@pytest.mark.parametrize(("buckets", "count", "rule"), GRID)
@pytest.mark.parametrize("method", ["_tail_answer", "_second_order_answer", "_saddle_answer",
                                    "_recurrence_answer"])
def test_reported_bound_is_never_exceeded(buckets: int, count: int, rule: Rule,
                                          method: str) -> None:
    if method == "_recurrence_answer" and occupancy._recurrence_steps(buckets, count,
                                                                     rule) is None:
        return
    answer = getattr(occupancy, method)(buckets, count, rule)
    if answer is None:  # the method does not apply here
        return
    holds, fails = _exact(buckets, count, rule)
    assert _errors(answer, holds, fails) <= answer.relative_error_bound


def test_saddle_point_applies_across_the_grid() -> None:
    """The grid is not vacuous: the expansion answers most of it, and well."""
    answered = [occupancy._saddle_answer(b, n, r) for b, n, r in GRID]
    good = [a for a in answered if a is not None and a.relative_error_bound < 1e-9]
    assert len(good) >= len(GRID) // 3


def test_every_answer_on_the_grid_is_within_one_part_in_a_billion() -> None:
    for buckets, count, rule in GRID:
        answer = occupancy.occupancy_risk(buckets, count, rule)
        holds, fails = _exact(buckets, count, rule)
        assert _errors(answer, holds, fails) <= max(answer.relative_error_bound, 1e-19)
        assert answer.relative_error_bound <= 1e-9


def test_edgeworth_terms_reduce_to_stirling_for_the_poisson_law() -> None:
    # The Poisson case of the local expansion is Stirling's series for n!:
    # ln P(Poisson(n) = n) = -1/2 ln(2 pi n) - 1/(12 n) + 1/(360 n^3) + O(n^-5)
    # (any handbook of Stirling's series; the terms in n^-2 and n^-4 vanish).
    with precision(200):
        n = arb(1000)
        unit = 1 / n.sqrt()
        scaled = {r: unit ** (r - 2) for r in range(3, 11)}
        g1, g2, g3, g4 = saddle._edgeworth(scaled)
        assert abs(g1 + 1 / (12 * n)).upper() < 1e-55
        assert abs(g2).upper() < 1e-55
        assert abs(g3 - 1 / (360 * n**3)).upper() < 1e-55
        assert abs(g4).upper() < 1e-55


def test_recurrence_weights_sum_to_one_less_the_new_coincidence() -> None:
    # The identity behind the few-items recurrence, checked with sympy for k = 3..7:
    # sum_i C(j, i) / N^i (1 - (j - i) / ((i + 1) N)) = 1 - C(j, k - 1) / N^(k - 1).
    j, size = sympy.symbols("j N", positive=True)
    for level in range(3, 8):
        total = sum(sympy.ff(j, i) / sympy.factorial(i) / size**i
                    * (1 - (j - i) / ((i + 1) * size)) for i in range(level - 1))
        difference = sympy.simplify(1 - total - sympy.binomial(j, level - 1) / size**(level - 1))
        assert sympy.expand(sympy.expand_func(difference)) == 0


def test_bonferroni_interval_holds_the_exact_value() -> None:
    for buckets, count, rule in [(2000, 12, Rule(BELOW, 3)), (50, 2000, Rule(AT_LEAST, 1)),
                                 (20, 300, Rule(AT_LEAST, 2))]:
        answer = occupancy._tail_answer(buckets, count, rule)
        assert answer is not None and answer.method == "inclusion-exclusion"
        holds, fails = _exact(buckets, count, rule)
        assert _errors(answer, holds, fails) <= answer.relative_error_bound
        exact = allowed_outcomes(buckets, count, rule)
        assert Fraction(answer.fails.decimal) == pytest.approx(
            Fraction(exact.total - exact.allowed, exact.total),
            rel=answer.relative_error_bound, abs=0)


@pytest.mark.parametrize(("buckets", "count", "rule"), [
    (201_688_541, 78_556_445_709_715, Rule(BELOW, 537_552)),  # P ~ 1e-10908
    (10**7, 8, Rule(BELOW, 3)),
    (10**6, 53_815_511, Rule(AT_LEAST, 1)),  # N (ln N + 40): about 4e-18
])
def test_saddle_point_far_in_the_tail_agrees_with_the_proven_interval(
        buckets: int, count: int, rule: Rule) -> None:
    """Where the chance is tiny the saddle point may decline, but never claims too much.

    The Bonferroni interval is proven; the saddle point's answer, if it gives one, must
    lie within its own bound of it.
    """
    proven = occupancy._tail_answer(buckets, count, rule)
    assert proven is not None and proven.relative_error_bound < 1e-12
    estimate = occupancy._saddle_answer(buckets, count, rule)
    if estimate is None:
        return
    true = WORK.mpf(proven.fails.decimal)
    error = float(abs(WORK.mpf(estimate.fails.decimal) - true) / true)
    assert error <= estimate.relative_error_bound + 2 * proven.relative_error_bound


@pytest.mark.parametrize(("buckets", "count", "rule"), [
    (300, 700, Rule(AT_LEAST, 2)), (149, 381, Rule(AT_LEAST, 2)), (3, 1690, Rule(AT_LEAST, 378)),
    (1000, 400, Rule(BELOW, 4)), (10**4, 2000, Rule(BELOW, 3)),
])
def test_exact_path_is_never_taken_past_its_cost_limit(buckets: int, count: int,
                                                        rule: Rule) -> None:
    # tests/bench/bench_occupancy.py measures these at 4 to 90 ms exactly; the engine
    # answers them another way, with a bound.
    assert exact_cost(buckets, count, rule) > occupancy.EXACT_MAX_COST
    answer = occupancy.occupancy_risk(buckets, count, rule)
    assert answer.method != "exact" and answer.relative_error_bound > 0
