"""GET /v1/coverage: after ``draws`` uniform draws, has every one of ``buckets`` been used?

The chance that every bucket is used at least ``at_least`` times (default 1: every
bucket seen at all, the coupon collector's question), its complement and the expected
number of buckets used. With ``target`` q instead of ``draws``: the fewest draws whose
chance reaches q, proven on both sides (one draw fewer falls short). Every answer also
gives the expected number of draws until every bucket is used once, N H_N.

Small questions are exact; large ones come from a saddle-point expansion, an
inclusion-exclusion bound or a recurrence, each with its relative error bound.

Example: ``GET /v1/coverage?buckets=50&draws=300``
"""

from __future__ import annotations

from fractions import Fraction

from urnbound.core.occupancy import occupancy_risk
from urnbound.core.occupancy_figures import expected_draws_to_cover, expected_used
from urnbound.core.occupancy_inverse import fewest_draws
from urnbound.core.occupancy_results import AT_LEAST, OccupancyRisk, Rule
from urnbound.core.results import Magnitude
from urnbound.domain.inputs import Inputs
from urnbound.domain.parameters import AT_LEAST as AT_LEAST_PARAMETER
from urnbound.domain.parameters import BUCKETS, DRAWS_OR_TARGET
from urnbound.domain.question import (
    Answer,
    AnswerField,
    Context,
    Question,
    bound_field,
    method_field,
)

#: These figures rest on uniform draws.
PREMISE = (
    "These figures assume every draw picks one of the buckets independently and uniformly "
    "at random. Skewed or correlated draws cover buckets more slowly; they are no "
    "substitute for measuring your own data."
)


def _answer(inputs: Inputs, context: Context) -> Answer:
    buckets, chosen = inputs["buckets"], inputs["draws"]
    level = inputs["at_least"] or 1
    fewer: Magnitude | None = None
    if isinstance(chosen, Fraction):
        found = fewest_draws(buckets, level, chosen)
        draws, risk = found.draws, found.at_draws
        fewer = found.one_fewer.holds
        bound = max(risk.relative_error_bound, found.one_fewer.relative_error_bound)
    else:
        draws = chosen
        risk = occupancy_risk(buckets, draws, Rule(AT_LEAST, level))
        bound = risk.relative_error_bound
    return Answer(
        {
            "draws": draws,
            "covered": risk.holds,
            "not_covered": risk.fails,
            "covered_one_fewer": fewer,
            "expected_used": expected_used(buckets, draws),
            "expected_draws_to_cover": expected_draws_to_cover(buckets),
            "buckets": buckets,
            "at_least": level,
            "method": risk.method,
            "relative_error_bound": bound,
            "exact": _exact(risk),
        },
        risk.method,
    )


def _exact(risk: OccupancyRisk) -> Fraction | None:
    return None if risk.exact is None else 1 - risk.exact


QUESTION = Question(
    name="coverage",
    path="/v1/coverage",
    summary="Chance that draws use every bucket, or the fewest draws that reach a target.",
    description=__doc__ or "",
    inputs=(BUCKETS, DRAWS_OR_TARGET),
    optional=(AT_LEAST_PARAMETER,),
    answer=(
        AnswerField("draws", "whole", "The draws: as given, or the fewest reaching target."),
        AnswerField("covered", "probability",
                    "P(every bucket is used at least at_least times)."),
        AnswerField("not_covered", "probability",
                    "P(some bucket is used fewer times), with its own accuracy."),
        AnswerField("covered_one_fewer", "probability",
                    "With target: the chance one draw fewer (below target); else null.",
                    nullable=True),
        AnswerField("expected_used", "magnitude", "Expected number of buckets used at all."),
        AnswerField("expected_draws_to_cover", "magnitude",
                    "Expected draws until every bucket is used once: N H_N = "
                    "N (1 + 1/2 + ... + 1/N)."),
        AnswerField("buckets", "whole", "Buckets."),
        AnswerField("at_least", "integer", "Uses every bucket needs."),
        method_field("the coverage chance"),
        bound_field("every reported chance"),
        AnswerField("exact", "fraction",
                    "The coverage chance as a reduced fraction, when its terms have at most "
                    "1,000 digits each (exact method only).", nullable=True),
    ),
    compute=_answer,
    example={"buckets": "50", "draws": "300"},
    premise=PREMISE,
)
