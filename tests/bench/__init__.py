"""Benchmark scripts, run by hand; pytest ignores this package (see conftest.py)."""
