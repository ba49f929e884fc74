"""GET /v1/bits: how many random bits must an identifier carry for ``count`` of them?

The fewest uniformly random bits b at which ``count`` identifiers collide with
probability at most ``max_risk``, with the risk at b and at b - 1 (which exceeds
``max_risk``): both sides of the boundary are certified.

For a time-ordered layout give ``tick``, ``rate`` and ``duration`` instead of ``count``
(optionally ``burst`` with ``burst_share``): the answer is then the fewest random bits
each identifier draws within a tick, by the tick model.

Example: ``GET /v1/bits?count=5e8&max_risk=1e-12``
"""

from __future__ import annotations

from urnbound.core.inverse import fewest_bits
from urnbound.domain.boundary import boundary_bound, collision_of
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import COUNT, MAX_RISK, TICK
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
from urnbound.domain.spaces import space_from_bits
from urnbound.domain.timed import (
    LOAD_PARAMETERS,
    TICK_MODEL_FIELD,
    tick_bits_values,
    uses_tick_bits,
)


def _answer(inputs: Inputs, context: Context) -> Answer:
    if uses_tick_bits(inputs):
        values = tick_bits_values(inputs)
        return Answer(values, values["method"])
    found = fewest_bits(inputs["count"], inputs["max_risk"],
                        exact_digit_limit=context.exact_digit_limit)
    bits, at_bits, one_fewer = found.length, found.at_length, found.one_shorter
    return Answer(
        {
            "bits": bits,
            "collision": at_bits.collision,
            "collision_one_fewer": collision_of(one_fewer),
            "space": space_from_bits(bits),
            "count": inputs["count"],
            "method": at_bits.method,
            "relative_error_bound": boundary_bound(at_bits, one_fewer),
            "tick_model": None,
        },
        at_bits.method,
    )


QUESTION = Question(
    name="bits",
    path="/v1/bits",
    summary="Fewest random bits that keep the risk of count identifiers within max_risk.",
    description=__doc__ or "",
    inputs=(MAX_RISK,),
    optional=(COUNT, TICK, *LOAD_PARAMETERS),
    answer=(
        AnswerField("bits", "integer", "The fewest random bits within max_risk."),
        AnswerField("collision", "probability", "The risk at that many bits."),
        AnswerField("collision_one_fewer", "probability",
                    "The risk with one bit fewer (above max_risk); null when bits is 1.",
                    nullable=True),
        space_field("The space of 2^bits values at the answer."),
        count_field(),
        method_field("the risk at the answer"),
        bound_field("both reported risks"),
        TICK_MODEL_FIELD,
    ),
    compute=_answer,
    example={"count": "5e8", "max_risk": "1e-12"},
)
