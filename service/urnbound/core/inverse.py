"""Inverse questions: shortest safe length, largest safe count, fewest random bits.

Each answer is an exact integer found from a closed-form first guess and settled by a
local search on the forward path, so the boundary is always checked: the length L
passes and L - 1 fails; the count n passes and n + 1 fails. "Passes" means
risk <= max_risk, decided with certainty: exactly on the exact path; on the asymptotic
path only when the whole error interval lies on one side of max_risk, the precision
being doubled (a bounded number of times) until it does. The asymptotic verdict is
tried first wherever the expansion applies, being some ten times cheaper than the
exact one; the exact comparison settles what it leaves open, within the cost limit.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from fractions import Fraction

from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core.asymptotic import MIN_SIZE, log_no_collision, risk_estimate
from urnbound.core.errors import DomainError, NoConvergence
from urnbound.core.exact import risk_at_most
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT, MAX_SIZE_BITS
from urnbound.core.pairwise import collision_risk
from urnbound.core.precision import Real
from urnbound.core.regimes import choose_method, is_trivial
from urnbound.core.results import CapacityAnswer, LengthAnswer

#: Tries of the asymptotic comparison, doubling the precision each time, before it is
#: declared undecidable. max_risk is at most 200 characters (about 660 bits), so a risk
#: can agree with it to about that many bits at most; the first try carries
#: 64 + log2(count) bits and the fifth 16 times that, which always reaches past it.
MAX_PRECISION_DOUBLINGS = 5
#: Newton steps of the count search before the local search takes over regardless.
MAX_NEWTON_STEPS = 40


def shortest_length(
    alphabet_size: int,
    count: int,
    max_risk: Fraction,
    *,
    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT,
    max_size_bits: int = MAX_SIZE_BITS,
) -> LengthAnswer:
    """Shortest length L >= 1 with risk(count, alphabet_size**L) <= max_risk.

    :raises DomainError: when even the longest length with m**L <= 2**max_size_bits fails.

    >>> a = shortest_length(62, 10**9, Fraction(1, 10**12))
    >>> a.length, a.at_length.collision.decimal[:6], a.one_shorter.collision.decimal[:6]
    (17, '1.6916', '1.0488')
    """
    _check_target(max_risk)
    if alphabet_size < 2:
        raise DomainError("alphabet_size must be at least 2", field="alphabet_size")
    longest = _longest_length(alphabet_size, max_size_bits)

    def passes(length: int) -> bool:
        return _passes(alphabet_size**length, count, max_risk, exact_digit_limit)

    length = min(max(_length_guess(alphabet_size, count, max_risk), 1), longest)
    length = _settle_length(passes, length, longest, alphabet_size, max_size_bits)
    shorter = collision_risk(alphabet_size ** (length - 1), count,
                             exact_digit_limit=exact_digit_limit) if length > 1 else None
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

    >>> fewest_bits(10**9, Fraction(1, 10**12)).length
    99
    """
    return shortest_length(2, count, max_risk, exact_digit_limit=exact_digit_limit)


def largest_count(
    size: int, max_risk: Fraction, *, exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT
) -> CapacityAnswer:
    """Largest n with risk(n, size) <= max_risk (n >= 1: one identifier never collides).

    >>> largest_count(365, Fraction(1, 2)).count
    22
    """
    _check_target(max_risk)
    if size < 1:
        raise DomainError("size must be at least 1", field="size")

    def passes(count: int) -> bool:
        return _passes(size, count, max_risk, exact_digit_limit)

    guess = _count_guess(size, max_risk)
    if size >= MIN_SIZE and 2 <= guess < size:
        guess = _newton_count(size, max_risk, guess)
    count = _settle_count(passes, guess, size)
    return CapacityAnswer(
        size=size,
        max_risk=max_risk,
        count=count,
        at_count=collision_risk(size, count, exact_digit_limit=exact_digit_limit),
        one_more=collision_risk(size, count + 1, exact_digit_limit=exact_digit_limit),
    )


def _check_target(max_risk: Fraction) -> None:
    if not 0 < max_risk < 1:
        raise DomainError("max_risk must be greater than 0 and less than 1", field="max_risk")


def _longest_length(alphabet_size: int, max_size_bits: int) -> int:
    """Largest L with alphabet_size**L <= 2**max_size_bits."""
    length = int(max_size_bits / math.log2(alphabet_size))
    limit = 2**max_size_bits
    while alphabet_size ** (length + 1) <= limit:
        length += 1
    while length > 0 and alphabet_size**length > limit:
        length -= 1
    return length


def _hazard(max_risk: Fraction) -> float:
    """t = -ln(1 - r): the risk target on the log scale (float; r >= 1e-300)."""
    return -math.log1p(-float(max_risk))


