"""Inverse questions of the pairwise risk: shortest length, fewest bits, largest count.

Each question is a monotone family of pairwise risks handed to the one certified search
of :mod:`urnbound.core.search`, which proves both sides of the answer: the length L
passes and L - 1 fails; the count n passes and n + 1 fails. This module only says what
the family is and how its first guess is formed:

* :class:`LengthFamily`: risk(count, m**L) over lengths L (falling in L). Fewest bits is
  the same family with m = 2. First guess: the leading order risk ~ 1 - exp(-n(n-1)/2N)
  solved for N, N = n(n-1) / (2t) with t = -ln(1 - max_risk), and at least the n values
  needed to hold n distinct identifiers; L = ceil(log2 N / log2 m). The neglected terms
  change log2 N by well under one symbol, so the guess is within one of the answer.
* :class:`CountFamily`: risk(n, N) over counts n for a fixed N (rising in n). First
  guess: n = 1/2 + sqrt(1/4 + 2Nt), the root of n(n-1)/(2N) = t, then Newton steps on
  g(n) = -ln P(no collision) = t (slope -log1p(-n/N), values from the expansion at
  log2(n) + 32 bits, so that a step places n to within one), at most
  ``MAX_NEWTON_STEPS``; spaces below ``asymptotic.MIN_SIZE`` take the same steps in
  float64 with lgamma. The guess is never trusted: the search certifies the answer.

The target t is formed from max_risk without rounding near 1 (``search.hazard``), so
max_risk = 1 - 10**-198 is as good an input as 10**-300.

The comparison uses the expansion's error interval first (tried at start precision
64 bits for lengths and 64 + log2(n) bits for counts, enough to tell n from n + 1, and
doubled up to ``search.MAX_INTERVAL_TRIES`` times), exact arithmetic at once when its
cost is at most ``EXACT_FIRST_DIGITS`` digits (it is then the cheaper), and exact
arithmetic as a last resort within ``exact_digit_limit``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core.asymptotic import MIN_SIZE, log_no_collision, risk_estimate
from urnbound.core.errors import DomainError, NoConvergence
from urnbound.core.exact import risk_at_most
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT, MAX_SIZE_BITS
from urnbound.core.pairwise import collision_risk
from urnbound.core.regimes import choose_method, exact_cost_digits
from urnbound.core.results import EXACT, CapacityAnswer, LengthAnswer
from urnbound.core.search import RiskInterval, certified_boundary, hazard, log2_of_real

#: Newton steps of the count guess (it converges in two or three; the bound is a guard).
MAX_NEWTON_STEPS = 40
#: Exact comparisons whose estimated cost (digits of N**n) is at most this are made first:
#: below it they are measured cheaper than one interval evaluation (tests/bench).
EXACT_FIRST_DIGITS = 1_500
#: Precision of the Newton slope and of the step-size test (the step needs no more).
SLOPE_BITS = 64
#: Adjustments of the float guess of the longest length (it is off by at most one).
MAX_LENGTH_ADJUSTMENTS = 4


def shortest_length(
    alphabet_size: int,
    count: int,
    max_risk: Fraction,
    *,
    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT,
    max_size_bits: int = MAX_SIZE_BITS,
) -> LengthAnswer:
    """Shortest length L >= 1 with risk(count, alphabet_size**L) <= max_risk.

    :raises DomainError: for an alphabet below 2 symbols, a negative count, a target
        outside (0, 1), or when even the longest length with m**L <= 2**max_size_bits
        fails (field ``count``).

    >>> a = shortest_length(62, 10**9, Fraction(1, 10**12))
    >>> a.length, a.at_length.collision.decimal[:6], a.one_shorter.collision.decimal[:6]
    (17, '1.6916', '1.0488')
    """
    _check_target(max_risk)
    if count < 0:
        raise DomainError("count must be a whole number of at least 0", field="count")
    longest = longest_length(alphabet_size, max_size_bits)
    family = LengthFamily(alphabet_size, count, longest, exact_digit_limit)
    boundary = certified_boundary(family, max_risk)
    if boundary is None:
        raise DomainError(
            f"no length up to {longest} (the longest with {alphabet_size}^length <= "
            f"2^{max_size_bits}) keeps the risk for this count within max_risk",
            field="count",
        )
    length = boundary.index
    shorter = None
    if length > 1:
        shorter = collision_risk(alphabet_size ** (length - 1), count,
                                 exact_digit_limit=exact_digit_limit)
    return LengthAnswer(
        alphabet_size=alphabet_size,
        count=count,
        max_risk=max_risk,
        length=length,
        at_length=collision_risk(alphabet_size**length, count,
                                 exact_digit_limit=exact_digit_limit),
        one_shorter=shorter,
    )


def fewest_bits(
    count: int, max_risk: Fraction, *, exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT
) -> LengthAnswer:
    """Fewest uniformly random bits b with risk(count, 2**b) <= max_risk.

    The answer is a :class:`LengthAnswer` over the two-symbol alphabet: ``length`` is
    the number of bits b, ``at_length`` the risk at 2**b values and ``one_shorter``
    the risk at 2**(b-1) (``None`` when b is 1).

    >>> a = fewest_bits(10**9, Fraction(1, 10**12))
    >>> a.length, a.at_length.size == 2**99, a.one_shorter.size == 2**98
    (99, True, True)
    """
    return shortest_length(2, count, max_risk, exact_digit_limit=exact_digit_limit)


def largest_count(
    size: int, max_risk: Fraction, *, exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT
) -> CapacityAnswer:
    """Largest n with risk(n, size) <= max_risk (n >= 1: one identifier never collides).

    >>> largest_count(365, Fraction(1, 2)).count
    22
    >>> largest_count(2**64, 1 - Fraction(1, 10**40)).count
    58292502347
    """
    _check_target(max_risk)
    if size < 1:
        raise DomainError("size must be at least 1", field="size")
    boundary = certified_boundary(CountFamily(size, exact_digit_limit), max_risk)
    if boundary is None:  # pragma: no cover - count 1 has risk 0 and always passes
        raise NoConvergence("no count passes, yet one identifier never collides")
    count = boundary.index
    return CapacityAnswer(
        size=size,
        max_risk=max_risk,
        count=count,
        at_count=collision_risk(size, count, exact_digit_limit=exact_digit_limit),
        one_more=collision_risk(size, count + 1, exact_digit_limit=exact_digit_limit),
    )


def longest_length(alphabet_size: int, max_size_bits: int = MAX_SIZE_BITS) -> int:
    """Largest L >= 0 with alphabet_size**L <= 2**max_size_bits.

    Exact for powers of two; otherwise a float quotient (off by at most one, the
    quotient being below 2**20 with 52 bits of accuracy) settled with integers.

    :raises DomainError: for an alphabet of fewer than 2 symbols (field
        ``alphabet_size``) or a negative ``max_size_bits``.

    >>> longest_length(64), longest_length(2), longest_length(10), longest_length(62, 128)
    (1365, 8192, 2466, 21)
    """
    if alphabet_size < 2:
        raise DomainError("alphabet_size must be at least 2", field="alphabet_size")
    if max_size_bits < 0:
        raise DomainError("max_size_bits must be at least 0", field="max_size_bits")
    if alphabet_size & (alphabet_size - 1) == 0:
        return max_size_bits // (alphabet_size.bit_length() - 1)
    limit = 1 << max_size_bits
    length = int(max_size_bits / math.log2(alphabet_size))
    for _ in range(MAX_LENGTH_ADJUSTMENTS):
        if alphabet_size**length > limit:
            length -= 1
        elif alphabet_size ** (length + 1) <= limit:
            length += 1
        else:
            return length
    raise NoConvergence("the longest length did not settle")  # the guess is off by <= 1


@dataclass(frozen=True, slots=True)
class CountFamily:
    """risk(n, size) over counts n = 1 .. size + 1, for a fixed space (rising in n).

    Count 1 has risk 0 and size + 1 has risk 1 (pigeonhole), so the search range holds
    a boundary for every target in (0, 1).
    """

    size: int
    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT

    @property
    def lowest(self) -> int:
        return 1

    @property
    def highest(self) -> int:
        return self.size + 1

    @property
    def rising(self) -> bool:
        return True

    def first_guess(self, max_risk: Fraction) -> int:
        target = _hazard_for_count(self.size, max_risk)
        guess = _closed_form_count(self.size, target)
        if guess < 2 or self.size < 3:
            return guess
        if self.size < MIN_SIZE:
            return _float_newton_count(self.size, mp.to_float(target), guess)
        return _newton_count(self.size, target, min(guess, self.size - 1))

    def known(self, index: int) -> Fraction | None:
        return _known_risk(self.size, index)

    def start_bits(self, index: int) -> int:
        return 64 + index.bit_length()

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        return _pairwise_interval(self.size, index, bits)

    def exact_first(self, index: int) -> bool:
        return _exact_is_cheap(self.size, index)

    def exact_allowed(self, index: int) -> bool:
        return choose_method(self.size, index, self.exact_digit_limit) == EXACT

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:
        return risk_at_most(self.size, index, max_risk)


@dataclass(frozen=True, slots=True)
class LengthFamily:
    """risk(count, alphabet_size**L) over lengths L = 1 .. longest (falling in L)."""

    alphabet_size: int
    count: int
    longest: int
    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT

    @property
    def lowest(self) -> int:
        return 1

    @property
    def highest(self) -> int:
        return self.longest

    @property
    def rising(self) -> bool:
        return False

    def first_guess(self, max_risk: Fraction) -> int:
        return _length_guess(self.alphabet_size, self.count, max_risk)

    def known(self, index: int) -> Fraction | None:
        return _known_risk(self.alphabet_size**index, self.count)

    def start_bits(self, index: int) -> int:
        return 64

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        return _pairwise_interval(self.alphabet_size**index, self.count, bits)

    def exact_first(self, index: int) -> bool:
        return _exact_is_cheap(self.alphabet_size**index, self.count)

    def exact_allowed(self, index: int) -> bool:
        size = self.alphabet_size**index
        return choose_method(size, self.count, self.exact_digit_limit) == EXACT

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:
        return risk_at_most(self.alphabet_size**index, self.count, max_risk)


def _check_target(max_risk: Fraction) -> None:
    if not 0 < max_risk < 1:
        raise DomainError("max_risk must be greater than 0 and less than 1", field="max_risk")


def _known_risk(size: int, count: int) -> Fraction | None:
    """0 for at most one draw, 1 for more draws than values, else ``None``."""
    if count <= 1:
        return Fraction(0)
    if count > size:
        return Fraction(1)
    return None


def _pairwise_interval(size: int, count: int, bits: int) -> RiskInterval | None:
    """The expansion's risk and complement with their bounds; ``None`` where it is not used."""
    if size < MIN_SIZE:
        return None
    try:
        estimate = risk_estimate(size, count, bits)
    except NoConvergence:
        return None  # the expansion cannot reach this precision for this question
    return RiskInterval(estimate.collision, estimate.collision_error,
                        estimate.no_collision, estimate.no_collision_error, estimate.prec)


