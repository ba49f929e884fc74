"""Response schemas: the shapes of answer members, and each question's answer schema.

A question declares its answer members by kind (``domain/question.py``); here each kind
maps to one marshmallow field, and :func:`answer_schema` builds a question's schema from
its members, in their order, ending with ``assumptions`` when the question has a premise.
The same schema dumps the answer (for HTTP and for ``urnbound <question> --json``) and
documents it in the OpenAPI file. No Flask here: the command line imports this module.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from types import MappingProxyType
from typing import Any

from marshmallow import Schema, fields

from urnbound.domain.question import RECORD_KINDS, AnswerField, Question


class WholeText(fields.String):
    """A whole number of any size, written as a decimal string."""

    def _serialize(self, value: Any, attr: str | None, obj: Any, **kwargs: Any) -> str | None:
        return None if value is None else str(int(value))


class FiniteFloat(fields.Float):
    """A float64 written as null when it is not finite (JSON has no Infinity), never as -0."""

    def _serialize(self, value: Any, attr: str | None, obj: Any, **kwargs: Any) -> float | None:
        if value is None or not math.isfinite(value):
            return None
        return float(value) + 0.0  # -0.0 + 0.0 is +0.0


class MagnitudeSchema(Schema):
    """A non-negative number reported three ways."""

    value = FiniteFloat(
        required=True,
        allow_none=True,
        metadata={"description": "Nearest float64; 0 on underflow, null beyond float64 range."},
    )
    decimal = fields.String(
        required=True,
        metadata={
            "description": "Scientific text with 20 significant digits that never "
            'underflows, or "0" for an exact zero.',
            "example": "5.0729723432398540723e-1",
        },
    )
    log10 = FiniteFloat(
        required=True,
        allow_none=True,
        metadata={"description": "Base-10 logarithm; null when the number is exactly zero."},
    )
    relative_error_bound = FiniteFloat(
        required=True,
        metadata={"description": "Bound on the relative error of decimal (0 when it is "
                                 "correctly rounded from the exact value)."},
    )


class ProbabilitySchema(MagnitudeSchema):
    """A probability reported three ways, each with full relative accuracy."""


class ExactFractionSchema(Schema):
    """A reduced fraction with numerator and denominator as decimal strings."""

    numerator = WholeText(required=True)
    denominator = WholeText(required=True)


class SpaceSchema(Schema):
    """The identifier space a question is about."""

    size = WholeText(required=True, metadata={"description": "Number of values, exact."})
    bits = fields.Float(required=True, metadata={"description": "log2 of the size."})
    description = fields.String(required=True)
    alphabet_size = fields.Integer(
        required=True, allow_none=True, metadata={"description": "Symbols per position."}
    )
    length = fields.Integer(
        required=True, allow_none=True, metadata={"description": "Positions per identifier."}
    )


class AlphabetSchema(Schema):
    """One named alphabet."""

    name = fields.String(required=True)
    size = fields.Integer(required=True)
    symbols = fields.String(required=True)
    source = fields.String(required=True)


class AlphabetListSchema(Schema):
    """Answer of GET /v1/alphabets."""

    alphabets = fields.List(fields.Nested(AlphabetSchema), required=True)


class HealthSchema(Schema):
    """Answer of GET /healthz and GET /readyz."""

    status = fields.String(required=True, metadata={"enum": ["ok", "ready"]})
    checks = fields.Dict(
        keys=fields.String(),
        values=fields.String(),
        metadata={"description": "Self-checks run (readyz only), name -> outcome."},
    )
    schemes = fields.Nested(
        "SchemesFileSchema",
        metadata={"description": "The watched-schemes file (readyz only): its path, how "
                  "many schemes were loaded, and its state (none configured, loaded, "
                  "changed on disk, missing)."},
    )


class SchemesFileSchema(Schema):
    """The state of the watched-schemes file, as /readyz reports it."""

    file = fields.String(required=True, allow_none=True)
    schemes = fields.Integer(required=True)
    state = fields.String(required=True)


class ProblemSchema(Schema):
    """RFC 9457 problem details, sent with every 4xx and 5xx as application/problem+json."""

    type = fields.String(
        required=True,
        metadata={
            "description": "Kind of problem: /problems/invalid-query (422, see errors), "
            "/problems/out-of-range (422, no answer within the service's limits), "
            "/problems/no-convergence (500), /problems/not-ready (503), or about:blank "
            "(the HTTP status says it all: 404, 405, 500)."
        },
    )
    title = fields.String(required=True)
    status = fields.Integer(required=True)
    detail = fields.String(required=True)
    instance = fields.String(metadata={"description": "Path of the request."})
    errors = fields.Dict(
        keys=fields.String(),
        values=fields.List(fields.String()),
        metadata={"description": "Each field at fault -> messages stating form or range."},
    )




def _nested(schema: type[Schema]) -> Callable[[AnswerField], fields.Field[Any]]:
    def make(member: AnswerField) -> fields.Field[Any]:
        return fields.Nested(schema, **_common(member))

    return make


def _common(member: AnswerField) -> dict[str, Any]:
    metadata: dict[str, Any] = {"description": member.description}
    if member.enum:
        metadata["enum"] = list(member.enum)
    return {"required": True, "allow_none": member.nullable, "metadata": metadata}


def _plain(field_type: type[fields.Field[Any]]) -> Callable[[AnswerField], fields.Field[Any]]:
    def make(member: AnswerField) -> fields.Field[Any]:
        return field_type(**_common(member))

    return make


def _alphabet_list(member: AnswerField) -> fields.Field[Any]:
    return fields.List(fields.Nested(AlphabetSchema), **_common(member))


#: The marshmallow field of each kind of answer member.
KIND_FIELDS: Mapping[str, Callable[[AnswerField], fields.Field[Any]]] = MappingProxyType({
    "probability": _nested(ProbabilitySchema),
    "magnitude": _nested(MagnitudeSchema),
    "whole": _plain(WholeText),
    "integer": _plain(fields.Integer),
    "number": _plain(FiniteFloat),
    "text": _plain(fields.String),
    "space": _nested(SpaceSchema),
    "fraction": _nested(ExactFractionSchema),
    "alphabets": _alphabet_list,
    "boolean": _plain(fields.Boolean),
})


def _member_field(member: AnswerField, owner: str) -> fields.Field[Any]:
    """The field of one member; a record's schema is named ``<owner><Member>``."""
    if member.kind not in RECORD_KINDS:
        return KIND_FIELDS[member.kind](member)
    name = owner + "".join(part.capitalize() for part in member.name.split("_"))
    record = Schema.from_dict({m.name: _member_field(m, name) for m in member.members},
                              name=name)
    if member.kind == "records":
        return fields.List(fields.Nested(record), **_common(member))
    return fields.Nested(record, **_common(member))


def component_name(question: Question) -> str:
    """The OpenAPI component of a question's answer: ``collisions`` -> ``CollisionsAnswer``."""
    return "".join(part.capitalize() for part in question.name.split("_")) + "Answer"


def answer_schema(question: Question) -> type[Schema]:
    """The schema of ``question``'s answer, members in declared order."""
    owner = component_name(question)
    members: dict[str, fields.Field[Any]] = {
        member.name: _member_field(member, owner) for member in question.answer
    }
    if question.premise is not None:
        members["assumptions"] = fields.String(
            required=True,
            dump_default=question.premise,
            metadata={"description": "The premise every figure rests on."},
        )
    return Schema.from_dict(members, name=component_name(question))