def _length_guess(alphabet_size: int, count: int, max_risk: Fraction) -> int:
    """L from N ~ n(n-1) / (2t), and at least enough symbols for n distinct values."""
    if count <= 1:
        return 1
    needed_bits = mp.log2_of_int(count * (count - 1) // 2) - math.log2(_hazard(max_risk))
    needed_bits = max(needed_bits, mp.log2_of_int(count))
    return math.ceil(needed_bits / math.log2(alphabet_size))


def _settle_length(passes: Callable[[int], bool], length: int, longest: int,
                   alphabet_size: int, max_size_bits: int) -> int:
    """Walk from the guess to the shortest passing length (the guess is within a few)."""
    if passes(length):
        while length > 1 and passes(length - 1):
            length -= 1
        return length
    while length < longest:
        length += 1
        if passes(length):
            return length
    raise DomainError(
        f"no length up to {longest} (the longest with {alphabet_size}^length <= "
        f"2^{max_size_bits}) keeps the risk for this count within max_risk",
        field="count",
    )


def _count_guess(size: int, max_risk: Fraction) -> int:
    """n = 1/2 + sqrt(1/4 + 2 N t), the solution of n(n-1)/(2N) = t, clamped to [1, N]."""
    prec = size.bit_length() + 64
    hazard = mp.neg(mp.log1p_neg(mp.real(max_risk, prec), prec))
    inside = mp.add(mp.mul(mp.real(2 * size, prec), hazard, prec),
                    mp.real(Fraction(1, 4), prec), prec)
    root = libmp.mpf_sqrt(inside, prec)
    guess = int(libmp.to_int(mp.add(root, mp.real(Fraction(1, 2), prec), prec)))
    return min(max(guess, 1), size)


def _newton_count(size: int, max_risk: Fraction, guess: int) -> int:
    """Newton steps on g(n) = -ln P(no collision) = t, whose slope is -log1p(-n/N).

    Each step evaluates g at enough precision to place n to within one unit.
    """
    count = guess
    for _ in range(MAX_NEWTON_STEPS):
        if not 2 <= count < size:
            break
        prec = 64 + count.bit_length() + 16
        target = mp.neg(mp.log1p_neg(mp.real(max_risk, prec), prec))
        value = mp.neg(log_no_collision(size, count, prec).value)
        slope = mp.neg(mp.log1p_neg(mp.real(Fraction(count, size), prec), prec))
        step = int(libmp.to_int(mp.div(mp.sub(target, value, prec), slope, prec)))
        if step == 0:
            break
        count = min(max(count + step, 2), size - 1)
    return count


def _settle_count(passes: Callable[[int], bool], count: int, size: int) -> int:
    """Largest passing count near the guess, by galloping then bisection.

    1 always passes (risk 0) and size + 1 always fails (risk 1 > max_risk).
    """
    count = min(max(count, 1), size)
    if passes(count):
        low, high = _gallop(passes, count, +1, size + 1)
    else:
        low, high = _gallop(passes, count, -1, 1)
    while high - low > 1:
        middle = (low + high) // 2
        if passes(middle):
            low = middle
        else:
            high = middle
    return low


def _gallop(passes: Callable[[int], bool], start: int, direction: int,
            stop: int) -> tuple[int, int]:
    """A bracket (last passing, first failing) found stepping 1, 2, 4, ... from ``start``.

    ``start`` passes when direction is +1 and fails when it is -1; ``stop`` is a point
    known to fail (+1) or to pass (-1).
    """
    step = 1
    inner = start
    while True:
        point = start + direction * step
        if (direction > 0 and point >= stop) or (direction < 0 and point <= stop):
            point = stop
            break
        if passes(point) != (direction > 0):
            break
        inner = point
        step *= 2
    return (inner, point) if direction > 0 else (point, inner)


def _passes(size: int, count: int, max_risk: Fraction, exact_digit_limit: int) -> bool:
    """risk(count, size) <= max_risk, decided with certainty."""
    if is_trivial(size, count):
        return count <= 1
    if size < MIN_SIZE:
        return risk_at_most(size, count, max_risk)
    exact_allowed = choose_method(size, count, exact_digit_limit) == "exact"
    bits = 64 + count.bit_length()
    for attempt in range(MAX_PRECISION_DOUBLINGS):
        if exact_allowed and attempt > 0:
            break  # undecided once: the exact comparison is cheaper than more precision
        try:
            estimate = risk_estimate(size, count, bits)
        except NoConvergence:
            break  # the expansion cannot reach this precision for this question
        verdict = _verdict(estimate.collision, estimate.collision_error, max_risk,
                           estimate.prec + 16)
        if verdict is not None:
            return verdict
        bits *= 2
    if exact_allowed:
        return risk_at_most(size, count, max_risk)
    raise NoConvergence("the risk is too close to max_risk to decide at any precision tried")


def _verdict(value: Real, relative_error: Real, max_risk: Fraction, prec: int) -> bool | None:
    """True if the whole interval value*(1 +- error) is <= max_risk, False if above, else None."""
    upper = libmp.mpf_mul(value, libmp.mpf_add(mp.ONE, relative_error, prec, libmp.round_up),
                          prec, libmp.round_up)
    lower = libmp.mpf_mul(value, libmp.mpf_sub(mp.ONE, relative_error, prec, libmp.round_down),
                          prec, libmp.round_down)
    risk_low = libmp.from_rational(max_risk.numerator, max_risk.denominator, prec,
                                   libmp.round_floor)
    risk_high = libmp.from_rational(max_risk.numerator, max_risk.denominator, prec,
                                    libmp.round_ceiling)
    if not mp.less(risk_low, upper):
        return True
    if mp.less(risk_high, lower):
        return False
    return None
