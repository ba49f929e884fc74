"""GET /v1/loads: how full does the fullest bucket get when ``count`` items land on ``buckets``?

Items are placed independently and uniformly on the buckets (hash-table slots, shards,
partitions). With ``load`` k: the chance that some bucket holds at least k items, its
complement, the expected number of empty buckets and of buckets holding at least k, and
the expected load profile (how many buckets hold exactly j items, for j up to the likely
maximum, at most 64 rows). With ``max_risk`` r instead of ``load``: the smallest load k
whose chance is at most r, proven on both sides (the chance at k - 1 exceeds r). The mean
load, count / buckets, may be at most 100,000.

Small questions are exact; large ones come from a saddle-point expansion, an
inclusion-exclusion bound or a recurrence, each with its relative error bound.

Example: ``GET /v1/loads?buckets=1e4&count=1e5&load=30``
"""

from __future__ import annotations

from fractions import Fraction

from urnbound.core.errors import DomainError
from urnbound.core.limits import MAX_MEAN_LOAD
from urnbound.core.occupancy import occupancy_risk
from urnbound.core.occupancy_figures import expected_at_least, expected_empty, load_profile
from urnbound.core.occupancy_inverse import smallest_load
from urnbound.core.occupancy_results import BELOW, OccupancyRisk, Rule
from urnbound.core.results import Magnitude
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import BUCKETS, ITEMS, LOAD_OR_RISK
from urnbound.domain.question import (
    Answer,
    AnswerField,
    Context,
    Question,
    bound_field,
    method_field,
)

#: These figures rest on uniform placement, not on identifiers from a secure generator.
PREMISE = (
    "These figures assume every item is placed independently and uniformly at random on "
    "one of the buckets (an ideal hash). Real hash functions and skewed keys can load "
    "buckets far more unevenly; they are no substitute for measuring your own data."
)


def _answer(inputs: Inputs, context: Context) -> Answer:
    buckets, count, chosen = inputs["buckets"], inputs["count"], inputs["load"]
    if count > MAX_MEAN_LOAD * buckets:
        raise DomainError(f"count must be at most {MAX_MEAN_LOAD:,} times buckets (a mean load "
                          f"of at most {MAX_MEAN_LOAD:,} keeps every answer's cost small; got "
                          f"{count} items on {buckets} buckets)", field="count")
    lower: Magnitude | None = None
    if isinstance(chosen, Fraction):
        found = smallest_load(buckets, count, chosen)
        load, risk = found.load, found.at_load
        lower = None if found.one_lower is None else found.one_lower.fails
        bound = max(risk.relative_error_bound,
                    0.0 if found.one_lower is None else found.one_lower.relative_error_bound)
    else:
        load = chosen
        risk = occupancy_risk(buckets, count, Rule(BELOW, load))
        bound = risk.relative_error_bound
    return Answer(
        {
            "load": load,
            "overflow": risk.fails,
            "no_overflow": risk.holds,
            "overflow_one_lower": lower,
            "expected_empty": expected_empty(buckets, count),
            "expected_at_load": expected_at_least(buckets, count, load),
            "profile": load_profile(buckets, count),
            "buckets": buckets,
            "count": count,
            "method": risk.method,
            "relative_error_bound": bound,
            "exact": _exact(risk),
        },
        risk.method,
    )


def _exact(risk: OccupancyRisk) -> Fraction | None:
    return risk.exact


QUESTION = Question(
    name="loads",
    path="/v1/loads",
    summary="Chance that some bucket reaches a load, or the smallest load within max_risk.",
    description=__doc__ or "",
    inputs=(BUCKETS, ITEMS, LOAD_OR_RISK),
    answer=(
        AnswerField("load", "whole", "The load k: as given, or the smallest within max_risk."),
        AnswerField("overflow", "probability", "P(some bucket holds at least load items)."),
        AnswerField("no_overflow", "probability",
                    "P(every bucket holds fewer than load items), with its own accuracy."),
        AnswerField("overflow_one_lower", "probability",
                    "With max_risk: the chance at load - 1 (above max_risk); else null.",
                    nullable=True),
        AnswerField("expected_empty", "magnitude", "Expected number of empty buckets."),
        AnswerField("expected_at_load", "magnitude",
                    "Expected number of buckets holding at least load items."),
        AnswerField("profile", "records",
                    "Expected number of buckets holding exactly j items, for j up to the "
                    "likely maximum (at most 64 rows, the last at the likely maximum).",
                    members=(AnswerField("load", "whole", "The load j."),
                             AnswerField("buckets", "magnitude",
                                         "Expected number of buckets holding exactly j."))),
        AnswerField("buckets", "whole", "Buckets."),
        AnswerField("count", "whole", "Items placed."),
        method_field("the overflow chance"),
        bound_field("every reported chance"),
        AnswerField("exact", "fraction",
                    "The overflow chance as a reduced fraction, when its terms have at most "
                    "1,000 digits each (exact method only).", nullable=True),
    ),
    compute=_answer,
    example={"buckets": "1e4", "count": "1e5", "load": "30"},
    premise=PREMISE,
)
