"""The reply to a registered question, formed from the WSGI environ alone.

The WSGI front (``front.py``) and the Flask view (``views.py``) both answer questions here,
so a question is answered one way whichever of them serves it: the query string parsed
through the spelling cache, the representation chosen (the chart when ``Accept`` prefers
SVG to JSON, for a question that declares one), the answer taken from the cache or computed,
then counted in the metrics. No request context is needed.
"""

from __future__ import annotations

from typing import Any

from werkzeug.datastructures import MIMEAccept
from werkzeug.http import parse_accept_header
from werkzeug.wrappers import Request

from urnbound.api.caching import Reply, conditional_reply, known_question, variant
from urnbound.api.metrics import Metrics
from urnbound.api.rendering import JSON_MEDIA_TYPE, SVG_MEDIA_TYPE
from urnbound.api.state import ServiceState
from urnbound.domain.inputs import Inputs
from urnbound.domain.question import Question

WsgiEnviron = dict[str, Any]


def reply_to(state: ServiceState, question: Question, environ: WsgiEnviron) -> Reply:
    """The reply to ``question`` asked by the request ``environ``.

    :raises InvalidQuery: and the other errors of loading and computing, which the Flask
        app's handlers turn into problem documents.
    """
    # The same bytes as Flask's request.query_string, so both paths share one spelling cache.
    query = environ.get("QUERY_STRING", "").encode("latin1")
    known = known_question(state.caching, question.name, query,
                           lambda: loaded_query(question, environ))
    render = state.renderer.render
    vary = None
    if question.chart is not None:
        vary = "Accept"
        if prefers_chart(environ.get("HTTP_ACCEPT")):
            known, render = variant(known, SVG_MEDIA_TYPE), state.renderer.render_chart
    return conditional_reply(
        state.caching,
        known,
        lambda: render(question, known.question, state.context),
        environ.get("HTTP_IF_NONE_MATCH"),
        vary,
    )


def loaded_query(question: Question, environ: WsgiEnviron) -> Inputs:
    """The inputs in the query string, parsed by Werkzeug exactly as ``request.args`` is."""
    args = Request(environ).args
    return question.load({name: args.getlist(name) for name in args})


def prefers_chart(accept: str | None) -> bool:
    """The ``Accept`` header ranks an SVG chart above JSON (ties, and no header, go to JSON)."""
    best = parse_accept_header(accept, MIMEAccept).best_match((JSON_MEDIA_TYPE, SVG_MEDIA_TYPE))
    return best == SVG_MEDIA_TYPE


def count_reply(metrics: Metrics, question: Question, reply: Reply) -> None:
    """Count the cache lookup of a sent reply, and the answer when it was computed for it."""
    if reply.cache_hit is not None:
        metrics.count_cache_lookup(reply.cache_hit)
    fresh = reply.fresh
    if fresh is not None and fresh.method is not None:
        metrics.count_answer(question.name, fresh.method)
