"""The security-review questions on the command line: tables, and exit 2 naming the field."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

REPO_ROOT = Path(__file__).resolve().parents[1]


def run(*arguments: str) -> subprocess.CompletedProcess[str]:
    """``urnbound ARGUMENTS`` in a fresh interpreter."""
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(p for p in sys.path if p)}
    return subprocess.run(
        [sys.executable, "-c", "from urnbound.cli import main; main()", *arguments],
        capture_output=True, text=True, env=env, timeout=120, cwd=REPO_ROOT,
    )


@pytest.mark.parametrize(("arguments", "named"), [
    (["prefixes", "--digest-bits", "40", "--prefix-chars", "12", "--count", "5"],
     ["--digest-bits", "--prefix-chars"]),
    (["guessing", "--bits", "64", "--live", "5", "--guesses", "5", "--guess-rate", "1",
      "--window", "P1D"], ["--guess-rate", "--guesses"]),
    (["guessing", "--bits", "64", "--live", "5", "--guess-rate", "10"], ["--window"]),
    (["guessing", "--bits", "64", "--live", "5", "--guess-rate", "10", "--window", "-PT5S"],
     ["--window"]),
    (["guessing", "--format", "uuid-v1", "--live", "5", "--guesses", "1"], ["--format"]),
    (["collisions", "--format", "nope", "--count", "5"], ["--format"]),
    (["collisions", "--format", "uuid-v7", "--count", "5", "--rate", "5", "--duration", "P1D"],
     ["--count", "--rate"]),
    (["collisions", "--format", "uuid-v7", "--rate", "5"], ["--duration"]),
    (["collisions", "--format", "uuid-v7", "--rate", "5", "--duration", "P1M"], ["--duration"]),
    (["rates", "--bits", "64", "--duration", "P1D", "--max-risk", "1e-6"], ["--space"]),
])
def test_bad_input_exits_2_naming_every_field(arguments: list[str], named: list[str]) -> None:
    done = run(*arguments)
    assert done.returncode == 2, done.stdout
    assert done.stdout == ""
    line = done.stderr.strip()
    assert line.startswith(f"urnbound {arguments[0]}: error: {named[0]}: ")
    for option in named:
        assert f"{option}: " in line


def test_guessing_table_shows_the_policy_and_the_caution() -> None:
    done = run("guessing", "--bits", "64", "--live", "1e5", "--guess-rate", "1e4", "--window",
               "P365D")
    assert done.returncode == 0, done.stderr
    assert "policy.entropy_meets_minimum  yes" in done.stdout
    assert "expected_years_independent" in done.stdout and "5.845" in done.stdout
    assert "caution" in done.stdout


def test_formats_table_is_a_grid() -> None:
    done = run("formats")
    assert done.returncode == 0
    assert done.stdout.splitlines()[0] == "formats:"
    assert any(line.split()[:2] == ["uuid-v7", "74"] for line in done.stdout.splitlines())


def test_review_prints_a_sheet_with_its_verdicts() -> None:
    done = run("reviews", "--alphabet", "base64url", "--length", "16", "--count", "1e9",
               "--live", "1e5", "--guess-rate", "1e4", "--window", "P365D", "--max-risk",
               "1e-12", "--max-success", "1e-9")
    assert done.returncode == 0, done.stderr
    lines = done.stdout.splitlines()
    assert lines[0] == "verdicts:"
    assert lines[1].split()[:3] == ["check", "threshold", "passes"]
    assert any(line.split()[:1] == ["collision"] and " no " in line for line in lines[2:5])
    assert any(line.startswith("shortest_compliant_length.length") for line in lines)
