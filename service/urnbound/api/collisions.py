"""GET /v1/collisions: the risk that identifiers drawn from a space collide."""

from __future__ import annotations

from flask import Blueprint, Response, request

from urnbound.api.answering import cached_response
from urnbound.api.caching import CachedAnswer, json_body
from urnbound.api.queries import CollisionQuestion, load_query
from urnbound.api.state import service_state
from urnbound.domain.questions import collision_report

blueprint = Blueprint("collisions", __name__)


@blueprint.get("/v1/collisions")
def collisions() -> Response:
    """Collision risk for ``count`` identifiers from one identifier space."""
    state = service_state()
    limit = state.settings.exact_digit_limit

    def load() -> CollisionQuestion:
        question: CollisionQuestion = load_query(state.queries.collisions, request.args)
        return question

    def compute(question: CollisionQuestion) -> CachedAnswer:
        report = collision_report(question.space, question.count, exact_digit_limit=limit)
        return CachedAnswer(json_body(state.answers.collision.dump(report)), report.risk.method)

    return cached_response("collisions", load, compute)
