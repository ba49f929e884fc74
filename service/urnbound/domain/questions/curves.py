"""GET /v1/curves: a chance across a range of counts, for charts.

Up to ``points`` counts (default 50, at most 500; 100 for loads and coverage) from
``from`` to ``to``, log-spaced by default (``spacing=linear`` spreads them evenly), each
with the chance of an event and its complement. ``question`` chooses the event:
``collisions`` (default), that identifiers drawn from the space are not all distinct, as
/v1/collisions answers it; ``loads``, that some bucket holds at least ``load`` items when
that many are placed on the space's values as buckets, as /v1/loads answers it; or
``coverage``, that some bucket is used fewer than ``at_least`` times (default 1), the
complement of /v1/coverage. Counts are whole numbers; where several round to the same
count it is given once. Time-ordered layouts are not drawn here (see /v1/rates).

Example: ``GET /v1/curves?bits=64&from=1e6&to=1e10&points=5``
"""

from __future__ import annotations

from typing import Any

from urnbound.core.curves import RiskCurve, occupancy_curve, risk_curve
from urnbound.core.errors import DomainError
from urnbound.core.limits import DEFAULT_POINTS, MAX_BUCKETS, MAX_OCCUPANCY_POINTS, MAX_TEXT_CHARS
from urnbound.core.occupancy_results import AT_LEAST as AT_LEAST_RULE
from urnbound.core.occupancy_results import BELOW, Rule
from urnbound.domain import charts
from urnbound.domain.errors import InvalidQuery
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import AT_LEAST, LOAD, SPACE, Parameter
from urnbound.domain.question import (
    ASSUMPTION,
    Answer,
    AnswerField,
    Context,
    Question,
    bound_field,
    method_field,
    space_field,
)
from urnbound.domain.questions.loads import PREMISE as PLACEMENT_PREMISE
from urnbound.domain.schedules import FROM, POINTS, SPACING, TO, refuse_time_ordered

#: The events a curve can follow.
KINDS = ("collisions", "loads", "coverage")


def _kind(text: str) -> str:
    value = text.strip().lower() if isinstance(text, str) else ""
    if value not in KINDS:
        raise DomainError(f"question must be one of {', '.join(KINDS)}", field="question")
    return value


KIND = Parameter(
    "question",
    _kind,
    "one of " + ", ".join(KINDS),
    "The chance drawn: collisions (default; some two identifiers equal), loads (some "
    "bucket holds at least load items, the space's values being the buckets) or coverage "
    "(some bucket used fewer than at_least times).",
    "loads",
    {"type": "string", "enum": list(KINDS), "maxLength": MAX_TEXT_CHARS},
)


def _points(curve: RiskCurve) -> list[dict[str, Any]]:
    return [{"count": p.count, "risk": p.risk, "complement": p.complement}
            for p in curve.points]


def _checked(inputs: Inputs) -> tuple[str, int]:
    """The kind and the points, once the parameters that go with the kind are checked."""
    kind = inputs["question"] or "collisions"
    given = {name for name in ("load", "at_least") if inputs[name] is not None}
    wanted = {"collisions": set(), "loads": {"load"}, "coverage": {"at_least"}}[kind]
    errors = {name: [f"{name} goes with question={'loads' if name == 'load' else 'coverage'}"]
              for name in given - wanted}
    if kind == "loads" and inputs["load"] is None:
        errors["load"] = ["load is required with question=loads"]
    points = inputs["points"] or DEFAULT_POINTS
    if kind != "collisions" and points > MAX_OCCUPANCY_POINTS:
        errors["points"] = [f"points must be at most {MAX_OCCUPANCY_POINTS} for {kind}"]
    if kind != "collisions" and inputs["space"].size > MAX_BUCKETS:
        errors["space"] = [f"loads and coverage take at most {MAX_BUCKETS:.0e} buckets"]
    if errors:
        raise InvalidQuery(errors)
    return kind, points


def _curve(kind: str, points: int, inputs: Inputs, context: Context) -> tuple[RiskCurve, str]:
    size, low, high = inputs["space"].size, inputs["from"], inputs["to"]
    spacing = inputs["spacing"] or "log"
    if kind == "loads":
        load = inputs["load"]
        return (occupancy_curve(size, low, high, points, spacing, Rule(BELOW, load)),
                f"some bucket holds at least {load} items")
    if kind == "coverage":
        level = inputs["at_least"] or 1
        event = "some bucket is never used" if level == 1 else (
            f"some bucket is used fewer than {level} times")
        return occupancy_curve(size, low, high, points, spacing, Rule(AT_LEAST_RULE, level)), event
    curve = risk_curve(size, low, high, points, spacing,
                       exact_digit_limit=context.exact_digit_limit)
    return curve, "some two identifiers are equal"


def _answer(inputs: Inputs, context: Context) -> Answer:
    refuse_time_ordered(inputs)
    kind, points = _checked(inputs)
    curve, event = _curve(kind, points, inputs, context)
    method = "+".join(curve.methods)
    return Answer(
        {
            "question": kind,
            "event": event,
            "points": _points(curve),
            "space": inputs["space"],
            "method": method,
            "relative_error_bound": max(p.relative_error_bound for p in curve.points),
            "assumptions": ASSUMPTION if kind == "collisions" else PLACEMENT_PREMISE,
        },
        method,
    )


QUESTION = Question(
    name="curves",
    path="/v1/curves",
    summary="A chance (collision, load, coverage) across a range of counts, for charts.",
    description=__doc__ or "",
    inputs=(SPACE, FROM, TO),
    optional=(POINTS, SPACING, KIND, LOAD, AT_LEAST),
    answer=(
        AnswerField("question", "text", "The chance drawn.", enum=KINDS),
        AnswerField("event", "text", "The event whose chance risk is, in words."),
        AnswerField("points", "records", "The counts in rising order, each with its chance.",
                    members=(
                        AnswerField("count", "whole", "Identifiers drawn, or items placed."),
                        AnswerField("risk", "probability", "P(the event)."),
                        AnswerField("complement", "probability",
                                    "1 - risk, with its own accuracy."),
                    )),
        space_field("The identifier space (for loads and coverage, its values are the "
                    "buckets)."),
        method_field("the chances (joined by + when several)"),
        bound_field("every reported chance"),
    ),
    compute=_answer,
    chart=charts.curve_chart,
    example={"bits": "64", "from": "1e6", "to": "1e10", "points": "5"},
)
