"""The direct answer dumpers agree with the marshmallow schemas that document the answers."""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from urnbound.api.dumping import answer_dumper, finite, whole_text
from urnbound.api.schemas import answer_schema
from urnbound.core.results import Magnitude
from urnbound.domain.question import AnswerField, Context, Question
from urnbound.domain.registry import default_registry
from urnbound.domain.spaces import space_from_size

QUESTIONS = list(default_registry())


def through_both(question: Question, values: dict[str, Any]) -> tuple[Any, Any]:
    """(direct dump, marshmallow dump) of the same answer values."""
    return answer_dumper(question)(values), answer_schema(question)().dump(values)


@pytest.mark.parametrize("question", QUESTIONS, ids=[q.name for q in QUESTIONS])
def test_every_example_dumps_as_its_schema_does(question: Question) -> None:
    # the schema is the documented shape (OpenAPI); the dumper must give the same document,
    # member order included
    answer = question.answer_to(question.load({k: [v] for k, v in question.example.items()}),
                                Context())
    direct, documented = through_both(question, dict(answer.values))
    assert direct == documented
    assert list(direct) == list(documented)


def toy_question(*members: AnswerField) -> Question:
    return Question(name="toy", path="/v1/toy", summary="A toy.", description="A toy.",
                    inputs=(), answer=members, compute=lambda inputs, context: None,
                    example={})


MEMBERS = (
    AnswerField("p", "probability", "A probability.", nullable=True),
    AnswerField("m", "magnitude", "A magnitude.", nullable=True),
    AnswerField("w", "whole", "A whole number.", nullable=True),
    AnswerField("i", "integer", "An integer.", nullable=True),
    AnswerField("x", "number", "A float.", nullable=True),
    AnswerField("t", "text", "A text.", nullable=True),
    AnswerField("s", "space", "A space.", nullable=True),
    AnswerField("f", "fraction", "A fraction.", nullable=True),
)

floats = st.one_of(st.floats(allow_nan=True), st.sampled_from([-0.0, math.inf, -math.inf]))
magnitudes = st.builds(Magnitude, floats, st.text(max_size=30),
                       st.one_of(st.none(), floats), floats)
values = st.fixed_dictionaries({
    "p": st.one_of(st.none(), magnitudes),
    "m": st.one_of(st.none(), magnitudes),
    "w": st.one_of(st.none(), st.integers(0, 2**9000)),
    "i": st.one_of(st.none(), st.integers(-(2**70), 2**70)),
    "x": st.one_of(st.none(), floats),
    "t": st.one_of(st.none(), st.text(max_size=30)),
    "s": st.one_of(st.none(), st.integers(2, 2**300).map(space_from_size)),
    "f": st.one_of(st.none(), st.fractions(min_value=0)),
})


@settings(max_examples=200, deadline=None)
@given(values)
def test_nulls_infinities_and_big_numbers_dump_as_the_schema_does(answer: dict[str, Any]) -> None:
    question = toy_question(*MEMBERS)
    direct, documented = through_both(question, answer)
    # NaN != NaN: compare the JSON texts' meaning through repr of floats
    assert repr(direct) == repr(documented)


def test_negative_zero_and_infinity_become_zero_and_null() -> None:
    assert repr(finite(-0.0)) == "0.0" and finite(math.inf) is None and finite(None) is None
    fraction = Fraction(3, 7)
    question = toy_question(AnswerField("f", "fraction", "A fraction."))
    assert answer_dumper(question)({"f": fraction})["f"] == {"numerator": "3",
                                                            "denominator": "7"}


def test_records_and_lists_of_records_dump_as_the_schema_does() -> None:
    inner = (AnswerField("name", "text", "A name."),
             AnswerField("odds", "probability", "Odds.", nullable=True),
             AnswerField("ok", "boolean", "A flag."))
    question = toy_question(AnswerField("one", "object", "A record.", members=inner),
                            AnswerField("many", "records", "Records.", members=inner),
                            AnswerField("none", "object", "Absent.", nullable=True,
                                        members=inner))
    odds = Magnitude(0.5, "5.0000000000000000000e-1", -0.3010299956639812, 0.0)
    record = {"name": "first", "odds": odds, "ok": True}
    answer = {"one": record, "many": [record, {**record, "odds": None, "ok": False}],
              "none": None}
    direct, documented = through_both(question, answer)
    assert direct == documented and list(direct) == list(documented)


@settings(max_examples=200)
@given(st.integers(min_value=0, max_value=8400).flatmap(
    lambda bits: st.integers(min_value=-(2**bits), max_value=2**bits)))
def test_whole_numbers_are_written_with_python_s_own_digits(value: int) -> None:
    # counts up to 2^8192 and past: GMP writes the long ones, the digits must not change
    assert whole_text(value) == str(value)
