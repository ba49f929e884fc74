"""GET /v1/rates: the highest rate a time-ordered layout takes over a duration.

For a time-ordered space (``format=uuid-v7``, or ``tick`` + ``random_bits``), the highest
whole number of identifiers per second, across all generators, that keeps the tick
model's collision risk over ``duration`` within ``max_risk``, with the risk at that rate
and one identifier per second more (which exceeds ``max_risk``): both sides of the
boundary are certified. ``burst`` with ``burst_share`` puts the busiest share of the
ticks at burst times the mean rate.

Example: ``GET /v1/rates?format=uuid-v7&duration=P365D&max_risk=1e-9``
"""

from __future__ import annotations

from fractions import Fraction

from urnbound.core.limits import MAX_RATE
from urnbound.core.ticks import highest_rate, steady_loads, tick_risk
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
from urnbound.domain.timed import BURST, BURST_SHARE, DURATION, TICK_MODEL_FIELD, tick_model_record


def _answer(inputs: Inputs, context: Context) -> Answer:
    space = inputs["space"]
    if not isinstance(space, TimeOrderedSpace):
        raise InvalidQuery({"space": [
            "rates are asked of a time-ordered space: give format=uuid-v7, or tick with "
            "random_bits"]})
    if (inputs["burst"] is None) != (inputs["burst_share"] is None):
        missing = "burst" if inputs["burst"] is None else "burst_share"
        other = "burst_share" if missing == "burst" else "burst"
        raise InvalidQuery({missing: [f"{missing} is required with {other}"]})
    burst = inputs["burst"] or Fraction(1)
    share = inputs["burst_share"] or Fraction(0)
    if burst * share > 1:
        message = "burst x burst_share must be at most 1"
        raise InvalidQuery({"burst": [message], "burst_share": [message]})
    tick, duration, bits = space.tick_seconds, inputs["duration"], space.random_bits
    rate = highest_rate(bits, tick, duration, inputs["max_risk"], MAX_RATE, burst, share)
    at_rate = tick_risk(bits, steady_loads(Fraction(rate), tick, duration, burst, share))
    one_more = None
    if rate < MAX_RATE:
        one_more = tick_risk(bits, steady_loads(Fraction(rate + 1), tick, duration, burst, share))
    bounds = [at_rate.relative_error_bound]
    if one_more is not None:
        bounds.append(one_more.relative_error_bound)
    record = {"rate": Fraction(rate), "duration": duration, "burst": inputs["burst"],
              "burst_share": inputs["burst_share"]}
    return Answer(
        {
            "rate": rate,
            "collision": at_rate.collision,
            "collision_one_more": None if one_more is None else one_more.collision,
            "space": space,
            "method": at_rate.method,
            "relative_error_bound": max(bounds),
            "tick_model": tick_model_record(Inputs(record), tick),
        },
        at_rate.method,
    )


QUESTION = Question(
    name="rates",
    path="/v1/rates",
    summary="Highest rate a time-ordered layout takes over a duration within max_risk.",
    description=__doc__ or "",
    inputs=(SPACE, DURATION, MAX_RISK),
    optional=(BURST, BURST_SHARE),
    answer=(
        AnswerField("rate", "whole", "The highest whole rate per second within max_risk "
                    "(at most 1e30)."),
        AnswerField("collision", "probability", "The tick-model risk at that rate."),
        AnswerField("collision_one_more", "probability",
                    "The risk at one identifier per second more (above max_risk); null at "
                    "the highest rate accepted.", nullable=True),
        space_field("The space of one tick."),
        method_field("the risk at the answer"),
        bound_field("both reported risks"),
        TICK_MODEL_FIELD,
    ),
    compute=_answer,
    example={"format": "uuid-v7", "duration": "P365D", "max_risk": "1e-9"},
)
