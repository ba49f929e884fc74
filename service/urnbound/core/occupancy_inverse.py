"""Inverse occupancy questions as families for the certified search of ``core/search.py``.

* :func:`smallest_load`: the smallest load k such that the chance of any bucket reaching
  k is at most max_risk (falling in k). Loads up to ceil(n/N) are reached surely
  (pigeonhole) and loads past n never; first guess from the Poisson clumping heuristic
  1 - exp(-N P(Binomial(n, 1/N) >= k)) = max_risk, solved by bisection in floats
  (``occupancy_guesses``), then moved once by the ratio the heuristic misses by at the
  guess (one engine answer).
* :func:`fewest_draws`: the smallest n such that every one of N buckets is used at least
  a times with probability at least q, that is P(some bucket used fewer than a times)
  <= 1 - q (falling in n). Below a N draws it fails surely; the top of the range is a
  count at which the union bound N P(Binomial(n, 1/N) < a) is proven below 1 - q,
  so the range holds the answer. First guess from exp(-N P(Binomial(n, 1/N) < a)) = q,
  polished by at most ``NEWTON_STEPS`` Newton steps on engine answers.

A comparison uses the engine's answer (decimal text and proven relative bound) as the
interval; it falls back to exact counts where their cost allows. Every engine answer a
search computes is kept by index (one search's own memo), so that a guess, the search's
comparisons and the reported figures never ask the engine twice for the same index.
Answers at the guess and next to it are asked with the engine's full target (they are
the likely answer and its neighbour, reported as they are); the others with
``SEARCH_BOUND``, which any comparison needs at most. A reported figure is an answer
asked with the full target, or one the engine would give unchanged with it: its bound
reaches that target, or is above the bound it was asked with while the methods' order is
the same under both (``occupancy.same_under_full_target``, ``_EngineFamily.final``).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction

from flint import arb
from mpmath import libmp

from urnbound.core import balls
from urnbound.core.balls import precision
from urnbound.core.errors import DomainError, NoConvergence
from urnbound.core.occupancy import (
    EXACT_FIRST_COST,
    EXACT_MAX_COST,
    TARGET_BOUND,
    occupancy_risk,
    same_under_full_target,
)
from urnbound.core.occupancy_exact import allowed_outcomes, exact_cost
from urnbound.core.occupancy_guesses import (
    log_binomial_pmf,
    log_expected_at_least,
    log_expected_below,
    log_hazard,
    log_hazard_of,
)
from urnbound.core.occupancy_results import AT_LEAST, BELOW, OccupancyRisk, Rule
from urnbound.core.precision import Real
from urnbound.core.results import EXACT
from urnbound.core.saddle import float_log_holds
from urnbound.core.search import RiskInterval, certified_boundary

#: Doublings of the draw count while looking for a proven top of the range.
MAX_DOUBLINGS = 200
#: Newton steps that polish the first guess of the fewest draws (each one engine answer).
NEWTON_STEPS = 2
#: Engine answers that correct the first guess of the smallest load, at most.
LOAD_STEPS = 6
#: Up to this many buckets and from this max_risk, the smallest load's guesses come from
#: the float saddle point: the clumping heuristic misses there (the items' fixed total
#: ties the buckets together), while it is close in the tail, where breaking is rare.
SADDLE_GUESS_BUCKETS = 10_000
SADDLE_GUESS_RISK = Fraction(1, 1_000)
#: A corrected guess this close to the one before is asked with the full target.
CLOSE_STEP = 8
#: The bound an engine answer needs inside a search: a comparison with a budget is settled
#: by any interval that does not straddle it, and an undecided one falls back to exact.
SEARCH_BOUND = 2.0**-20


@dataclass(frozen=True, slots=True)
class LoadAnswer:
    """The smallest load within max_risk, and the risks on both sides of it.

    :ivar load: the smallest k with P(some bucket holds >= k) <= max_risk, proven.
    :ivar at_load: the risk at ``load``.
    :ivar one_lower: the risk at ``load - 1`` (above max_risk); ``None`` when load is 1.
    """

    buckets: int
    count: int
    max_risk: Fraction
    load: int
    at_load: OccupancyRisk
    one_lower: OccupancyRisk | None


@dataclass(frozen=True, slots=True)
class DrawsAnswer:
    """The fewest draws that use every bucket at least a times with probability >= q.

    :ivar draws: that smallest n, proven: ``at_draws`` reaches q, ``one_fewer`` does not.
    :ivar one_fewer: the figures at ``draws - 1``, which fall short of the target.
    """

    buckets: int
    at_least: int
    target: Fraction
    draws: int
    at_draws: OccupancyRisk
    one_fewer: OccupancyRisk


def smallest_load(buckets: int, count: int, max_risk: Fraction) -> LoadAnswer:
    """The smallest load k with P(some bucket holds at least k items) <= max_risk.

    >>> smallest_load(365, 88, Fraction(1, 2)).load  # three share a day: just above 1/2
    4
    """
    _check_target(max_risk, "max_risk")
    family = LoadFamily(buckets, count)
    boundary = certified_boundary(family, max_risk)
    if boundary is None:  # pragma: no cover - load count + 1 has risk 0 and passes
        raise NoConvergence("no load passes, yet none exceeds the count")
    load = boundary.index
    lower = family.final(load - 1) if load > 1 else None
    return LoadAnswer(buckets, count, max_risk, load, family.final(load), lower)


def fewest_draws(buckets: int, at_least: int, target: Fraction) -> DrawsAnswer:
    """The smallest n with P(every bucket used at least ``at_least`` times) >= target.

    >>> fewest_draws(50, 1, Fraction(1, 2)).draws
    214
    """
    _check_target(target, "target")
    family = CoverFamily(buckets, at_least, _top_draws(buckets, at_least, 1 - target))
    boundary = certified_boundary(family, 1 - target)
    if boundary is None:  # pragma: no cover - the top of the range is proven to pass
        raise NoConvergence("no draw count passes, yet the top of the range is proven")
    draws = boundary.index
    return DrawsAnswer(buckets, at_least, target, draws, family.final(draws),
                       family.final(draws - 1))


def _check_target(value: Fraction, field: str) -> None:
    if not 0 < value < 1:
        raise DomainError(f"{field} must be greater than 0 and less than 1", field=field)


def _interval(answer: OccupancyRisk) -> RiskInterval | None:
    """The answer's decimal texts and bounds as a search interval (risk = ``fails``)."""
    fails, holds = answer.fails, answer.holds
    if fails.log10 is None or holds.log10 is None:
        return None
    return RiskInterval(_decimal_real(fails.decimal), libmp.from_float(fails.relative_error_bound),
                        _decimal_real(holds.decimal), libmp.from_float(holds.relative_error_bound),
                        64)


