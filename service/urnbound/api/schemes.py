"""GET /v1/schemes and /v1/schemes/{name}: watched schemes' budgets as of now, and their gauges.

The schemes come from the file named by ``URNBOUND_SCHEMES`` (``domain/schemes.py``),
loaded once by the app factory. Unlike the questions, these answers depend on the clock:
they carry ``Cache-Control: public, max-age=<URNBOUND_SCHEMES_MAX_AGE>`` (default 30 s)
and an ETag of the body, which changes when the figures do. ``/metrics`` exports, per
scheme, the risk now, the share of its budget used and the seconds until it runs out.
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

from flask import Blueprint, Response, request
from prometheus_client import CollectorRegistry
from prometheus_client.core import GaugeMetricFamily, Metric
from werkzeug.exceptions import NotFound

from urnbound.api.rendering import JSON_MEDIA_TYPE, SVG_MEDIA_TYPE
from urnbound.api.state import service_state
from urnbound.domain.errors import DomainError
from urnbound.domain.question import Context
from urnbound.domain.schemes import Scheme, WatchedSchemes, scheme_named

blueprint = Blueprint("schemes", __name__)


def _listing(scheme: Scheme) -> dict[str, Any]:
    return {"name": scheme.name, "counted_at": scheme.counted_at.isoformat(),
            "fields": dict(scheme.fields)}


def _fresh(body: bytes, media_type: str) -> Response:
    """``body`` with a short max-age and its own ETag, or 304 when the tag matches."""
    etag = hashlib.sha256(body).hexdigest()[:32]
    max_age = service_state().settings.schemes_max_age
    response = Response(status=304) if request.if_none_match.contains_weak(etag) else (
        Response(body, status=200, mimetype=media_type))
    response.headers["ETag"] = f'"{etag}"'
    response.headers["Cache-Control"] = f"public, max-age={max_age}"
    response.headers["Vary"] = "Accept"
    return response


@blueprint.get("/v1/schemes")
def list_schemes() -> Response:
    """Every watched scheme as written in the schemes file."""
    watched = service_state().schemes
    document = {"schemes": [_listing(scheme) for scheme in watched.schemes],
                "file": watched.path}
    return _fresh(json.dumps(document, separators=(",", ":")).encode(), JSON_MEDIA_TYPE)


@blueprint.get("/v1/schemes/<name>")
def scheme_budget(name: str) -> Response:
    """The budget of one scheme as of now (a chart when Accept prefers SVG)."""
    state = service_state()
    scheme = scheme_named(state.schemes.schemes, name)
    if scheme is None:
        known = ", ".join(s.name for s in state.schemes.schemes) or "none"
        raise NotFound(f"no watched scheme is called {name!r}; watched: {known}")
    now = state.schemes.clock()
    values = scheme.answer(now, state.context).values
    document = {"scheme": scheme.name, "as_of": now.isoformat(),
                **state.renderer.dumpers["budgets"](values)}
    best = request.accept_mimetypes.best_match((JSON_MEDIA_TYPE, SVG_MEDIA_TYPE))
    question = state.registry.by_name.get("budgets")
    if best == SVG_MEDIA_TYPE and question is not None and question.chart is not None:
        return _fresh(question.chart(document), SVG_MEDIA_TYPE)
    return _fresh(json.dumps(document, allow_nan=False, separators=(",", ":")).encode(),
                  JSON_MEDIA_TYPE)


@dataclass(frozen=True, slots=True, eq=False)
class SchemeGauges:
    """A Prometheus collector: each scheme's figures as of the moment of the scrape.

    (Compared and hashed by identity: the registry keeps its collectors in a map.)
    """

    watched: WatchedSchemes
    context: Context

    def collect(self) -> Iterator[Metric]:
        risk = GaugeMetricFamily(
            "urnbound_scheme_collision_risk",
            "P(some two identifiers of the scheme are equal), as of now.", labels=["scheme"])
        risk_log10 = GaugeMetricFamily(
            "urnbound_scheme_collision_risk_log10",
            "log10 of the same risk (never underflows).", labels=["scheme"])
        used = GaugeMetricFamily(
            "urnbound_scheme_budget_used_ratio",
            "Identifiers issued as of now over the capacity at the scheme's max_risk.",
            labels=["scheme"])
        left = GaugeMetricFamily(
            "urnbound_scheme_budget_exhausted_in_seconds",
            "Seconds until the risk exceeds max_risk (0 when over; +Inf past the horizon).",
            labels=["scheme"])
        now = self.watched.clock()
        for scheme in self.watched.schemes:
            try:
                projection = scheme.projection(now, self.context, points=2)
            except DomainError:  # e.g. a growing time-ordered scheme past its horizon's reach:
                continue  # its own route answers why; the other schemes' gauges still count
            collision = projection.now.risk.collision
            risk.add_metric([scheme.name], collision.value)
            log10 = collision.log10
            risk_log10.add_metric([scheme.name], -math.inf if log10 is None else log10)
            used.add_metric([scheme.name], float(projection.capacity_used))
            found = projection.exhausted
            left.add_metric([scheme.name], math.inf if found is None else float(found.seconds))
        yield from (risk, risk_log10, used, left)


def gauge_registry(watched: WatchedSchemes, context: Context) -> CollectorRegistry | None:
    """A registry holding the schemes' gauges, or ``None`` when there are no schemes."""
    if not watched.schemes:
        return None
    registry = CollectorRegistry(auto_describe=False)
    registry.register(SchemeGauges(watched, context))
    return registry
