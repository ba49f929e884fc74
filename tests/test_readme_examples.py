"""The README's examples are what the service and the command line answer today.

Every ``$ curl ...`` and ``$ urnbound ...`` line of a README code block is run (through
the app's test client, and through the CLI in-process) and what the README shows after
it is held against the real output: each ``"name": value`` pair shown in an abbreviated
JSON body must occur in the real body, a ``| jq .a.b`` value must equal it, an ETag or a
status line must match, and each line of a CLI table shown must occur in the real output.
"""

from __future__ import annotations

import json
import re
import shlex
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner
from flask.testing import FlaskClient

from urnbound.app import create_app
from urnbound.cli import build_cli

README = Path(__file__).resolve().parents[1] / "README.md"
SERVICE = "http://127.0.0.1:8080"
#: A "name": value pair as the README shows it (values cut short with ... are skipped).
PAIR = re.compile(r'"(\w+)":\s*("(?:[^"\\]|\\.)*"|-?[0-9][0-9.eE+-]*|null|true|false)')


@dataclass(frozen=True, slots=True)
class Example:
    """One command of a README code block and the output shown after it."""

    line: int
    command: str
    shown: tuple[str, ...]


def examples() -> Iterator[Example]:
    """Every ``$ ...`` command in a fenced block of the README, continuations joined."""
    lines = README.read_text(encoding="utf-8").splitlines()
    inside = False
    current: list[Any] | None = None
    for number, text in enumerate(lines, start=1):
        if text.startswith("```"):
            if current is not None:
                yield Example(current[0], current[1], tuple(current[2]))
                current = None
            inside = not inside
            continue
        if not inside:
            continue
        if text.startswith("$ "):
            if current is not None:
                yield Example(current[0], current[1], tuple(current[2]))
            current = [number, text[2:], []]
        elif current is not None and current[1].endswith("\\"):
            current[1] = current[1][:-1] + " " + text.strip()
        elif current is not None:
            current[2].append(text)


EXAMPLES = [e for e in examples() if e.command.startswith(("curl ", "urnbound "))]


def pairs_of(document: Any) -> set[tuple[str, Any]]:
    """Every (name, scalar value) pair at any depth of a JSON document."""
    found: set[tuple[str, Any]] = set()
    if isinstance(document, dict):
        for name, value in document.items():
            if isinstance(value, (dict, list)):
                found |= pairs_of(value)
            else:
                found.add((name, value))
    elif isinstance(document, list):
        for item in document:
            found |= pairs_of(item)
    return found


def shown_pairs(shown: tuple[str, ...]) -> list[tuple[str, Any]]:
    """The complete ``"name": value`` pairs of an abbreviated JSON body as shown."""
    pairs = []
    for name, text in PAIR.findall("\n".join(shown)):
        if "..." in text:
            continue
        pairs.append((name, json.loads(text)))
    return pairs


def split_curl(command: str) -> tuple[list[str], str]:
    """The curl arguments and the shell pipeline after them (``""`` if none)."""
    curl, _, pipe = command.partition(" | ")
    return shlex.split(curl), pipe.strip()


def check_curl(client: FlaskClient, example: Example) -> None:
    arguments, pipe = split_curl(example.command)
    url = next(a for a in arguments if a.startswith(SERVICE))
    headers = {}
    for flag, value in zip(arguments, arguments[1:], strict=False):
        if flag == "-H":
            name, _, header = value.partition(":")
            headers[name.strip()] = header.strip()
    response = client.get(url[len(SERVICE):], headers=headers)
    where = f"README.md line {example.line}: {example.command}"
    if pipe.startswith("jq "):
        value: Any = response.get_json()
        for part in pipe[3:].strip().lstrip(".").split("."):
            value = value[part]
        assert value == json.loads("\n".join(example.shown)), where
    elif pipe.startswith("grep -i etag"):
        assert example.shown == (f"ETag: {response.headers['ETag']}",), where
    elif pipe.startswith("head -1"):
        status = int(example.shown[0].split()[1])
        assert response.status_code == status, where
    else:
        assert not pipe, f"{where}: a pipeline this test does not understand"
        real = pairs_of(response.get_json())
        shown = shown_pairs(example.shown)
        assert shown, f"{where}: no complete value shown to check"
        missing = [pair for pair in shown if pair not in real]
        assert not missing, f"{where}: shown but not answered: {missing}"


def check_cli(example: Example) -> None:
    command, _, after = example.command.partition(";")
    arguments = shlex.split(command)[1:]
    result = CliRunner().invoke(build_cli(), arguments)
    output = result.output + (result.stderr if result.stderr_bytes is not None else "")
    where = f"README.md line {example.line}: {example.command}"
    shown = [line for line in example.shown if line.strip() not in ("", "...")]
    if after.strip() == "echo $?":
        assert str(result.exit_code) == shown[-1].strip(), where
        shown = shown[:-1]
    real_lines = {line.rstrip() for line in output.splitlines()}
    missing = [line for line in shown if line.rstrip() not in real_lines]
    assert not missing, f"{where}: shown but not printed: {missing}"


@pytest.fixture
def service(monkeypatch: pytest.MonkeyPatch) -> FlaskClient:
    """The service as `urnbound serve` builds it: default settings (the ETag depends on them)."""
    for name in ("PROMETHEUS_MULTIPROC_DIR", "URNBOUND_EXACT_DIGIT_LIMIT",
                 "URNBOUND_CACHE_MAX_AGE", "URNBOUND_ACCESS_LOG"):
        monkeypatch.delenv(name, raising=False)
    return create_app({"TESTING": True, "access_log": False}).test_client()


@pytest.mark.parametrize("example", EXAMPLES, ids=[f"line{e.line}" for e in EXAMPLES])
def test_readme_example_is_what_the_service_answers(service: FlaskClient,
                                                     example: Example) -> None:
    if example.command.startswith("curl "):
        check_curl(service, example)
    else:
        check_cli(example)


def test_the_readme_has_examples_to_check() -> None:
    assert len([e for e in EXAMPLES if e.command.startswith("curl ")]) >= 6
    assert len([e for e in EXAMPLES if e.command.startswith("urnbound ")]) >= 3
