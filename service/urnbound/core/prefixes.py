"""Truncated digests: the chance a new item's prefix is ambiguous, the strength of a
truncation, and the fewest prefix bits that keep that chance within a budget.

Keeping t bits of a uniformly distributed digest gives 2**t equally likely prefixes.
Among ``count`` stored items, a new item's prefix equals at least one existing prefix
with probability 1 - (1 - 2**-t)**count: the chance that ``count`` independent guesses
hit the one value the new item has (``guessing.independent_hit`` with one live value).
The pairwise risk among the stored items themselves is the birthday bound over 2**t
values (``pairwise``).

Strength of a truncation: a digest truncated to t bits offers about t/2 bits of security
against collisions and t bits against preimages, and never more than the full digest of
d bits offers (d/2 and d): NIST SP 800-107 Rev. 1, sections 4 and 5.1.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

from urnbound.core.errors import DomainError
from urnbound.core.guessing import HitChance, hit_interval, independent_hit
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT, MAX_BITS
from urnbound.core.search import RiskInterval, certified_boundary, hazard, log2_of_real


@dataclass(frozen=True, slots=True)
class Strength:
    """Security strength of a t-bit truncation of a d-bit digest, in bits.

    :ivar collision_bits: min(t, d) / 2.
    :ivar preimage_bits: min(t, d).
    """

    collision_bits: float
    preimage_bits: int


def truncation_strength(digest_bits: int, prefix_bits: int) -> Strength:
    """The strength of keeping ``prefix_bits`` of a ``digest_bits`` digest.

    >>> truncation_strength(256, 128)
    Strength(collision_bits=64.0, preimage_bits=128)
    >>> truncation_strength(160, 41).collision_bits
    20.5
    """
    kept = min(prefix_bits, digest_bits)
    return Strength(kept / 2, kept)


def ambiguity(prefix_bits: int, count: int, *,
              exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT) -> HitChance:
    """P(a new item's t-bit prefix equals one of ``count`` stored prefixes).

    >>> ambiguity(4, 2).exact
    Fraction(31, 256)
    >>> ambiguity(64, 10**9).hit.decimal
    '5.4210108622805853763e-11'
    """
    return independent_hit(2**prefix_bits, 1, count, exact_digit_limit=exact_digit_limit)


@dataclass(frozen=True, slots=True)
class AmbiguityFamily:
    """1 - (1 - 2**-t)**count over prefix bits t = 1 .. highest (falling in t)."""

    count: int
    highest: int = MAX_BITS
    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT

    @property
    def lowest(self) -> int:
        return 1

    @property
    def rising(self) -> bool:
        return False

    def first_guess(self, max_risk: Fraction) -> int:
        """t = log2(count / t_r), with t_r = -ln(1 - max_risk): where count 2**-t ~ t_r."""
        if self.count < 1:
            return 1
        return math.ceil(math.log2(self.count) - log2_of_real(hazard(max_risk, 64)))

    def known(self, index: int) -> Fraction | None:
        return Fraction(0) if self.count == 0 else None

    def start_bits(self, index: int) -> int:
        return 64

    def interval(self, index: int, bits: int) -> RiskInterval | None:
        return hit_interval(2**index, 1, self.count, bits, distinct=False)

    def exact_first(self, index: int) -> bool:
        return self.count * index <= 1_500 * 3

    def exact_allowed(self, index: int) -> bool:
        return self.count * index * 30103 // 100000 <= self.exact_digit_limit

    def exact_at_most(self, index: int, max_risk: Fraction) -> bool:
        whole = 1 << (index * self.count)
        risk_numerator: int = whole - ((1 << index) - 1) ** self.count
        return bool(risk_numerator * max_risk.denominator <= max_risk.numerator * whole)


def fewest_unambiguous_bits(count: int, max_risk: Fraction, *,
                            exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT) -> int | None:
    """Fewest prefix bits t with 1 - (1 - 2**-t)**count <= max_risk; ``None`` past MAX_BITS.

    >>> fewest_unambiguous_bits(10**6, Fraction(1, 10**6))
    40
    """
    if not 0 < max_risk < 1:
        raise DomainError("max_risk must be greater than 0 and less than 1", field="max_risk")
    boundary = certified_boundary(AmbiguityFamily(count, MAX_BITS, exact_digit_limit), max_risk)
    return None if boundary is None else boundary.index
