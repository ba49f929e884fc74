"""The occupancy engine against enumeration, sympy, OEIS and published coincidence values."""

from __future__ import annotations

import itertools
import math
from collections import Counter
from fractions import Fraction

import mpmath
import pytest
import sympy
from sympy.functions.combinatorial.numbers import stirling

from urnbound.core.occupancy import occupancy_risk
from urnbound.core.occupancy_exact import allowed_outcomes
from urnbound.core.occupancy_figures import (
    expected_at_least,
    expected_draws_to_cover,
    expected_empty,
    expected_sets,
    expected_used,
    load_profile,
)
from urnbound.core.occupancy_inverse import fewest_draws, smallest_load
from urnbound.core.occupancy_results import AT_LEAST, BELOW, Rule


def _enumerated(buckets: int, count: int, rule: Rule) -> int:
    """Outcomes obeying the rule, by listing all N**n of them."""
    allowed = 0
    for outcome in itertools.product(range(buckets), repeat=count):
        loads = Counter(outcome)
        counts = [loads.get(b, 0) for b in range(buckets)]
        if rule.kind == BELOW:
            allowed += all(c < rule.level for c in counts)
        else:
            allowed += all(c >= rule.level for c in counts)
    return allowed


SMALL = [(buckets, count, Rule(kind, level))
         for buckets in range(1, 5) for count in range(0, 8) if buckets**count <= 20_000
         for kind in (BELOW, AT_LEAST) for level in range(1, 5)]


@pytest.mark.parametrize(("buckets", "count", "rule"), SMALL)
def test_exact_counts_equal_enumeration(buckets: int, count: int, rule: Rule) -> None:
    assert allowed_outcomes(buckets, count, rule).allowed == _enumerated(buckets, count, rule)


@pytest.mark.parametrize(("buckets", "count", "rule"), SMALL[::7])
def test_exact_answers_are_the_enumerated_fractions(buckets: int, count: int,
                                                    rule: Rule) -> None:
    answer = occupancy_risk(buckets, count, rule)
    fails = Fraction(buckets**count - _enumerated(buckets, count, rule), buckets**count)
    assert answer.method == "exact" and answer.relative_error_bound == 0.0
    assert answer.exact == fails
    assert Fraction(answer.fails.decimal) == pytest.approx(fails, rel=5e-20, abs=0)


def test_stirling_numbers_of_the_second_kind() -> None:
    # OEIS A008277: S2(10, 5) = 42525, S2(12, 6) = 1323652; the outcomes that use all k
    # buckets are k! S2(n, k) (OEIS A008277, comment).
    assert allowed_outcomes(5, 10, Rule(AT_LEAST, 1)).allowed == math.factorial(5) * 42525
    assert allowed_outcomes(6, 12, Rule(AT_LEAST, 1)).allowed == math.factorial(6) * 1323652
    for n in range(1, 16):
        for k in range(1, n + 1):
            expected = math.factorial(k) * int(stirling(n, k))  # sympy, exact
            assert allowed_outcomes(k, n, Rule(AT_LEAST, 1)).allowed == expected


def test_ordered_bell_numbers_from_coverage_counts() -> None:
    # OEIS A000670 (Fubini numbers), n = 0..10: sum over N of the surjections onto N buckets.
    fubini = [1, 1, 3, 13, 75, 541, 4683, 47293, 545835, 7087261, 102247563]
    for n, published in enumerate(fubini):
        total = sum(allowed_outcomes(k, n, Rule(AT_LEAST, 1)).allowed for k in range(1, n + 1))
        assert (total if n else 1) == published


@pytest.mark.parametrize(("level", "published"), [(3, 88), (4, 187)])
def test_coincidences_of_three_and_four_on_365_days(level: int, published: int) -> None:
    # Diaconis and Mosteller (1989), "Methods for studying coincidences", JASA 84, 853-861
    # (also OEIS A014088): 88 people give an even chance that three share a birthday, 187
    # that four do: the smallest counts with P >= 1/2.
    at = occupancy_risk(365, published, Rule(BELOW, level))
    before = occupancy_risk(365, published - 1, Rule(BELOW, level))
    assert Fraction(at.fails.decimal) >= Fraction(1, 2) > Fraction(before.fails.decimal)
    assert smallest_load(365, published, Fraction(1, 2)).load == level + 1
    assert smallest_load(365, published - 1, Fraction(1, 2)).load == level


