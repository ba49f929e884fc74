"""Serve a question's answer through the caches, counting hits, misses and methods."""

from __future__ import annotations

from collections.abc import Callable
from typing import TypeVar

from flask import Response, request

from urnbound.api.caching import (
    CachedAnswer,
    Normalizable,
    conditional_answer,
    known_question,
)
from urnbound.api.state import service_state

Q = TypeVar("Q", bound=Normalizable)


def cached_response(
    endpoint: str, load: Callable[[], Q], compute: Callable[[Q], CachedAnswer]
) -> Response:
    """The answer to this request's question, with caching headers.

    :param load: parses the query string into a question; runs once per spelling
        while the spelling stays in the cache.
    :param compute: builds the answer body; runs only when neither a conditional
        request nor the answer cache can answer.
    """
    state = service_state()
    metrics = state.metrics
    known = known_question(state.caching, endpoint, request.query_string, load)

    def record_lookup(hit: bool) -> None:
        metrics.cache_events.labels(result="hit" if hit else "miss").inc()

    response, fresh = conditional_answer(
        state.caching, known, lambda: compute(known.question), record_lookup
    )
    if fresh is not None and fresh.method is not None:
        metrics.answers.labels(endpoint=endpoint, method=fresh.method).inc()
    return response
