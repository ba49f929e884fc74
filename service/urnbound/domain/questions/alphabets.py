"""GET /v1/alphabets: the named alphabets a question may use, with their symbols and sources.

Example: ``GET /v1/alphabets``
"""

from __future__ import annotations

from urnbound.domain.alphabets import NAMED_ALPHABETS
from urnbound.domain.inputs import Inputs
from urnbound.domain.question import Answer, AnswerField, Context, Question


def _answer(inputs: Inputs, context: Context) -> Answer:
    return Answer({"alphabets": list(NAMED_ALPHABETS.values())})


QUESTION = Question(
    name="alphabets",
    path="/v1/alphabets",
    summary="The named alphabets.",
    description=__doc__ or "",
    inputs=(),
    answer=(AnswerField("alphabets", "alphabets",
                        "Every named alphabet: name, size, symbols and the source defining it."),),
    compute=_answer,
    example={},
    premise=None,
)
