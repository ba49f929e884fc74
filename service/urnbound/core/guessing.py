"""Chance that guesses find one of the live tokens of a space, exact or with a proven bound.

N values, L of them live (valid at once), G guesses:

* distinct guesses (an attacker who never repeats a guess): the guesses are a uniform
  G-subset, and P(miss) = C(N - L, G) / C(N, G) = ff(N - m, k) / ff(N, k), where
  ff is the falling factorial, k = min(G, L) and m = max(G, L) (the two forms are equal
  by symmetry of the hypergeometric law); P(miss) = 0 when G + L > N;
* independent guesses (each uniform, repeats allowed): P(miss) = (1 - L/N)**G.

Exact path. When the integers involved have at most ``EXACT_DIGITS`` digits and at most
``exact_digit_limit`` (k log10 N, resp. G log10 N), both probabilities are reduced
fractions, reported correctly rounded (relative error bound 0).

Bounded path. l = ln P(miss) is formed at w bits (every libmp operation rounds to
nearest, u = 2**-w, and each error below is a bound in units of u):

* independent: l = G ln(1 - x), x = L/N. For x <= 1/2, log1p(-x) from x rounded
  (condition x / ((1 - x) |ln(1 - x)|) <= 1/ln 2 < 1.5, plus a few units of the
  series or the logarithm at extra bits: 8u all told); for x > 1/2, ln((N - L)/N) with
  the ratio rounded at w + 8 bits (condition 1/|ln y| < 1.5 for y < 1/2: 3u). G rounded,
  the product: 2u more. Bound stated: 16u relative on l.
* distinct: l = A(N - m, k) - A(N, k) + k ln(1 - m/N), A(M, k) = ln(ff(M, k) / M**k)
  being the pairwise no-collision logarithm (``asymptotic.log_no_collision``, with its
  own absolute error bound); when N - m is small, ln ff(N - m, k) is taken from the exact
  integer and l = ln ff(N - m, k) - k ln N - A(N, k). Every term is non-positive except
  ln ff and -A(N, k), and the absolute errors of the terms and of the two additions are
  summed, then divided by the computed |l| (less that sum) for a relative bound.

Then P(miss) = exp(l) and P(hit) = 1 - P(miss), each with its bound, from l and its
relative bound e (``core/logprob.py``). The precision is raised until both floats are decided
(``reporting.bounded_magnitude``), at most ``ROUNDING_TRIES`` times.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import gmpy2
from mpmath import libmp

from urnbound.core import precision as mp
from urnbound.core import reporting
from urnbound.core.asymptotic import MIN_SIZE, log_no_collision
from urnbound.core.errors import DomainError, NoConvergence
from urnbound.core.exact import falling_factorial, magnitude_of_fraction
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT, MAX_FRACTION_DIGITS
from urnbound.core.logprob import from_log
from urnbound.core.pairwise import WIDEST_BITS
from urnbound.core.precision import Real
from urnbound.core.results import ASYMPTOTIC, EXACT, Magnitude, Method
from urnbound.core.search import RiskInterval, interval_verdict

#: Evaluations of the bounded path, doubling the bits each time, before giving up.
ROUNDING_TRIES = 4
#: First relative accuracy asked of the bounded path, in bits.
TARGET_BITS = 64
#: Guard bits on top of the target and of the magnitude of l.
GUARD_BITS = 16
#: The exact path is taken only up to this many digits (and the caller's limit): past it
#: the falling factorials and their gcd cost more than 0.3 ms, the bounded path some 0.07 ms
#: for a bound near 5e-20 (tests/bench/bench_security.py).
EXACT_DIGITS = 5_000
_DISTINCT = "distinct"
_INDEPENDENT = "independent"


@dataclass(frozen=True, slots=True)
class HitChance:
    """The chance that ``guesses`` guesses find at least one of ``live`` tokens in ``size``.

    :ivar hit: P(at least one guess is a live token).
    :ivar miss: P(no guess is), its complement, with its own relative accuracy.
    :ivar method: ``EXACT`` or ``ASYMPTOTIC`` (bounded path).
    :ivar relative_error_bound: the larger of the two Magnitudes' bounds (0 when exact).
    :ivar exact: the hit chance as a reduced fraction on the exact path, else ``None``.
    """

    size: int
    live: int
    guesses: int
    hit: Magnitude
    miss: Magnitude
    method: Method
    relative_error_bound: float
    exact: Fraction | None


@dataclass(frozen=True, slots=True)
class _Bounded:
    """l = ln P(miss) and the two probabilities with relative error bounds."""

    hit: Real
    hit_error: Real
    miss: Real
    miss_error: Real
    log_miss: Real
    prec: int


def distinct_hit(size: int, live: int, guesses: int, *,
                 exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT) -> HitChance:
    """P(hit) for ``guesses`` distinct guesses: 1 - C(N - L, G) / C(N, G).

    >>> distinct_hit(10, 2, 3).exact
    Fraction(8, 15)
    >>> distinct_hit(2**64, 10**5, 10**4 * 86400 * 365).hit.decimal
    '1.7081095177797156504e-3'
    """
    _check(size, live, guesses)
    return _chance(_DISTINCT, size, live, guesses, exact_digit_limit)


def independent_hit(size: int, live: int, guesses: int, *,
                    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT) -> HitChance:
    """P(hit) for ``guesses`` independent uniform guesses: 1 - (1 - L/N)**G.

    >>> independent_hit(6, 1, 2).exact
    Fraction(11, 36)
    >>> independent_hit(2**128, 1, 10**12).hit.decimal
    '2.9387358770557187699e-27'
    """
    _check(size, live, guesses)
    return _chance(_INDEPENDENT, size, live, guesses, exact_digit_limit)


def hit_at_most(chance: HitChance, threshold: Fraction, *, distinct: bool,
                exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT) -> bool:
    """chance.hit <= threshold, decided with certainty, for 0 < threshold < 1.

    The exact fraction when there is one; else the bounded path's interval at doubling
    precision, and the exact comparison when no interval decides and it is affordable.

    >>> c = independent_hit(2**64, 1, 2**32)
    >>> hit_at_most(c, Fraction(1, 2**32), distinct=False)
    True
    >>> hit_at_most(c, Fraction(1, 2**32 + 1), distinct=False)
    False
    """
    size, live, guesses = chance.size, chance.live, chance.guesses
    known = known_hit(size, live, guesses, distinct=distinct)
    if known is not None:
        return known <= threshold
    if chance.exact is not None:
        return chance.exact <= threshold
    bits = TARGET_BITS
    for _ in range(ROUNDING_TRIES + 1):
        interval = hit_interval(size, live, guesses, bits, distinct=distinct)
        verdict = None if interval is None else interval_verdict(interval, threshold)
        if verdict is not None:
            return verdict
        bits *= 2
    if exact_hit_allowed(size, live, guesses, exact_digit_limit, distinct=distinct):
        return exact_hit_at_most(size, live, guesses, threshold, distinct=distinct)
    raise NoConvergence("the hit chance lies too close to max_success to decide")


def known_hit(size: int, live: int, guesses: int, *, distinct: bool) -> Fraction | None:
    """The hit chance when it needs no arithmetic: 0 for no guess, 1 when every value is
    live (or more are live than the space holds), or distinct guesses must reach one.

    >>> known_hit(10, 3, 8, distinct=True), known_hit(10, 3, 8, distinct=False) is None
    (Fraction(1, 1), True)
    """
    if guesses == 0:
        return Fraction(0)
    if live >= size or (distinct and guesses + live > size):
        return Fraction(1)
    return None


def hit_interval(size: int, live: int, guesses: int, bits: int, *, distinct: bool
                 ) -> RiskInterval | None:
    """The bounded path's hit chance and complement, with their bounds, at ``bits``.

    ``None`` when the answer is known without arithmetic, or (distinct guesses in a space
    below MIN_SIZE) only the exact path answers.

    >>> iv = hit_interval(2**64, 1, 2**32, 64, distinct=False)
    >>> round(mp.to_float(iv.risk) * 2**32, 6)
    1.0
    """
    kind = _DISTINCT if distinct else _INDEPENDENT
    if known_hit(size, live, guesses, distinct=distinct) is not None or _exact_only(kind, size):
        return None
    bounded = _bounded(kind, size, live, guesses, bits)
    return RiskInterval(bounded.hit, bounded.hit_error, bounded.miss, bounded.miss_error,
                        bounded.prec)


def exact_hit_allowed(size: int, live: int, guesses: int, limit: int, *, distinct: bool) -> bool:
    """True when the exact comparison is within ``limit`` digits (or the only one)."""
    kind = _DISTINCT if distinct else _INDEPENDENT
    return _exact_only(kind, size) or _exact_cost(kind, size, live, guesses) <= limit


def exact_hit_at_most(size: int, live: int, guesses: int, threshold: Fraction, *,
                      distinct: bool) -> bool:
    """hit <= threshold with exact integers, for 1 <= live < size and a hit not known.

    >>> exact_hit_at_most(10, 2, 3, Fraction(8, 15), distinct=True)
    True
    """
    kind = _DISTINCT if distinct else _INDEPENDENT
    numerator, denominator = _exact_miss(kind, size, live, guesses)
    return bool((denominator - numerator) * threshold.denominator
                <= threshold.numerator * denominator)


def _check(size: int, live: int, guesses: int) -> None:
    if size < 1:
        raise DomainError("the space must hold at least one value", field="size")
    if not 1 <= live <= size:
        raise DomainError("live must be a whole number from 1 to the size of the space",
                          field="live")
    if guesses < 0:
        raise DomainError("guesses must be a whole number of at least 0", field="guesses")


def _chance(kind: str, size: int, live: int, guesses: int, limit: int) -> HitChance:
    known = known_hit(size, live, guesses, distinct=kind == _DISTINCT)
    if known is not None:
        return _exact_chance(size, live, guesses, known.numerator, known.denominator)
    cost = _exact_cost(kind, size, live, guesses)
    if _exact_only(kind, size) or cost <= min(limit, EXACT_DIGITS):
        return _exact_of(kind, size, live, guesses)
    answer = mp.first_decided(lambda bits: _reported(kind, size, live, guesses, bits),
                              TARGET_BITS, TARGET_BITS << (ROUNDING_TRIES - 1))
    if answer is not None:
        return answer
    # A float undecided at every precision (the value may be a float midpoint: for N a
    # power of two the chances are binary fractions): exact, when affordable.
    if cost <= max(limit, EXACT_DIGITS):
        return _exact_of(kind, size, live, guesses)
    # Last resort, as for the pairwise risk: a chance within some 2**-500 of a float
    # midpoint (L G an odd integer next to 2**53 over a power of two, less a term near
    # (L + G) / N of it), up to WIDEST_BITS, which bounds the cost.
    last = TARGET_BITS << (ROUNDING_TRIES - 1)
    answer = mp.first_decided(lambda bits: _reported(kind, size, live, guesses, bits),
                              2 * last, WIDEST_BITS)
    if answer is not None:
        return answer
    raise NoConvergence("the hit chance lies too close to a rounding boundary")


def _exact_of(kind: str, size: int, live: int, guesses: int) -> HitChance:
    miss, denominator = _exact_miss(kind, size, live, guesses)
    return _exact_chance(size, live, guesses, denominator - miss, denominator)


def _exact_only(kind: str, size: int) -> bool:
    """Distinct guesses in a space below MIN_SIZE: no expansion, and k < 1,024 terms."""
    return kind == _DISTINCT and size < MIN_SIZE


def _exact_cost(kind: str, size: int, live: int, guesses: int) -> int:
    """Digits of the integers the exact path forms (k log10 N, resp. G log10 N)."""
    terms = min(live, guesses) if kind == _DISTINCT else guesses
    return terms * size.bit_length() * 30103 // 100000


def _exact_miss(kind: str, size: int, live: int, guesses: int) -> tuple[int, int]:
    """P(miss) as a reduced (numerator, denominator)."""
    if kind == _DISTINCT:
        k, m = min(live, guesses), max(live, guesses)
        numerator = gmpy2.mpz(falling_factorial(size - m, k))
        denominator = gmpy2.mpz(falling_factorial(size, k))
    else:
        common = math.gcd(live, size)
        numerator = gmpy2.mpz((size - live) // common) ** guesses
        denominator = gmpy2.mpz(size // common) ** guesses
    common_factor = gmpy2.gcd(numerator, denominator)
    return int(numerator // common_factor), int(denominator // common_factor)


def _exact_chance(size: int, live: int, guesses: int, hit: int, denominator: int) -> HitChance:
    exact = None
    if denominator.bit_length() <= 3.33 * MAX_FRACTION_DIGITS:
        if len(str(denominator)) <= MAX_FRACTION_DIGITS:
            exact = Fraction(hit, denominator)
    return HitChance(size, live, guesses, magnitude_of_fraction(hit, denominator),
                     magnitude_of_fraction(denominator - hit, denominator), EXACT, 0.0, exact)


def _reported(kind: str, size: int, live: int, guesses: int, bits: int) -> HitChance | None:
    """Both Magnitudes from one bounded evaluation, ``None`` if a float is undecided."""
    bounded = _bounded(kind, size, live, guesses, bits)
    hit_log10 = None
    if mp.magnitude_bits(bounded.hit) >= 0:  # hit >= 1/2: log10 from the tiny miss
        hit_log10 = reporting.log10_of_complement(bounded.miss)
    hit = reporting.bounded_magnitude(bounded.hit, bounded.hit_error, hit_log10)
    miss = reporting.bounded_magnitude_of_log(bounded.miss, bounded.log_miss,
                                              bounded.miss_error)
    if hit is None or miss is None:
        return None
    return HitChance(size, live, guesses, hit, miss, ASYMPTOTIC,
                     max(hit.relative_error_bound, miss.relative_error_bound), None)


def _bounded(kind: str, size: int, live: int, guesses: int, target: int) -> _Bounded:
    """l = ln P(miss) with a relative bound, then exp(l) and -expm1(l) (module docstring)."""
    if kind == _DISTINCT:
        log_miss, log_error, work = _log_miss_distinct(size, live, guesses, target)
    else:
        log_miss, log_error, work = _log_miss_independent(size, live, guesses, target)
    found = from_log(log_miss, log_error, target)
    return _Bounded(found.complement, found.complement_error, found.probability,
                    found.probability_error, log_miss, found.prec)


def _work_bits(target: int, magnitude: int) -> int:
    """Working bits: the target, the magnitude of |l| (exp needs it absolutely), guards."""
    return target + max(0, magnitude) + GUARD_BITS


def _log_miss_independent(size: int, live: int, guesses: int, target: int
                          ) -> tuple[Real, Real, int]:
    """G ln(1 - L/N) at w bits, with the bound 16u on its relative error."""
    # |ln(1 - x)| < 2x for x <= 1/2, < ln N otherwise: a bound on the bits of |l|.
    ratio_bits = live.bit_length() - size.bit_length() + 2
    magnitude = guesses.bit_length() + (ratio_bits if 2 * live <= size else 14)
    work = _work_bits(target, magnitude)
    if 2 * live <= size:
        per_guess = mp.log1p_neg(mp.ratio(live, size, work), work)
    else:
        per_guess = mp.log(mp.ratio(size - live, size, work + 8), work)
    log_miss = mp.mul(mp.real(guesses, work), per_guess, work)
    return log_miss, libmp.from_man_exp(16, -work), work


def _log_miss_distinct(size: int, live: int, guesses: int, target: int
                       ) -> tuple[Real, Real, int]:
    """ln(ff(N - m, k) / ff(N, k)) at w bits, with a relative bound from summed errors."""
    k, m = min(live, guesses), max(live, guesses)
    rest = size - m
    ratio_bits = m.bit_length() - size.bit_length() + 2
    magnitude = k.bit_length() + (ratio_bits if 2 * m <= size else size.bit_length())
    work = _work_bits(target, magnitude)
    up = libmp.round_ceiling
    terms: list[tuple[Real, Real]] = []  # (value, absolute error bound)
    if rest >= MIN_SIZE or k == 1:
        if 2 * m <= size:
            shift = mp.log1p_neg(mp.ratio(m, size, work), work)
        else:
            shift = mp.log(mp.ratio(rest, size, work + 8), work)
        main = mp.mul(mp.real(k, work), shift, work)
        terms.append((main, libmp.mpf_mul(mp.absolute(main), libmp.from_man_exp(16, -work),
                                          64, up)))
        terms += _log_no_collision_term(rest, k, target + GUARD_BITS, 1)
    else:
        product = falling_factorial(rest, k)
        log_product = mp.log(mp.real(product, work + 8), work)
        terms.append((log_product, libmp.mpf_mul(mp.absolute(log_product),
                                                 libmp.from_man_exp(3, -work), 64, up)))
        whole = mp.neg(mp.mul(mp.real(k, work), mp.log(mp.real(size, work + 8), work), work))
        terms.append((whole, libmp.mpf_mul(mp.absolute(whole), libmp.from_man_exp(4, -work),
                                           64, up)))
    terms += _log_no_collision_term(size, k, target + GUARD_BITS, -1)
    return _sum_with_bound(terms, work)


def _log_no_collision_term(size: int, count: int, target: int, sign: int
                           ) -> list[tuple[Real, Real]]:
    """sign * A(size, count) with its absolute error bound; nothing when A is 0 (count 1).

    Its error is about 2**-target min(1, |A|) absolutely: exp(l) needs no more.
    """
    if count < 2:
        return []
    estimate = log_no_collision(size, count, target)
    value = estimate.value if sign > 0 else mp.neg(estimate.value)
    return [(value, estimate.error)]


def _sum_with_bound(terms: list[tuple[Real, Real]], work: int) -> tuple[Real, Real, int]:
    """The sum of the terms and a relative bound: summed errors and roundings over |sum|."""
    up, down = libmp.round_ceiling, libmp.round_floor
    total, error, scale = mp.ZERO, mp.ZERO, mp.ZERO
    for value, value_error in terms:
        total = mp.add(total, value, work)
        error = mp.add_up(error, value_error, 64)
        scale = mp.add_up(scale, mp.absolute(value), 64)
    # Each addition is off by at most u times a partial sum, which is at most the scale.
    error = mp.add_up(error, libmp.mpf_mul(scale, libmp.from_man_exp(len(terms), -work), 64,
                                           up), 64)
    low = libmp.mpf_sub(mp.absolute(total), error, 64, down)
    if not mp.less(mp.ZERO, low):
        raise NoConvergence("ln P(miss) not resolved at this precision")
    return total, libmp.mpf_div(error, low, 64, up), work
