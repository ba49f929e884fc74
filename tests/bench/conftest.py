"""Keeps pytest out of tests/bench: benchmarks are scripts run by hand, never tests."""

from __future__ import annotations

# --doctest-modules would otherwise import every module here during collection.
collect_ignore_glob = ["*.py"]
