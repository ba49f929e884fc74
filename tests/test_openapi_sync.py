"""The committed OpenAPI file matches the code, is a valid OpenAPI 3.1 document, and is served."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import yaml
from click.testing import CliRunner
from flask.testing import FlaskClient
from openapi_spec_validator import validate
from openapi_spec_validator.validation.exceptions import OpenAPIValidationError

from urnbound.api.openapi import spec_document, spec_yaml
from urnbound.cli import build_cli

REPO_ROOT = Path(__file__).resolve().parents[1]
OPENAPI_PATH = REPO_ROOT / "openapi" / "openapi.yaml"


def test_committed_file_matches_the_code() -> None:
    committed = OPENAPI_PATH.read_text(encoding="utf-8")
    assert committed == spec_yaml(), "run `urnbound openapi write` and commit the result"


def test_committed_file_is_valid_openapi_3_1(openapi_document: dict[str, Any]) -> None:
    assert openapi_document["openapi"] == "3.1.0"
    validate(openapi_document)


def test_validator_rejects_a_broken_document(openapi_document: dict[str, Any]) -> None:
    broken = {**openapi_document, "paths": {"/v1/collisions": {"get": {"responses": 7}}}}
    try:
        validate(broken)
    except OpenAPIValidationError:
        return
    raise AssertionError("a broken document passed validation")


def test_document_covers_every_route(openapi_document: dict[str, Any]) -> None:
    assert set(openapi_document["paths"]) == {
        "/v1/collisions", "/v1/lengths", "/v1/capacity", "/v1/bits", "/v1/alphabets",
        "/v1/formats", "/v1/prefixes", "/v1/guessing", "/v1/rates",
        "/v1/reviews", "/v1/budgets", "/v1/curves", "/v1/loads", "/v1/coverage",
        "/healthz", "/readyz", "/metrics", "/openapi.json", "/v1/schemes", "/v1/schemes/{name}",
    }
    names = {p["name"] for p in openapi_document["paths"]["/v1/collisions"]["get"]["parameters"]}
    assert names == {"bits", "alphabet", "alphabet_size", "symbols", "length", "size",
                     "format", "tick", "random_bits", "count", "rate", "duration", "burst",
                     "burst_share", "multiplicity"}


def test_served_document_equals_the_committed_one(client: FlaskClient) -> None:
    response = client.get("/openapi.json")
    assert response.status_code == 200
    assert response.mimetype == "application/json"
    assert response.get_json() == yaml.safe_load(OPENAPI_PATH.read_text(encoding="utf-8"))
    assert response.get_json() == spec_document()


def test_cli_check_passes_on_the_committed_file() -> None:
    result = CliRunner().invoke(build_cli(), ["openapi", "check", str(OPENAPI_PATH)])
    assert result.exit_code == 0, result.output


def test_cli_check_fails_on_drift(tmp_path: Path) -> None:
    drifted = tmp_path / "openapi.yaml"
    drifted.write_text(spec_yaml().replace("Urnbound", "Something else", 1), encoding="utf-8")
    result = CliRunner().invoke(build_cli(), ["openapi", "check", str(drifted)])
    assert result.exit_code != 0
    assert "out of date" in result.output
    missing = CliRunner().invoke(build_cli(), ["openapi", "check", str(tmp_path / "absent.yaml")])
    assert missing.exit_code != 0


def test_cli_write_then_check(tmp_path: Path) -> None:
    target = tmp_path / "sub" / "openapi.yaml"
    assert CliRunner().invoke(build_cli(), ["openapi", "write", str(target)]).exit_code == 0
    assert target.read_text(encoding="utf-8") == spec_yaml()
    assert CliRunner().invoke(build_cli(), ["openapi", "check", str(target)]).exit_code == 0
