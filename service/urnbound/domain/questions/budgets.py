"""GET /v1/budgets: how does a risk budget fare as identifiers keep being issued?

Identifiers are issued from one space at ``rate`` per ``per`` (an ISO 8601 duration,
default ``PT1S``), on top of the ``issued`` already out (default 0); with ``growth`` the
rate is multiplied by that factor each year of 365 days, continuously (default 1, a
steady rate). Over the ``horizon`` the answer gives the collision risk now and at the
horizon, each with its count; ``exhausted_after``, the first whole second at which the
risk exceeds ``max_risk`` (certified: one second earlier it is within), ``P0D`` with
``already_exhausted`` when it is over now, null when the horizon ends first;
``headroom``, identifiers left before ``max_risk`` is passed; ``capacity_used``, issued
over the capacity at ``max_risk``; and ``series``, ``points`` evenly spaced moments
(default 50, at most 500) with the count issued by each and its risk.

The count issued by time t is the whole part of issued + rate t, or, with growth g,
of issued + rate Y (g^(t/Y) - 1) / ln g for a year Y; it is exact with a steady rate
and certified otherwise.

A time-ordered layout (``format=uuid-v7``, or ``tick`` + ``random_bits``) accrues risk per
tick: its risk is the tick model's (see /v1/rates) over the time the identifiers take at
the rate, the ``issued`` ones taken to have been issued at the rate in force now before
now; with growth, the hazard of each tick at the rate of its moment, summed over the ticks
(the horizon must end before the identifiers per tick reach half the values per tick);
``capacity`` is then the count issued by the last second within max_risk.

Example: ``GET /v1/budgets?bits=64&issued=4e7&rate=2e6&per=P1D&horizon=P730D&max_risk=1e-3``
"""

from __future__ import annotations

from collections.abc import Iterable
from fractions import Fraction
from typing import Any

from urnbound.core.errors import DomainError
from urnbound.core.exact import magnitude_of_fraction
from urnbound.core.limits import DEFAULT_POINTS
from urnbound.core.projection import (
    BudgetProjection,
    IssueSchedule,
    PointRisk,
    ProjectedPoint,
    project_budget,
)
from urnbound.core.tick_budgets import project_tick_budget
from urnbound.domain import charts
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
from urnbound.domain.schedules import (
    GROWTH,
    HORIZON,
    ISSUE_RATE,
    ISSUED,
    PER,
    POINTS,
    elapsed_text,
    per_second,
)


def schedule_of(inputs: Inputs) -> IssueSchedule:
    """The issue schedule a request describes (rate per second = rate / per)."""
    per = inputs["per"] if inputs["per"] is not None else Fraction(1)
    return IssueSchedule(
        issued=inputs["issued"] or 0,
        rate=inputs["rate"] / per,
        growth=inputs["growth"] if inputs["growth"] is not None else Fraction(1),
    )


def moment(point: ProjectedPoint) -> dict[str, Any]:
    """One moment of the projection as an answer record."""
    return {"offset": elapsed_text(point.seconds), "seconds": float(point.seconds),
            "count": point.count, "collision": point.risk.collision}


def _exhausted(projection: BudgetProjection) -> dict[str, Any] | None:
    found = projection.exhausted
    if found is None:
        return None
    before = found.before
    return {
        "duration": elapsed_text(found.seconds),
        "seconds": float(found.seconds),
        "already_exhausted": found.already,
        "count_before": None if before is None else before.count,
        "collision_before": None if before is None else before.risk.collision,
        "count": found.at.count,
        "collision": found.at.risk.collision,
    }


def _risks(projection: BudgetProjection) -> Iterable[PointRisk]:
    yield projection.capacity.at_count
    if projection.capacity.one_more is not None:
        yield projection.capacity.one_more
    for point in projection.series:
        yield point.risk
    if projection.exhausted is not None:
        yield projection.exhausted.at.risk
        if projection.exhausted.before is not None:
            yield projection.exhausted.before.risk


