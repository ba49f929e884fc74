"""The OpenAPI 3.1 document, generated from the marshmallow schemas, and GET /openapi.json."""

from __future__ import annotations

import json
from typing import Any

import yaml
from apispec import APISpec
from apispec.ext.marshmallow import MarshmallowPlugin
from flask import Blueprint, Response

from urnbound import __version__
from urnbound.api import schemas
from urnbound.api.problems import PROBLEM_MEDIA_TYPE
from urnbound.api.state import service_state
from urnbound.domain.parameters import Choice, Parameter
from urnbound.domain.question import ASSUMPTION, Question, prose
from urnbound.domain.registry import Registry, default_registry

blueprint = Blueprint("openapi", __name__)

DESCRIPTION = (
    "Collision risk, safe identifier length, random bits and capacity for random "
    "identifiers (the birthday bound), exact at small scale and with a stated error bound "
    "at large scale. Big integers travel as decimal strings. Every error is RFC 9457 "
    "application/problem+json. " + ASSUMPTION
)

_CACHE_HEADERS = {
    "ETag": {
        "description": "Strong tag of the service version and the normalized question.",
        "schema": {"type": "string"},
    },
    "Cache-Control": {
        "description": "public, max-age=<URNBOUND_CACHE_MAX_AGE>",
        "schema": {"type": "string"},
    },
}


def _problem(description: str) -> dict[str, Any]:
    return {"description": description, "content": {PROBLEM_MEDIA_TYPE: {"schema": "Problem"}}}


def _answer_content(question: Question) -> dict[str, Any]:
    content: dict[str, Any] = {"application/json": {"schema": schemas.component_name(question)}}
    if question.chart is not None:
        content["image/svg+xml"] = {"schema": {
            "type": "string",
            "description": "A chart of the same answer, sent when Accept prefers "
            "image/svg+xml to application/json (Vary: Accept).",
        }}
    return content


def _answer_operation(question: Question) -> dict[str, Any]:
    responses: dict[str, Any] = {
        "200": {
            "description": question.summary,
            "headers": _CACHE_HEADERS,
            "content": _answer_content(question),
        },
        "304": {"description": "Not modified: If-None-Match matched the ETag.",
                "headers": _CACHE_HEADERS},
        "422": _problem("Missing, malformed, unknown, repeated or out-of-range parameters, "
                        "or a question with no answer within the service's limits."),
        "4XX": _problem("Other client error (404, 405, ...)."),
        "5XX": _problem("Server error."),
    }
    return {
        "operationId": question.name,
        "summary": question.summary,
        "description": prose(question.description),
        "parameters": query_parameters(question),
        "responses": responses,
    }


def query_parameters(question: Question) -> list[dict[str, Any]]:
    """The OpenAPI parameter objects of a question, from its parameter definitions."""
    documented: list[dict[str, Any]] = []
    for entry in question.inputs:
        if isinstance(entry, Choice):
            note = f" One form of {entry.name}: give exactly one of {entry.forms_text}."
            documented += [_parameter(p, False, note) for p in entry.parameters]
        else:
            documented.append(_parameter(entry, True, ""))
    documented += [_parameter(p, False, "") for p in question.optional]
    return documented


def _parameter(parameter: Parameter, required: bool, note: str) -> dict[str, Any]:
    return {
        "name": parameter.name,
        "in": "query",
        "required": required,
        "description": f"{parameter.description} Allowed: {parameter.rule}.{note}",
        "schema": dict(parameter.schema),
        "example": parameter.example,
    }


def _plain_operation(summary: str, answer: str, failure: str) -> dict[str, Any]:
    return {
        "summary": summary,
        "responses": {
            "200": {"description": summary, "content": {"application/json": {"schema": answer}}},
            "503" if failure else "5XX": _problem(failure or "Server error."),
            "4XX": _problem("Client error."),
        },
    }


def _metrics_operation() -> dict[str, Any]:
    return {
        "summary": "Prometheus metrics in the text exposition format.",
        "responses": {
            "200": {
                "description": "Requests by endpoint and status, latency histogram, cache "
                "hits and misses, answers computed by method.",
                "content": {"text/plain": {"schema": {"type": "string"}}},
            }
        },
    }


