"""GET /v1/formats: the identifier formats, with their random bits, layout and source.

A format with a fixed layout may be given to any question that takes a space, as
``format=uuid-v4``; its random bits are the space. A time-ordered format (``uuid-v7``)
draws its random bits afresh in each tick of its timestamp, so its space is that of one
tick. Random strings and random integers are families, named by the parameters listed.

Example: ``GET /v1/formats``
"""

from __future__ import annotations

from urnbound.domain.formats import FORMATS
from urnbound.domain.inputs import Inputs
from urnbound.domain.question import Answer, AnswerField, Context, Question


def _answer(inputs: Inputs, context: Context) -> Answer:
    return Answer({"formats": list(FORMATS.values())})


FORMAT_MEMBERS = (
    AnswerField("name", "text", "The format's name; formats with a fixed layout may be "
                "given as format=<name>."),
    AnswerField("random_bits", "integer", "Uniformly random bits per identifier (per tick "
                "when time-ordered); null for a family.", nullable=True),
    AnswerField("layout", "text", "The fields of the identifier, in order."),
    AnswerField("source", "text", "Where the format is defined."),
    AnswerField("request", "text", "The parameters that name it in a request."),
    AnswerField("time_ordered", "boolean",
                "True when identifiers carry a timestamp and can coincide only within a "
                "tick."),
    AnswerField("tick", "text", "The timestamp tick as an ISO 8601 duration; null unless "
                "time-ordered.", nullable=True),
)

QUESTION = Question(
    name="formats",
    path="/v1/formats",
    summary="The identifier formats.",
    description=__doc__ or "",
    inputs=(),
    answer=(AnswerField("formats", "records",
                        "Every format: name, random bits, layout, source and how to request "
                        "it.", members=FORMAT_MEMBERS),),
    compute=_answer,
    example={},
    premise=None,
)
