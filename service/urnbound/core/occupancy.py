"""The occupancy engine: P(every bucket obeys a rule) by the cheapest method that is accurate.

n items fall independently and uniformly on N buckets; the rule bounds every bucket's
count from above (no bucket reaches k) or from below (every bucket used at least a
times). The probability is n! [z^n] A(z)**N / N**n with A(z) = sum_{j allowed} z**j/j!.

Choice of method, by estimated cost and by regime, never by a fixed n:

1. Known without arithmetic: n < k or n > (k - 1) N (below k); n < a N (at least a).
2. Below 2 is the pairwise question: :func:`urnbound.core.pairwise.collision_risk`.
3. Exact (``occupancy_exact``) when its estimated cost is at most ``EXACT_FIRST_COST``
   bit-operations (a few milliseconds): both texts correctly rounded, bound 0.
4. Inclusion-exclusion when the chance that some bucket breaks the rule is small
   (``occupancy_tails``): Bonferroni's inequalities bracket it from exact tails. First
   order, [S1 - C(N, 2) p1**2, S1] with S1 = N p1 from one binomial tail: a proven
   relative bound below S1 / 2. Second order, [S1 - S2, S1 - S2 + C(N, 3) p1 p2] with
   S2 = C(N, 2) p2 from the exact joint tail of two buckets: a bound near S1**2 / 6, for
   a sum of tens to hundreds of terms. A float forecast of S1 and of the sum's length
   (:func:`occupancy_tails.tail_plan`) puts the cheaper bracket forecast to reach the
   target first; either is taken when its bound is at most ``TARGET_BOUND``.
5. Near either end of the range (few items; or few items short of or beyond a full
   filling), the positive recurrences of ``occupancy_series`` when they take at most
   ``CHEAP_STEPS`` steps: proven by ball arithmetic.
6. The saddle point (``saddle``) with three correction terms, when its bound (rounding
   plus the truncation estimate) is at most ``TARGET_BOUND``; then the recurrences up to
   ``occupancy_series.MAX_STEPS`` steps.
7. Near the top of the range again (a small gap from a full filling, however many
   multiples of N it is), [w^m] B**N by squaring ball polynomials of positive
   coefficients (``occupancy_series.log_from_top``) when its forecast products are at
   most ``POWER_MAX_PAIRS``: proven by ball arithmetic, some 2 ms where the exact
   integers took 6 (few buckets, a cap of hundreds).
8. Otherwise exact if its cost is at most ``EXACT_MAX_COST`` (measured under 50 ms),
   else whichever approximate answer has the smaller bound (a tail bracket among them),
   reported as it is.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from fractions import Fraction

import gmpy2
from flint import arb

from urnbound.core import balls, reporting
from urnbound.core import occupancy_series as series
from urnbound.core import occupancy_tails as tails
from urnbound.core.balls import precision
from urnbound.core.errors import DomainError, NoConvergence
from urnbound.core.exact import magnitude_of_fraction
from urnbound.core.limits import MAX_FRACTION_DIGITS
from urnbound.core.occupancy_exact import allowed_outcomes, exact_cost, trivial_holds
from urnbound.core.occupancy_results import (
    BELOW,
    INCLUSION_EXCLUSION,
    POLYNOMIAL_POWER,
    RECURRENCE,
    SADDLE_POINT,
    SECOND_ORDER_INCLUSION_EXCLUSION,
    TWO_BUCKET_BINOMIAL,
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
    if buckets == 2:
        two = _two_bucket_answer(count, rule)
        if two is not None:
            return two
    candidates: list[OccupancyRisk] = []
    steps = _recurrence_steps(buckets, count, rule)
    cheap = steps is not None and steps <= CHEAP_STEPS
    first, last = _tail_methods(buckets, count, rule, target)
    methods = [*first, *([_recurrence_answer] if cheap else []), _saddle_answer]
    if steps is not None and not cheap and steps <= series.MAX_STEPS:
        methods.append(_recurrence_answer)
    for method in methods:
        found = _attempt(method, buckets, count, rule)
        if found is not None:
            if found.relative_error_bound <= target:
                return found
            candidates.append(found)
    if _power_fits(buckets, count, rule, steps):
        found = _attempt(_power_answer, buckets, count, rule)
        if found is not None:
            if found.relative_error_bound <= target:
                return found
            candidates.append(found)
    if cost <= EXACT_MAX_COST:
        return _exact_answer(buckets, count, rule)
    for method in last:  # a bracket may still be the best answer there is
        if method is _tail_answer and _bracket_loses(buckets, candidates):
            continue
        found = _attempt(method, buckets, count, rule)
        candidates += [] if found is None else [found]
    if not candidates:
        _refuse_beyond_digits(buckets, count, rule)
        raise NoConvergence("no method reaches this question within its cost limit")
    return min(candidates, key=lambda answer: answer.relative_error_bound)


def same_under_full_target(buckets: int, count: int, rule: Rule, asked: float,
                           answer: OccupancyRisk) -> bool:
    """Whether ``answer``, given by :func:`occupancy_risk` when asked with ``target=asked``
    (at least ``TARGET_BOUND``), is the answer it gives with its full target.

    True when the answer reaches the full target (the engine would have stopped at the
    same method: the order of methods depends on the target only through the tail
    forecast, checked to be the same), or when its bound is above ``asked``: then no
    method returned early under ``asked``, and none would under the smaller target
    either (every candidate's bound is at least the smallest), so with the same methods
    in the same order both runs compute the same candidates and keep the same one.
    """
    if answer.relative_error_bound <= TARGET_BOUND:
        return True
    if answer.relative_error_bound <= asked:
        return False
    return _tail_methods(buckets, count, rule, asked) == _tail_methods(
        buckets, count, rule, TARGET_BOUND)


def _refuse_beyond_digits(buckets: int, count: int, rule: Rule) -> None:
    """Refuse (DomainError on ``count``) a chance e**L whose digits no method can give.

    Where the saddle-point expansion knows ln P only to an absolute error above 1/2 at
    the bits that resolve |ln P| (its truncation, not rounding), P = e**L has no correct
    leading digit: |ln P| is then above some 10**300 and P below 10**-(10**300), while the
    opposite event is certain to every digit shown. That is a question past the service's
    range, answered as such rather than as a failure.
    """
    try:
        first = log_holds(buckets, count, rule, START_BITS)
        if first is None:
            return
        estimate = log_holds(buckets, count, rule, _bits_for(first.log_holds))
    except NoConvergence:
        return
    if estimate is None or not estimate.truncation.lower() > 0.5:
        return
    with precision(64):
        log10 = (estimate.log_holds.mid() / arb(10).log()).mid().str(6, radius=False)
    raise DomainError(
        f"the chance that every bucket obeys the rule is about 10^({log10}), known to no "
        f"digit (its logarithm only to within {estimate.truncation.mid().str(2, radius=False)}), "
        f"while its complement is 1 to every digit shown; ask about fewer items",
        field="count")


#: Most terms summed directly for a two-bucket window; wider windows take 1 - 2 P(X < lo).
TWO_BUCKET_WINDOW = 4_096


def _two_bucket_answer(count: int, rule: Rule) -> OccupancyRisk | None:
    """Two buckets: the first holds X ~ Binomial(n, 1/2) items and the second n - X.

    Both rules ask lo <= X <= hi with lo + hi = n (below k: lo = n - k + 1, hi = k - 1;
    at least a: lo = a, hi = n - a), so by symmetry fails = 2 P(X < lo), from the
    binomial tail with its relative accuracy, and holds is the window's sum of
    probabilities when it is narrow, else 1 - fails; balls at rising precision carry every
    rounding. ``None`` when no precision tried resolves both (the engine goes on).
    """
    lo = count - rule.level + 1 if rule.kind == BELOW else rule.level
    hi = count - lo
    if lo > hi or lo <= 0:
        return None  # trivial_holds answers these
    bits = START_BITS
    for _ in range(PRECISION_TRIES + 1):
        with precision(bits + 32):
            half = arb(1) / 2
            fails = 2 * balls.binomial_below(count, half, lo)
            if hi - lo < TWO_BUCKET_WINDOW:
                first = balls.binomial_pmf(count, lo, half)
                total, term = first, first
                for j in range(lo, hi):
                    term = term * (count - j) / (j + 1)
                    total += term
                holds = total
            else:
                holds = 1 - fails
        with precision(bits):
            if holds > 0 and fails > 0:
                answer = _answer_of_balls(2, count, rule, +holds, +fails, TWO_BUCKET_BINOMIAL,
                                          bits)
                if answer is not None and answer.relative_error_bound <= TARGET_BOUND:
                    return answer
        bits *= 2
    return None


def _bracket_loses(buckets: int, candidates: list[OccupancyRisk]) -> bool:
    """The first-order bracket cannot have a smaller bound than the best candidate.

    Its ball spans [S1 - S2max, S1] with S2max = S1**2 (N - 1) / (2 N), so its relative
    radius is at least S2max / (2 S1) = S1 (N - 1) / (4 N), and S1 >= P(some bucket breaks
    the rule), which the candidate puts at f (1 - e) or more. Below half of that
    (a margin for the float f), the bracket would never be chosen: it is not computed.
    """
    if not candidates:
        return False
    best = min(candidates, key=lambda answer: answer.relative_error_bound)
    floor = best.fails.value * (1 - best.relative_error_bound) * (buckets - 1) / (8 * buckets)
    return best.relative_error_bound < floor


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


#: A tail bracket is tried first when its forecast bound is within this factor of the
#: target: the forecast errs high (its S1 has a geometric bound on the tail), and only
#: the float arithmetic behind it could make it err low.
TAIL_MARGIN = 16.0
#: The second-order bracket is tried first only when its sum is forecast at most this
#: many terms (a few microseconds each: about 1 ms with the tails around it).
CHEAP_PAIR_TERMS = 300
#: As a last resort (nothing else reached the target) it may take this many.
MOST_PAIR_TERMS = 800

TailMethod = Callable[[int, int, Rule], OccupancyRisk | None]


def _tail_methods(buckets: int, count: int, rule: Rule,
                  target: float) -> tuple[list[TailMethod], list[TailMethod]]:
    """The tail brackets to try before the others, and those kept for the last resort.

    The first-order bracket (one tail) when forecast to reach ``target``, followed by the
    second-order one; else the second-order one when it is forecast to reach it and its
    sum is cheap. Only the order of the methods depends on the forecast, never a figure.
    """
    try:
        plan = tails.tail_plan(buckets, count, rule)
    except (OverflowError, ValueError):  # a count beyond floats: the one tail, first
        return [_tail_answer], []
    if plan is None:  # near the bulk: breaking is not rare
        return [], [_tail_answer]
    within = target * TAIL_MARGIN
    if plan.first_order_bound <= within:
        return [_tail_answer, _second_order_answer], []
    if plan.second_order_bound <= within and plan.pair_terms <= CHEAP_PAIR_TERMS:
        return [_second_order_answer], []
    return [], [_second_order_answer if plan.pair_terms <= MOST_PAIR_TERMS else _tail_answer]


# --- exact and pairwise -----------------------------------------------------------------------


def _exact_answer(buckets: int, count: int, rule: Rule,
                  known: bool | None = None) -> OccupancyRisk:
    if known is not None:
        allowed, total = (1, 1) if known else (0, 1)
    else:
        found = allowed_outcomes(buckets, count, rule)
        allowed, total = found.allowed, found.total
    numerator, denominator = total - allowed, total
    if total.bit_length() <= REDUCED_FRACTION_BITS:
        # gcd(N**n - A, N**n) = gcd(A, N**n): 1 when A shares no prime with N (A mod N)
        common = 1 if math.gcd(allowed % buckets, buckets) == 1 else gmpy2.gcd(allowed, total)
        numerator, denominator = int(numerator // common), int(denominator // common)
    small = denominator.bit_length() < 4 * MAX_FRACTION_DIGITS
    small = small and len(str(denominator)) <= MAX_FRACTION_DIGITS
    return OccupancyRisk(
        buckets=buckets,
        count=count,
        rule=rule,
        holds=magnitude_of_fraction(denominator - numerator, denominator),
        fails=magnitude_of_fraction(numerator, denominator),
        method=EXACT,
        relative_error_bound=0.0,
        exact=Fraction(numerator, denominator) if small else None,
        precision_bits=0,
    )


#: The exact chance is reduced (and reported as a fraction when its denominator is short)
#: only when N**n has at most this many bits: past it, a denominator of MAX_FRACTION_DIGITS
#: digits would need a common factor of over 60,000 bits, and the reduction alone took
#: 86 ms at 686**25382 (Python's gcd, which Fraction uses; GMP's still 8 ms).
REDUCED_FRACTION_BITS = 65_536


def _pairwise_answer(buckets: int, count: int, rule: Rule) -> OccupancyRisk:
    risk = collision_risk(buckets, count)
    return OccupancyRisk(buckets, count, rule, risk.no_collision, risk.collision, risk.method,
                         risk.relative_error_bound, risk.exact, risk.precision_bits)


# --- inclusion-exclusion ----------------------------------------------------------------------


def _tail_answer(buckets: int, count: int, rule: Rule) -> OccupancyRisk | None:
    """The first-order Bonferroni bracket [S1 - C(N, 2) p1**2, S1] (docstring, step 4)."""
    return _bracket_answer(buckets, count, rule, tails.first_order_bracket,
                           INCLUSION_EXCLUSION)


def _second_order_answer(buckets: int, count: int, rule: Rule) -> OccupancyRisk | None:
    """The second-order bracket [S1 - S2, S1 - S2 + C(N, 3) p1 p2] (docstring, step 4)."""
    return _bracket_answer(buckets, count, rule, tails.second_order_bracket,
                           SECOND_ORDER_INCLUSION_EXCLUSION)


def _bracket_answer(buckets: int, count: int, rule: Rule,
                    bracket: Callable[[int, int, Rule], arb | None],
                    method: str) -> OccupancyRisk | None:
    """The answer from a ball holding the bracket, at doubled precision until reportable."""
    bits = START_BITS
    for _ in range(PRECISION_TRIES):
        with precision(bits):
            fails = bracket(buckets, count, rule)
            if fails is None:
                return None
            answer = _answer_of_balls(buckets, count, rule, 1 - fails, fails, method, bits)
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

    def attempt(bits: int) -> OccupancyRisk | None:
        if bottom is not None and (top is None or bottom <= top):
            holds, fails = series.from_bottom(buckets, count, rule, bits)
            with precision(bits):
                return _answer_of_balls(buckets, count, rule, holds, fails, RECURRENCE, bits)
        value = series.log_from_top(buckets, count, rule, bits)
        with precision(bits):
            return _answer_of_balls(buckets, count, rule, value.exp(), -value.expm1(),
                                    RECURRENCE, bits, log_holds=value)

    return _at_doubling_bits(attempt)


def _at_doubling_bits(attempt: Callable[[int], OccupancyRisk | None]) -> OccupancyRisk | None:
    """The first reportable answer of ``attempt`` from START_BITS + 32 bits, doubling."""
    bits = START_BITS + 32
    for _ in range(PRECISION_TRIES):
        answer = attempt(bits)
        if answer is not None:
            return answer
        bits *= 2
    return None


#: Most coefficient products of the squared ball polynomials (about 3 ns each at the
#: working precision: some 2 ms; ``occupancy_series.power_pairs``).
POWER_MAX_PAIRS = 700_000


def _power_fits(buckets: int, count: int, rule: Rule, steps: int | None) -> bool:
    """The powering of ball polynomials is within its cost and the recurrence was not run
    (or ran only past its reach: its steps were over ``series.MAX_STEPS``)."""
    pairs = series.power_pairs(buckets, count, rule)
    return (pairs is not None and pairs <= POWER_MAX_PAIRS
            and (steps is None or steps > series.MAX_STEPS))


def _power_answer(buckets: int, count: int, rule: Rule) -> OccupancyRisk | None:
    """ln P from [w^m] B**N formed by squaring ball polynomials (``occupancy_series``):
    positive coefficients, nothing cancels, however far the gap m is past N."""

    def attempt(bits: int) -> OccupancyRisk | None:
        value = series.log_from_top(buckets, count, rule, bits, by_powers=True)
        with precision(bits):
            return _answer_of_balls(buckets, count, rule, value.exp(), -value.expm1(),
                                    POLYNOMIAL_POWER, bits, log_holds=value)

    return _at_doubling_bits(attempt)


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
        if needed > bits and not _truncation_dominates(estimate.truncation,
                                                          estimate.log_holds, bits):
            bits = needed  # |ln P| is large: its absolute accuracy needs more bits
            continue
        with precision(bits):
            value = estimate.log_holds
            if not value.upper() < 0:
                return None
            answer = _answer_of_balls(buckets, count, rule, value.exp(), -value.expm1(),
                                      SADDLE_POINT, bits, log_holds=value)
        if answer is not None:
            return answer
        if _truncation_dominates(estimate.truncation, estimate.log_holds, bits):
            return None  # more bits leave the ball as wide (doubling to 25,296 bits: 58 ms)
        bits *= 2
    return None


def _truncation_dominates(truncation: arb, log_holds: arb, bits: int) -> bool:
    """The truncation estimate of ln P is at least 2**8 times the absolute accuracy that
    more bits would give it (2**-START_BITS), and far above the rounding of ln P at these
    ``bits`` (2**(24 - bits) |ln P|), so that it is the expansion's and not the rounding's:
    the ball cannot get tighter, and the estimate is not formed again at more bits.
    (At 96 bits and |ln P| near 10**476 the rounding alone is some 10**449.)"""
    rounding = abs(log_holds.mid()) * arb(2) ** (24 - bits)
    return bool(truncation.lower() > 2.0 ** (8 - START_BITS)
                and truncation.lower() > rounding.upper())


def _bits_for(log_value: arb) -> int:
    """Working bits that give ln P an absolute accuracy of about 2**-START_BITS."""
    magnitude = abs(log_value.mid())  # a ball: |ln P| may be past the float range
    if not magnitude >= 1:
        return START_BITS
    return START_BITS + int(float(magnitude.log().mid()) / math.log(2)) + 1


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
    first = ball_magnitude(holds, holds_log10, log_holds)
    second = ball_magnitude(fails, fails_log10)
    if first is None or second is None:
        return None
    return OccupancyRisk(buckets, count, rule, first, second, method,
                         max(first.relative_error_bound, second.relative_error_bound),
                         None, bits)


#: Past 2**HUGE_EXPONENT_BITS in size, a decimal text is formed from the logarithm.
HUGE_EXPONENT_BITS = 80_000


def ball_magnitude(x: arb, log10: float | None = None,
                   log_ball: arb | None = None) -> Magnitude | None:
    """Report a positive ball: the float correctly rounded when the ball decides it, else
    the float nearest the midpoint (within the bound); ``None`` if the ball holds 0.

    :param log_ball: ln x, when known: a value past 2**HUGE_EXPONENT_BITS in size takes
        its decimal text from it (as the pairwise risk does), not from a power of ten with
        tens of thousands of digits (some 0.3 s at 2**8000 values).
    """
    error = balls.relative_radius(x)
    if error is None:
        return None
    value = balls.to_real(x)
    if log_ball is not None and abs(value[2] + value[3]) > HUGE_EXPONENT_BITS:
        found = reporting.bounded_magnitude_of_log(value, balls.to_real(log_ball), error)
    else:
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
    mantissa, _, exponent = probability.decimal.partition("e")
    whole, _, fraction = mantissa.partition(".")
    digits = int(whole + fraction)  # d = digits * 10**shift, exactly
    shift = int(exponent or 0) - len(fraction)
    error = probability.relative_error_bound
    # 10**-shift as a power of a ball, not the integer of a Fraction: at 1e-531189 the
    # conversion of that integer took 49 ms
    with precision(128 + abs(shift).bit_length()):
        value = arb(10) ** -shift / digits
        spread = arb(error) / (1 - arb(error)) if error else arb(0)
        found = ball_magnitude(balls.widened(value, value * spread), 0.0 - probability.log10)
    return found
