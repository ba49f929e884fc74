"""GET /v1/lengths: how long must identifiers over an alphabet be for ``count`` of them?

The shortest length L at which ``count`` identifiers drawn uniformly from the alphabet's
L-symbol strings collide with probability at most ``max_risk``, with the risk at L and
at L - 1 (which exceeds ``max_risk``): both sides of the boundary are certified.

Example: ``GET /v1/lengths?alphabet=alphanumeric&count=2e9&max_risk=1e-9``
"""

from __future__ import annotations

from urnbound.core.inverse import shortest_length
from urnbound.domain.boundary import boundary_bound, collision_of
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import ALPHABET_CHOICE, COUNT, MAX_RISK
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
from urnbound.domain.spaces import space_from_alphabet


def _answer(inputs: Inputs, context: Context) -> Answer:
    alphabet = inputs["alphabet"]
    found = shortest_length(alphabet.size, inputs["count"], inputs["max_risk"],
                            exact_digit_limit=context.exact_digit_limit)
    space = space_from_alphabet(alphabet, found.length)
    return Answer(
        {
            "length": found.length,
            "entropy_bits": space.bits,
            "collision": found.at_length.collision,
            "collision_one_shorter": collision_of(found.one_shorter),
            "space": space,
            "count": inputs["count"],
            "method": found.at_length.method,
            "relative_error_bound": boundary_bound(found.at_length, found.one_shorter),
        },
        found.at_length.method,
    )


QUESTION = Question(
    name="lengths",
    path="/v1/lengths",
    summary="Shortest identifier length over an alphabet that keeps the risk within max_risk.",
    description=__doc__ or "",
    inputs=(ALPHABET_CHOICE, COUNT, MAX_RISK),
    answer=(
        AnswerField("length", "integer", "The shortest length within max_risk."),
        AnswerField("entropy_bits", "number", "log2 of the space at that length."),
        AnswerField("collision", "probability", "The risk at that length."),
        AnswerField("collision_one_shorter", "probability",
                    "The risk one symbol shorter (above max_risk); null when length is 1.",
                    nullable=True),
        space_field("The identifier space at the answered length."),
        count_field(),
        method_field("the risk at the answer"),
        bound_field("both reported risks"),
    ),
    compute=_answer,
    example={"alphabet": "alphanumeric", "count": "2e9", "max_risk": "1e-9"},
)
