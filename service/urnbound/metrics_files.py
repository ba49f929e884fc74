"""The Prometheus multiprocess directory: folding dead workers' files, and the scrape lock.

Under gunicorn every worker process writes its samples to files named after its process id
(``counter_<pid>.db``, ``histogram_<pid>.db``, ...), and a scrape reads every file in the
directory. Left alone, the directory gains files with every worker generation (recycled,
timed out, killed), and scrapes slow down with it. :func:`fold_dead_worker` is called by the
gunicorn master when a worker has exited: it adds the worker's counters, histograms and
summaries into one ``<kind>_merged.db`` file per kind and removes the worker's files, so the
directory holds the live workers' files plus a fixed few. Totals are unchanged by folding.

Gauges follow their multiprocess mode: ``sum``, ``max``, ``min`` and ``mostrecent`` gauges
are folded the same way; per-process (``all``) and live-only gauges of a dead process are
removed, as the Prometheus client does for live-only ones.

A scrape reads several files; a fold rewrites two. Both take :func:`directory_lock` (shared
for a scrape, exclusive for a fold), so a scrape never sees a worker's samples counted twice
or not at all, which Prometheus would take for a counter reset.
"""

from __future__ import annotations

import contextlib
import fcntl
import os
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

#: File in the directory that scrapes and folds lock (not ``*.db``, so never read as samples).
LOCK_NAME = "directory.lock"
#: The stand-in process id of the folded files.
MERGED_ID = "merged"
#: Kinds whose samples add up across processes.
SUMMED_KINDS = ("counter", "histogram", "summary")

Combine = Callable[[tuple[float, float], tuple[float, float]], tuple[float, float]]


def _sum(old: tuple[float, float], new: tuple[float, float]) -> tuple[float, float]:
    return old[0] + new[0], max(old[1], new[1])


def _max(old: tuple[float, float], new: tuple[float, float]) -> tuple[float, float]:
    return max(old, new, key=lambda pair: pair[0])


def _min(old: tuple[float, float], new: tuple[float, float]) -> tuple[float, float]:
    return min(old, new, key=lambda pair: pair[0])


def _newest(old: tuple[float, float], new: tuple[float, float]) -> tuple[float, float]:
    return max(old, new, key=lambda pair: pair[1])


#: File name prefix (before the process id) -> how two processes' values combine.
FOLDED_PREFIXES: dict[str, Combine] = {
    **{kind: _sum for kind in SUMMED_KINDS},
    "gauge_sum": _sum,
    "gauge_max": _max,
    "gauge_min": _min,
    "gauge_mostrecent": _newest,
}
#: Gauge files of a dead process that are dropped rather than folded.
DROPPED_PREFIXES = (
    "gauge_all",
    "gauge_liveall",
    "gauge_livesum",
    "gauge_livemax",
    "gauge_livemin",
    "gauge_livemostrecent",
)


@contextlib.contextmanager
def directory_lock(directory: str | os.PathLike[str], exclusive: bool) -> Iterator[None]:
    """Hold the directory's lock: shared for reading samples, exclusive for folding."""
    path = Path(directory) / LOCK_NAME
    descriptor = os.open(path, os.O_RDWR | os.O_CREAT, 0o600)
    try:
        fcntl.flock(descriptor, fcntl.LOCK_EX if exclusive else fcntl.LOCK_SH)
        yield
    finally:
        os.close(descriptor)  # closing releases the lock


def _values(path: Path) -> dict[str, tuple[float, float]]:
    """Key -> (value, timestamp) of one sample file."""
    from prometheus_client.mmap_dict import MmapedDict

    return {
        key: (value, timestamp)
        for key, value, timestamp, _ in MmapedDict.read_all_values_from_file(  # type: ignore[no-untyped-call]
            str(path)
        )
    }


def _fold_file(dead: Path, merged: Path, combine: Combine) -> None:
    """Combine ``dead``'s samples into ``merged``, then remove ``dead``."""
    from prometheus_client.mmap_dict import MmapedDict

    incoming = _values(dead)
    existing = _values(merged) if merged.exists() else {}
    target: Any = MmapedDict(str(merged))  # type: ignore[no-untyped-call]
    try:
        for key, pair in incoming.items():
            value, timestamp = combine(existing[key], pair) if key in existing else pair
            target.write_value(key, value, timestamp)
    finally:
        target.close()
    dead.unlink()


def fold_dead_worker(directory: str | os.PathLike[str], pid: int) -> int:
    """Fold the files of exited process ``pid`` into the merged files; how many were folded.

    Call it only for a process that has exited (from gunicorn's ``child_exit``).
    """
    root = Path(directory)
    if not root.is_dir():
        return 0
    folded = 0
    with directory_lock(root, exclusive=True):
        for prefix, combine in FOLDED_PREFIXES.items():
            dead = root / f"{prefix}_{pid}.db"
            if dead.exists():
                _fold_file(dead, root / f"{prefix}_{MERGED_ID}.db", combine)
                folded += 1
        for prefix in DROPPED_PREFIXES:
            with contextlib.suppress(FileNotFoundError):
                (root / f"{prefix}_{pid}.db").unlink()
    return folded


def sample_files(directory: str | os.PathLike[str]) -> list[str]:
    """The sample files a scrape reads, by name."""
    return sorted(path.name for path in Path(directory).glob("*.db"))


class WorkerExits:
    """Counts worker exits in the gunicorn master, by reason (``timeout`` or ``exited``).

    The counter lives in the master's own sample file in the multiprocess directory, so every
    worker's ``/metrics`` shows it. Created on first use, after the directory is set.
    """

    def __init__(self) -> None:
        self._counter: Any = None

    def count(self, reason: str) -> None:
        """Add one exit for ``reason``."""
        if self._counter is None:
            from prometheus_client import Counter

            self._counter = Counter(
                "urnbound_worker_exits",
                "gunicorn worker processes that exited, by reason: timeout (killed by the "
                "master for not answering in time) or exited (recycled, crashed, killed).",
                ("reason",),
                registry=None,
            )
        self._counter.labels(reason=reason).inc()
