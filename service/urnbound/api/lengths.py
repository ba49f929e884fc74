"""GET /v1/lengths: the shortest identifier over an alphabet that keeps the risk in budget."""

from __future__ import annotations

from flask import Blueprint, Response, request

from urnbound.api.answering import cached_response
from urnbound.api.caching import CachedAnswer, json_body
from urnbound.api.queries import LengthQuestion, load_query
from urnbound.api.state import service_state
from urnbound.domain.questions import length_report

blueprint = Blueprint("lengths", __name__)


@blueprint.get("/v1/lengths")
def lengths() -> Response:
    """Shortest length for ``count`` identifiers at most ``max_risk`` of a collision."""
    state = service_state()
    limit = state.settings.exact_digit_limit

    def load() -> LengthQuestion:
        question: LengthQuestion = load_query(state.queries.lengths, request.args)
        return question

    def compute(question: LengthQuestion) -> CachedAnswer:
        report = length_report(
            question.alphabet, question.count, question.max_risk, exact_digit_limit=limit
        )
        method = report.answer.at_length.method
        return CachedAnswer(json_body(state.answers.length.dump(report)), method)

    return cached_response("lengths", load, compute)
