"""The ``urnbound`` command, run as a subprocess for every registered question.

For each question: the table for a person, ``--json`` equal byte for byte to the API's body
for the same question, exit status 2 with the parameter named for bad input, and ``--help``
listing the parameters with their ranges.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from flask.testing import FlaskClient

from urnbound.domain.parameters import Choice
from urnbound.domain.question import Question
from urnbound.domain.registry import default_registry

REGISTRY = default_registry()
QUESTIONS = list(REGISTRY)
REPO_ROOT = Path(__file__).resolve().parents[1]

#: One bad request per question that takes parameters: (options, parameter named).
BAD_INPUT = {
    "collisions": (["--bits", "64", "--count", "-3"], "--count"),
    "lengths": (["--alphabet", "base58", "--count", "5", "--max-risk", "0.1"], "--alphabet"),
    "capacity": (["--bits", "64", "--max-risk", "1.5"], "--max-risk"),
    "bits": (["--count", "1e9", "--max-risk", "0"], "--max-risk"),
}


def run(*arguments: str) -> subprocess.CompletedProcess[str]:
    """``urnbound ARGUMENTS`` in a fresh interpreter, as a reviewer would run it."""
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(p for p in sys.path if p)}
    return subprocess.run(
        [sys.executable, "-c", "from urnbound.cli import main; main()", *arguments],
        capture_output=True, text=True, env=env, timeout=120, cwd=REPO_ROOT,
    )


def example_options(question: Question) -> list[str]:
    return [part for name, text in question.example.items()
            for part in (f"--{name.replace('_', '-')}", text)]


def example_query(question: Question) -> str:
    return "&".join(f"{name}={text}" for name, text in question.example.items())


@pytest.mark.parametrize("question", QUESTIONS, ids=lambda q: q.name)
def test_json_output_is_the_api_body(question: Question, client: FlaskClient) -> None:
    done = run(question.name, *example_options(question), "--json")
    assert done.returncode == 0, done.stderr
    api = client.get(f"{question.path}?{example_query(question)}")
    assert api.status_code == 200
    assert done.stdout == api.get_data(as_text=True) + "\n"


@pytest.mark.parametrize("question", QUESTIONS, ids=lambda q: q.name)
def test_table_output_lists_every_member(question: Question) -> None:
    done = run(question.name, *example_options(question))
    assert done.returncode == 0, done.stderr
    body = json.loads(run(question.name, *example_options(question), "--json").stdout)
    lines = done.stdout.splitlines()
    for member in body:
        assert any(line.startswith(member) for line in lines), member
    if "collision" in body:  # the decimal text is printed in full, aligned after the label
        row = next(line for line in lines if line.split()[0] == "collision")
        assert body["collision"]["decimal"] in row


@pytest.mark.parametrize("name", sorted(BAD_INPUT))
def test_bad_input_exits_2_naming_the_parameter(name: str) -> None:
    options, named = BAD_INPUT[name]
    done = run(name, *options)
    assert done.returncode == 2
    assert done.stdout == ""
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1
    assert lines[0].startswith(f"urnbound {name}: error: {named}: ")


def test_a_missing_space_names_every_form() -> None:
    done = run("collisions", "--count", "5")
    assert done.returncode == 2
    assert "exactly one of bits; alphabet + length" in done.stderr


@pytest.mark.parametrize("question", QUESTIONS, ids=lambda q: q.name)
def test_help_lists_parameters_with_ranges(question: Question) -> None:
    done = run(question.name, "--help")
    assert done.returncode == 0, done.stderr
    text = " ".join(done.stdout.split())
    for entry in question.inputs:
        for parameter in entry.parameters if isinstance(entry, Choice) else (entry,):
            assert parameter.option in text
            assert " ".join(parameter.rule.split()) in text, parameter.name
    assert "--json" in text


def test_top_level_help_lists_every_question_and_the_tools() -> None:
    done = run("--help")
    assert done.returncode == 0
    for name in [q.name for q in QUESTIONS] + ["serve", "openapi"]:
        assert f"  {name}" in done.stdout