def _exact_is_cheap(size: int, count: int) -> bool:
    return size < MIN_SIZE or exact_cost_digits(size, count) <= EXACT_FIRST_DIGITS


def _length_guess(alphabet_size: int, count: int, max_risk: Fraction) -> int:
    """L = ceil(log2 N / log2 m) for N = n(n-1)/(2t), and at least log_m n."""
    if count <= 1:
        return 1
    needed_bits = mp.log2_of_int(count * (count - 1) // 2) - log2_of_real(hazard(max_risk, 64))
    needed_bits = max(needed_bits, mp.log2_of_int(count))
    return max(1, math.ceil(needed_bits / mp.log2_of_int(alphabet_size)))


def _hazard_for_count(size: int, max_risk: Fraction) -> mp.Real:
    """t = -ln(1 - max_risk) at log2(N)/2 + 72 bits, enough for the guess and Newton.

    Any count below N + 1 that the search can reach with t < 500 (every 200-character
    target) has at most log2(N)/2 + 6 bits, so this is more than the log2(n) + 32 bits
    the Newton steps work at.
    """
    return hazard(max_risk, size.bit_length() // 2 + 72)


def _closed_form_count(size: int, target: mp.Real) -> int:
    """n = 1/2 + sqrt(1/4 + 2 N t), the root of n(n-1)/(2N) = t, clamped to [1, N].

    Worked at log2(N)/2 + 72 bits: n is below 2**(log2(N)/2 + 6) (t < 500 for any
    200-character target), so the root is good to far better than one.
    """
    prec = size.bit_length() // 2 + 72
    inside = mp.add(mp.mul(mp.real(2 * size, prec), target, prec),
                    mp.real(Fraction(1, 4), prec), prec)
    root = libmp.mpf_sqrt(inside, prec)
    guess = int(libmp.to_int(mp.add(root, mp.real(Fraction(1, 2), prec), prec)))
    return min(max(guess, 1), size)


def _newton_count(size: int, target: mp.Real, guess: int) -> int:
    """Newton steps on g(n) = -ln P(no collision) = t from ``guess``, for size >= MIN_SIZE.

    g rises and is convex in n (its differences s(n) = -log1p(-n/N) rise, its curvature
    is about 1/(N - n)), so the steps close in on the root; each evaluates g at
    log2(n) + 32 bits, which places n to within one. A step of length h leaves an error
    of about h**2 / (2 (N - n) s(n)); once that is below 1/4 the step is taken without
    another evaluation. Stops as well once a step is below one, or when the count cannot
    move (clamped to [2, N-1]).
    """
    count = guess
    prec = guess.bit_length() + 32
    for _ in range(MAX_NEWTON_STEPS):
        if not 2 <= count < size:
            return count
        try:
            value = mp.neg(log_no_collision(size, count, prec).value)
        except NoConvergence:
            return count  # the expansion cannot say; the search starts from here
        slope = _count_slope(size, count, SLOPE_BITS)
        step = mp.div(mp.sub(target, value, prec), slope, prec)
        if mp.magnitude_bits(step) <= 0:  # |step| < 1
            return count
        moved = min(max(count + int(libmp.to_int(step, mp.NEAREST)), 2), size - 1)
        if moved == count:
            return count
        if _step_is_final(step, slope, size - count):
            return moved
        count = moved
    raise NoConvergence("Newton steps of the count guess did not settle")


def _step_is_final(step: mp.Real, slope: mp.Real, rest: int) -> bool:
    """h**2 < (N - n) s(n) / 2: the error left by the step h is below 1/4 (see above)."""
    square = mp.mul(step, step, SLOPE_BITS)
    room = mp.scale2(mp.mul(mp.real(rest, SLOPE_BITS), slope, SLOPE_BITS), -1)
    return mp.less(square, room)


def _float_newton_count(size: int, target: float, guess: int) -> int:
    """The same Newton steps in float64 (lgamma), for the small spaces below MIN_SIZE.

    g(n) = n ln N - lgamma(N + 1) + lgamma(N - n + 1) is below 10**4 there, so its float
    error (some 1e-12) places n to well within one.
    """
    count = min(max(guess, 2), size - 1)
    log_size, log_factorial = math.log(size), math.lgamma(size + 1)
    for _ in range(MAX_NEWTON_STEPS):
        value = count * log_size - log_factorial + math.lgamma(size - count + 1)
        step = (target - value) / -math.log1p(-count / size)
        if abs(step) < 1:
            return count
        moved = min(max(count + round(step), 2), size - 1)
        if moved == count:
            return count
        count = moved
    raise NoConvergence("Newton steps of the count guess did not settle")


def _count_slope(size: int, count: int, prec: int) -> mp.Real:
    """g(n + 1) - g(n) = -ln(1 - n/N), from the exact complement when n/N > 1/2."""
    if 2 * count <= size:
        return mp.neg(mp.log1p_neg(mp.real(Fraction(count, size), prec), prec))
    return mp.neg(mp.log(mp.real(Fraction(size - count, size), prec), prec))
