"""One certified search for every inverse question: the boundary of a monotone risk.

An inverse question asks for the integer index (a count, a length, a number of bits)
at which a risk that is monotone in that index crosses a budget ``max_risk``. Every
such question is a :class:`MonotoneRisk` family handed to :func:`certified_boundary`,
which returns the boundary with both of its sides proven: the answer passes
(risk <= max_risk) and its neighbour on the far side fails (risk > max_risk).

First guess. The family supplies it (:meth:`MonotoneRisk.first_guess`): a closed form
of the leading-order risk solved for the index, which a family may polish with a few
uncertified Newton steps. The guess only decides where the search starts, never the
answer, so an inaccurate guess costs comparisons, not correctness.

Certain comparison. ``risk(i) <= max_risk`` is decided by :func:`certified_at_most`:

1. a risk the family knows without arithmetic (0 or 1) is compared exactly;
2. a comparison the family rates as cheap exactly is made exactly at once;
3. otherwise the family's interval evaluation gives the risk and its complement,
   each with a proven relative error bound; the comparison is settled only when the
   whole interval lies on one side of the target, and is tried again at doubled
   precision, at most ``MAX_INTERVAL_TRIES`` times (start precision s: s, 2s, 4s, 8s,
   16s bits). Targets above 1/2 are compared on the complement (q >= 1 - max_risk),
   so nothing is rounded near 1 and the complement, which may be tiny, keeps its own
   relative accuracy;
4. when no interval decides, the exact comparison settles it if the family allows it
   (within its cost limit), else :class:`NoConvergence` is raised: the answer is
   never taken from an undecided interval.

Search. With sentinels (the index below the range counts as passing, the index past
it as failing, neither ever evaluated) the search gallops from the guess away from
the side it falls on (steps 1, 2, 4, ...) until it has a (passing, failing) bracket,
then bisects it to adjacent indices. A range of R indices takes at most
bit_length(R + 1) + 1 gallop comparisons plus as many bisection comparisons, plus the
first: at most ``2 * bit_length(R + 1) + 3`` comparisons, each at most
``MAX_INTERVAL_TRIES`` interval evaluations and one exact comparison. A guess within
one of the boundary (the usual case) costs two or three comparisons.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import Protocol

from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core.errors import NoConvergence
from urnbound.core.precision import Real

#: Interval evaluations of one comparison, the precision doubling after each.
MAX_INTERVAL_TRIES = 5
#: Guard bits on top of the interval's precision when rounding the target.
TARGET_GUARD_BITS = 16


@dataclass(frozen=True, slots=True)
class RiskInterval:
    """A risk and its complement, each with a proven bound on its relative error.

    :ivar risk: the risk, as computed.
    :ivar risk_error: e with |risk_computed - risk_true| <= e * risk_true.
    :ivar complement: 1 - risk, as computed (with its own relative accuracy).
    :ivar complement_error: the same bound for ``complement``.
    :ivar prec: binary precision the values were computed at.
    """

    risk: Real
    risk_error: Real
    complement: Real
    complement_error: Real
    prec: int


class MonotoneRisk(Protocol):
    """An integer-indexed family of risks, monotone in the index.

    ``rising`` families (counts, draws, time) have a risk that grows with the index;
    the answer is the largest passing index. Falling ones (lengths, bits, the k of a
    k-fold coincidence) have a risk that shrinks; the answer is the smallest passing
    index. The search looks only at indices in ``[lowest, highest]``.
    """

    @property
    def lowest(self) -> int: ...

    @property
    def highest(self) -> int: ...

    @property
    def rising(self) -> bool: ...

    def first_guess(self, max_risk: Fraction) -> int:
        """Where the boundary is expected (any integer; the search clamps it)."""

    def known(self, index: int) -> Fraction | None:
        """The exact risk when it is known without arithmetic (e.g. 0 or 1), else ``None``."""

    def start_bits(self, index: int) -> int:
        """Precision of the first interval evaluation at ``index``."""

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        """The risk at ``index`` to about ``bits`` bits, or ``None`` if not available."""

    def exact_first(self, index: int) -> bool:
        """True when the exact comparison is cheaper than an interval evaluation."""

    def exact_allowed(self, index: int) -> bool:
        """True when the exact comparison at ``index`` is within its cost limit."""

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:
        """risk(index) <= max_risk, decided with exact arithmetic."""


class RisingSeconds:
    """The bounds of a family over whole seconds ``first`` .. ``last`` whose risk rises in
    time (budgets running out); the family holds ``first`` and ``last``."""

    __slots__ = ()
    first: int
    last: int

    @property
    def lowest(self) -> int:
        return self.first

    @property
    def highest(self) -> int:
        return self.last

    @property
    def rising(self) -> bool:
        return True


@dataclass(frozen=True, slots=True)
class SearchCost:
    """What one search spent: for the benchmark and for tests of its bound.

    :ivar guess: the first guess, clamped to the range.
    :ivar comparisons: certified comparisons of a risk with max_risk.
    :ivar intervals: interval evaluations, over all precisions tried.
    :ivar exact: comparisons settled by exact arithmetic.
    """

    guess: int
    comparisons: int
    intervals: int
    exact: int


@dataclass(frozen=True, slots=True)
class Boundary:
    """The answer of a certified search and the neighbour that proves it tight.

    :ivar index: the largest passing index of a rising family, the smallest of a
        falling one.
    :ivar neighbour: ``index + 1`` (rising) or ``index - 1`` (falling), proven to fail;
        ``None`` when it lies outside the searched range.
    :ivar cost: what the search spent.
    """

    index: int
    neighbour: int | None
    cost: SearchCost


class _Tally:
    """Counts of the work one search does (local to a single call)."""

    __slots__ = ("comparisons", "intervals", "exact")

    def __init__(self) -> None:
        self.comparisons = 0
        self.intervals = 0
        self.exact = 0


def certified_boundary(family: MonotoneRisk, max_risk: Fraction) -> Boundary | None:
    """The boundary of ``family`` at ``max_risk``, or ``None`` if no index in range passes.

    :raises ValueError: unless 0 < max_risk < 1.
    :raises NoConvergence: when a comparison cannot be decided (see module docstring).

    >>> from urnbound.core.inverse import CountFamily
    >>> b = certified_boundary(CountFamily(365), Fraction(1, 2))
    >>> b.index, b.neighbour, b.cost.comparisons <= 3
    (22, 23, True)
    """
    if not 0 < max_risk < 1:
        raise ValueError("max_risk must lie strictly between 0 and 1")
    low, high = family.lowest, family.highest
    if high < low:
        return None
    tally = _Tally()
    sign = 1 if family.rising else -1
    guess = min(max(family.first_guess(max_risk), low), high)

    # Position p = sign * index: passing positions form a prefix of [start, stop].
    start, stop = (low, high) if sign > 0 else (-high, -low)

    def passes(position: int) -> bool:
        if position < start:
            return True  # sentinel below the range
        if position > stop:
            return False  # sentinel past the range
        tally.comparisons += 1
        return certified_at_most(family, sign * position, max_risk, tally)

    passing, failing = _bracket(passes, sign * guess, start, stop)
    passing = _bisect(passes, passing, failing, stop - start + 2)
    cost = SearchCost(guess, tally.comparisons, tally.intervals, tally.exact)
    if passing < start:
        return None
    neighbour = passing + 1 if passing + 1 <= stop else None
    return Boundary(sign * passing, None if neighbour is None else sign * neighbour, cost)


def _bracket(passes: _Predicate, guess: int, start: int, stop: int) -> tuple[int, int]:
    """Adjacent-or-not (passing, failing) positions found galloping from ``guess``.

    At most bit_length(stop - start + 2) + 1 probes: the step doubles each time and
    the probes are clamped to the sentinels start - 1 and stop + 1.
    """
    bound = (stop - start + 2).bit_length() + 1
    if passes(guess):
        passing, step = guess, 1
        for _ in range(bound + 1):
            probe = min(passing + step, stop + 1)
            if not passes(probe):
                return passing, probe
            passing, step = probe, 2 * step
    else:
        failing, step = guess, 1
        for _ in range(bound + 1):
            probe = max(failing - step, start - 1)
            if passes(probe):
                return probe, failing
            failing, step = probe, 2 * step
    raise NoConvergence("the gallop did not reach the end of the range")


def _bisect(passes: _Predicate, passing: int, failing: int, width: int) -> int:
    """The last passing position of a bracket, by bisection (at most bit_length(width))."""
    for _ in range(width.bit_length() + 1):
        if failing - passing <= 1:
            return passing
        middle = (passing + failing) // 2
        if passes(middle):
            passing = middle
        else:
            failing = middle
    raise NoConvergence("bisection did not close the bracket")


class _Predicate(Protocol):
    def __call__(self, position: int, /) -> bool: ...


def certified_at_most(
    family: MonotoneRisk, index: int, max_risk: Fraction, tally: _Tally | None = None
) -> bool:
    """risk(index) <= max_risk, decided with certainty (module docstring, steps 1-4).

    >>> from urnbound.core.inverse import CountFamily
    >>> family = CountFamily(2**64)
    >>> certified_at_most(family, 6_074_001, Fraction(1, 10**6))
    True
    >>> certified_at_most(family, 6_074_005, Fraction(1, 10**6))
    False
    """
    tally = tally if tally is not None else _Tally()
    known = family.known(index)
    if known is not None:
        return known <= max_risk
    if not (family.exact_allowed(index) and family.exact_first(index)):
        bits = family.start_bits(index)
        for _ in range(MAX_INTERVAL_TRIES):
            interval = family.interval(index, bits)
            if interval is None:
                break
            tally.intervals += 1
            verdict = interval_verdict(interval, max_risk)
            if verdict is not None:
                return verdict
            bits *= 2
    if family.exact_allowed(index):
        tally.exact += 1
        return family.exact_at_most(index, max_risk)
    raise NoConvergence(
        "the risk is too close to max_risk to decide at any precision tried, and the "
        "exact comparison is past its cost limit"
    )


def interval_verdict(interval: RiskInterval, max_risk: Fraction) -> bool | None:
    """True if the whole interval has risk <= max_risk, False if it has risk > max_risk.

    ``None`` when the interval straddles the target. Targets above 1/2 are compared on
    the complement: risk <= r exactly when 1 - risk >= 1 - r.

    >>> third = mp.real(Fraction(1, 3), 64)
    >>> tiny = libmp.from_man_exp(1, -60)
    >>> near = RiskInterval(third, tiny, mp.real(Fraction(2, 3), 64), tiny, 64)
    >>> interval_verdict(near, Fraction(1, 2)), interval_verdict(near, Fraction(1, 4))
    (True, False)
    >>> interval_verdict(near, Fraction(1, 3)) is None
    True
    """
    prec = interval.prec + TARGET_GUARD_BITS
    if 2 * max_risk <= 1:
        low, high = _interval(interval.risk, interval.risk_error, prec)
        target_low, target_high = _target(max_risk, prec)
        if not mp.less(target_low, high):  # high <= target: every value passes
            return True
        if mp.less(target_high, low):
            return False
        return None
    low, high = _interval(interval.complement, interval.complement_error, prec)
    target_low, target_high = _target(1 - max_risk, prec)
    if not mp.less(low, target_high):  # complement >= 1 - r throughout: passes
        return True
    if mp.less(high, target_low):
        return False
    return None


def _interval(value: Real, relative_error: Real, prec: int) -> tuple[Real, Real]:
    """Rounded-outward bounds value * (1 -+ relative_error), for value >= 0."""
    down = libmp.mpf_sub(mp.ONE, relative_error, prec, libmp.round_floor)
    up = libmp.mpf_add(mp.ONE, relative_error, prec, libmp.round_ceiling)
    return (libmp.mpf_mul(value, down, prec, libmp.round_floor),
            libmp.mpf_mul(value, up, prec, libmp.round_ceiling))


def _target(value: Fraction, prec: int) -> tuple[Real, Real]:
    """``value`` rounded down and up to ``prec`` bits (a two-sided enclosure)."""
    return (libmp.from_rational(value.numerator, value.denominator, prec, libmp.round_floor),
            libmp.from_rational(value.numerator, value.denominator, prec, libmp.round_ceiling))


def hazard(max_risk: Fraction, prec: int) -> Real:
    """t = -ln(1 - max_risk) to ``prec`` bits, for 0 < max_risk < 1, without rounding near 1.

    The complement c = 1 - r is formed exactly and its logarithm taken, with
    log2(1/r) + 16 extra bits when r <= 1/2 (ln c is then near -r, and the rounding of
    c costs an absolute 2**-bits, a relative 2**-bits / r). When r is so small that at
    most ``MAX_HAZARD_TERMS`` terms of r + r**2/2 + r**3/3 + ... reach the precision,
    that sum is formed exactly instead (its tail is below 2 r**(K+1), a relative
    2 r**K). Above 1/2, c may be as small as the caller likes: ln c is well conditioned.

    >>> round(mp.to_float(hazard(Fraction(1, 2), 64)), 15)
    0.693147180559945
    >>> mp.to_float(hazard(Fraction(1, 10**300), 64))
    1e-300
    >>> round(mp.to_float(hazard(1 - Fraction(1, 10**198), 64)), 9)
    455.911848413
    """
    complement = 1 - max_risk
    if 2 * max_risk > 1:
        return mp.neg(mp.log(mp.real(complement, prec + 8), prec))
    # r < 2**-small, and log2(1/r) < small + 2 (from the bit lengths of p and q).
    small = max_risk.denominator.bit_length() - max_risk.numerator.bit_length() - 1
    terms = -(-(prec + 9) // small) if small > 0 else MAX_HAZARD_TERMS + 1
    if terms <= MAX_HAZARD_TERMS:
        total = sum((max_risk**k / k for k in range(1, terms + 1)), Fraction(0))
        return mp.real(total, prec)
    return mp.neg(mp.log(mp.real(complement, prec + small + 18), prec))


#: Most terms of the series of -ln(1 - r) summed exactly (else a logarithm is taken).
MAX_HAZARD_TERMS = 4


def log2_of_real(value: Real) -> float:
    """log2 of a positive libmp real as a float, at any exponent.

    >>> round(log2_of_real(libmp.from_man_exp(3, -2000)), 9)
    -1998.415037499
    """
    sign, mantissa, exponent, bits = value
    if sign or not mantissa:
        raise ValueError("log2 of a non-positive number")
    top = int(mantissa) >> max(0, int(bits) - 64)
    return float(mp.log2_of_int(top) + int(exponent) + max(0, int(bits) - 64))
