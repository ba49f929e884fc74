"""Serve a question's answer through the cache, counting hits, misses and methods."""

from __future__ import annotations

from collections.abc import Callable, Mapping

from flask import Response

from urnbound.api.caching import CachedAnswer, Question, conditional_answer
from urnbound.api.state import service_state


def cached_response(
    endpoint: str, inputs: Mapping[str, object], compute: Callable[[], CachedAnswer]
) -> Response:
    """The answer to the normalized question ``inputs`` of ``endpoint``, with caching headers.

    :param compute: builds the answer body; runs only when neither a conditional
        request nor the cache can answer.
    """
    state = service_state()
    metrics = state.metrics

    def record_lookup(hit: bool) -> None:
        metrics.cache_events.labels(result="hit" if hit else "miss").inc()

    response, fresh = conditional_answer(
        state.caching, Question.of(endpoint, inputs), compute, record_lookup
    )
    if fresh is not None and fresh.method is not None:
        metrics.answers.labels(endpoint=endpoint, method=fresh.method).inc()
    return response
