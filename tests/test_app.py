"""The app factory, settings, access log, error mapping, CLI serve, and the layering rule."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner
from flask import Flask

from urnbound.api.state import ServiceState
from urnbound.app import create_app
from urnbound.cli import build_cli
from urnbound.config import Settings
from urnbound.domain.errors import DomainError, NoConvergence
from urnbound.serving import WSGI_TARGET

REPO_ROOT = Path(__file__).resolve().parents[1]


def state_of(app: Flask) -> ServiceState:
    state: ServiceState = app.extensions["urnbound"]
    return state


def test_settings_defaults() -> None:
    settings = Settings.from_env(environ={})
    assert settings.exact_digit_limit == 50_000
    assert settings.cache_entries == 4096
    assert settings.cache_max_age == 86_400
    assert settings.log_level == "INFO"
    assert settings.access_log is True
    assert settings.bind_address == "127.0.0.1:8080"
    assert settings.workers == 0


def test_settings_from_prefixed_environment() -> None:
    settings = Settings.from_env(
        environ={
            "URNBOUND_EXACT_DIGIT_LIMIT": "2000",
            "URNBOUND_CACHE_ENTRIES": "16",
            "URNBOUND_CACHE_MAX_AGE": "60",
            "URNBOUND_LOG_LEVEL": "warning",
            "URNBOUND_ACCESS_LOG": "off",
            "URNBOUND_HOST": "::1",
            "URNBOUND_PORT": "9000",
            "URNBOUND_WORKERS": "3",
            "URNBOUND_WORKER_TIMEOUT": "10",  # read by deploy/gunicorn.conf.py only
            "OTHER_CACHE_ENTRIES": "1",
        }
    )
    assert settings == Settings(2000, 16, 60, "WARNING", False, "::1", 9000, 3)
    assert settings.bind_address == "[::1]:9000"
    assert Settings.from_env("APP_", environ={"APP_PORT": "81"}).port == 81


@pytest.mark.parametrize(
    ("name", "value", "words"),
    [
        ("URNBOUND_CACHE_ENTRIES", "many", "URNBOUND_CACHE_ENTRIES must be a whole number"),
        ("URNBOUND_CACHE_ENTRIES", "-1", "cache_entries must be a whole number from 0"),
        ("URNBOUND_PORT", "70000", "port must be a whole number from 1 to 65535"),
        ("URNBOUND_ACCESS_LOG", "maybe", "URNBOUND_ACCESS_LOG must be one of"),
        ("URNBOUND_LOG_LEVEL", "loud", "log_level must be one of"),
    ],
)
def test_bad_environment_fails_loudly(name: str, value: str, words: str) -> None:
    with pytest.raises(ValueError, match=words):
        Settings.from_env(environ={name: value})


def test_factory_reads_environment_inside(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("URNBOUND_CACHE_ENTRIES", "7")
    monkeypatch.setenv("URNBOUND_CACHE_MAX_AGE", "30")
    app = create_app()
    assert state_of(app).settings.cache_entries == 7
    assert state_of(app).caching.answers.capacity == 7
    response = app.test_client().get("/v1/collisions?bits=8&count=3")
    assert response.cache_control.max_age == 30


def test_factory_overrides_win_and_other_keys_go_to_config() -> None:
    app = create_app({"CACHE_ENTRIES": 3, "access_log": False, "TESTING": True})
    assert state_of(app).settings.cache_entries == 3
    assert app.config["TESTING"] is True
    with pytest.raises(ValueError, match="cache_entries"):
        create_app({"cache_entries": -5})


def test_apps_do_not_share_state() -> None:
    first, second = create_app(), create_app()
    assert state_of(first).metrics.registry is not state_of(second).metrics.registry
    assert state_of(first).caching.answers is not state_of(second).caching.answers


def test_access_log_is_one_json_line_per_request(capsys: pytest.CaptureFixture[str]) -> None:
    client = create_app({"access_log": True}).test_client()
    capsys.readouterr()
    client.get("/v1/collisions?bits=64&count=1e6", headers={"User-Agent": "probe/1"})
    client.get("/nowhere")
    lines = capsys.readouterr().out.strip().splitlines()
    assert len(lines) == 2
    first, second = (json.loads(line) for line in lines)
    assert first["method"] == "GET"
    assert first["path"] == "/v1/collisions"
    assert first["query"] == "bits=64&count=1e6"
    assert first["status"] == 200
    assert first["endpoint"] == "/v1/collisions"
    assert first["user_agent"] == "probe/1"
    assert first["duration_ms"] >= 0
    assert second["status"] == 404


def test_access_log_can_be_turned_off(capsys: pytest.CaptureFixture[str]) -> None:
    client = create_app({"access_log": False}).test_client()
    capsys.readouterr()
    client.get("/healthz")
    assert capsys.readouterr().out == ""


def _app_with_failing_routes() -> Flask:
    app = create_app({"access_log": False})

    def out_of_range() -> str:
        raise DomainError("no length within 2^8192 values suffices", field="count")

    def no_convergence() -> str:
        raise NoConvergence("series did not settle")

    def crash() -> str:
        raise RuntimeError("boom")

    app.add_url_rule("/test/out-of-range", view_func=out_of_range)
    app.add_url_rule("/test/no-convergence", view_func=no_convergence)
    app.add_url_rule("/test/crash", view_func=crash)
    return app


def test_domain_error_while_answering_is_a_422_problem() -> None:
    response = _app_with_failing_routes().test_client().get("/test/out-of-range")
    assert response.status_code == 422
    assert response.mimetype == "application/problem+json"
    body = response.get_json()
    assert body["type"] == "/problems/out-of-range"
    assert body["errors"] == {"count": ["no length within 2^8192 values suffices"]}


def test_no_convergence_is_a_500_problem() -> None:
    response = _app_with_failing_routes().test_client().get("/test/no-convergence")
    assert response.status_code == 500
    assert response.get_json()["type"] == "/problems/no-convergence"


def test_unexpected_error_is_a_500_problem_without_internals() -> None:
    response = _app_with_failing_routes().test_client().get("/test/crash")
    assert response.status_code == 500
    assert response.mimetype == "application/problem+json"
    body = response.get_json()
    assert body["title"] == "Internal Server Error"
    assert "boom" not in response.get_data(as_text=True)


def test_serve_execs_gunicorn_with_the_deploy_config(monkeypatch: pytest.MonkeyPatch) -> None:
    calls: list[tuple[str, list[str]]] = []
    monkeypatch.setattr(os, "execv", lambda path, argv: calls.append((path, list(argv))))
    monkeypatch.chdir(REPO_ROOT)
    result = CliRunner().invoke(build_cli(), ["serve", "--access-logfile", "-"])
    assert result.exit_code == 0, result.output
    ((path, argv),) = calls
    assert path == sys.executable
    assert argv[1:4] == ["-m", "gunicorn", "--config"]
    assert Path(argv[4]) == REPO_ROOT / "deploy" / "gunicorn.conf.py"
    assert argv[5:] == ["--access-logfile", "-", WSGI_TARGET]


def test_serve_refuses_a_missing_config(tmp_path: Path) -> None:
    result = CliRunner().invoke(build_cli(), ["serve", "--config", str(tmp_path / "none.py")])
    assert result.exit_code != 0


def test_wsgi_module_exposes_an_app() -> None:
    script = "from urnbound.wsgi import app; print(type(app).__name__, app.name)"
    result = subprocess.run(
        [sys.executable, "-c", script], capture_output=True, text=True, check=True, timeout=120
    )
    assert result.stdout.split() == ["Flask", "urnbound"]


def test_core_and_domain_do_not_import_the_web_stack() -> None:
    script = (
        "import sys, urnbound, urnbound.core, urnbound.domain\n"
        "import urnbound.core.pairwise, urnbound.core.inverse\n"
        "import urnbound.domain.questions, urnbound.domain.spaces, urnbound.domain.numbers\n"
        "import urnbound.domain.registry; urnbound.domain.registry.default_registry()\n"
        "print(sorted(m for m in ('flask', 'werkzeug', 'marshmallow', 'apispec') "
        "if m in sys.modules))\n"
    )
    result = subprocess.run(
        [sys.executable, "-c", script], capture_output=True, text=True, check=True, timeout=120
    )
    assert result.stdout.strip() == "[]"


def test_the_http_layer_imports_nothing_from_the_core() -> None:
    # The domain layer owns the questions; views, schemas and problems reach the numerics
    # only through it. Checked on the import statements of every module of urnbound.api.
    import ast

    offenders = []
    for path in sorted((REPO_ROOT / "service" / "urnbound" / "api").glob("*.py")):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            names = []
            if isinstance(node, ast.ImportFrom) and node.module:
                names = [node.module]
            elif isinstance(node, ast.Import):
                names = [alias.name for alias in node.names]
            offenders += [f"{path.name}: {n}" for n in names if n.startswith("urnbound.core")]
    assert offenders == []
