"""GET /v1/alphabets: the named alphabets with their sizes, symbols and sources."""

from __future__ import annotations

from flask import Blueprint, Response, request

from urnbound.api.answering import cached_response
from urnbound.api.caching import CachedAnswer, json_body
from urnbound.api.queries import NoQuestion, load_query
from urnbound.api.state import service_state
from urnbound.domain.alphabets import NAMED_ALPHABETS

blueprint = Blueprint("alphabets", __name__)


@blueprint.get("/v1/alphabets")
def alphabets() -> Response:
    """Every named alphabet a question may use."""
    state = service_state()

    def load() -> NoQuestion:
        question: NoQuestion = load_query(state.queries.empty, request.args)
        return question

    def compute(question: NoQuestion) -> CachedAnswer:
        document = {"alphabets": list(NAMED_ALPHABETS.values())}
        return CachedAnswer(json_body(state.answers.alphabets.dump(document)))

    return cached_response("alphabets", load, compute)
