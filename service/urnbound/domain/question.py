"""What a question is: its path, parameters, answer fields and the call that computes it.

Each module of ``urnbound.domain.questions`` defines one :class:`Question` as ``QUESTION``;
the registry collects them, and the HTTP routes, the answer schemas, the OpenAPI document
and the command line are all generated from these definitions.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Final

from urnbound.core.limits import DEFAULT_EXACT_DIGIT_LIMIT
from urnbound.domain.inputs import Entry, Inputs, load_inputs
from urnbound.domain.parameters import Parameter

#: The premise every answer rests on; each answer repeats it in ``assumptions``.
ASSUMPTION: Final = (
    "These figures assume identifiers drawn independently and uniformly at random from "
    "the whole space by a cryptographically secure random generator. They describe "
    "accidental collisions only, and are no substitute for your organisation's security "
    "policy and the standards that apply to you."
)

#: The kinds of answer field, each with one JSON shape (see ``api/schemas.py``):
#: probability / magnitude: {value, decimal, log10, relative_error_bound};
#: whole: a whole number of any size as decimal text; integer; number (a float);
#: text; space: the identifier space; fraction: {numerator, denominator};
#: alphabets: a list of {name, size, symbols, source}; boolean; object: a record of the
#: field's ``members``; records: a list of such records.
KINDS: Final = (
    "probability", "magnitude", "whole", "integer", "number", "text", "space", "fraction",
    "alphabets", "boolean", "object", "records",
)
#: The kinds whose shape is given by the field's ``members``.
RECORD_KINDS: Final = ("object", "records")


@dataclass(frozen=True, slots=True)
class AnswerField:
    """One member of an answer, in the order the answer lists them.

    :ivar kind: one of :data:`KINDS`.
    :ivar nullable: the member may be ``null``.
    :ivar enum: the values a text member takes, when it is one of a few.
    :ivar members: the members of an ``object`` or of each of ``records``, in order.
    """

    name: str
    kind: str
    description: str
    nullable: bool = False
    enum: tuple[str, ...] = ()
    members: tuple[AnswerField, ...] = ()

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise ValueError(f"answer field {self.name}: unknown kind {self.kind!r}")
        if (self.kind in RECORD_KINDS) != bool(self.members):
            raise ValueError(f"answer field {self.name}: members go with {RECORD_KINDS} only")


@dataclass(frozen=True, slots=True)
class Answer:
    """The computed members of an answer (field name -> domain value) and its method.

    :ivar method: the method that computed the figure the answer turns on ("exact",
        "asymptotic", ...), counted in the metrics; ``None`` for listings.
    """

    values: Mapping[str, Any]
    method: str | None = None


@dataclass(frozen=True, slots=True)
class Context:
    """Settings that change how a question is computed (not what it means)."""

    exact_digit_limit: int = DEFAULT_EXACT_DIGIT_LIMIT


@dataclass(frozen=True, slots=True)
class Question:
    """One question the service answers.

    :ivar name: its name: the endpoint name, the command-line command, the operation id.
    :ivar path: the HTTP path, ``/v1/...``.
    :ivar summary: one line.
    :ivar description: what it answers and how (the module docstring).
    :ivar inputs: required parameters and choices, in documentation order.
    :ivar answer: the answer's members in order (the answer first, then the space,
        method and bound); ``assumptions`` is added after them when ``premise`` is set.
    :ivar compute: (inputs, context) -> :class:`Answer`.
    :ivar example: a request, parameter -> text.
    :ivar optional: parameters that may be left out (loaded as ``None``).
    :ivar premise: the text of the ``assumptions`` member, or ``None`` for no such member.
    :ivar chart: answer document (the JSON-ready body) -> an SVG chart of it, for questions
        that can be drawn (``domain/charts.py``); ``None`` for the others.
    :ivar normalize: loaded inputs -> the same question in canonical terms, applied by
        :meth:`load` (a rate per second in place of a rate per period), so that spellings
        of one question share one cache entry and ETag; ``None`` when loading suffices.
    """

    name: str
    path: str
    summary: str
    description: str
    inputs: tuple[Entry, ...]
    answer: tuple[AnswerField, ...]
    compute: Callable[[Inputs, Context], Answer]
    example: Mapping[str, str]
    optional: tuple[Parameter, ...] = ()
    premise: str | None = ASSUMPTION
    chart: Callable[[Mapping[str, Any]], bytes] | None = None
    normalize: Callable[[Inputs], Inputs] | None = None
    fields_by_name: Mapping[str, AnswerField] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "fields_by_name", {f.name: f for f in self.answer})

    def load(self, raw: Mapping[str, Sequence[str]]) -> Inputs:
        """The inputs of a request (name -> texts given); raises ``InvalidQuery``."""
        inputs = load_inputs(self.inputs, self.optional, raw)
        return inputs if self.normalize is None else self.normalize(inputs)

    def answer_to(self, inputs: Inputs, context: Context) -> Answer:
        """Compute the answer; every declared member must be present."""
        answer = self.compute(inputs, context)
        missing = [name for name in self.fields_by_name if name not in answer.values]
        if missing:
            raise KeyError(f"question {self.name} left out {', '.join(missing)}")
        return answer


def prose(text: str) -> str:
    r"""Docstring text with each paragraph on one line, paragraphs apart by a blank line.

    >>> prose("One\n  two.\n\nThree.\n")
    'One two.\n\nThree.'
    """
    paragraphs = [" ".join(part.split()) for part in text.strip().split("\n\n")]
    return "\n\n".join(p for p in paragraphs if p)


# Answer members that most questions share.


def method_field(subject: str = "the risk") -> AnswerField:
    """Which method computed ``subject``."""
    return AnswerField("method", "text", f"The method that computed {subject}: exact, "
                       "asymptotic, or another named method.")


def bound_field(subject: str = "every reported figure") -> AnswerField:
    """A bound on the relative error of ``subject``."""
    return AnswerField("relative_error_bound", "number",
                       f"Bound on the relative error of the decimal texts of {subject} "
                       "(0 when they are correctly rounded from the exact value).")


def space_field(description: str = "The identifier space the answer is about.") -> AnswerField:
    """The identifier space."""
    return AnswerField("space", "space", description)


def count_field(description: str = "Identifiers drawn.") -> AnswerField:
    """A count of identifiers."""
    return AnswerField("count", "whole", description)
