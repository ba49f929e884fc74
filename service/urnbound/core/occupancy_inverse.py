"""Inverse occupancy questions as families for the certified search of ``core/search.py``.

* :func:`smallest_load`: the smallest load k such that the chance of any bucket reaching
  k is at most max_risk (falling in k). Loads up to ceil(n/N) are reached surely
  (pigeonhole) and loads past n never; first guess from the Poisson clumping heuristic
  1 - exp(-N P(Binomial(n, 1/N) >= k)) = max_risk, solved by bisection in floats.
* :func:`fewest_draws`: the smallest n such that every one of N buckets is used at least
  a times with probability at least q, that is P(some bucket used fewer than a times)
  <= 1 - q (falling in n). Below a N draws it fails surely; the top of the range is a
  count at which the union bound N P(Binomial(n, 1/N) < a) is proven below 1 - q,
  so the range holds the answer. First guess from exp(-N P(Poisson(n/N) < a)) = q.

A comparison uses the engine's answer (decimal text and proven relative bound) as the
interval; it falls back to exact counts where their cost allows.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

from flint import arb
from mpmath import libmp

from urnbound.core import balls
from urnbound.core.balls import precision
from urnbound.core.errors import DomainError, NoConvergence
from urnbound.core.occupancy import EXACT_FIRST_COST, EXACT_MAX_COST, occupancy_risk
from urnbound.core.occupancy_exact import allowed_outcomes, exact_cost
from urnbound.core.occupancy_results import AT_LEAST, BELOW, OccupancyRisk, Rule
from urnbound.core.precision import Real
from urnbound.core.search import RiskInterval, certified_boundary

#: Doublings of the draw count while looking for a proven top of the range.
MAX_DOUBLINGS = 200
#: Newton steps that polish the first guess of the fewest draws (each one engine answer).
NEWTON_STEPS = 2
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
    lower = occupancy_risk(buckets, count, Rule(BELOW, load - 1)) if load > 1 else None
    return LoadAnswer(buckets, count, max_risk, load,
                      occupancy_risk(buckets, count, Rule(BELOW, load)), lower)


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
    rule = Rule(AT_LEAST, at_least)
    draws = boundary.index
    return DrawsAnswer(buckets, at_least, target, draws, occupancy_risk(buckets, draws, rule),
                       occupancy_risk(buckets, draws - 1, rule))


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
    """What both families share: one engine answer per index, exact where cheap."""

    __slots__ = ()

    def _rule(self, index: int) -> Rule:
        raise NotImplementedError

    def _point(self, index: int) -> tuple[int, int]:
        raise NotImplementedError

    def start_bits(self, index: int) -> int:
        return 64

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        if bits > 64:
            return None  # the engine's answer does not sharpen with more bits
        buckets, count = self._point(index)
        return _interval(occupancy_risk(buckets, count, self._rule(index),
                                        target=SEARCH_BOUND))

    def exact_first(self, index: int) -> bool:
        buckets, count = self._point(index)
        return exact_cost(buckets, count, self._rule(index)) <= EXACT_FIRST_COST

    def exact_allowed(self, index: int) -> bool:
        buckets, count = self._point(index)
        return exact_cost(buckets, count, self._rule(index)) <= EXACT_MAX_COST

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:
        buckets, count = self._point(index)
        found = allowed_outcomes(buckets, count, self._rule(index))
        return (found.total - found.allowed) * max_risk.denominator <= (
            max_risk.numerator * found.total)


@dataclass(frozen=True, slots=True)
class LoadFamily(_EngineFamily):
    """P(some bucket holds >= k) over loads k = 1 .. n + 1 (falling in k)."""

    buckets: int
    count: int

    def _rule(self, index: int) -> Rule:
        return Rule(BELOW, index)

    def _point(self, index: int) -> tuple[int, int]:
        return self.buckets, self.count

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
        hazard = -math.log1p(-float(max_risk)) if max_risk < Fraction(1, 2) else (
            -math.log(float(1 - max_risk)) if 1 - max_risk > Fraction(1, 10**300) else 690.0)
        wanted = math.log(max(hazard, 1e-300))
        guess = self._solve(wanted)
        if self.known(guess) is not None:
            return guess
        # One engine answer corrects the heuristic by the ratio it misses by at the guess.
        answer = occupancy_risk(self.buckets, self.count, Rule(BELOW, guess),
                                target=SEARCH_BOUND)
        actual = _log_hazard(answer)
        if actual is None:
            return guess
        shift = actual - _log_expected_at_least(self.buckets, self.count, guess)
        return self._solve(wanted - shift)

    def _solve(self, wanted: float) -> int:
        """The smallest k whose float estimate ln(N P(>= k)) is at most ``wanted``."""
        low, high = max(1, -(-self.count // self.buckets)), self.count + 1
        for _ in range(high.bit_length() + 2):
            if high - low <= 1:
                break
            middle = (low + high) // 2
            if _log_expected_at_least(self.buckets, self.count, middle) <= wanted:
                high = middle
            else:
                low = middle
        return high


def _log_hazard(answer: OccupancyRisk) -> float | None:
    """ln(-ln P(no bucket reaches the load)) from an engine answer."""
    holds, fails = answer.holds, answer.fails
    if holds.log10 is None or fails.log10 is None:
        return None
    if fails.log10 < -8:  # -ln(1 - r) = r (1 + r/2 + ...)
        return fails.log10 * math.log(10)
    return math.log(-holds.log10 * math.log(10))


def _log_expected_at_least(buckets: int, count: int, k: int) -> float:
    """ln(N P(Binomial(n, 1/N) >= k)) in floats: the first term and a geometric tail."""
    if k > count:
        return -math.inf
    if k <= 0:
        return math.log(buckets)
    p = 1.0 / buckets
    log_pmf = (math.lgamma(count + 1) - math.lgamma(k + 1) - math.lgamma(count - k + 1)
               + k * math.log(p) + (count - k) * math.log1p(-p))
    ratio = (count - k) * p / ((k + 1) * (1 - p))
    if ratio > 0.9:  # near the bulk: the normal tail with a continuity correction
        spread = math.sqrt(count * p * (1 - p))
        upper = 0.5 * math.erfc((k - 0.5 - count * p) / (spread * math.sqrt(2)))
        return math.log(buckets) + math.log(max(upper, 1e-300))
    tail = -math.log1p(-ratio)
    return math.log(buckets) + min(log_pmf + tail, 0.0)


@dataclass(frozen=True, slots=True)
class CoverFamily(_EngineFamily):
    """P(some bucket used fewer than a times) over draws n = a N .. top (falling in n)."""

    buckets: int
    level: int
    top: int

    def _rule(self, index: int) -> Rule:
        return Rule(AT_LEAST, self.level)

    def _point(self, index: int) -> tuple[int, int]:
        return self.buckets, index

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
        wanted = _log_hazard_of_complement(max_risk)
        low, high = self.lowest, self.top
        for _ in range(high.bit_length() + 2):
            if high - low <= 1:
                break
            middle = (low + high) // 2
            if _log_expected_below(self.buckets, middle, self.level) <= wanted:
                high = middle
            else:
                low = middle
        return self._polished(high, math.log(float(1 - max_risk)) if 1 - max_risk > Fraction(
            1, 10**300) else -690.0)

    def _polished(self, guess: int, log_target: float) -> int:
        """Newton steps on ln P(covered) with the engine's value and the heuristic's slope.

        d ln P / dn is about P(Poisson(n/N) = a - 1), the slope of -N P(Poisson(n/N) < a);
        the steps are uncertified (the search proves the answer), at most NEWTON_STEPS.
        """
        count = guess
        for _ in range(NEWTON_STEPS):
            if not self.lowest < count < self.top:
                return count
            log10 = occupancy_risk(self.buckets, count, Rule(AT_LEAST, self.level),
                                   target=SEARCH_BOUND).holds.log10
            if log10 is None:
                return count
            mean = count / self.buckets
            slope = math.exp((self.level - 1) * math.log(mean) - mean - math.lgamma(self.level))
            step = (log_target - log10 * math.log(10)) / max(slope, 1e-300)
            if abs(step) < 1:
                return count
            count = min(max(count + round(step), self.lowest), self.top)
        return count


def _log_hazard_of_complement(max_risk: Fraction) -> float:
    """ln(-ln(1 - max_risk)): the clumping heuristic's target for N P(bucket short)."""
    if max_risk < Fraction(1, 2):
        return math.log(max(-math.log1p(-float(max_risk)), 1e-300))
    rest = 1 - max_risk  # q itself, possibly tiny
    natural = -math.log(float(rest)) if rest > Fraction(1, 10**300) else 700.0
    return math.log(natural)


def _log_expected_below(buckets: int, count: int, level: int) -> float:
    """ln(N P(Poisson(n/N) < a)) in floats (an estimate for the first guess)."""
    mean = count / buckets
    terms = [j * math.log(mean) - mean - math.lgamma(j + 1) for j in range(level)]
    top = max(terms)
    return math.log(buckets) + top + math.log(sum(math.exp(t - top) for t in terms))


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
