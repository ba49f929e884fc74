"""The one view that answers every registered question through caching, metrics and problems.

Each question's path is a route to :func:`answer_question`, whose endpoint name is the
question's name; the view loads the query string through the question's parameters
(``InvalidQuery`` becomes a problem document), then asks the caches, and computes and
renders the answer only on a miss. A question that declares a chart answers with it
(SVG) when the request's ``Accept`` prefers ``image/svg+xml`` to JSON; the chart has its
own cache entry and ETag, and both representations say ``Vary: Accept``.
"""

from __future__ import annotations

from flask import Flask, Response, request

from urnbound.api.caching import conditional_answer, known_question, variant
from urnbound.api.rendering import JSON_MEDIA_TYPE, SVG_MEDIA_TYPE
from urnbound.api.state import service_state
from urnbound.domain.inputs import Inputs
from urnbound.domain.registry import Registry


def init_questions(app: Flask, registry: Registry) -> None:
    """Route every question of ``registry`` to the generic view."""
    for question in registry:
        app.add_url_rule(question.path, endpoint=question.name, view_func=answer_question,
                         methods=["GET"])


def answer_question() -> Response:
    """The answer to the question routed here, with caching headers."""
    state = service_state()
    question = state.registry[str(request.endpoint)]

    def load() -> Inputs:
        args = request.args
        return question.load({name: args.getlist(name) for name in args})

    known = known_question(state.caching, question.name, request.query_string, load)
    metrics = state.metrics
    render = state.renderer.render
    if question.chart is not None and prefers_chart():
        known, render = variant(known, SVG_MEDIA_TYPE), state.renderer.render_chart

    response, fresh = conditional_answer(
        state.caching,
        known,
        lambda: render(question, known.question, state.context),
        metrics.count_cache_lookup,
    )
    if question.chart is not None:
        response.headers["Vary"] = "Accept"
    if fresh is not None and fresh.method is not None:
        metrics.answers.labels(endpoint=question.name, method=fresh.method).inc()
    return response


def prefers_chart() -> bool:
    """The request's Accept ranks an SVG chart above JSON (ties go to JSON)."""
    best = request.accept_mimetypes.best_match((JSON_MEDIA_TYPE, SVG_MEDIA_TYPE))
    return best == SVG_MEDIA_TYPE
