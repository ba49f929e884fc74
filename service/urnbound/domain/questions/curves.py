"""GET /v1/curves: the collision risk across a range of counts, for charts.

Up to ``points`` counts (default 50, at most 500) from ``from`` to ``to``, log-spaced by
default (``spacing=linear`` spreads them evenly), each with the risk that that many
identifiers drawn from the space are not all distinct and its complement, exactly as
/v1/collisions answers them. Counts are whole numbers; where several round to the same
count it is given once. Time-ordered layouts are not drawn here (see /v1/rates).

Example: ``GET /v1/curves?bits=64&from=1e6&to=1e10&points=5``
"""

from __future__ import annotations

from typing import Any

from urnbound.core.curves import RiskCurve, risk_curve
from urnbound.core.limits import DEFAULT_POINTS
from urnbound.domain import charts
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import SPACE
from urnbound.domain.question import (
    Answer,
    AnswerField,
    Context,
    Question,
    bound_field,
    method_field,
    space_field,
)
from urnbound.domain.schedules import FROM, POINTS, SPACING, TO, refuse_time_ordered


def _points(curve: RiskCurve) -> list[dict[str, Any]]:
    return [{"count": count, "collision": risk.collision, "no_collision": risk.no_collision}
            for count, risk in zip(curve.counts, curve.risks, strict=True)]


def _answer(inputs: Inputs, context: Context) -> Answer:
    refuse_time_ordered(inputs)
    curve = risk_curve(inputs["space"].size, inputs["from"], inputs["to"],
                       inputs["points"] or DEFAULT_POINTS, inputs["spacing"] or "log",
                       exact_digit_limit=context.exact_digit_limit)
    method = "+".join(curve.methods)
    return Answer(
        {
            "points": _points(curve),
            "space": inputs["space"],
            "method": method,
            "relative_error_bound": max(r.relative_error_bound for r in curve.risks),
        },
        method,
    )


QUESTION = Question(
    name="curves",
    path="/v1/curves",
    summary="Collision risk and its complement across a range of counts, for charts.",
    description=__doc__ or "",
    inputs=(SPACE, FROM, TO),
    optional=(POINTS, SPACING),
    answer=(
        AnswerField("points", "records", "The counts in rising order, each with its risk.",
                    members=(
                        AnswerField("count", "whole", "Identifiers drawn."),
                        AnswerField("collision", "probability",
                                    "P(at least two identifiers are equal)."),
                        AnswerField("no_collision", "probability",
                                    "P(all are distinct), with its own accuracy."),
                    )),
        space_field(),
        method_field("the risks (exact, asymptotic, or both joined by +)"),
        bound_field("every reported risk"),
    ),
    compute=_answer,
    chart=charts.curve_chart,
    example={"bits": "64", "from": "1e6", "to": "1e10", "points": "5"},
)
