"""RFC 9457 problem details (application/problem+json) for every error response."""

from __future__ import annotations

import json
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from http import HTTPStatus

from flask import Flask, Response, current_app, request
from marshmallow import ValidationError
from werkzeug.datastructures import Headers
from werkzeug.exceptions import HTTPException

from urnbound.api.problem_pages import init_problem_pages
from urnbound.domain.errors import InvalidQuery, NoConvergence, ServiceError

PROBLEM_MEDIA_TYPE = "application/problem+json"


@dataclass(frozen=True, slots=True)
class ProblemType:
    """A kind of problem: its ``type`` URI reference, ``title`` and HTTP status."""

    uri: str
    title: str
    status: int
    #: What the problem means and what a client can do about it, shown on the type's page.
    explanation: str = ""


#: Query parameters missing, malformed, unknown, out of range or combined wrongly.
INVALID_QUERY = ProblemType(
    "/problems/invalid-query",
    "Invalid query parameters",
    422,
    "One or more query parameters are missing, malformed, not known to the endpoint, outside "
    "their allowed range, or given together with a parameter they exclude. The errors member "
    "names every parameter at fault with its messages, and detail sums them up. Correct those "
    "parameters and ask again: the same request always gets the same answer.",
)
#: Well-formed inputs for which the service has no answer within its limits.
OUT_OF_RANGE = ProblemType(
    "/problems/out-of-range",
    "Question outside the answered range",
    422,
    "The parameters are well formed, but the question lies outside what the service answers "
    "within its limits, for example a space or a count larger than it accepts, or a target "
    "risk too small to reach. detail states the limit and errors names the parameter when one "
    "is at fault. Ask a smaller question; the limits are listed in the API reference.",
)
#: A bounded numerical iteration stopped before reaching its accuracy.
NO_CONVERGENCE = ProblemType(
    "/problems/no-convergence",
    "Computation did not converge",
    500,
    "A numerical iteration reached its bound before the answer had the accuracy the service "
    "guarantees, so no figure was sent rather than one without its error bound. This is a "
    "fault of the service, not of the request, and it has been logged. Asking again gives the "
    "same outcome; please report the query.",
)
#: The core self-check failed; the instance should not take traffic.
NOT_READY = ProblemType(
    "/problems/not-ready",
    "Service not ready",
    503,
    "This instance failed the self-check of its numerical core, which compares a few answers "
    "with known values, so it must not take traffic. detail names the checks that failed. "
    "Load balancers and orchestrators that probe /readyz send requests to other instances; "
    "the instance needs a restart or a fixed release.",
)


def problem_types() -> tuple[ProblemType, ...]:
    """Every problem kind defined in this module, in order of ``uri``.

    The problem pages are listed from here, so a new constant gets its page without more code.
    """
    kinds = {value.uri: value for value in globals().values() if isinstance(value, ProblemType)}
    return tuple(kinds[uri] for uri in sorted(kinds))


@dataclass(frozen=True, slots=True)
class Problem:
    """One problem-details document (RFC 9457, section 3)."""

    status: int
    title: str
    detail: str
    type: str = "about:blank"
    errors: Mapping[str, list[str]] = field(default_factory=dict)

    def document(self, instance: str) -> dict[str, object]:
        """The JSON members, with ``errors`` only when some field is at fault."""
        body: dict[str, object] = {
            "type": self.type,
            "title": self.title,
            "status": self.status,
            "detail": self.detail,
            "instance": instance,
        }
        if self.errors:
            body["errors"] = {name: list(messages) for name, messages in self.errors.items()}
        return body


def problem_response(problem: Problem, headers: Headers | None = None) -> Response:
    """A response carrying ``problem``, plus ``headers`` such as ``Allow`` from Werkzeug."""
    body = json.dumps(problem.document(request.path), separators=(",", ":"))
    response = Response(body, status=problem.status, mimetype=PROBLEM_MEDIA_TYPE)
    for name, value in (headers or Headers()).items():
        if name.lower() not in ("content-type", "content-length"):
            response.headers.add(name, value)
    return response


def typed_problem(
    kind: ProblemType, detail: str, errors: Mapping[str, list[str]] | None = None
) -> Problem:
    """A problem of a named kind."""
    return Problem(kind.status, kind.title, detail, kind.uri, dict(errors or {}))


def field_messages(messages: object) -> dict[str, list[str]]:
    """marshmallow's error messages flattened to field name -> list of texts."""
    if isinstance(messages, Mapping):
        return {str(name): _texts(value) for name, value in messages.items()}
    return {"_query": _texts(messages)}


def summary(errors: Mapping[str, list[str]]) -> str:
    """A ``detail`` naming every field at fault (the message itself when there is one)."""
    names = sorted(errors)
    if len(names) == 1 and len(errors[names[0]]) == 1:
        return f"{names[0]}: {errors[names[0]][0]}"
    return f"The query has problems with: {', '.join(names)}. See errors for each field."


def handle_http_exception(error: HTTPException) -> Response:
    """404, 405 and every other HTTP error, keeping the headers Werkzeug set."""
    status = error.code or 500
    title = HTTPStatus(status).phrase if status in HTTPStatus._value2member_map_ else "Error"
    problem = Problem(status, title, error.description or title)
    return problem_response(problem, error.get_response().headers)


def handle_validation_error(error: ValidationError) -> Response:
    """Query parameters rejected while loading."""
    errors = field_messages(error.messages)
    return problem_response(typed_problem(INVALID_QUERY, summary(errors), errors))


def handle_service_error(error: ServiceError) -> Response:
    """Errors raised on purpose by the domain and the core."""
    if isinstance(error, InvalidQuery):
        return problem_response(typed_problem(INVALID_QUERY, error.detail, error.errors))
    if isinstance(error, NoConvergence):
        current_app.logger.error("no convergence: %s", error.detail)
        return problem_response(typed_problem(NO_CONVERGENCE, error.detail))
    errors = {error.field: [error.detail]} if error.field else {}
    return problem_response(typed_problem(OUT_OF_RANGE, error.detail, errors))


def handle_unexpected(error: Exception) -> Response:
    """Anything else: logged with its traceback, answered as a bare 500."""
    if isinstance(error, HTTPException):
        return handle_http_exception(error)
    current_app.logger.exception("unhandled error on %s", request.path)
    status = 500
    detail = "The service failed to answer; the error has been logged."
    return problem_response(Problem(status, HTTPStatus(status).phrase, detail))


def init_problems(app: Flask) -> None:
    """Register the handlers so that every 4xx and 5xx is problem+json, and the type pages."""
    app.register_error_handler(HTTPException, handle_http_exception)
    app.register_error_handler(ValidationError, handle_validation_error)
    app.register_error_handler(ServiceError, handle_service_error)
    app.register_error_handler(Exception, handle_unexpected)
    init_problem_pages(app, problem_types())


def _texts(value: object) -> list[str]:
    if isinstance(value, str):
        return [value]
    if isinstance(value, Mapping):
        return [f"{key}: {text}" for key, item in value.items() for text in _texts(item)]
    if isinstance(value, Iterable):
        return [text for item in value for text in _texts(item)]
    return [str(value)]