def test_coupon_collector_expectation() -> None:
    # Coupon collector's problem (encyclopedia article): N H_N draws on average; N = 50
    # gives 224.96... (OEIS A060293 gives 225 rounded up). H_50 by sympy, exact.
    figure = expected_draws_to_cover(50)
    assert figure.decimal.startswith("2.2496")
    exact = 50 * sympy.harmonic(50)
    assert Fraction(figure.decimal) == pytest.approx(
        Fraction(int(exact.p), int(exact.q)), rel=5e-20, abs=0)
    assert math.ceil(figure.value) == 225
    # Past the exact limit: digamma in ball arithmetic, against mpmath.
    large = expected_draws_to_cover(10**9)
    reference = mpmath.mpf(10**9) * mpmath.harmonic(10**9)
    assert mpmath.mpf(large.decimal) == pytest.approx(reference, rel=1e-18, abs=0)


def test_expected_figures_against_exact_fractions() -> None:
    # Linearity of expectation with the binomial law of one bucket (sympy rationals).
    n, N = sympy.Integer(88), sympy.Integer(365)
    p = sympy.Rational(1, 365)
    empty = N * (1 - p) ** n
    assert Fraction(expected_empty(365, 88).decimal) == pytest.approx(
        Fraction(int(empty.p), int(empty.q)), rel=5e-20, abs=0)
    used = N - empty
    assert Fraction(expected_used(365, 88).decimal) == pytest.approx(
        Fraction(int(used.p), int(used.q)), rel=5e-20, abs=0)
    three = N * sum(sympy.binomial(n, j) * p**j * (1 - p) ** (n - j) for j in range(3, 89))
    figure = expected_at_least(365, 88, 3)
    assert float(Fraction(figure.decimal)) == pytest.approx(float(three), rel=1e-15, abs=0)
    sets = sympy.binomial(n, 3) / N**2
    assert Fraction(expected_sets(365, 88, 3).decimal) == pytest.approx(
        Fraction(int(sets.p), int(sets.q)), rel=5e-20, abs=0)
    rows = load_profile(365, 88)
    assert [row.load for row in rows] == list(range(0, len(rows)))
    for row in rows:
        share = N * sympy.binomial(n, row.load) * p**row.load * (1 - p) ** (n - row.load)
        assert float(row.buckets.decimal) == pytest.approx(float(share), rel=1e-15, abs=0)


def test_profile_ends_at_the_likely_maximum_and_holds_at_most_64_rows() -> None:
    rows = load_profile(10, 10**6)
    assert len(rows) == 64
    top = rows[-1].load
    assert float(expected_at_least(10, 10**6, top + 1).decimal) < 0.5
    assert float(expected_at_least(10, 10**6, top).decimal) >= 0.5


def test_fewest_draws_is_proven_on_both_sides() -> None:
    found = fewest_draws(50, 1, Fraction(1, 2))
    assert Fraction(found.at_draws.holds.decimal) >= Fraction(1, 2)
    assert Fraction(found.one_fewer.holds.decimal) < Fraction(1, 2)
    exact = allowed_outcomes(50, found.draws, Rule(AT_LEAST, 1))
    assert Fraction(exact.allowed, exact.total) >= Fraction(1, 2)
    before = allowed_outcomes(50, found.draws - 1, Rule(AT_LEAST, 1))
    assert Fraction(before.allowed, before.total) < Fraction(1, 2)


def test_known_answers_take_no_arithmetic() -> None:
    assert occupancy_risk(10, 2, Rule(BELOW, 3)).fails.decimal == "0"
    assert occupancy_risk(10, 21, Rule(BELOW, 3)).holds.decimal == "0"
    assert occupancy_risk(10, 19, Rule(AT_LEAST, 2)).holds.decimal == "0"
