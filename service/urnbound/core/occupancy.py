"""The occupancy engine: P(every bucket obeys a rule) by the cheapest method that is accurate.

n items fall independently and uniformly on N buckets; the rule bounds every bucket's
count from above (no bucket reaches k) or from below (every bucket used at least a
times). The probability is n! [z^n] A(z)**N / N**n with A(z) = sum_{j allowed} z**j/j!.

Choice of method, by estimated cost and by regime, never by a fixed n:

1. Known without arithmetic: n < k or n > (k - 1) N (below k); n < a N (at least a).
2. Below 2 is the pairwise question: :func:`urnbound.core.pairwise.collision_risk`.
3. Exact (``occupancy_exact``) when its estimated cost is at most ``EXACT_FIRST_COST``
   bit-operations (a few milliseconds): both texts correctly rounded, bound 0.
4. Inclusion-exclusion when the chance that some bucket breaks the rule is small: with
   E_i = "bucket i breaks it", p = P(E_1) (an exact binomial tail) and S1 = N p,
   Bonferroni's inequalities give S1 - S2 <= P(some E_i) <= S1, and the counts of
   different buckets are negatively associated, so P(E_1 and E_2) <= p**2 and
   S2 <= S1**2 (N - 1) / (2 N). The answer is the interval [S1 - S2max, S1]: a proven
   relative bound below S1 / 2. Taken when that is at most ``TARGET_BOUND``.
5. Near either end of the range (few items; or few items short of or beyond a full
   filling), the positive recurrences of ``occupancy_series`` when they take at most
   ``CHEAP_STEPS`` steps: proven by ball arithmetic.
6. The saddle point (``saddle``) with three correction terms, when its bound (rounding
   plus the truncation estimate) is at most ``TARGET_BOUND``; then the recurrences up to
   ``occupancy_series.MAX_STEPS`` steps.
7. Otherwise exact if its cost is at most ``EXACT_MAX_COST`` (measured under 50 ms),
   else whichever approximate answer has the smaller bound (inclusion-exclusion among
   them), reported as it is.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from fractions import Fraction

from flint import arb

from urnbound.core import balls, reporting
from urnbound.core import occupancy_series as series
from urnbound.core.balls import precision
from urnbound.core.errors import DomainError, NoConvergence
from urnbound.core.exact import magnitude_of_fraction
from urnbound.core.limits import MAX_FRACTION_DIGITS
from urnbound.core.occupancy_exact import allowed_outcomes, exact_cost, trivial_holds
from urnbound.core.occupancy_results import (
    BELOW,
    INCLUSION_EXCLUSION,
    RECURRENCE,
    SADDLE_POINT,
    OccupancyRisk,
    Rule,
)
from urnbound.core.pairwise import collision_risk
from urnbound.core.precision import to_float
from urnbound.core.results import EXACT, Magnitude
from urnbound.core.saddle import log_holds

#: Exact counts estimated at most this many bit-operations are formed first (~2 ms).
EXACT_FIRST_COST = 4_000_000
#: Largest exact cost taken when no approximate method reaches its target: the slowest
#: form measured (at least a, few buckets, large a) takes up to 1.6 ms per million
#: bit-operations, so this stays near 40 ms at worst (bench_occupancy.py).
EXACT_MAX_COST = 25_000_000
#: Recurrences of at most this many inner steps are tried before the saddle point (~1 ms).
CHEAP_STEPS = 1_000
#: Relative bound an approximate method must reach to be taken before the exact path.
TARGET_BOUND = 2.0**-40
#: First working precision of the approximate methods, and how often it is doubled.
START_BITS = 96
PRECISION_TRIES = 3


def occupancy_risk(buckets: int, count: int, rule: Rule, *,
                   target: float = TARGET_BOUND) -> OccupancyRisk:
    """P(every bucket obeys ``rule``) after ``count`` items on ``buckets`` buckets.

    :param target: the relative bound an approximate answer must reach to be taken before
        the exact fallback (a search that only compares with a budget asks for less).

    :raises DomainError: for fewer than one bucket or a negative count.

    >>> r = occupancy_risk(365, 88, Rule("below", 3))  # some day shared by three
    >>> r.method, r.fails.decimal
    ('exact', '5.1106511062473051293e-1')
    """
    if buckets < 1:
        raise DomainError("buckets must be at least 1", field="buckets")
    if count < 0:
        raise DomainError("count must be at least 0", field="count")
    known = trivial_holds(buckets, count, rule)
    if known is not None:
        return _exact_answer(buckets, count, rule, known)
    if rule.kind == BELOW and rule.level == 2:
        return _pairwise_answer(buckets, count, rule)
    cost = exact_cost(buckets, count, rule)
    if cost <= EXACT_FIRST_COST:
        return _exact_answer(buckets, count, rule)
    candidates: list[OccupancyRisk] = []
    steps = _recurrence_steps(buckets, count, rule)
    cheap = steps is not None and steps <= CHEAP_STEPS
    try:
        rare = _breaking_is_rare(buckets, count, rule)
    except (OverflowError, ValueError):  # only the order of the methods depends on it
        rare = True
    methods = [*([_tail_answer] if rare else []), *([_recurrence_answer] if cheap else []),
               _saddle_answer]
    if steps is not None and not cheap and steps <= series.MAX_STEPS:
        methods.append(_recurrence_answer)
    for method in methods:
        found = _attempt(method, buckets, count, rule)
        if found is not None:
            if found.relative_error_bound <= target:
                return found
            candidates.append(found)
    if cost <= EXACT_MAX_COST:
        return _exact_answer(buckets, count, rule)
    if not rare:  # the interval may still be the best answer there is
        found = _attempt(_tail_answer, buckets, count, rule)
        candidates += [] if found is None else [found]
    if not candidates:
        raise NoConvergence("no method reaches this question within its cost limit")
    return min(candidates, key=lambda answer: answer.relative_error_bound)


def _attempt(method: Callable[[int, int, Rule], OccupancyRisk | None], buckets: int,
             count: int, rule: Rule) -> OccupancyRisk | None:
    """One approximate method's answer; ``None`` when it declines or cannot converge.

    A method that fails (a series that does not settle, a step that runs away) only
    leaves the choice to the next one: every answer still comes with its own bound.
    """
    try:
        return method(buckets, count, rule)
    except (NoConvergence, ValueError, ZeroDivisionError, OverflowError):
        return None


#: The inclusion-exclusion bound is below S1 / 2: it is tried first only when a float
#: estimate puts S1 below 2**-RARE_BITS (it needs S1 <= 2**-39 to reach TARGET_BOUND).
RARE_BITS = 30


def _breaking_is_rare(buckets: int, count: int, rule: Rule) -> bool:
    """A float estimate of S1 = N P(bucket 1 breaks the rule) is below 2**-RARE_BITS.

    Only the order of the methods depends on it: the estimate's error changes which method
    is tried first, never a figure. ln of the binomial term next to the edge, plus a
    geometric tail where the terms fall fast; near the bulk, "not rare".
    """
    if rule.kind == BELOW:
        j = rule.level
        ratio = (count - j) / ((j + 1) * (buckets - 1)) if buckets > 1 else math.inf
    else:
        j = rule.level - 1
        ratio = j * (buckets - 1) / (count - j + 1) if count > j else 0.0
    if ratio >= balls.SERIES_RATIO or j > count or buckets == 1:
        return False
    log_size = math.log(buckets)
    if j <= balls.MAX_PRODUCT_TERMS:
        log_choose = sum(math.log(count - i) for i in range(j)) - math.lgamma(j + 1)
    else:
        log_choose = (math.lgamma(count + 1) - math.lgamma(j + 1)
                      - math.lgamma(count - j + 1))
    if buckets < 2**50:  # then a count that is not trivially answered fits a float
        rest = (count - j) * math.log1p(-1 / buckets)
    else:
        rest = -((count - j) / buckets)  # integer division to a float: no overflow
    log_term = log_choose - j * log_size + rest
    tail = -math.log1p(-ratio)  # the geometric bound on the rest of the tail
    return math.log(buckets) + log_term + tail < -RARE_BITS * math.log(2.0)


# --- exact and pairwise -----------------------------------------------------------------------


def _exact_answer(buckets: int, count: int, rule: Rule,
                  known: bool | None = None) -> OccupancyRisk:
    if known is not None:
        allowed, total = (1, 1) if known else (0, 1)
    else:
        found = allowed_outcomes(buckets, count, rule)
        allowed, total = found.allowed, found.total
    fails = Fraction(total - allowed, total)
    small = fails.denominator.bit_length() < 4 * MAX_FRACTION_DIGITS
    small = small and len(str(fails.denominator)) <= MAX_FRACTION_DIGITS
    return OccupancyRisk(
        buckets=buckets,
        count=count,
        rule=rule,
        holds=magnitude_of_fraction(fails.denominator - fails.numerator, fails.denominator),
        fails=magnitude_of_fraction(fails.numerator, fails.denominator),
        method=EXACT,
        relative_error_bound=0.0,
        exact=fails if small else None,
        precision_bits=0,
    )


def _pairwise_answer(buckets: int, count: int, rule: Rule) -> OccupancyRisk:
    risk = collision_risk(buckets, count)
    return OccupancyRisk(buckets, count, rule, risk.no_collision, risk.collision, risk.method,
                         risk.relative_error_bound, risk.exact, risk.precision_bits)


# --- inclusion-exclusion ----------------------------------------------------------------------


def breaking_chance(buckets: int, count: int, rule: Rule) -> arb:
    """p = P(bucket 1 breaks the rule): a binomial tail with its relative accuracy.

    Below k: P(Binomial(n, 1/N) >= k). At least a: P(Binomial(n, 1/N) < a).
    """
    p = arb(1) / buckets
    if rule.kind == BELOW:
        return balls.binomial_at_least(count, p, rule.level)
    return balls.binomial_below(count, p, rule.level)


def _tail_answer(buckets: int, count: int, rule: Rule) -> OccupancyRisk | None:
    """The Bonferroni interval [S1 - S2max, S1] (module docstring, step 4)."""
    bits = START_BITS
    for _ in range(PRECISION_TRIES):
        with precision(bits):
            first = buckets * breaking_chance(buckets, count, rule)
            if not first.upper() < 0.5:
                return None
            second = first**2 * (buckets - 1) / (2 * buckets)
            fails = balls.between(first - arb(second.upper()), first)
            answer = _answer_of_balls(buckets, count, rule, 1 - fails, fails,
                                      INCLUSION_EXCLUSION, bits)
        if answer is not None:
            return answer
        bits *= 2
    return None


# --- recurrences near the ends ----------------------------------------------------------------


def _recurrence_steps(buckets: int, count: int, rule: Rule) -> int | None:
    """Inner steps of the cheaper recurrence that applies, or ``None``."""
    options = [steps for steps in (series.steps_from_bottom(buckets, count, rule),
                                   series.steps_from_top(buckets, count, rule))
               if steps is not None]
    return min(options) if options else None


def _recurrence_answer(buckets: int, count: int, rule: Rule) -> OccupancyRisk | None:
    """The recurrence of ``occupancy_series`` with the fewer steps, in balls."""
    bottom = series.steps_from_bottom(buckets, count, rule)
    top = series.steps_from_top(buckets, count, rule)
    bits = START_BITS + 32
    for _ in range(PRECISION_TRIES):
        if bottom is not None and (top is None or bottom <= top):
            holds, fails = series.from_bottom(buckets, count, rule, bits)
            with precision(bits):
                answer = _answer_of_balls(buckets, count, rule, holds, fails, RECURRENCE, bits)
        else:
            value = series.log_from_top(buckets, count, rule, bits)
            with precision(bits):
                answer = _answer_of_balls(buckets, count, rule, value.exp(), -value.expm1(),
                                          RECURRENCE, bits, log_holds=value)
        if answer is not None:
            return answer
        bits *= 2
    return None


# --- saddle point -----------------------------------------------------------------------------


def _saddle_answer(buckets: int, count: int, rule: Rule) -> OccupancyRisk | None:
    """exp(L) and -expm1(L) from the saddle-point ball L (module docstring, step 5)."""
    bits = START_BITS
    for _ in range(PRECISION_TRIES + 1):
        try:
            estimate = log_holds(buckets, count, rule, bits)
        except NoConvergence:
            return None
        if estimate is None:
            return None
        needed = _bits_for(estimate.log_holds)
        if needed > bits:  # |ln P| is large: its absolute accuracy needs more bits
            bits = needed
            continue
        with precision(bits):
            value = estimate.log_holds
            if not value.upper() < 0:
                return None
            answer = _answer_of_balls(buckets, count, rule, value.exp(), -value.expm1(),
                                      SADDLE_POINT, bits, log_holds=value)
        if answer is not None:
            return answer
        bits *= 2
    return None


def _bits_for(log_value: arb) -> int:
    """Working bits that give ln P an absolute accuracy of about 2**-START_BITS."""
    magnitude = abs(float(log_value.mid()))
    if not math.isfinite(magnitude) or magnitude < 1:
        return START_BITS
    return START_BITS + int(magnitude).bit_length()


# --- reporting --------------------------------------------------------------------------------


def _answer_of_balls(buckets: int, count: int, rule: Rule, holds: arb, fails: arb,
                     method: str, bits: int, log_holds: arb | None = None) -> OccupancyRisk | None:
    """The answer from two balls; ``None`` when either cannot be reported at these bits."""
    holds_log10 = None
    if log_holds is not None:
        holds_log10 = float((log_holds / arb(10).log()).mid())
    fails_log10 = None
    if fails.mid() >= 0.5:
        fails_log10 = float(((-holds).log1p() / arb(10).log()).mid()) + 0.0
    if holds.mid() >= 0.5:
        holds_log10 = float(((-fails).log1p() / arb(10).log()).mid()) + 0.0
    first = ball_magnitude(holds, holds_log10)
    second = ball_magnitude(fails, fails_log10)
    if first is None or second is None:
        return None
    return OccupancyRisk(buckets, count, rule, first, second, method,
                         max(first.relative_error_bound, second.relative_error_bound),
                         None, bits)


def ball_magnitude(x: arb, log10: float | None = None) -> Magnitude | None:
    """Report a positive ball: the float correctly rounded when the ball decides it, else
    the float nearest the midpoint (within the bound); ``None`` if the ball holds 0."""
    error = balls.relative_radius(x)
    if error is None:
        return None
    value = balls.to_real(x)
    found = reporting.bounded_magnitude(value, error, log10)
    if found is not None:
        return found
    if log10 is None:
        log10 = reporting.log10_value(value)
    if not math.isfinite(log10):
        raise NoConvergence("a figure lies beyond the reported range")
    return Magnitude(to_float(value), reporting.decimal_text(value, log10), log10,
                     reporting.text_bound(error))


def reciprocal(probability: Magnitude) -> Magnitude | None:
    """1 / p from p's decimal text d with |d - p| <= e p: off by at most e / (1 - e).

    ``None`` for p = 0.

    >>> reciprocal(Magnitude(0.25, "2.5000000000000000000e-1", -0.6, 0.0)).decimal
    '4.0000000000000000000e0'
    """
    if probability.log10 is None:
        return None
    text = Fraction(probability.decimal)
    error = probability.relative_error_bound
    with precision(128):
        value = arb(text.denominator) / text.numerator
        spread = arb(error) / (1 - arb(error)) if error else arb(0)
        found = ball_magnitude(balls.widened(value, value * spread), 0.0 - probability.log10)
    return found
