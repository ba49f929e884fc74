"""Folding dead workers' Prometheus files: totals kept, the directory bounded."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from prometheus_client import CollectorRegistry
from prometheus_client.multiprocess import MultiProcessCollector

from urnbound.metrics_files import directory_lock, fold_dead_worker, sample_files

# A child process writes samples as a gunicorn worker would: the Prometheus client in
# multiprocess mode, its files named after the child's process id.
WORKER = """
import os, sys
from prometheus_client import Counter, Gauge, Histogram
requests = Counter("demo_requests", "Requests.", ("status",))
latency = Histogram("demo_latency_seconds", "Latency.", buckets=(0.1, 1.0))
peak = Gauge("demo_peak", "Peak.", multiprocess_mode="max")
per_process = Gauge("demo_per_process", "Per process.", multiprocess_mode="all")
n = int(sys.argv[1])
requests.labels(status="200").inc(n)
requests.labels(status="422").inc(1)
latency.observe(0.05 * n)
peak.set(n)
per_process.set(n)
print(os.getpid())
"""


def run_worker(directory: Path, amount: int) -> int:
    """Run one short-lived writer process; its process id."""
    env = dict(os.environ, PROMETHEUS_MULTIPROC_DIR=str(directory))
    done = subprocess.run(
        [sys.executable, "-c", WORKER, str(amount)],
        env=env,
        check=True,
        capture_output=True,
        text=True,
        timeout=60,
    )
    return int(done.stdout.strip())


def samples(directory: Path) -> dict[tuple[str, tuple[tuple[str, str], ...]], float]:
    """Every sample a scrape of ``directory`` gives (pid labels dropped)."""
    registry = CollectorRegistry()
    MultiProcessCollector(registry, path=str(directory))
    found = {}
    for family in registry.collect():
        for sample in family.samples:
            labels = tuple(sorted((k, v) for k, v in sample.labels.items() if k != "pid"))
            key = (sample.name, labels)
            found[key] = found.get(key, 0.0) + sample.value
    return found


@pytest.fixture
def directory(tmp_path: Path) -> Path:
    path = tmp_path / "metrics"
    path.mkdir()
    return path


def test_folding_keeps_totals_and_bounds_the_directory(directory: Path) -> None:
    pids = [run_worker(directory, amount) for amount in (1, 2, 3, 4, 5)]
    before = samples(directory)
    assert before[("demo_requests_total", (("status", "200"),))] == 15
    assert len(sample_files(directory)) == 4 * len(pids)

    for pid in pids:
        fold_dead_worker(directory, pid)

    after = samples(directory)
    # Counters and histograms sum; a max gauge keeps the largest; per-process gauges of
    # dead processes go, as for the Prometheus client's live-only modes.
    per_process = [key for key in before if key[0] == "demo_per_process"]
    assert per_process and all(key not in after for key in per_process)
    kept = {k: v for k, v in before.items() if k[0] != "demo_per_process"}
    assert kept.keys() == after.keys()
    # Sums of the same floats in another order (the histogram's _sum) may differ by rounding.
    assert after == {k: pytest.approx(v, rel=1e-12, abs=0) for k, v in kept.items()}
    assert after[("demo_peak", ())] == 5
    assert after[("demo_latency_seconds_count", ())] == 5
    assert after[("demo_latency_seconds_bucket", (("le", "0.1"),))] == 2  # 0.05 and 0.1
    assert sample_files(directory) == [
        "counter_merged.db",
        "gauge_max_merged.db",
        "histogram_merged.db",
    ]


def test_folding_one_worker_leaves_the_others(directory: Path) -> None:
    first, second = run_worker(directory, 1), run_worker(directory, 2)
    assert fold_dead_worker(directory, first) == 3  # counter, histogram, max gauge
    names = sample_files(directory)
    assert not any(name.endswith(f"_{first}.db") for name in names)
    assert f"counter_{second}.db" in names
    assert samples(directory)[("demo_requests_total", (("status", "422"),))] == 2


def test_folding_an_unknown_process_changes_nothing(directory: Path) -> None:
    run_worker(directory, 1)
    names = sample_files(directory)
    assert fold_dead_worker(directory, 999_999_999) == 0
    assert sample_files(directory) == names
    assert fold_dead_worker(directory / "missing", 1) == 0


def test_the_lock_is_shared_by_scrapes(directory: Path) -> None:
    with directory_lock(directory, exclusive=False), directory_lock(directory, exclusive=False):
        assert (directory / "directory.lock").exists()
    assert "directory.lock" not in sample_files(directory)
