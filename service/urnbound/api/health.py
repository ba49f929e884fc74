"""GET /healthz (the process answers) and GET /readyz (the numerical core self-check passes).

Probes take no parameters, and a query string (some probers add one to defeat caches) is
ignored rather than rejected: a probe must never fail for how it was spelled.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass

from flask import Blueprint, Response, current_app

from urnbound.api.problems import NOT_READY, problem_response, typed_problem
from urnbound.api.state import service_state
from urnbound.domain.questions.collisions import collision_report
from urnbound.domain.spaces import space_from_size

blueprint = Blueprint("health", __name__)


@dataclass(frozen=True, slots=True)
class SelfCheck:
    """A known collision risk that the core must reproduce within a relative ``tolerance``."""

    name: str
    size: int
    count: int
    expected: float
    tolerance: float


#: Two checks, one per path of the core.
SELF_CHECKS = (
    # 365 equally likely values, 23 draws: 0.5072972 to 7 decimals
    # (encyclopedia table "Birthday problem"); taken by the exact path.
    SelfCheck("exact-365-23", 365, 23, 0.5072972, 1e-7),
    # 2^64 values, 2^32 draws: 1 - exp(-1/2) up to a relative 2e-10 (the limit of the
    # birthday bound at n = sqrt(N): ln P(no collision) = -1/2 + 2^-33 + O(2^-35));
    # taken by the asymptotic path.
    SelfCheck("asymptotic-2^64-2^32", 2**64, 2**32, -math.expm1(-0.5), 1e-9),
)


def check_passes(check: SelfCheck, exact_digit_limit: int) -> bool:
    """Whether the core reproduces ``check``."""
    space = space_from_size(check.size)
    report = collision_report(space, check.count, exact_digit_limit=exact_digit_limit)
    return abs(report.risk.collision.value / check.expected - 1.0) <= check.tolerance


def no_store(document: dict[str, object], status: int = 200) -> Response:
    """A JSON response that caches must not keep."""
    response = Response(json.dumps(document), status=status, mimetype="application/json")
    response.cache_control.no_store = True
    return response


@blueprint.get("/healthz")
def healthz() -> Response:
    """The process is alive and serving (any query string is ignored)."""
    return no_store({"status": "ok"})


@blueprint.get("/readyz")
def readyz() -> Response:
    """The numerical core answers the self-checks correctly (any query string is ignored)."""
    limit = service_state().settings.exact_digit_limit
    outcomes = {check.name: _outcome(check, limit) for check in SELF_CHECKS}
    failed = sorted(name for name, outcome in outcomes.items() if outcome != "passed")
    if failed:
        detail = f"core self-check failed: {', '.join(failed)}"
        response = problem_response(typed_problem(NOT_READY, detail))
        response.cache_control.no_store = True
        return response
    return no_store({"status": "ready", "checks": outcomes,
                     "schemes": service_state().schemes.file_state()})


def _outcome(check: SelfCheck, limit: int) -> str:
    try:
        return "passed" if check_passes(check, limit) else "wrong value"
    except Exception:  # a broken core must make the instance unready, not crash the probe
        current_app.logger.exception("self-check %s raised", check.name)
        return "raised"
