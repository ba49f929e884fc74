"""The reply to a registered question, formed from the WSGI environ alone.

The WSGI front (``front.py``) and the Flask view (``views.py``) both answer questions here,
so a question is answered one way whichever of them serves it: the query string parsed
through the spelling cache, the representation chosen (the chart when ``Accept`` prefers
SVG to JSON, for a question that declares one), the answer taken from the cache or computed,
then counted in the metrics. No request context is needed.
"""

from __future__ import annotations

from typing import Any
from urllib.parse import parse_qsl

from werkzeug.datastructures import MIMEAccept
from werkzeug.http import parse_accept_header

from urnbound.api.caching import Reply, conditional_reply, known_question, variant
from urnbound.api.metrics import Metrics
from urnbound.api.rendering import JSON_MEDIA_TYPE, SVG_MEDIA_TYPE
from urnbound.api.state import ServiceState
from urnbound.domain.errors import InvalidQuery
from urnbound.domain.inputs import Inputs
from urnbound.domain.question import Question

WsgiEnviron = dict[str, Any]


def reply_to(state: ServiceState, question: Question, environ: WsgiEnviron) -> Reply:
    """The reply to ``question`` asked by the request ``environ``.

    :raises InvalidQuery: and the other errors of loading and computing, which the Flask
        app's handlers turn into problem documents.
    """
    # The bytes of the request target's query (WSGI passes them as latin-1 text).
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
    """The inputs in the request's query string."""
    return question.load(query_texts(environ.get("QUERY_STRING", "").encode("latin1")))


def query_texts(query: bytes) -> dict[str, list[str]]:
    """Parameter name -> the texts given, in order, from a query string.

    Percent-escapes are decoded as UTF-8; an escape that is not UTF-8 becomes U+FFFD, which
    no parameter accepts. Raw bytes must be UTF-8 text.

    >>> query_texts(b"count=1e6&bits=64&count=%31")
    {'count': ['1e6', '1'], 'bits': ['64']}

    :raises InvalidQuery: for raw bytes that are not UTF-8.
    """
    try:
        text = query.decode()
    except UnicodeDecodeError:
        raise InvalidQuery({"query": [
            "the query string must be UTF-8 text; percent-encode other bytes"]}) from None
    texts: dict[str, list[str]] = {}
    for name, value in parse_qsl(text, keep_blank_values=True, errors="replace"):
        texts.setdefault(name, []).append(value)
    return texts


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
