"""Response schemas: domain reports dump to the JSON documented in the OpenAPI file."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from marshmallow import Schema, fields, pre_dump

from urnbound.core.results import CollisionRisk, Magnitude
from urnbound.domain.questions import ASSUMPTION


class WholeText(fields.String):
    """A whole number of any size, written as a decimal string."""

    def _serialize(self, value: Any, attr: str | None, obj: Any, **kwargs: Any) -> str | None:
        return None if value is None else str(int(value))


class FiniteFloat(fields.Float):
    """A float64 that is written as null when it is not finite (JSON has no Infinity)."""

    def _serialize(self, value: Any, attr: str | None, obj: Any, **kwargs: Any) -> float | None:
        if value is None or not math.isfinite(value):
            return None
        return float(value)


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


def _assumptions() -> fields.String:
    return fields.String(
        required=True,
        dump_default=ASSUMPTION,
        metadata={"description": "The premise every figure rests on."},
    )


def _probability(description: str, *, allow_none: bool = False) -> fields.Nested:
    return fields.Nested(
        ProbabilitySchema,
        required=True,
        allow_none=allow_none,
        metadata={"description": description},
    )


def _magnitude(description: str, *, allow_none: bool = False) -> fields.Nested:
    return fields.Nested(
        MagnitudeSchema,
        required=True,
        allow_none=allow_none,
        metadata={"description": description},
    )


class CollisionSchema(Schema):
    """Answer of GET /v1/collisions."""

    space = fields.Nested(SpaceSchema, required=True)
    count = WholeText(required=True, metadata={"description": "Identifiers drawn."})
    collision = _probability("P(at least two identifiers are equal).")
    no_collision = _probability("P(all identifiers are distinct), the complement.")
    expected_colliding_pairs = _magnitude("Expected number of equal pairs, C(count, 2) / size.")
    expected_duplicates = _magnitude("Expected count minus expected number of distinct values.")
    one_in = _magnitude("1 / collision, the odds 'one in X'; null for zero risk.", allow_none=True)
    method = fields.String(
        required=True,
        metadata={"enum": ["exact", "asymptotic"], "description": "Which path computed it."},
    )
    relative_error_bound = fields.Float(
        required=True,
        metadata={"description": "Bound on the relative error of both decimal texts."},
    )
    exact = fields.Nested(
        ExactFractionSchema,
        required=True,
        allow_none=True,
        metadata={"description": "The risk as a reduced fraction, when small enough."},
    )
    assumptions = _assumptions()

    @pre_dump
    def flatten(self, report: Any, **kwargs: Any) -> dict[str, Any]:
        risk: CollisionRisk = report.risk
        return {
            "space": report.space,
            "count": report.count,
            "collision": risk.collision,
            "no_collision": risk.no_collision,
            "expected_colliding_pairs": report.figures.expected_colliding_pairs,
            "expected_duplicates": report.figures.expected_duplicates,
            "one_in": report.figures.one_in,
            "method": risk.method,
            "relative_error_bound": risk.relative_error_bound,
            "exact": risk.exact,
        }


def _collision_of(risk: CollisionRisk | None) -> Magnitude | None:
    return None if risk is None else risk.collision


def _method_field() -> fields.String:
    return fields.String(
        required=True,
        metadata={"enum": ["exact", "asymptotic"],
                  "description": "Which path computed the risk at the answer."},
    )


def _bound_field() -> fields.Float:
    return fields.Float(
        required=True,
        metadata={"description": "Bound on the relative error of the decimal texts of both "
                                 "reported risks (0 when both are exact)."},
    )


def _boundary_figures(answer: CollisionRisk, neighbour: CollisionRisk | None) -> dict[str, Any]:
    """method and error bound of an inverse answer's two reported risks."""
    bounds = [answer.relative_error_bound]
    if neighbour is not None:
        bounds.append(neighbour.relative_error_bound)
    return {"method": answer.method, "relative_error_bound": max(bounds)}


class LengthSchema(Schema):
    """Answer of GET /v1/lengths."""

    length = fields.Integer(required=True, metadata={"description": "Shortest safe length."})
    entropy_bits = fields.Float(required=True, metadata={"description": "log2 of the space."})
    collision = _probability("Risk at that length.")
    collision_one_shorter = _probability(
        "Risk one symbol shorter (above max_risk); null when length is 1.", allow_none=True
    )
    space = fields.Nested(SpaceSchema, required=True)
    count = WholeText(required=True, metadata={"description": "Identifiers drawn."})
    method = _method_field()
    relative_error_bound = _bound_field()
    assumptions = _assumptions()

    @pre_dump
    def flatten(self, report: Any, **kwargs: Any) -> dict[str, Any]:
        answer = report.answer
        return {
            "length": answer.length,
            "entropy_bits": report.space.bits,
            "collision": answer.at_length.collision,
            "collision_one_shorter": _collision_of(answer.one_shorter),
            "space": report.space,
            "count": report.count,
            **_boundary_figures(answer.at_length, answer.one_shorter),
        }


class CapacitySchema(Schema):
    """Answer of GET /v1/capacity."""

    count = WholeText(required=True, metadata={"description": "Largest count within max_risk."})
    collision = _probability("Risk at that count.")
    collision_one_more = _probability("Risk with one identifier more (above max_risk).")
    space = fields.Nested(SpaceSchema, required=True)
    method = _method_field()
    relative_error_bound = _bound_field()
    assumptions = _assumptions()

    @pre_dump
    def flatten(self, report: Any, **kwargs: Any) -> dict[str, Any]:
        answer = report.answer
        return {
            "count": answer.count,
            "collision": answer.at_count.collision,
            "collision_one_more": answer.one_more.collision,
            "space": report.space,
            **_boundary_figures(answer.at_count, answer.one_more),
        }


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


@dataclass(frozen=True, slots=True)
class AnswerSchemas:
    """One instance of each answer schema, built once per app."""

    collision: CollisionSchema
    length: LengthSchema
    capacity: CapacitySchema
    alphabets: AlphabetListSchema
    health: HealthSchema


def answer_schemas() -> AnswerSchemas:
    """Fresh instances of the answer schemas."""
    return AnswerSchemas(
        CollisionSchema(), LengthSchema(), CapacitySchema(), AlphabetListSchema(), HealthSchema()
    )
