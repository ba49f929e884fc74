"""GET /v1/alphabets: the named alphabets with their sizes, symbols and sources."""

from __future__ import annotations

from flask import Blueprint, Response, request

from urnbound.api.answering import cached_response
from urnbound.api.caching import CachedAnswer, json_body
from urnbound.api.queries import EmptyQuerySchema, load_query
from urnbound.api.schemas import AlphabetListSchema
from urnbound.domain.alphabets import NAMED_ALPHABETS

blueprint = Blueprint("alphabets", __name__)


@blueprint.get("/v1/alphabets")
def alphabets() -> Response:
    """Every named alphabet a question may use."""
    load_query(EmptyQuerySchema(), request.args)

    def compute() -> CachedAnswer:
        document = {"alphabets": list(NAMED_ALPHABETS.values())}
        return CachedAnswer(json_body(AlphabetListSchema().dump(document)))

    return cached_response("alphabets", {}, compute)
