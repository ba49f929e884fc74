"""Benchmark: /metrics scrape time against the number of dead workers' files, and folding.

Run from the repository root with the project's environment::

    .venv/bin/python tests/bench/bench_metrics_dir.py

One real worker file set is made by a child process that answers requests through the
product app in multiprocess mode (so the files hold the service's own series); it is then
copied under new process ids to stand for generations of exited workers. For each count
of dead workers the scrape (the multiprocess collector and the text exposition, as
``/metrics`` does it) is timed before and after :func:`urnbound.metrics_files.fold_dead_worker`
has folded them, best of five.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from prometheus_client import CollectorRegistry, generate_latest
from prometheus_client.multiprocess import MultiProcessCollector

from urnbound.metrics_files import fold_dead_worker, sample_files

WORKER = """
from urnbound.app import create_app
app = create_app({"access_log": False})
client = app.test_client()
for count in range(1, 60):
    client.get(f"/v1/collisions?bits=64&count={count * 1000}")
client.get("/v1/collisions?bits=64&count=-1")
client.get("/healthz")
client.get("/nowhere")
"""


def scrape_ms(directory: Path) -> float:
    best = float("inf")
    for _ in range(5):
        started = time.perf_counter()
        registry = CollectorRegistry()
        MultiProcessCollector(registry, path=str(directory))
        generate_latest(registry)
        best = min(best, time.perf_counter() - started)
    return 1000 * best


def main() -> int:
    root = Path(tempfile.mkdtemp(prefix="urnbound-bench-metrics-"))
    try:
        seed = root / "seed"
        seed.mkdir()
        env = dict(os.environ, PROMETHEUS_MULTIPROC_DIR=str(seed))
        subprocess.run([sys.executable, "-c", WORKER], env=env, check=True, timeout=120)
        files = list(seed.glob("*.db"))
        print("\n| dead workers | files | scrape ms | after folding: files | scrape ms |")
        print("|---:|---:|---:|---:|---:|")
        for dead in (10, 100, 1000, 2000):
            directory = root / f"d{dead}"
            directory.mkdir()
            for pid in range(100_000, 100_000 + dead):
                for source in files:
                    kind = source.name.rsplit("_", 1)[0]
                    shutil.copyfile(source, directory / f"{kind}_{pid}.db")
            before_files, before = len(sample_files(directory)), scrape_ms(directory)
            for pid in range(100_000, 100_000 + dead):
                fold_dead_worker(directory, pid)
            after_files, after = len(sample_files(directory)), scrape_ms(directory)
            print(f"| {dead:,} | {before_files:,} | {before:.1f} | {after_files} | {after:.2f} |")
    finally:
        shutil.rmtree(root, ignore_errors=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
