"""The one view that answers every registered question through caching, metrics and problems.

Each question's path is a route to :func:`answer_question`, whose endpoint name is the
question's name. The WSGI front (``front.py``) replies to GET and HEAD of these paths
itself, through the same :func:`~urnbound.api.replies.reply_to`; a request reaches this
view when that reply raised, and the view raises the same error for the app's handlers to
turn into a problem document (``InvalidQuery`` becomes an invalid-query problem). Without
the front, the view replies on its own, with the same headers and counts.
"""

from __future__ import annotations

from flask import Flask, Response, request

from urnbound.api.front import raise_reply_error
from urnbound.api.replies import count_reply, reply_to
from urnbound.api.state import service_state
from urnbound.domain.registry import Registry


def init_questions(app: Flask, registry: Registry) -> None:
    """Route every question of ``registry`` to the generic view."""
    for question in registry:
        app.add_url_rule(question.path, endpoint=question.name, view_func=answer_question,
                         methods=["GET"])


def answer_question() -> Response:
    """The answer to the question routed here, with caching headers."""
    raise_reply_error(request.environ)
    state = service_state()
    question = state.registry[str(request.endpoint)]
    reply = reply_to(state, question, request.environ)
    count_reply(state.metrics, question, reply)
    return Response(reply.body, status=reply.status, headers=reply.headers)