def _decimal_real(text: str) -> Real:
    """The decimal text as an exact binary fraction rounded to 128 bits."""
    value = Fraction(text)
    return libmp.from_rational(value.numerator, value.denominator, 128, libmp.round_nearest)


class _EngineFamily:
    """What both families share: one engine answer per index, kept, exact where cheap.

    :ivar found: the engine answers computed so far, by index, each with the target it
        was asked with.
    :ivar focus: the index the first guess settled on (answers next to it are asked with
        the full target).
    """

    __slots__ = ("buckets", "found", "focus")

    def __init__(self, buckets: int) -> None:
        self.buckets = buckets
        self.found: dict[int, tuple[OccupancyRisk, float]] = {}
        self.focus: int | None = None

    def _rule(self, index: int) -> Rule:
        raise NotImplementedError

    def _count(self, index: int) -> int:
        raise NotImplementedError

    def answer(self, index: int, target: float) -> OccupancyRisk:
        """The engine's answer at ``index``: a kept one if there is one, else computed."""
        kept = self.found.get(index)
        if kept is not None:
            return kept[0]
        found = occupancy_risk(self.buckets, self._count(index), self._rule(index),
                               target=target)
        self.found[index] = (found, target)
        return found

    def final(self, index: int) -> OccupancyRisk:
        """The answer the engine gives at ``index`` with its full target (module docstring)."""
        kept = self.found.get(index)
        if kept is not None and (kept[1] <= TARGET_BOUND or same_under_full_target(
                self.buckets, self._count(index), self._rule(index), kept[1], kept[0])):
            return kept[0]
        found = occupancy_risk(self.buckets, self._count(index), self._rule(index))
        self.found[index] = (found, TARGET_BOUND)
        return found

    def start_bits(self, index: int) -> int:
        return 64

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        """The engine's answer as an interval: at the first try asked with the search's
        bound (the full target next to the focus), at the second with the full target;
        the engine's answer does not sharpen with more bits after that."""
        if bits > 2 * self.start_bits(index):
            return None
        if bits > self.start_bits(index):
            return _interval(self.final(index))
        near = self.focus is not None and abs(index - self.focus) <= 1
        return _interval(self.answer(index, TARGET_BOUND if near else SEARCH_BOUND))

    def exact_first(self, index: int) -> bool:
        cost = exact_cost(self.buckets, self._count(index), self._rule(index))
        return cost <= EXACT_FIRST_COST

    def exact_allowed(self, index: int) -> bool:
        cost = exact_cost(self.buckets, self._count(index), self._rule(index))
        return cost <= EXACT_MAX_COST

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:
        if self.exact_first(index):  # the engine answers exactly there: its answer is kept
            kept = self.answer(index, TARGET_BOUND)
            if kept.method == EXACT and kept.exact is not None:
                return kept.exact <= max_risk
        found = allowed_outcomes(self.buckets, self._count(index), self._rule(index))
        return (found.total - found.allowed) * max_risk.denominator <= (
            max_risk.numerator * found.total)