def build_spec(registry: Registry | None = None) -> APISpec:
    """The service's OpenAPI 3.1 document for ``registry`` (default: the service's own)."""
    registry = registry or default_registry()
    spec = APISpec(
        title="Urnbound",
        version=__version__,
        openapi_version="3.1.0",
        plugins=[MarshmallowPlugin()],
        info={"description": DESCRIPTION, "license": {"name": "MIT", "identifier": "MIT"}},
    )
    spec.components.schema("Problem", schema=schemas.ProblemSchema)
    spec.components.schema("Health", schema=schemas.HealthSchema)
    for question in registry:
        spec.components.schema(schemas.component_name(question),
                               schema=schemas.answer_schema(question))
        spec.path(path=question.path, operations={"get": _answer_operation(question)})
    fixed = {
        "/healthz": ("healthz", _plain_operation("The process is alive.", "Health", "")),
        "/readyz": ("readyz", _plain_operation(
            "The numerical core passed its self-check.", "Health", "Self-check failed.")),
        "/metrics": ("metrics", _metrics_operation()),
        "/openapi.json": ("openapi", _openapi_operation()),
        "/v1/schemes": ("schemes", _schemes_operation(
            "The watched schemes, as written in the URNBOUND_SCHEMES file.",
            {"type": "object", "properties": {
                "schemes": {"type": "array", "items": {"type": "object"}},
                "file": {"type": ["string", "null"]}}})),
        "/v1/schemes/{name}": ("scheme", _schemes_operation(
            "The budget of one watched scheme as of now: the members of /v1/budgets with "
            "issued projected from its count, plus scheme and as_of; an SVG chart when "
            "Accept prefers image/svg+xml.", {"type": "object"}, named=True)),
    }
    for path, (operation_id, operation) in fixed.items():
        spec.path(path=path, operations={"get": {"operationId": operation_id, **operation}})
    return spec


def _schemes_operation(summary: str, answer: dict[str, Any], named: bool = False
                       ) -> dict[str, Any]:
    content: dict[str, Any] = {"application/json": {"schema": answer}}
    if named:
        content["image/svg+xml"] = {"schema": {"type": "string"}}
    operation: dict[str, Any] = {
        "summary": summary,
        "description": "Depends on the clock: Cache-Control max-age is "
        "URNBOUND_SCHEMES_MAX_AGE (default 30 s) and the ETag changes with the figures.",
        "responses": {
            "200": {"description": summary, "headers": _CACHE_HEADERS, "content": content},
            "304": {"description": "Not modified: If-None-Match matched the ETag."},
            "4XX": _problem("No such scheme (404), or another client error."),
            "5XX": _problem("Server error."),
        },
    }
    if named:
        operation["parameters"] = [{"name": "name", "in": "path", "required": True,
                                    "schema": {"type": "string"},
                                    "description": "The scheme's name in the file."}]
    return operation


def _openapi_operation() -> dict[str, Any]:
    return {
        "summary": "This document, as JSON.",
        "responses": {"200": {"description": "The OpenAPI document.",
                              "content": {"application/json": {"schema": {"type": "object"}}}}},
    }


def spec_document(registry: Registry | None = None) -> dict[str, Any]:
    """The document as plain data, top-level keys in the customary order."""
    # A JSON round trip unshares repeated objects, so the YAML has no anchors or aliases.
    raw: dict[str, Any] = json.loads(json.dumps(build_spec(registry).to_dict()))
    order = ("openapi", "info", "paths", "components")
    return {key: raw[key] for key in (*order, *sorted(set(raw) - set(order))) if key in raw}


def spec_yaml(registry: Registry | None = None) -> str:
    """The document as YAML text, exactly as committed in ``openapi/openapi.yaml``."""
    text: str = yaml.safe_dump(spec_document(registry), sort_keys=False, allow_unicode=True,
                               width=100)
    return text


@blueprint.get("/openapi.json")
def openapi_json() -> Response:
    """Serve the document of this app's questions (any query string is ignored)."""
    body = json.dumps(spec_document(service_state().registry), separators=(",", ":"))
    return Response(body, mimetype="application/json")
