"""GET /v1/capacity: how many identifiers can a space take before the risk passes a budget?

The largest count n whose collision risk is at most ``max_risk``, with the risk at n and
at n + 1 (which exceeds ``max_risk``): both sides of the boundary are certified.

A time-ordered space (``format=uuid-v7``, ``tick`` + ``random_bits``) takes a rate, not a
count: it is refused here, and ``GET /v1/rates`` answers its inverse question.

Example: ``GET /v1/capacity?alphabet=base32&length=8&max_risk=1e-6``
"""

from __future__ import annotations

from urnbound.core.inverse import largest_count
from urnbound.domain.boundary import boundary_bound
from urnbound.domain.errors import InvalidQuery
from urnbound.domain.formats import TimeOrderedSpace
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import MAX_RISK, SPACE
from urnbound.domain.question import (
    Answer,
    AnswerField,
    Context,
    Question,
    bound_field,
    method_field,
    space_field,
)


def _answer(inputs: Inputs, context: Context) -> Answer:
    space = inputs["space"]
    if isinstance(space, TimeOrderedSpace):
        raise InvalidQuery({"space": [
            "the space is time-ordered: its capacity is a rate over a duration; ask "
            "GET /v1/rates with duration and max_risk"]})
    found = largest_count(space.size, inputs["max_risk"],
                          exact_digit_limit=context.exact_digit_limit)
    return Answer(
        {
            "count": found.count,
            "collision": found.at_count.collision,
            "collision_one_more": found.one_more.collision,
            "space": space,
            "method": found.at_count.method,
            "relative_error_bound": boundary_bound(found.at_count, found.one_more),
        },
        found.at_count.method,
    )


QUESTION = Question(
    name="capacity",
    path="/v1/capacity",
    summary="Largest count a space takes with the risk within max_risk.",
    description=__doc__ or "",
    inputs=(SPACE, MAX_RISK),
    answer=(
        AnswerField("count", "whole", "The largest count within max_risk."),
        AnswerField("collision", "probability", "The risk at that count."),
        AnswerField("collision_one_more", "probability",
                    "The risk with one identifier more (above max_risk)."),
        space_field(),
        method_field("the risk at the answer"),
        bound_field("both reported risks"),
    ),
    compute=_answer,
    example={"alphabet": "base32", "length": "8", "max_risk": "1e-6"},
)
