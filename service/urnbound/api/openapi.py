"""The OpenAPI 3.1 document, generated from the marshmallow schemas, and GET /openapi.json."""

from __future__ import annotations

import json
from typing import Any

import yaml
from apispec import APISpec
from apispec.ext.marshmallow import MarshmallowPlugin
from flask import Blueprint, Response, request
from marshmallow import Schema

from urnbound import __version__
from urnbound.api import queries, schemas
from urnbound.api.problems import PROBLEM_MEDIA_TYPE
from urnbound.domain.questions import ASSUMPTION

blueprint = Blueprint("openapi", __name__)

DESCRIPTION = (
    "Collision risk, safe identifier length and capacity for random identifiers "
    "(the birthday bound), exact at small scale and with a stated error bound at large "
    "scale. Big integers travel as decimal strings. Every error is RFC 9457 "
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


def _answer_operation(summary: str, query: type[Schema] | None, answer: str) -> dict[str, Any]:
    responses: dict[str, Any] = {
        "200": {
            "description": summary,
            "headers": _CACHE_HEADERS,
            "content": {"application/json": {"schema": answer}},
        },
        "304": {"description": "Not modified: If-None-Match matched the ETag.",
                "headers": _CACHE_HEADERS},
        "422": _problem("Missing, malformed, unknown or out-of-range parameters."),
        "4XX": _problem("Other client error (404, 405, ...)."),
        "5XX": _problem("Server error."),
    }
    operation: dict[str, Any] = {"summary": summary, "responses": responses}
    if query is not None:
        operation["parameters"] = [{"in": "query", "schema": query}]
    return operation


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


def build_spec() -> APISpec:
    """The service's OpenAPI 3.1 document as an :class:`APISpec`."""
    spec = APISpec(
        title="Urnbound",
        version=__version__,
        openapi_version="3.1.0",
        plugins=[MarshmallowPlugin()],
        info={"description": DESCRIPTION, "license": {"name": "MIT", "identifier": "MIT"}},
    )
    spec.components.schema("Problem", schema=schemas.ProblemSchema)
    paths: dict[str, dict[str, Any]] = {
        "/v1/collisions": _answer_operation(
            "Collision risk of count identifiers from one space.",
            queries.CollisionQuerySchema, "Collision"),
        "/v1/lengths": _answer_operation(
            "Shortest identifier length over an alphabet within max_risk.",
            queries.LengthQuerySchema, "Length"),
        "/v1/capacity": _answer_operation(
            "Largest count a space takes within max_risk.",
            queries.CapacityQuerySchema, "Capacity"),
        "/v1/alphabets": _answer_operation(
            "The named alphabets.", None, "AlphabetList"),
        "/healthz": _plain_operation("The process is alive.", "Health", ""),
        "/readyz": _plain_operation(
            "The numerical core passed its self-check.", "Health", "Self-check failed."),
        "/metrics": _metrics_operation(),
    }
    for schema in (schemas.CollisionSchema, schemas.LengthSchema, schemas.CapacitySchema,
                   schemas.AlphabetListSchema, schemas.HealthSchema):
        spec.components.schema(schema.__name__.removesuffix("Schema"), schema=schema)
    for path, operation in paths.items():
        operation_id = path.strip("/").replace("v1/", "").replace("/", "_")
        spec.path(path=path, operations={"get": {"operationId": operation_id, **operation}})
    spec.path(
        path="/openapi.json", operations={"get": {"operationId": "openapi", **_openapi_operation()}}
    )
    return spec


def _openapi_operation() -> dict[str, Any]:
    return {
        "summary": "This document, as JSON.",
        "responses": {"200": {"description": "The OpenAPI document.",
                              "content": {"application/json": {"schema": {"type": "object"}}}}},
    }


def spec_document() -> dict[str, Any]:
    """The document as plain data, top-level keys in the customary order."""
    # A JSON round trip unshares repeated objects, so the YAML has no anchors or aliases.
    raw: dict[str, Any] = json.loads(json.dumps(build_spec().to_dict()))
    order = ("openapi", "info", "paths", "components")
    return {key: raw[key] for key in (*order, *sorted(set(raw) - set(order))) if key in raw}


def spec_yaml() -> str:
    """The document as YAML text, exactly as committed in ``openapi/openapi.yaml``."""
    text: str = yaml.safe_dump(spec_document(), sort_keys=False, allow_unicode=True, width=100)
    return text


@blueprint.get("/openapi.json")
def openapi_json() -> Response:
    """Serve the document."""
    queries.load_query(queries.EmptyQuerySchema(), request.args)
    body = json.dumps(spec_document(), separators=(",", ":"))
    return Response(body, mimetype="application/json")
