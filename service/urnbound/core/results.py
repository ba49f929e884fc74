"""Frozen result types returned by the numerical core."""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

#: How an answer was computed: an open set of names, so that later questions can add theirs.
Method = str
#: Rational arithmetic: decimal texts correctly rounded from the exact value.
EXACT: Method = "exact"
#: An expansion with a proven error bound.
ASYMPTOTIC: Method = "asymptotic"


@dataclass(frozen=True, slots=True)
class Magnitude:
    """A non-negative real number reported three ways.

    :ivar value: the float64 nearest to the true value (correctly rounded, subnormals
        included); may be ``0.0`` (underflow) or ``inf`` (overflow).
    :ivar decimal: scientific text with 20 significant digits, never underflows,
        or ``"0"`` for an exact zero.
    :ivar log10: base-10 logarithm, ``None`` when the number is exactly zero; ``+0.0``
        (never ``-0.0``) when it rounds to zero; ``-inf`` / ``inf`` past the float range.
    :ivar relative_error_bound: bound on |decimal - true| / true, the rounding to 20
        digits included; ``0.0`` when ``decimal`` is correctly rounded from the exact value.
    """

    value: float
    decimal: str
    log10: float | None
    relative_error_bound: float = 0.0


@dataclass(frozen=True, slots=True)
class CollisionRisk:
    """Risk that at least two of ``count`` uniform draws from ``size`` values coincide.

    :ivar collision: P(some two identifiers are equal).
    :ivar no_collision: its complement, with its own full relative accuracy.
    :ivar method: ``EXACT`` (rational arithmetic) or ``ASYMPTOTIC``.
    :ivar relative_error_bound: bound on the relative error of both
        ``decimal`` texts (the larger of the two Magnitudes' bounds); ``0.0`` on the
        exact path, where the texts are correctly rounded. Every float ``value`` is
        correctly rounded from the true value on both paths.
    :ivar exact: the risk as a reduced fraction when numerator and denominator
        have at most 1,000 digits each (exact path only), else ``None``.
    :ivar precision_bits: binary working precision of the asymptotic path
        (``0`` on the exact path).
    """

    size: int
    count: int
    collision: Magnitude
    no_collision: Magnitude
    method: Method
    relative_error_bound: float
    exact: Fraction | None
    precision_bits: int


@dataclass(frozen=True, slots=True)
class RelatedFigures:
    """Expected values that accompany a collision risk.

    Each Magnitude carries its own ``relative_error_bound``.

    :ivar expected_colliding_pairs: C(n, 2) / N, exact then correctly rounded.
    :ivar expected_distinct: N * (1 - (1 - 1/N)**n).
    :ivar expected_duplicates: n minus the expected number of distinct values.
    :ivar reciprocal_risk: 1 / P(collision) ("one in X"), ``None`` when the risk is zero;
        correctly rounded from the exact risk on the exact path.
    :ivar entropy_bits: log2 N.
    """

    expected_colliding_pairs: Magnitude
    expected_distinct: Magnitude
    expected_duplicates: Magnitude
    reciprocal_risk: Magnitude | None
    entropy_bits: float


@dataclass(frozen=True, slots=True)
class AnswerFigures:
    """The related figures a collision answer reports, as :class:`RelatedFigures` has them.

    :ivar expected_colliding_pairs: C(n, 2) / N, exact then correctly rounded.
    :ivar expected_duplicates: n minus the expected number of distinct values.
    :ivar reciprocal_risk: 1 / P(collision), ``None`` when the risk is zero.
    """

    expected_colliding_pairs: Magnitude
    expected_duplicates: Magnitude
    reciprocal_risk: Magnitude | None


@dataclass(frozen=True, slots=True)
class LengthAnswer:
    """Shortest identifier length over an alphabet that keeps the risk in budget.

    Also the answer of ``inverse.fewest_bits``: the alphabet then has 2 symbols and
    ``length`` is the number of random bits.

    :ivar length: the shortest length L with risk(count, m**L) <= max_risk, proven:
        ``at_length`` passes and ``one_shorter`` fails (core/search.py).
    :ivar at_length: the risk at ``length``, as the forward question reports it.
    :ivar one_shorter: the risk at ``length - 1`` (``None`` when length is 1).
    """

    alphabet_size: int
    count: int
    max_risk: Fraction
    length: int
    at_length: CollisionRisk
    one_shorter: CollisionRisk | None


@dataclass(frozen=True, slots=True)
class CapacityAnswer:
    """Largest number of identifiers a space takes with the risk in budget.

    :ivar count: the largest n with risk(n, size) <= max_risk, proven: ``at_count``
        passes and ``one_more`` fails (core/search.py).
    :ivar at_count: the risk at ``count``, as the forward question reports it.
    :ivar one_more: the risk at ``count + 1`` (exactly 1 when count is size).
    """

    size: int
    max_risk: Fraction
    count: int
    at_count: CollisionRisk
    one_more: CollisionRisk