def budget_answer(inputs: Inputs, projection: BudgetProjection) -> Answer:
    """The members of a budget answer from its projection (also for watched schemes)."""
    used, rate = projection.capacity_used, projection.schedule.rate
    method = projection.capacity.at_count.method
    return Answer(
        {
            "now": {"count": projection.now.count, "collision": projection.now.risk.collision},
            "at_horizon": moment(projection.at_horizon),
            "exhausted_after": _exhausted(projection),
            "headroom": projection.headroom,
            "capacity": projection.capacity.count,
            "capacity_used": magnitude_of_fraction(used.numerator, used.denominator),
            "rate_per_second": magnitude_of_fraction(rate.numerator, rate.denominator),
            "max_risk": magnitude_of_fraction(projection.max_risk.numerator,
                                              projection.max_risk.denominator),
            "series": [moment(point) for point in projection.series],
            "space": inputs["space"],
            "method": method,
            "relative_error_bound": max(r.relative_error_bound for r in _risks(projection)),
        },
        method,
    )


def _answer(inputs: Inputs, context: Context) -> Answer:
    space, points = inputs["space"], inputs["points"] or DEFAULT_POINTS
    if isinstance(space, TimeOrderedSpace):
        try:
            projection = project_tick_budget(space.random_bits, space.tick_seconds,
                                             schedule_of(inputs), inputs["horizon"],
                                             inputs["max_risk"], points)
        except DomainError as error:
            raise InvalidQuery({error.field or "space": [error.detail]}) from None
    else:
        projection = project_budget(
            space.size, schedule_of(inputs), inputs["horizon"], inputs["max_risk"], points,
            exact_digit_limit=context.exact_digit_limit)
    return budget_answer(inputs, projection)


def _collision(description: str, nullable: bool = False) -> AnswerField:
    return AnswerField("collision", "probability", description, nullable=nullable)


#: The members of one moment of a projection.
MOMENT_MEMBERS = (
    AnswerField("offset", "text", "Time from now, as an ISO 8601 duration."),
    AnswerField("seconds", "number", "Time from now, in seconds."),
    AnswerField("count", "whole", "Identifiers issued by then."),
    _collision("P(at least two of them are equal)."),
)

QUESTION = Question(
    name="budgets",
    path="/v1/budgets",
    summary="Risk budget over time at an issue rate: risk now and ahead, when it runs out.",
    description=__doc__ or "",
    inputs=(SPACE, ISSUE_RATE, HORIZON, MAX_RISK),
    optional=(ISSUED, PER, GROWTH, POINTS),
    answer=(
        AnswerField("now", "object", "The risk of the identifiers issued so far.", members=(
            AnswerField("count", "whole", "Identifiers issued so far."),
            _collision("P(at least two of them are equal)."),
        )),
        AnswerField("at_horizon", "object", "The risk at the horizon.",
                    members=MOMENT_MEMBERS),
        AnswerField(
            "exhausted_after", "object",
            "When the risk first exceeds max_risk, to the second; null when the horizon "
            "ends first.", nullable=True, members=(
                AnswerField("duration", "text", "Time from now, as an ISO 8601 duration "
                            "(P0D when already over)."),
                AnswerField("seconds", "number", "The same, in seconds."),
                AnswerField("already_exhausted", "boolean",
                            "True when the risk exceeds max_risk now."),
                AnswerField("count_before", "whole", "Identifiers issued one second earlier.",
                            nullable=True),
                AnswerField("collision_before", "probability",
                            "The risk one second earlier (within max_risk).", nullable=True),
                AnswerField("count", "whole", "Identifiers issued by then."),
                _collision("The risk then (above max_risk)."),
            )),
        AnswerField("headroom", "whole", "Identifiers that can still be issued before the "
                    "risk exceeds max_risk (0 when over)."),
        AnswerField("capacity", "whole", "The largest count within max_risk."),
        AnswerField("capacity_used", "magnitude", "issued / capacity (above 1 when over)."),
        AnswerField("rate_per_second", "magnitude", "The rate per second at the start of the "
                    "schedule (now; for a watched scheme, when it was counted)."),
        AnswerField("max_risk", "magnitude", "The budget, as given."),
        AnswerField("series", "records", "Evenly spaced moments from now to the horizon.",
                    members=MOMENT_MEMBERS),
        space_field(),
        method_field("the risk at the capacity"),
        bound_field("every reported risk"),
    ),
    compute=_answer,
    chart=charts.budget_chart,
    normalize=per_second,
    example={"bits": "64", "issued": "4e7", "rate": "2e6", "per": "P1D", "horizon": "P730D",
             "max_risk": "1e-3", "points": "5"},
)
