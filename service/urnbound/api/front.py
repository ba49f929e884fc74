"""The WSGI front of the app: the metrics exposition, request timing, and question replies.

Every request passes here first, and is stamped with the moment it arrived.

* Exactly :data:`~urnbound.api.metrics.METRICS_PATH` is served from the exposition (a prefix
  mount would also take ``/metrics/...``, which the app answers with a 404 problem instead).
* A GET or HEAD of a registered question's path is replied to here, through
  :func:`~urnbound.api.replies.reply_to`, the function the Flask view uses too; its metrics
  and access line are written here, and Flask's request machinery (context, routing,
  hooks, response object) is skipped, which is most of the per-request cost of a cached
  answer.
* Everything else goes to the Flask app: other paths and methods, and a question whose
  reply raised (a query that does not load, an answer out of range). The raised error is
  handed over in the environ, so the view raises it again instead of computing twice, and
  the app's handlers turn it into a problem document as for any other request.

The Flask app's own hook observes the requests that reach it, with the same stamp.
"""

from __future__ import annotations

import logging
import time
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

from flask import Flask, Response, request

from urnbound.api.access_log import AccessLog, Served
from urnbound.api.metrics import METRICS_PATH, Metrics, metrics_wsgi_app
from urnbound.api.replies import count_reply, reply_to
from urnbound.api.state import ServiceState
from urnbound.domain.question import Question

#: WSGI environ key holding ``time.perf_counter()`` at the moment the request arrived.
REQUEST_START_KEY = "urnbound.front.start"
#: WSGI environ key holding the error a question's reply raised in the front.
REPLY_ERROR_KEY = "urnbound.front.reply_error"
LOGGER = logging.getLogger("urnbound.front")
#: Methods a question is replied to in the front (Flask answers OPTIONS and sends 405s).
REPLIED_METHODS = frozenset({"GET", "HEAD"})

WsgiStartResponse = Callable[..., Any]
WsgiApp = Callable[[dict[str, Any], WsgiStartResponse], Iterable[bytes]]


@dataclass(frozen=True, slots=True)
class Observer:
    """Counts and times each response (``metrics``) and logs it (``access``), when set."""

    metrics: Metrics | None
    access: AccessLog | None

    def observe(self, environ: Mapping[str, Any], served: Served) -> None:
        """Record one response to the request ``environ``."""
        now = time.perf_counter()
        seconds = now - environ.get(REQUEST_START_KEY, now)
        if self.metrics is not None:
            endpoint = served.endpoint if served.endpoint is not None else "unmatched"
            self.metrics.observe_request(endpoint, served.method, served.status, seconds)
        if self.access is not None:
            self.access.write(environ, served, seconds)


@dataclass(frozen=True, slots=True)
class Front:
    """The WSGI middleware described in the module docstring.

    :ivar exposition: the ``/metrics`` app, or ``None`` to leave that path to ``app``.
    """

    app: WsgiApp
    state: ServiceState
    observer: Observer
    exposition: WsgiApp | None
    questions: Mapping[str, Question] = field(default_factory=dict)

    def __call__(
        self, environ: dict[str, Any], start_response: WsgiStartResponse
    ) -> Iterable[bytes]:
        path = environ.get("PATH_INFO")
        if path == METRICS_PATH and self.exposition is not None:
            return self.exposition(environ, start_response)
        environ[REQUEST_START_KEY] = time.perf_counter()
        question = self.questions.get(path) if isinstance(path, str) else None
        method = environ.get("REQUEST_METHOD")
        if question is None or method not in REPLIED_METHODS:
            return self.app(environ, start_response)
        try:
            reply = reply_to(self.state, question, environ)
        except Exception as error:  # the app's handlers form the problem document
            environ[REPLY_ERROR_KEY] = error
            return self.app(environ, start_response)
        try:
            count_reply(self.state.metrics, question, reply)
            self.observer.observe(
                environ, Served(str(method), question.path, question.path, reply.status,
                                len(reply.body)))
        except Exception:  # counting must never cost the client its answer
            LOGGER.exception("could not count or log the reply to %s", question.path)
        start_response(f"{reply.status} {_REASONS[reply.status]}", reply.headers)
        return [] if method == "HEAD" else [reply.body]


#: Reason phrases of the statuses the front sends, spelled as Werkzeug spells them.
_REASONS = {200: "OK", 304: "NOT MODIFIED"}


def init_front(app: Flask, state: ServiceState, access: AccessLog | None) -> None:
    """Put the front before ``app`` and observe the requests that still reach Flask."""
    observer = Observer(state.metrics, access)
    app.after_request(flask_hook(observer))
    app.wsgi_app = Front(  # type: ignore[method-assign]
        app.wsgi_app,
        state,
        observer,
        metrics_wsgi_app(state.metrics),
        {question.path: question for question in state.registry},
    )


def flask_hook(observer: Observer) -> Callable[[Response], Response]:
    """An ``after_request`` hook that records, with ``observer``, what Flask sends."""

    def observe_flask_response(response: Response) -> Response:
        rule = request.url_rule
        served = Served(request.method, request.path, rule.rule if rule is not None else None,
                        response.status_code, response.calculate_content_length())
        observer.observe(request.environ, served)
        return response

    return observe_flask_response


def raise_reply_error(environ: Mapping[str, Any]) -> None:
    """Raise the error the front met replying to this request, if it met one."""
    error = environ.get(REPLY_ERROR_KEY)
    if error is not None:
        raise error
