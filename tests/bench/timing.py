"""The one timing loop of the benchmark scripts: median CPU time of an action."""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable


def median_seconds(action: Callable[[], object], repeats: int) -> float:
    """Median CPU seconds of ``action`` over ``repeats`` runs (after one warm-up).

    CPU time of this process (time.process_time), so a busy second core disturbs the
    figures less than wall-clock time would.
    """
    action()
    samples = []
    for _ in range(repeats):
        start = time.process_time()
        action()
        samples.append(time.process_time() - start)
    return statistics.median(samples)
