"""The one loop of the random request searches: ask, print every 5xx, keep the costliest.

``hunt_requests.py`` (occupancy questions) and ``hunt_questions.py`` (the others) each draw
request paths; this asks each of the product app in process (answer cache off, access log
off), prints every 5xx with its query, and then the costliest requests by CPU time.
"""

from __future__ import annotations

import heapq
import logging
import random
import sys
import time
from collections.abc import Callable

from urnbound.app import create_app

#: How many of the costliest requests are printed.
KEPT = 15


def hunt(draw: Callable[[random.Random], str], argv: list[str]) -> int:
    """Draw and ask requests for ``argv``'s [seed] [seconds] (default 1, 120 s); 1 on a 5xx."""
    seed = int(argv[1]) if len(argv) > 1 else 1
    seconds = float(argv[2]) if len(argv) > 2 else 120.0
    logging.disable(logging.CRITICAL)  # the 5xx are printed below, without tracebacks
    client = create_app({"cache_entries": 0, "access_log": False}).test_client()
    rng = random.Random(seed)
    costliest: list[tuple[float, str, int]] = []
    statuses: dict[int, int] = {}
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        path = draw(rng)
        start = time.process_time()
        status = client.get(path).status_code
        cost = (time.process_time() - start) * 1e3
        statuses[status] = statuses.get(status, 0) + 1
        if status >= 500:
            print(f"{status} {path}", flush=True)
        heapq.heappush(costliest, (cost, path, status))
        if len(costliest) > KEPT:
            heapq.heappop(costliest)
    failed = sum(count for status, count in statuses.items() if status >= 500)
    print(f"{sum(statuses.values())} requests, {failed} failures (5xx); statuses "
          f"{dict(sorted(statuses.items()))}")
    for cost, path, status in sorted(costliest, reverse=True):
        print(f"{cost:8.1f} ms  {status}  {path}")
    sys.stdout.flush()
    return 1 if failed else 0
