"""The questions callers ask about an identifier space, answered by the numerical core."""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import Final

from urnbound.core.errors import DomainError
from urnbound.core.inverse import largest_count, shortest_length
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT, MAX_COUNT, MIN_RISK
from urnbound.core.pairwise import collision_risk, related_figures
from urnbound.core.results import CapacityAnswer, CollisionRisk, LengthAnswer, RelatedFigures
from urnbound.domain.alphabets import Alphabet
from urnbound.domain.spaces import IdSpace, space_from_alphabet

#: The premise every answer rests on; the HTTP layer and the docs repeat it.
ASSUMPTION: Final = (
    "These figures assume identifiers drawn independently and uniformly at random from "
    "the whole space by a cryptographically secure random generator. They describe "
    "accidental collisions only, and are no substitute for your organisation's security "
    "policy and the standards that apply to you."
)


@dataclass(frozen=True, slots=True)
class CollisionReport:
    """The risk that ``count`` identifiers drawn from ``space`` are not all distinct."""

    space: IdSpace
    count: int
    risk: CollisionRisk
    figures: RelatedFigures


@dataclass(frozen=True, slots=True)
class LengthReport:
    """The shortest identifier over ``alphabet`` that keeps ``count`` within ``max_risk``.

    :ivar space: the identifier space at the answered length.
    """

    alphabet: Alphabet
    count: int
    max_risk: Fraction
    answer: LengthAnswer
    space: IdSpace


@dataclass(frozen=True, slots=True)
class CapacityReport:
    """The most identifiers ``space`` takes while the risk stays within ``max_risk``."""

    space: IdSpace
    max_risk: Fraction
    answer: CapacityAnswer


def _checked_count(count: int) -> int:
    if isinstance(count, bool) or not 0 <= count <= MAX_COUNT:
        raise DomainError("count must be a whole number from 0 to 10^60", field="count")
    return count


def _checked_risk(max_risk: Fraction) -> Fraction:
    if not MIN_RISK <= max_risk < 1:
        raise DomainError(
            "max_risk must be a number from 1e-300 up to but not including 1",
            field="max_risk",
        )
    return max_risk


def collision_report(
    space: IdSpace, count: int, *, exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT
) -> CollisionReport:
    """Answer "how likely is a repeat among ``count`` identifiers from ``space``?".

    :raises DomainError: (field ``count``) unless 0 <= count <= 10**60.
    """
    count = _checked_count(count)
    risk = collision_risk(space.size, count, exact_digit_limit=exact_digit_limit)
    figures = related_figures(space.size, count, risk)
    return CollisionReport(space, count, risk, figures)


def length_report(
    alphabet: Alphabet,
    count: int,
    max_risk: Fraction,
    *,
    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT,
) -> LengthReport:
    """Answer "how long must identifiers over ``alphabet`` be for ``count`` of them?".

    :raises DomainError: (field ``count``) when no length within 2**8192 values suffices,
        or for a count or risk outside the allowed range.
    """
    count = _checked_count(count)
    max_risk = _checked_risk(max_risk)
    answer = shortest_length(alphabet.size, count, max_risk, exact_digit_limit=exact_digit_limit)
    space = space_from_alphabet(alphabet, answer.length)
    return LengthReport(alphabet, count, max_risk, answer, space)


def capacity_report(
    space: IdSpace, max_risk: Fraction, *, exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT
) -> CapacityReport:
    """Answer "how many identifiers can ``space`` take before the risk passes ``max_risk``?".

    :raises DomainError: (field ``max_risk``) for a risk outside [1e-300, 1).
    """
    max_risk = _checked_risk(max_risk)
    answer = largest_count(space.size, max_risk, exact_digit_limit=exact_digit_limit)
    return CapacityReport(space, max_risk, answer)
