"""GET /v1/capacity: the most identifiers a space takes with the risk in budget."""

from __future__ import annotations

from flask import Blueprint, Response, request

from urnbound.api.answering import cached_response
from urnbound.api.caching import CachedAnswer, json_body
from urnbound.api.queries import CapacityQuerySchema, CapacityQuestion, load_query
from urnbound.api.schemas import CapacitySchema
from urnbound.api.state import service_state
from urnbound.domain.questions import capacity_report

blueprint = Blueprint("capacity", __name__)


@blueprint.get("/v1/capacity")
def capacity() -> Response:
    """Largest count a space takes with at most ``max_risk`` of a collision."""
    question: CapacityQuestion = load_query(CapacityQuerySchema(), request.args)
    limit = service_state().settings.exact_digit_limit

    def compute() -> CachedAnswer:
        report = capacity_report(question.space, question.max_risk, exact_digit_limit=limit)
        method = report.answer.at_count.method
        return CachedAnswer(json_body(CapacitySchema().dump(report)), method)

    return cached_response("capacity", question.normalized(), compute)
