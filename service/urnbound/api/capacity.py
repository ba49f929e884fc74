"""GET /v1/capacity: the most identifiers a space takes with the risk in budget."""

from __future__ import annotations

from flask import Blueprint, Response, request

from urnbound.api.answering import cached_response
from urnbound.api.caching import CachedAnswer, json_body
from urnbound.api.queries import CapacityQuestion, load_query
from urnbound.api.state import service_state
from urnbound.domain.questions import capacity_report

blueprint = Blueprint("capacity", __name__)


@blueprint.get("/v1/capacity")
def capacity() -> Response:
    """Largest count a space takes with at most ``max_risk`` of a collision."""
    state = service_state()
    limit = state.settings.exact_digit_limit

    def load() -> CapacityQuestion:
        question: CapacityQuestion = load_query(state.queries.capacity, request.args)
        return question

    def compute(question: CapacityQuestion) -> CachedAnswer:
        report = capacity_report(question.space, question.max_risk, exact_digit_limit=limit)
        method = report.answer.at_count.method
        return CachedAnswer(json_body(state.answers.capacity.dump(report)), method)

    return cached_response("capacity", load, compute)
