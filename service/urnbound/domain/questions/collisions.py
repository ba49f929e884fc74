"""GET /v1/collisions: how likely is a repeat among ``count`` identifiers from one space?

The birthday bound: the probability that ``count`` identifiers drawn independently and
uniformly from the space are not all distinct, with its complement and the expected
number of equal pairs and of duplicates. Small questions are exact; large ones come
from a uniform Stirling expansion with a stated error bound.

A time-ordered space (``format=uuid-v7``, or ``tick`` + ``random_bits``) takes ``rate`` and
``duration`` instead of ``count`` (and optionally ``burst`` with ``burst_share``): two of
its identifiers can coincide only within one tick, and the answer is the tick model's
(``tick_model`` gives the load it saw).

``multiplicity`` k (default 2) counts a collision only when at least k identifiers share
one value: the answer is then the chance of a k-fold coincidence, with the expected
number of k-sets sharing a value, C(count, k) / size**(k-1). k = 2 is the birthday
bound above, answered by the same path as without the parameter.

Example: ``GET /v1/collisions?alphabet=base64url&length=8&count=2e6``
"""

from __future__ import annotations

from dataclasses import dataclass

from urnbound.core.errors import DomainError
from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT
from urnbound.core.occupancy import occupancy_risk, reciprocal
from urnbound.core.occupancy_figures import expected_sets
from urnbound.core.occupancy_results import BELOW, Rule
from urnbound.core.pairwise import answer_figures, collision_risk
from urnbound.core.results import AnswerFigures, CollisionRisk
from urnbound.core.ticks import tick_risk
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import COUNT, MULTIPLICITY, SPACE
from urnbound.domain.question import (
    Answer,
    AnswerField,
    Context,
    Question,
    bound_field,
    count_field,
    method_field,
    space_field,
)
from urnbound.domain.spaces import IdSpace
from urnbound.domain.timed import (
    LOAD_PARAMETERS,
    TICK_MODEL_FIELD,
    collision_values,
    loads_of,
    uses_tick_model,
)


@dataclass(frozen=True, slots=True)
class CollisionReport:
    """The risk that ``count`` identifiers drawn from ``space`` are not all distinct."""

    space: IdSpace
    count: int
    risk: CollisionRisk
    figures: AnswerFigures


def collision_report(
    space: IdSpace, count: int, *, exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT
) -> CollisionReport:
    """The collision risk and its related figures for ``count`` identifiers from ``space``.

    >>> from urnbound.domain.spaces import space_from_size
    >>> collision_report(space_from_size(365), 23).risk.method
    'exact'
    """
    risk = collision_risk(space.size, count, exact_digit_limit=exact_digit_limit)
    return CollisionReport(space, count, risk, answer_figures(space.size, count, risk))


def _answer(inputs: Inputs, context: Context) -> Answer:
    multiplicity = inputs["multiplicity"] or 2
    if uses_tick_model(inputs):
        if multiplicity != 2:
            raise DomainError("multiplicity goes with count, not with a time-ordered space",
                              field="multiplicity")
        space = inputs["space"]
        ticked = tick_risk(space.random_bits, loads_of(inputs, space.tick_seconds))
        values = {**collision_values(inputs, ticked), "multiplicity": 2,
                  "expected_coincident_sets": None}
        return Answer(values, ticked.method)
    if multiplicity > 2:
        return _coincidence_answer(inputs, context, multiplicity)
    report = collision_report(inputs["space"], inputs["count"],
                              exact_digit_limit=context.exact_digit_limit)
    risk, figures = report.risk, report.figures
    return Answer(
        {
            "collision": risk.collision,
            "no_collision": risk.no_collision,
            "expected_colliding_pairs": figures.expected_colliding_pairs,
            "expected_duplicates": figures.expected_duplicates,
            "reciprocal_risk": figures.reciprocal_risk,
            "space": report.space,
            "count": report.count,
            "method": risk.method,
            "relative_error_bound": risk.relative_error_bound,
            "exact": risk.exact,
            "tick_model": None,
            "multiplicity": 2,
            "expected_coincident_sets": figures.expected_colliding_pairs,
        },
        risk.method,
    )


def _coincidence_answer(inputs: Inputs, context: Context, multiplicity: int) -> Answer:
    """The chance that some value is drawn ``multiplicity`` times or more (k >= 3)."""
    if inputs["count"] is None:
        raise DomainError("count is required with multiplicity", field="count")
    space, count = inputs["space"], inputs["count"]
    report = collision_report(space, count, exact_digit_limit=context.exact_digit_limit)
    risk = occupancy_risk(space.size, count, Rule(BELOW, multiplicity))
    return Answer(
        {
            "collision": risk.fails,
            "no_collision": risk.holds,
            "expected_colliding_pairs": report.figures.expected_colliding_pairs,
            "expected_duplicates": report.figures.expected_duplicates,
            "reciprocal_risk": reciprocal(risk.fails),
            "space": space,
            "count": count,
            "method": risk.method,
            "relative_error_bound": risk.relative_error_bound,
            "exact": risk.exact,
            "tick_model": None,
            "multiplicity": multiplicity,
            "expected_coincident_sets": expected_sets(space.size, count, multiplicity),
        },
        risk.method,
    )


QUESTION = Question(
    name="collisions",
    path="/v1/collisions",
    summary="Collision risk of count identifiers drawn from one space.",
    description=__doc__ or "",
    inputs=(SPACE,),
    optional=(COUNT, *LOAD_PARAMETERS, MULTIPLICITY),
    answer=(
        AnswerField("collision", "probability", "P(at least two identifiers are equal)."),
        AnswerField("no_collision", "probability",
                    "P(all identifiers are distinct), the complement, with its own accuracy."),
        AnswerField("expected_colliding_pairs", "magnitude",
                    "Expected number of equal pairs, C(count, 2) / size."),
        AnswerField("expected_duplicates", "magnitude",
                    "Expected count minus the expected number of distinct values."),
        AnswerField("reciprocal_risk", "magnitude",
                    "1 / collision: the risk written as one chance in this many; null for "
                    "a risk of 0.", nullable=True),
        space_field(),
        count_field(),
        method_field(),
        bound_field("collision and no_collision"),
        AnswerField("exact", "fraction",
                    "The risk as a reduced fraction, when its terms have at most 1,000 "
                    "digits each (exact method only).", nullable=True),
        TICK_MODEL_FIELD,
        AnswerField("multiplicity", "integer",
                    "How many identifiers must share a value to count (2 unless given)."),
        AnswerField("expected_coincident_sets", "magnitude",
                    "Expected number of sets of multiplicity identifiers sharing one value, "
                    "C(count, multiplicity) / size^(multiplicity - 1); null for a "
                    "time-ordered space.", nullable=True),
    ),
    compute=_answer,
    example={"alphabet": "base64url", "length": "8", "count": "2e6"},
)