class LoadFamily(_EngineFamily):
    """P(some bucket holds >= k) over loads k = 1 .. n + 1 (falling in k)."""

    __slots__ = ("count", "saddle_model")

    def __init__(self, buckets: int, count: int) -> None:
        super().__init__(buckets)
        self.count = count
        self.saddle_model = False

    def _rule(self, index: int) -> Rule:
        return Rule(BELOW, index)

    def _count(self, index: int) -> int:
        return self.count

    @property
    def lowest(self) -> int:
        return 1

    @property
    def highest(self) -> int:
        return self.count + 1

    @property
    def rising(self) -> bool:
        return False

    def known(self, index: int) -> Fraction | None:
        if index > self.count:
            return Fraction(0)
        if index <= -(-self.count // self.buckets):
            return Fraction(1)
        return None

    def first_guess(self, max_risk: Fraction) -> int:
        """The heuristic's load, then at most ``LOAD_STEPS`` engine answers correcting it.

        The first answer moves the guess by the ratio the heuristic misses by there (its
        shift in ln of the hazard); later ones by the secant through the last two answers'
        log-hazards, where the heuristic's slope is off too (few buckets, where the items'
        fixed total ties the buckets together). The answers are kept for the search; the
        first, and any within ``CLOSE_STEP`` of the one before, are asked with the full
        target (the guess is then usually the answer or next to it).
        """
        wanted = log_hazard_of(max_risk)
        guess = self._solve(wanted)
        if self.buckets <= SADDLE_GUESS_BUCKETS and max_risk >= SADDLE_GUESS_RISK:
            self.saddle_model = True  # placed from the heuristic's load (``_solve``)
            guess = self._solve(wanted, guess)
        seen: list[tuple[int, float]] = []
        for step in range(LOAD_STEPS):
            if self.known(guess) is not None or any(abs(guess - k) <= 1 for k, _ in seen):
                break
            self.focus = guess
            close = step == 0 or abs(guess - seen[-1][0]) <= CLOSE_STEP
            actual = log_hazard(self.answer(guess, TARGET_BOUND if close else SEARCH_BOUND))
            if actual is None:
                break
            seen.append((guess, actual - wanted))
            guess = self._next_guess(seen, wanted)
        self.focus = guess
        return guess

    def _next_guess(self, seen: list[tuple[int, float]], wanted: float) -> int:
        """The shift correction after one answer, the secant after two (see first_guess)."""
        (last, miss), previous = seen[-1], seen[-2] if len(seen) > 1 else None
        if previous is None or previous[1] == miss:
            shift = miss + wanted - self._model(last)
            return self._solve(wanted - shift, last)
        slope = (miss - previous[1]) / (last - previous[0])
        step = -miss / slope
        low, high = max(1, -(-self.count // self.buckets)), self.count + 1
        return min(max(last + round(step), low), high)

    def _solve(self, wanted: float, near: int | None = None) -> int:
        """The smallest k whose float estimate (``_model``) is at most ``wanted``
        (:func:`_first_passing`, from ``near`` when given)."""
        low, high = max(1, -(-self.count // self.buckets)), self.count + 1
        return _first_passing(lambda load: self._model(load) <= wanted, low, high, near)

    def _model(self, load: int) -> float:
        """The float estimate of ln(-ln P(no bucket reaches ``load``)) the guesses use:
        the clumping heuristic ln(N P(>= k)), or for few buckets the float saddle point
        (falling back to the heuristic where its floats fail)."""
        if self.saddle_model:
            found = self._saddle_hazard(load)
            if found is not None:
                return found
        return log_expected_at_least(self.buckets, self.count, load)

    def _saddle_hazard(self, load: int) -> float | None:
        """ln(-ln P) from :func:`saddle.float_log_holds`; ``None`` where it has none."""
        if self.known(load) is not None:
            return None
        log_holds = float_log_holds(self.buckets, self.count, Rule(BELOW, load))
        return math.log(-log_holds) if log_holds is not None and log_holds < 0 else None


class CoverFamily(_EngineFamily):
    """P(some bucket used fewer than a times) over draws n = a N .. top (falling in n)."""

    __slots__ = ("level", "top", "saddle_model")

    def __init__(self, buckets: int, level: int, top: int) -> None:
        super().__init__(buckets)
        self.level = level
        self.top = top
        self.saddle_model = False

    def _rule(self, index: int) -> Rule:
        return Rule(AT_LEAST, self.level)

    def _count(self, index: int) -> int:
        return index

    @property
    def lowest(self) -> int:
        return self.level * self.buckets

    @property
    def highest(self) -> int:
        return self.top

    @property
    def rising(self) -> bool:
        return False

    def known(self, index: int) -> Fraction | None:
        return Fraction(1) if index < self.level * self.buckets else None

    def first_guess(self, max_risk: Fraction) -> int:
        wanted = log_hazard_of(max_risk)
        low, high = self.lowest, self.top
        for _ in range(high.bit_length() + 2):
            if high - low <= 1:
                break
            middle = (low + high) // 2
            if log_expected_below(self.buckets, middle, self.level) <= wanted:
                high = middle
            else:
                low = middle
        log_target = _log_of_complement(max_risk)
        if self.buckets <= SADDLE_GUESS_BUCKETS and max_risk >= SADDLE_GUESS_RISK:
            high = self._saddle_placed(high, log_target)
        self.focus = self._polished(high, log_target)
        return self.focus

    def _model(self, count: int) -> float | None:
        """ln P(covered) from the float saddle point (``saddle.float_log_holds``)."""
        if count < self.lowest:
            return None
        return float_log_holds(self.buckets, count, Rule(AT_LEAST, self.level))

    def _saddle_placed(self, guess: int, log_target: float) -> int:
        """Few buckets: the smallest n whose float saddle point reaches the target, from the
        heuristic's guess (which misses there, as the loads' does); the guess itself where
        the floats fail. Sets ``saddle_model`` for the Newton steps' slope."""
        if self._model(guess) is None:
            return guess
        self.saddle_model = True

        def passes(count: int) -> bool:
            found = self._model(count)
            return found is not None and found >= log_target

        return _first_passing(passes, self.lowest - 1, self.top, guess)

    def _slope(self, count: int) -> float:
        """d ln P / dn at n: the float saddle point's difference where it is used, else the
        heuristic's P(Binomial(n - 1, 1/N) = a - 1) (``_polished``)."""
        if self.saddle_model:
            here, following = self._model(count), self._model(count + 1)
            if here is not None and following is not None and following > here:
                return following - here
        return max(math.exp(log_binomial_pmf(count - 1, 1 / self.buckets, self.level - 1)),
                   1e-300)

    def _polished(self, guess: int, log_target: float) -> int:
        """Newton steps on ln P(covered) with the engine's value and the heuristic's slope.

        d ln P / dn is about P(Binomial(n - 1, 1/N) = a - 1), the slope of
        -N P(Binomial(n, 1/N) < a);
        the steps are uncertified (the search proves the answer), at most NEWTON_STEPS,
        and none is taken that twice the answer's own error could account for.
        """
        count = guess
        for _ in range(NEWTON_STEPS):
            if not self.lowest < count < self.top:
                return count
            found = self.answer(count, SEARCH_BOUND)  # kept for the search
            log10 = found.holds.log10
            if log10 is None:
                return count
            slope = self._slope(count)
            step = (log_target - log10 * math.log(10)) / slope
            if abs(step) < 1 or abs(step) <= 2 * _log_holds_error(found) / slope:
                return count  # (a step within the answer's own error would only wander)
            count = min(max(count + round(step), self.lowest), self.top)
        return count


def _first_passing(passes: Callable[[int], bool], low: int, high: int,
                   near: int | None = None) -> int:
    """The smallest index in (low, high] that ``passes`` (monotone; high taken to pass,
    low not), by bisection; from ``near``, the bracket is first found by steps doubling
    away from it (a float saddle point costs some 30 us an estimate: a few, not twenty)."""
    if near is not None and low < near < high:
        low, high = _bracket(passes, near, low, high)
    for _ in range(high.bit_length() + 2):
        if high - low <= 1:
            break
        middle = (low + high) // 2
        if passes(middle):
            high = middle
        else:
            low = middle
    return high


def _bracket(passes: Callable[[int], bool], near: int, low: int,
             high: int) -> tuple[int, int]:
    """(low, high) around ``near``, the first failing (or the range's bottom), the second
    passing (or its top), by doubling steps from ``near``."""
    passing = passes(near)
    step = 1
    for _ in range(high.bit_length() + 2):
        candidate = near - step if passing else near + step
        if passing and (candidate <= low or not passes(candidate)):
            return max(candidate, low), near
        if not passing and (candidate >= high or passes(candidate)):
            return near, min(candidate, high)
        near, step = candidate, step * 2
    return low, high


def _log_of_complement(max_risk: Fraction) -> float:
    """ln(1 - max_risk) in floats, from log1p where 1 - max_risk is near 1 (a target such
    as 0.999999999 as a float is off by 1e-16, some 10**5 draws at 10**12 buckets)."""
    if max_risk < Fraction(1, 2):
        return math.log1p(-float(max_risk))
    rest = 1 - max_risk
    return math.log(float(rest)) if rest > Fraction(1, 10**300) else -690.0


def _log_holds_error(answer: OccupancyRisk) -> float:
    """About how far the answer's ln P(the rule holds) may be off: its relative bound on
    P, or on 1 - P times 1 - P where that is smaller (P near 1)."""
    fails = answer.fails
    return min(answer.holds.relative_error_bound, fails.value * fails.relative_error_bound)


def _top_draws(buckets: int, level: int, max_risk: Fraction) -> int:
    """A count n at which N P(Binomial(n, 1/N) < a) <= max_risk is proven (union bound)."""
    count = max(level * buckets, 1)
    target = arb(max_risk.numerator) / max_risk.denominator
    for _ in range(MAX_DOUBLINGS):
        with precision(96):
            bound = buckets * balls.binomial_below(count, arb(1) / buckets, level)
            if bound.upper() <= target.lower():
                return count
        count *= 2
    raise NoConvergence("no draw count within reach proves the coverage target")
