"""GET /v1/collisions: the risk that identifiers drawn from a space collide."""

from __future__ import annotations

from flask import Blueprint, Response, request

from urnbound.api.answering import cached_response
from urnbound.api.caching import CachedAnswer, json_body
from urnbound.api.queries import CollisionQuerySchema, CollisionQuestion, load_query
from urnbound.api.schemas import CollisionSchema
from urnbound.api.state import service_state
from urnbound.domain.questions import collision_report

blueprint = Blueprint("collisions", __name__)


@blueprint.get("/v1/collisions")
def collisions() -> Response:
    """Collision risk for ``count`` identifiers from one identifier space."""
    question: CollisionQuestion = load_query(CollisionQuerySchema(), request.args)
    limit = service_state().settings.exact_digit_limit

    def compute() -> CachedAnswer:
        report = collision_report(question.space, question.count, exact_digit_limit=limit)
        return CachedAnswer(json_body(CollisionSchema().dump(report)), report.risk.method)

    return cached_response("collisions", question.normalized(), compute)
