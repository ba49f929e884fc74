"""Shared fixtures: a settings object, an app built from it, a test client, the OpenAPI file."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
import yaml
from flask import Flask
from flask.testing import FlaskClient
from openapi_schema_validator import OAS31Validator
from werkzeug.test import TestResponse

from urnbound.app import create_app
from urnbound.config import Settings

REPO_ROOT = Path(__file__).resolve().parents[1]
OPENAPI_PATH = REPO_ROOT / "openapi" / "openapi.yaml"


@pytest.fixture
def settings() -> Settings:
    """Test settings: small cache, no access log noise, defaults elsewhere."""
    return Settings(cache_entries=64, cache_max_age=600, access_log=False)


@pytest.fixture
def app(settings: Settings, monkeypatch: pytest.MonkeyPatch) -> Flask:
    """A fresh app (own registry, own cache) built from ``settings``."""
    monkeypatch.delenv("PROMETHEUS_MULTIPROC_DIR", raising=False)
    overrides: dict[str, object] = {
        name: getattr(settings, name) for name in Settings.__dataclass_fields__
    }
    return create_app({"TESTING": True, **overrides})


@pytest.fixture
def client(app: Flask) -> FlaskClient:
    return app.test_client()


@pytest.fixture(scope="session")
def openapi_document() -> dict[str, Any]:
    """The committed OpenAPI document."""
    document: dict[str, Any] = yaml.safe_load(OPENAPI_PATH.read_text(encoding="utf-8"))
    return document


@pytest.fixture(scope="session")
def conforms(openapi_document: dict[str, Any]) -> Callable[[TestResponse, str], None]:
    """Assert that a response's body matches the committed document for its path and status."""

    def check(response: TestResponse, path: str) -> None:
        operation = openapi_document["paths"][path]["get"]
        responses = operation["responses"]
        status = str(response.status_code)
        declared = responses.get(status) or responses.get(f"{status[0]}XX")
        assert declared is not None, f"status {status} of {path} is not documented"
        if response.status_code == 304 or "content" not in declared:
            assert response.data == b""
            return
        media_type = response.mimetype
        assert media_type in declared["content"], f"{media_type} not documented for {path}"
        schema = declared["content"][media_type]["schema"]
        root = {**schema, "components": openapi_document["components"]}
        OAS31Validator(root).validate(response.get_json(force=True))

    return check
