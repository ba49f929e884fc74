"""Requests generated from the served OpenAPI document: no 5xx, every answer as documented.

schemathesis (an independent, general-purpose API fuzzer) draws query strings that match
each parameter's documented form, including several space forms at once and counts or
targets at the edges of their ranges. Every response must be no server error, carry a
documented status and content type, and match the documented body schema (problem
details included). The "valid requests are accepted" check is left out on purpose: the
document cannot state that exactly one space form is allowed, so schema-valid queries
with two forms are rightly refused with a 422.
"""

from __future__ import annotations

from typing import Any

import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.checks import (
    content_type_conformance,
    not_a_server_error,
    response_schema_conformance,
    status_code_conformance,
)

from urnbound.app import create_app

schema = schemathesis.openapi.from_wsgi(
    "/openapi.json", create_app({"TESTING": True, "ACCESS_LOG": False})
)
CHECKS = [
    not_a_server_error,
    status_code_conformance,
    content_type_conformance,
    response_schema_conformance,
]


@schema.parametrize()
@settings(
    max_examples=40,
    deadline=None,
    derandomize=True,
    suppress_health_check=list(HealthCheck),
)
def test_generated_requests_get_documented_answers(case: Any) -> None:
    case.call_and_validate(checks=CHECKS)
