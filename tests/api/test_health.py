"""GET /healthz and GET /readyz."""

from __future__ import annotations

import ast
from collections.abc import Callable
from pathlib import Path

import pytest
from flask.testing import FlaskClient
from werkzeug.test import TestResponse

from urnbound.api import health

Conforms = Callable[[TestResponse, str], None]


def test_healthz(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get("/healthz")
    assert response.status_code == 200
    conforms(response, "/healthz")
    assert response.get_json() == {"status": "ok"}
    assert response.cache_control.no_store


def test_readyz_runs_the_core_self_checks(client: FlaskClient, conforms: Conforms) -> None:
    response = client.get("/readyz")
    assert response.status_code == 200
    conforms(response, "/readyz")
    body = response.get_json()
    assert body["status"] == "ready"
    assert set(body["checks"].values()) == {"passed"}
    assert len(body["checks"]) == len(health.SELF_CHECKS)


def test_self_checks_cover_both_paths() -> None:
    from urnbound.domain.questions.collisions import collision_report
    from urnbound.domain.spaces import space_from_size

    methods = {
        collision_report(space_from_size(check.size), check.count).risk.method
        for check in health.SELF_CHECKS
    }
    assert methods == {"exact", "asymptotic"}


def test_readyz_fails_when_the_core_is_wrong(
    client: FlaskClient, conforms: Conforms, monkeypatch: pytest.MonkeyPatch
) -> None:
    wrong = health.SelfCheck("exact-365-23", 365, 23, 0.516, 1e-6)  # the exp shortcut's value
    monkeypatch.setattr(health, "SELF_CHECKS", (wrong,))
    response = client.get("/readyz")
    assert response.status_code == 503
    assert response.mimetype == "application/problem+json"
    conforms(response, "/readyz")
    assert "exact-365-23" in response.get_json()["detail"]


def test_readyz_fails_when_the_core_raises(
    client: FlaskClient, monkeypatch: pytest.MonkeyPatch
) -> None:
    broken = health.SelfCheck("broken", 1, 2, 0.0, 0.0)  # size 1 is refused by the domain
    monkeypatch.setattr(health, "SELF_CHECKS", (broken,))
    response = client.get("/readyz")
    assert response.status_code == 503
    assert "broken" in response.get_json()["detail"]


@pytest.mark.parametrize("path", ["/healthz", "/readyz"])
@pytest.mark.parametrize("query", ["x=1", "x=1&y=&z", "count=-1&bits=nonsense", "%ff=%00"])
def test_probes_ignore_a_query_string(
    client: FlaskClient, conforms: Conforms, path: str, query: str
) -> None:
    # Probers may add a query string (e.g. to defeat caches); a probe must not fail for it.
    response = client.get(f"{path}?{query}")
    assert response.status_code == 200
    conforms(response, path)
    assert response.get_json()["status"] in ("ok", "ready")
    assert response.cache_control.no_store


def test_health_does_not_parse_queries() -> None:
    source = Path(health.__file__).read_text(encoding="utf-8")
    imported = set()
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.ImportFrom) and node.module:
            imported.add(node.module)
        elif isinstance(node, ast.Import):
            imported.update(alias.name for alias in node.names)
    assert "urnbound.api.queries" not in imported
    assert imported  # the walk found the module's imports at all
