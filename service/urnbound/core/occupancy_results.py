"""The occupancy model's rules and the frozen results of its questions.

n items fall independently and uniformly on N buckets. A :class:`Rule` says which
per-bucket counts are allowed: every count below ``level`` (no bucket reaches a load
of k = level: k-fold coincidences, bucket overflow) or every count at least ``level``
(every bucket used at least a = level times: coverage).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from urnbound.core.results import Magnitude, Method

#: Every bucket holds fewer than ``level`` items.
BELOW = "below"
#: Every bucket holds at least ``level`` items.
AT_LEAST = "at_least"

#: Methods of the occupancy engine (``Method`` is an open set of names).
SADDLE_POINT: Method = "saddle point"
INCLUSION_EXCLUSION: Method = "inclusion-exclusion"
SECOND_ORDER_INCLUSION_EXCLUSION: Method = "second-order inclusion-exclusion"
RECURRENCE: Method = "recurrence"
TWO_BUCKET_BINOMIAL: Method = "two-bucket binomial"
POLYNOMIAL_POWER: Method = "polynomial power"


@dataclass(frozen=True, slots=True)
class Rule:
    """Which counts every bucket must have: ``kind`` BELOW or AT_LEAST, and the level.

    :ivar kind: BELOW (counts 0 .. level - 1) or AT_LEAST (counts level, level + 1, ...).
    :ivar level: k >= 1 for BELOW, a >= 1 for AT_LEAST.
    """

    kind: str
    level: int

    def __post_init__(self) -> None:
        if self.kind not in (BELOW, AT_LEAST) or self.level < 1:
            raise ValueError(f"no such rule: {self.kind} {self.level}")

    @property
    def edge(self) -> int:
        """The allowed count next to the forbidden ones: k - 1 (BELOW) or a - 1 (AT_LEAST).

        For AT_LEAST it is the largest forbidden count.
        """
        return self.level - 1

    @property
    def sign(self) -> int:
        """-1 when the allowed counts are cut from above (BELOW), +1 when from below."""
        return -1 if self.kind == BELOW else 1


@dataclass(frozen=True, slots=True)
class OccupancyRisk:
    """P(every bucket obeys the rule) and its complement, each with full relative accuracy.

    :ivar holds: P(every one of ``buckets`` buckets obeys ``rule`` after ``count`` items).
    :ivar fails: 1 - holds: P(some bucket breaks the rule).
    :ivar method: how the figures were computed ("exact", "saddle point", ...).
    :ivar relative_error_bound: the larger of the two Magnitudes' bounds.
    :ivar exact: ``fails`` as a reduced fraction on the exact path when both of its terms
        have at most 1,000 digits, else ``None``.
    :ivar precision_bits: working precision of an approximate method (0 when exact).
    """

    buckets: int
    count: int
    rule: Rule
    holds: Magnitude
    fails: Magnitude
    method: Method
    relative_error_bound: float
    exact: Fraction | None
    precision_bits: int
