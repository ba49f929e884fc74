"""The shortest length over an alphabet whose tokens resist guessing within a ceiling.

For ``live`` tokens valid at once and ``guesses`` distinct guesses, the hit chance
1 - C(N - live, G) / C(N, G) falls as the space N = m**L grows with the length L, so the
shortest length that keeps it within ``max_success`` is the boundary of a falling family
for the certified search (``core/search.py``): interval evaluations from the bounded path
of ``core/guessing.py`` at doubling precision, the exact comparison where it is cheap or
where no interval decides. Lengths at which the live tokens fill the space, or the
guesses must reach one, are known to fail without arithmetic.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

from urnbound.core.errors import DomainError
from urnbound.core.guessing import exact_hit_allowed, exact_hit_at_most, hit_interval, known_hit
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT
from urnbound.core.precision import log2_of_int
from urnbound.core.search import RiskInterval, certified_boundary

#: Exact comparisons are made first below this many digits (cheaper than an interval).
EXACT_FIRST_DIGITS = 1_500


@dataclass(frozen=True, slots=True)
class GuessLengthFamily:
    """The distinct-guess hit chance over lengths 1 .. longest (falling in the length)."""

    alphabet_size: int
    live: int
    guesses: int
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
        """L with m**L ~ live x guesses / max_success: where the first-order chance meets it."""
        if self.guesses == 0:
            return 1
        bits = (log2_of_int(self.live) + log2_of_int(self.guesses)
                + log2_of_int(max_risk.denominator) - log2_of_int(max_risk.numerator))
        return max(1, math.ceil(bits / log2_of_int(self.alphabet_size)))

    def known(self, index: int) -> Fraction | None:
        return known_hit(self.alphabet_size**index, self.live, self.guesses, distinct=True)

    def start_bits(self, index: int) -> int:
        return 64

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        return hit_interval(self.alphabet_size**index, self.live, self.guesses, bits,
                            distinct=True)

    def exact_first(self, index: int) -> bool:
        return exact_hit_allowed(self.alphabet_size**index, self.live, self.guesses,
                                 EXACT_FIRST_DIGITS, distinct=True)

    def exact_allowed(self, index: int) -> bool:
        return exact_hit_allowed(self.alphabet_size**index, self.live, self.guesses,
                                 self.exact_digit_limit, distinct=True)

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:
        return exact_hit_at_most(self.alphabet_size**index, self.live, self.guesses, max_risk,
                                 distinct=True)


def shortest_unguessable_length(alphabet_size: int, live: int, guesses: int,
                                max_success: Fraction, longest: int, *,
                                exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT) -> int | None:
    """Shortest L <= longest with the distinct-guess hit chance at m**L within max_success.

    ``None`` when even ``longest`` does not keep it.

    >>> shortest_unguessable_length(64, 10**5, 10**4 * 86400 * 365, Fraction(1, 10**9), 1365)
    15
    """
    if not 0 < max_success < 1:
        raise DomainError("max_success must be greater than 0 and less than 1",
                          field="max_success")
    family = GuessLengthFamily(alphabet_size, live, guesses, longest, exact_digit_limit)
    boundary = certified_boundary(family, max_success)
    return None if boundary is None else boundary.index
